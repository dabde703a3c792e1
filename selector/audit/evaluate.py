"""The audit itself: a BOM, its roles and the circuit options -> findings from the shared rules.

Per board: read each line's ratings (:mod:`.ratings`), assign roles (:mod:`.roles`), fill a
rating the line lacks from the best-matching catalogue family (shown as "assumed from family
..."), build the engine's :class:`~selector.engine.Circuit` from the BOM's values, analyse it at
every corner (:func:`selector.engine.analyse`) and run the rule engine that ``design`` uses
(:func:`selector.rules.evaluate`). Nothing here decides whether a part passes: the rules do.

Circuit values from the BOM: X capacitance = sum of the X capacitors (in parallel); series
resistance = sum of the series resistors; bleeder = sum of the bleeder string (none fitted:
infinite); Zener voltage = sum of the Zeners in series; reservoir = sum of the reservoirs in
parallel. Tolerances the BOM states (largest X-capacitor, series-resistor and Zener tolerance)
replace the option defaults; each replacement is noted.

The result's :meth:`AuditResult.to_dict` is the JSON document of ``dropper audit --json`` and
the hook a report writer calls (:func:`audit_result_dict`).
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Callable, Collection, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Final

from ..cautions import CAUTIONS
from ..errors import BadRowError, BadValueError, OutOfRangeError
from .bom import BomPart, BomTable, read_bom
from .ratings import Ratings, read_ratings
from .roles import Assigned, RoleMap, infer_roles, load_roles_file

__all__ = [
    "AuditFinding",
    "CatalogueIndex",
    "AuditResult",
    "BoardAudit",
    "audit_bom",
    "audit_result_dict",
    "corner_text",
    "corners_of",
    "fill_from_catalogue",
    "rated_part",
]

#: audit kind -> catalogue kind (kinds without a catalogue family are never filled)
_CATALOGUE_KIND: Final[dict[str, str]] = {
    "x_capacitor": "x_capacitor",
    "film_capacitor": "film_capacitor",
    "resistor": "resistor",
    "zener": "zener",
    "bridge": "bridge",
    "diode": "diode",
    "electrolytic": "electrolytic",
    "fuse": "fuse",
}
#: ratings a family may supply, and which way is the conservative choice within the family
_FILL_LOW: Final[tuple[str, ...]] = (
    "rated_voltage_v",
    "rated_voltage_ac_v",
    "limiting_voltage_v",
    "power_w",
    "pulse_energy_j",
    "dvdt_v_per_s",
    "vrrm_v",
    "if_av_a",
    "ifsm_a",
    "tj_max_c",
    "ripple_a",
    "temp_max_c",
    "i2t_a2s",
    "derate_start_c",
    "derate_end_c",
)
#: reservoir tolerance when the BOM states none (aluminium electrolytics are commonly +/-20 %,
#: common practice, no source; the design solver uses the same default)
_RESERVOIR_TOL: Final[float] = 0.2
_FILL_HIGH: Final[tuple[str, ...]] = ("tolerance",)
#: model parameters (not ratings): the family's median (one value per family in the built-in
#: catalogue, so the audit builds the same circuit the design solver analysed)
_FILL_TYPICAL: Final[tuple[str, ...]] = ("vf_v", "rs_ohm", "zz_ohm")

#: search words for a family, from what the line says
_WORD_TERMS: Final[dict[str, tuple[str, ...]]] = {
    "metal_oxide": ("oxide",),
    "wirewound": ("wirewound", "wire"),
    "metal_film": ("metal-film", "metal film"),
    "thick_film": ("thick",),
    "thin_film": ("thin",),
    "pp": ("polypropylene", "pp"),
    "pet": ("polyester", "pet"),
    "fusible": ("fusible",),
    "glass": ("glass", "do-35", "do35"),
    "time-lag": ("time-lag", "slow"),
    "fast": ("fast",),
}
#: a stated rating that some row of the family also has: (column, points)
_STATED_MATCH: Final[tuple[tuple[str, float], ...]] = (
    ("power_w", 1.0),
    ("rated_voltage_v", 1.0),
    ("rated_voltage_ac_v", 1.0),
    ("vrrm_v", 1.0),
    ("ifsm_a", 1.0),
    ("temp_max_c", 2.0),
)
_PACKAGE_TERMS: Final[dict[str, tuple[str, ...]]] = {
    "melf_0207": ("0207", "melf"),
    "melf_0204": ("0204", "minimelf"),
    "melf_0102": ("0102",),
    "do41": ("do41", "do-41"),
    "do35": ("do35", "do-35"),
    "sod123": ("sod123", "sod-123"),
    "sma": ("sma", "do214ac"),
    "smb": ("smb",),
    "mbs": ("mbs", "mb"),
    "dip_bridge": ("db", "dip"),
    "axial": ("axial",),
    "radial": ("radial",),
}


@dataclass(frozen=True)
class AuditFinding:
    """One rule on one part (or the whole circuit), as the audit reports it (SI units)."""

    board: str
    ref: str | None
    role: str
    rule: str
    stress: float | None
    rating: float | None
    unit: str
    margin: float | None
    severity: str
    source: str
    corner: str | None
    note: str = ""
    description: str = ""


@dataclass
class BoardAudit:
    """One board: its roles, the circuit built from it, its findings."""

    board: str
    roles: RoleMap
    circuit: Any
    findings: list[AuditFinding]
    assumed: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)


@dataclass
class AuditResult:
    """Everything the audit found, board by board; ``to_dict`` gives the JSON document."""

    table: BomTable
    boards: list[BoardAudit]
    notes: list[str] = field(default_factory=list)

    @property
    def findings(self) -> list[AuditFinding]:
        return [f for b in self.boards for f in b.findings]

    @property
    def summary(self) -> dict[str, int]:
        out = {"fail": 0, "warn": 0, "pass": 0}
        for f in self.findings:
            out[f.severity] += 1
        return out

    def to_dict(self) -> dict[str, Any]:
        return audit_result_dict(self)


def audit_result_dict(result: AuditResult) -> dict[str, Any]:
    """The audit as one JSON-ready dict (SI numbers): the ``--json`` document and the report
    writer's input. Keys: ``file``, ``sheet``, ``column_map`` (field -> header),
    ``ignored_columns``, ``roles`` (one entry per part), ``boards`` (circuit values per board),
    ``findings``, ``summary`` {fail, warn, pass}, ``notes``, ``cautions``."""
    t = result.table
    roles = []
    boards = []
    for b in result.boards:
        for a in b.roles.parts:
            r = a.ratings
            roles.append(
                {
                    "board": b.board,
                    "ref": a.part.ref,
                    "row": a.part.row,
                    "role": a.role + ("+fuse" if a.also_fuse else ""),
                    "how": a.how,
                    "kind": r.kind,
                    "value": r.value,
                    "value_unit": _VALUE_UNIT.get(r.kind),
                    "text": " ".join(x for x in (a.part.value, a.part.description) if x),
                    "mpn": a.part.mpn,
                    "assumed": dict(r.assumed),
                }
            )
        c = b.circuit
        boards.append(
            {
                "board": b.board,
                "topology": getattr(c, "topology", None),
                "x_capacitance_f": getattr(c, "x_capacitance_f", None),
                "series_resistance_ohm": getattr(c, "series_resistance_ohm", None),
                "bleeder_resistance_ohm": getattr(c, "bleeder_resistance_ohm", None),
                "zener_voltage_v": getattr(c, "zener_voltage_v", None),
                "reservoir_f": getattr(c, "reservoir_f", None),
                "inferred": list(b.roles.notes),
                "assumed": list(b.assumed),
                "notes": list(b.notes),
            }
        )
    findings = [dataclasses.asdict(f) for f in _ordered(result.findings)]
    return {
        "file": t.path,
        "sheet": t.sheet,
        "encoding": t.encoding,
        "column_map": dict(t.column_map),
        "ignored_columns": list(t.ignored_columns),
        "roles": roles,
        "boards": boards,
        "findings": findings,
        "summary": result.summary,
        "notes": list(t.notes) + list(result.notes),
        "cautions": list(CAUTIONS),
    }


_ORDER = {"fail": 0, "warn": 1, "pass": 2}
_VALUE_UNIT: Final[dict[str, str]] = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "ceramic_capacitor": "F",
    "capacitor": "F",
    "electrolytic": "F",
    "resistor": "ohm",
    "zener": "V",
    "fuse": "A",
}


def _ordered(findings: Sequence[AuditFinding]) -> list[AuditFinding]:
    return sorted(findings, key=lambda f: _ORDER[f.severity])


# ---------------------------------------------------------------------------------------------
# catalogue fill


def _norm(text: Any) -> str:
    return re.sub(r"[^0-9a-z]+", "", str(text or "").lower())


@dataclass
class _Family:
    name: str
    kind: str
    text: str
    ntext: str
    cols: dict[str, Any]  # column -> numpy array over the family's rows
    packages: Any  # numpy array of normalised package names
    safety: frozenset[str]


class CatalogueIndex:
    """A catalogue DataFrame prepared for repeated family look-ups (built once per audit).

    Look-ups are memoised on what the BOM line says, so a BOM of many equal boards costs one
    look-up per distinct line.
    """

    def __init__(self, frame: Any) -> None:
        import numpy as np

        self.by_kind: dict[str, list[_Family]] = {}
        self._memo: dict[Any, tuple[str | None, dict[str, float]]] = {}
        if frame is None or len(frame) == 0:
            return
        wanted = (
            ("value",) + _FILL_LOW + _FILL_HIGH + _FILL_TYPICAL + tuple(c for c, _ in _STATED_MATCH)
        )
        for (kind, family), sub in frame.groupby(["kind", "family"], sort=False):
            pk = [str(x) for x in sub["package"].unique()[:20]] if "package" in sub else []
            desc = [str(x) for x in sub["description"].head(1)] if "description" in sub else []
            text = " ".join([str(family)] + desc + pk).lower()
            cols = {c: sub[c].to_numpy(dtype=float) for c in dict.fromkeys(wanted) if c in sub}
            packages = np.array([_norm(x) for x in sub["package"]]) if "package" in sub else None
            safety = (
                frozenset(str(x).upper() for x in sub["safety_class"].dropna().unique())
                if "safety_class" in sub
                else frozenset()
            )
            self.by_kind.setdefault(str(kind), []).append(
                _Family(str(family), str(kind), text, _norm(text), cols, packages, safety)
            )


def _best_family(r: Ratings, families: list[_Family]) -> _Family | None:
    import numpy as np

    terms = [t for w in r.words for t in _WORD_TERMS.get(w, ())]
    for attr in (r.technology, r.dielectric):
        if attr:
            terms += list(_WORD_TERMS.get(attr, ()))
    pkg_terms = _PACKAGE_TERMS.get(r.package or "", (r.package,) if r.package else ())
    best: tuple[float, _Family] | None = None
    for fam in families:
        score = 0.0
        if pkg_terms and any(_norm(t) in fam.ntext for t in pkg_terms):
            score += 4
        for t in dict.fromkeys(terms):
            if t in fam.text or _norm(t) in fam.ntext:
                score += 3
        x = _x_subclass(r.safety_class)
        if x and x in fam.safety:
            score += 3
        v = fam.cols.get("value")
        if r.value is not None and v is not None and len(v):
            if np.nanmin(v) * 0.999 <= r.value <= np.nanmax(v) * 1.001:
                score += 2
        for col, points in _STATED_MATCH:
            mine = getattr(r, col, None)
            arr = fam.cols.get(col)
            if mine is not None and arr is not None:
                if np.any(np.abs(arr - mine) <= 1e-9 * max(abs(mine), 1.0)):
                    score += points
        if best is None or score > best[0]:
            best = (score, fam)
    if best is None or best[0] < 3:
        return None
    return best[1]


def _family_fill(r: Ratings, fam: _Family, missing: Sequence[str]) -> dict[str, float]:
    import numpy as np

    n = len(next(iter(fam.cols.values()))) if fam.cols else 0
    keep = np.ones(n, dtype=bool)
    pkg_terms = _PACKAGE_TERMS.get(r.package or "", (r.package,) if r.package else ())

    def narrow(mask: Any) -> None:
        nonlocal keep
        if np.any(keep & mask):
            keep = keep & mask

    if pkg_terms and fam.packages is not None:
        narrow(np.array([any(_norm(t) in p for t in pkg_terms) for p in fam.packages]))
    if r.value is not None and "value" in fam.cols:
        narrow(np.abs(fam.cols["value"] - r.value) <= 1e-6 * r.value)
    if r.power_w is not None and "power_w" in fam.cols:
        narrow(np.abs(fam.cols["power_w"] - r.power_w) < 1e-9)
    out: dict[str, float] = {}
    for f in missing:
        arr = fam.cols.get(f)
        if arr is None:
            continue
        vals = arr[keep]
        vals = vals[~np.isnan(vals)]
        if len(vals) == 0:
            continue
        if f in _FILL_LOW:
            out[f] = float(vals.min())
        elif f in _FILL_HIGH:
            out[f] = float(vals.max())
        elif f in _FILL_TYPICAL:
            out[f] = float(np.median(vals))
    return out


def fill_from_catalogue(ratings: Ratings, fields: Sequence[str], catalogue: Any) -> str | None:
    """Fill the ``fields`` that ``ratings`` lacks from the best-matching catalogue family.

    ``catalogue`` is a ``selector.catalogue.parts_frame`` DataFrame (columns per DEVELOPERS.md)
    or a :class:`CatalogueIndex` built from one. Families of the part's kind are scored on
    package (4), class words (3 each), safety class (3), the part's value inside the family's
    range (2) and its stated ratings among the family's rows (1 each; temperature class 2); the
    best family scoring >= 3 wins (ties: first in the catalogue). Within it, rows of the same
    package (and value and power, when present) are kept and each missing rating takes the
    family's most conservative figure (lowest rating, highest tolerance). The safety class and
    the value are never filled. Returns the family's name, or None when nothing matched (the
    ratings stay unknown and the rules warn). Records each filled field in ``ratings.assumed``.
    """
    kind = _CATALOGUE_KIND.get(ratings.kind)
    missing = tuple(
        f
        for f in fields
        if f in _FILL_LOW + _FILL_HIGH + _FILL_TYPICAL and getattr(ratings, f, None) is None
    )
    if kind is None or not missing or catalogue is None:
        return None
    index = catalogue if isinstance(catalogue, CatalogueIndex) else CatalogueIndex(catalogue)
    families = index.by_kind.get(kind)
    if not families:
        return None
    key = (
        kind,
        missing,
        _ratings_key(ratings),
        tuple(ratings.words),
    )
    hit = index._memo.get(key)
    if hit is None:
        fam = _best_family(ratings, families)
        hit = (None, {}) if fam is None else (fam.name, _family_fill(ratings, fam, missing))
        index._memo[key] = hit
    name, values = hit
    for f, v in values.items():
        setattr(ratings, f, v)
        ratings.assumed[f] = name  # type: ignore[assignment]
    return name if values else None


# ---------------------------------------------------------------------------------------------
# ratings -> the rule engine's RatedPart


def _x_subclass(safety_class: str | None) -> str | None:
    if not safety_class:
        return None
    m = re.search(r"X[123]", safety_class.upper())
    return m.group(0) if m else None


_NOT_SAFETY = {
    "film_capacitor": "general-purpose film",
    "ceramic_capacitor": "ceramic",
    "electrolytic": "electrolytic",
}


def rated_part(role: str, group: Sequence[Assigned], share: float, arrangement: str):
    """One :class:`selector.rules.RatedPart` for a group of equal parts in one role."""
    from ..rules import RatedPart

    a = group[0]
    r = a.ratings
    if role == "x_capacitor":
        safety = _x_subclass(r.safety_class)
        if safety is None and r.safety_class:
            safety = r.safety_class  # Y only: not an X subclass (the rule fails it)
        if safety is None and r.kind in _NOT_SAFETY:
            safety = _NOT_SAFETY[r.kind]  # stated general-purpose: fails, never "unknown"
    else:
        safety = r.safety_class
    # a temperature written on a Zener line is its junction limit
    tj = r.temp_max_c if r.kind == "zener" and r.tj_max_c is None else None
    kw = {
        f.name: getattr(r, f.name)
        for f in dataclasses.fields(RatedPart)
        if hasattr(r, f.name)
        and f.name
        not in {"role", "kind", "ref", "description", "qty", "arrangement", "share", "safety_class"}
    }
    if tj is not None:
        kw["tj_max_c"] = tj
        kw.pop("temp_max_c", None)
    return RatedPart(
        role=role,
        kind=_CATALOGUE_KIND.get(r.kind, r.kind),
        ref=", ".join(g.part.ref for g in group),
        description=" ".join(x for x in (a.part.value, a.part.description) if x),
        qty=len(group),
        arrangement=arrangement if len(group) > 1 else "single",
        share=share,
        safety_class=safety,
        **kw,
    )


_ARRANGEMENT: Final[dict[str, str]] = {
    "x_capacitor": "parallel",
    "series_resistor": "series",
    "bleeder": "series",
    "zener": "series",
    "reservoir": "parallel",
    "rectifier": "single",
    "fuse": "series",
}


def _groups(assigned: Sequence[Assigned]) -> list[list[Assigned]]:
    """Equal parts (same value and ratings) grouped, in BOM order."""
    out: dict[tuple, list[Assigned]] = {}
    for a in assigned:
        r = a.ratings
        key = _ratings_key(r) + (a.part.description, a.part.value, a.also_fuse)
        out.setdefault(key, []).append(a)
    return list(out.values())


# ---------------------------------------------------------------------------------------------
# the audit


def _ratings_key(r: Ratings) -> tuple:
    return tuple(getattr(r, f) for f in _RATINGS_SCALARS)


_RATINGS_SCALARS: Final[tuple[str, ...]] = tuple(
    f.name for f in dataclasses.fields(Ratings) if f.name not in ("words", "notes", "assumed")
)


#: role -> kinds whose ratings make sense in it, and the kind to read the line as otherwise
_ROLE_KINDS: Final[dict[str, tuple[tuple[str, ...], str]]] = {
    "x_capacitor": (
        ("x_capacitor", "film_capacitor", "ceramic_capacitor", "capacitor"),
        "capacitor",
    ),
    "series_resistor": (("resistor",), "resistor"),
    "bleeder": (("resistor",), "resistor"),
    "zener": (("zener",), "zener"),
    "rectifier": (("diode", "bridge"), "diode"),
    "reservoir": (
        ("electrolytic", "capacitor", "ceramic_capacitor", "film_capacitor"),
        "electrolytic",
    ),
    "fuse": (("fuse", "resistor"), "fuse"),
}


def _ratings_of(
    table: BomTable, part: BomPart, memo: dict | None = None, role: str | None = None
) -> Ratings:
    """The part's ratings; equal lines (same designator letters and texts) are read once.

    ``role``: a role the user gave the part; a line whose kind does not fit it is read again as
    the role's kind (a Zener written ``D3 5V1`` is read as a Zener, not as a diode).
    """
    if role == "other":
        return Ratings(kind="other")  # the user said: not a dropper part; nothing to read
    if role is not None and role in _ROLE_KINDS:
        fits, forced = _ROLE_KINDS[role]
        try:
            r = _ratings_of(table, part, memo)
        except BadRowError:
            r = None
        if r is None or r.kind not in fits:
            r = _read_line(table, part, forced)
        if role == "fuse" and r.kind == "resistor":
            r.fusible = True  # a resistor serving as the fuse is a fusible resistor
        return r
    if memo is not None:
        key = (
            re.match(r"[A-Za-z]*", part.ref).group(0).upper(),  # type: ignore[union-attr]
            part.value,
            part.description,
            part.package,
            part.voltage,
            part.power,
            part.tolerance,
        )
        hit = memo.get(key)
        if hit is None:
            hit = memo[key] = _ratings_of(table, part)
        return dataclasses.replace(
            hit, words=list(hit.words), notes=list(hit.notes), assumed=dict(hit.assumed)
        )
    return _read_line(table, part, None)


def _read_line(table: BomTable, part: BomPart, kind: str | None) -> Ratings:
    try:
        return read_ratings(
            part.ref,
            part.value,
            part.description,
            part.package,
            part.voltage,
            part.power,
            part.tolerance,
            kind=kind,
        )
    except BadValueError as exc:
        msg = str(exc)
        fld, _, rest = msg.partition(": ")
        column = table.column_map.get(fld)
        if column is None and fld == "value":
            column = table.column_map.get("description")
        problem = f"{part.ref}: {rest or msg}"
        raise BadRowError(table.path, part.row, column, problem) from None


def _rule_fields() -> dict[str, tuple[str, ...]]:
    from ..rules import RULES

    out: dict[str, list[str]] = {}
    for rule in RULES:
        out.setdefault(rule.role, []).extend(rule.ratings)
    extra = {
        "series_resistor": ("derate_start_c", "derate_end_c", "tolerance"),
        "bleeder": ("derate_start_c", "derate_end_c", "limiting_voltage_v", "power_w", "tolerance"),
        "zener": ("tj_max_c", "derate_start_c", "derate_end_c", "tolerance", "zz_ohm"),
        "x_capacitor": ("tolerance",),
        "rectifier": ("vf_v", "rs_ohm"),
    }
    return {
        role: tuple(
            dict.fromkeys(
                f
                for f in list(fs) + list(extra.get(role, ()))
                if f not in ("value", "safety_class")
            )
        )
        for role, fs in out.items()
    }


def audit_bom(
    path: str | Path,
    *,
    mains: Any,
    conditions: Any,
    tolerances: Any,
    pinned_tolerances: Collection[str] = (),
    load: Any = None,
    regulator: Any = None,
    topology: str | None = None,
    policy: Any = None,
    sheet: str | None = None,
    encoding: str | None = None,
    columns: Mapping[str, str] | None = None,
    roles: Mapping[str, str] | None = None,
    roles_file: str | Path | None = None,
    catalogue: Any = None,
    circuit_defaults: Mapping[str, Any] | None = None,
    analyse: Callable[..., Any] | None = None,
    evaluate: Callable[..., Any] | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> AuditResult:
    """Audit a BOM file: one :class:`BoardAudit` per board (a ``Board`` column splits them).

    ``mains``, ``conditions``, ``tolerances``, ``load``, ``regulator`` are the engine's
    dataclasses (from the shared circuit options); ``topology`` None means "as the BOM shows"
    (a bridge part or four diodes: bridge; one diode: half-wave). ``roles`` maps designators
    (``"C1"`` or ``"BOARD:C1"``) to roles and wins over ``roles_file`` and inference.
    ``catalogue`` is a ``parts_frame`` DataFrame used to fill missing ratings (None: no fill).
    ``circuit_defaults`` gives engine values the BOM does not carry (``diode_drop_v``, ...).
    A tolerance the BOM states replaces the one in ``tolerances`` unless its name
    (``cap_tol``, ``r_tol``, ``zener_tol``) is in ``pinned_tolerances`` (the user set it).
    Identical boards are analysed once. ``analyse`` and ``evaluate`` replace
    :func:`selector.engine.analyse` and :func:`selector.rules.evaluate` (same signatures): a
    caller that needs the circuit, its tolerances and rated parts (``dropper yield``) wraps them.
    Raises BadRowError / BadValueError for bad input.
    """
    from ..engine import Circuit, Load
    from ..rules import evaluate as rules_evaluate

    if analyse is None:
        from ..engine import analyse as analyse_fn
    else:
        analyse_fn = analyse
    table = read_bom(path, sheet=sheet, encoding=encoding, columns=columns)
    common_file, per_board_file = ({}, {}) if roles_file is None else load_roles_file(roles_file)
    boards = table.boards
    for name in per_board_file:
        if name not in boards:
            raise BadValueError(
                f"roles file {roles_file}: board '{name}' is not in the BOM "
                f"(boards: {', '.join(b or '(unnamed)' for b in boards)})"
            )
    if "role" in table.column_map:
        from .roles import _role_name

        for p in table.parts:
            if p.role:
                try:
                    _role_name(p.role, "")
                except BadValueError as exc:
                    raise BadRowError(
                        table.path, p.row, table.column_map["role"], f"{p.ref}: {exc}"
                    ) from None
    cli = {k.upper(): v for k, v in (roles or {}).items()}
    if len(boards) > 1:
        everywhere = {p.ref.upper() for p in table.parts}
        for ref in list(common_file) + [k for k in cli if ":" not in k]:
            if ref not in everywhere:
                raise BadValueError(f"a role names {ref}, which no board of the BOM has")
    fields_by_role = _rule_fields()
    if catalogue is not None and not isinstance(catalogue, CatalogueIndex):
        catalogue = CatalogueIndex(catalogue)
    cache: dict[Any, Any] = {}
    ratings_memo: dict[Any, Ratings] = {}
    results: list[BoardAudit] = []
    by_board: dict[str, list[BomPart]] = {}
    for p in table.parts:
        by_board.setdefault(p.board, []).append(p)
    for i, board in enumerate(boards):
        parts = by_board[board]
        explicit: dict[str, str] = {}
        how: dict[str, str] = {}
        for source, mapping in (
            ("roles file", common_file),
            ("roles file", per_board_file.get(board, {})),
        ):
            for ref, role_name in mapping.items():
                explicit[ref] = role_name
                how[ref] = source
        for key, role_name in cli.items():
            b, sep, ref = key.rpartition(":")
            if not sep:
                explicit[key], how[key] = role_name, "given"
            elif b == board.upper():
                explicit[ref], how[ref] = role_name, "given"
        if explicit and len(boards) > 1:
            refs = {p.ref.upper() for p in parts}
            for r in [r for r in explicit if r not in refs]:
                explicit.pop(r)  # a role for every board names a part this board lacks
        items = []
        for p in parts:
            given = explicit.get(p.ref.upper())
            if given is None and p.role:
                from .roles import _role_name

                given = _role_name(p.role)
            items.append((p, _ratings_of(table, p, ratings_memo, given)))
        roles_map = infer_roles(board, items, explicit, explicit_how=how)
        results.append(
            _audit_board(
                table,
                roles_map,
                mains=mains,
                conditions=conditions,
                tolerances=tolerances,
                load=load or Load(),
                regulator=regulator,
                topology=topology,
                policy=policy,
                catalogue=catalogue,
                circuit_defaults=circuit_defaults or {},
                fields_by_role=fields_by_role,
                pinned=frozenset(pinned_tolerances),
                cache=cache,
                analyse=analyse_fn,
                circuit_cls=Circuit,
                rules_evaluate=evaluate or rules_evaluate,
            )
        )
        if progress is not None:
            progress(i + 1, len(boards))
    return AuditResult(table=table, boards=results)


_SECTION_PREFIX: Final[tuple[tuple[str, str], ...]] = (
    ("inrush", "inrush_"),
    ("surge", "surge_"),
    ("discharge", "discharge_"),
    ("startup", "startup_"),
)


def corner_text(corner: Mapping[str, Any] | None) -> str:
    """A corner record as short text: '253 V 60 Hz, C 242 nF, R 89.3 Ω, Vz 12.6 V, no load'."""
    if not corner:
        return ""
    from ..units import format_value

    bits = []
    if "mains_v" in corner:
        bits.append(f"{corner['mains_v']:.4g} V {corner.get('freq_hz', 0):g} Hz")
    for key, label, unit in (
        ("cap_f", "C", "F"),
        ("r_ohm", "R", "ohm"),
        ("bleeder_ohm", "Rb", "ohm"),
        ("vz_v", "Vz", "V"),
    ):
        if corner.get(key) is not None:
            bits.append(f"{label} {format_value(float(corner[key]), unit)}")
    if "load_a" in corner:
        bits.append(
            "no load" if not corner["load_a"] else f"load {format_value(corner['load_a'], 'A')}"
        )
    return ", ".join(bits)


def corners_of(analysis: Any) -> dict[str, str]:
    """Stress key -> corner text, matching the engine's corner fields to the rule engine's
    stress keys: ``worst_case.max_zener_power_corner`` belongs to ``max_zener_power_w``,
    ``worst_case.rectifier_corner`` to every ``max_rectifier_*`` stress, a transient section's
    ``corner`` to each of its figures (``inrush_series_r_energy_j``, ...)."""
    out: dict[str, str] = {}
    wc = getattr(analysis, "worst_case", None)
    if wc is not None and dataclasses.is_dataclass(wc):
        fields = [f.name for f in dataclasses.fields(wc)]
        for name in fields:
            if not name.endswith("_corner"):
                continue
            base = name[: -len("_corner")]
            stem = "max_rectifier_" if base == "rectifier" else base + "_"
            text = corner_text(getattr(wc, name))
            for other in fields:
                if other.startswith(stem) and not other.endswith("_corner"):
                    out.setdefault(other, text)
    for section, prefix in _SECTION_PREFIX:
        sec = getattr(analysis, section, None)
        if sec is None or not dataclasses.is_dataclass(sec):
            continue
        text = corner_text(getattr(sec, "corner", None))
        if text:
            for f in dataclasses.fields(sec):
                if f.name != "corner":
                    out[prefix + f.name] = text
    return out


def _where(table: BomTable, board: str) -> str:
    return f"{table.path}" + (f", board '{board}'" if board else "")


def _audit_board(table: BomTable, rm: RoleMap, **kw: Any) -> BoardAudit:
    board = rm.board
    where = _where(table, board)
    notes: list[str] = []
    assumed_refs: dict[str, list[str]] = {}
    by_role: dict[str, list[Assigned]] = {}
    for a in rm.parts:
        if a.role != "other":
            by_role.setdefault(a.role, []).append(a)
    for a in rm.parts:
        if a.also_fuse:
            by_role.setdefault("fuse", []).append(a)
    for need, what in (
        ("x_capacitor", "an X capacitor"),
        ("series_resistor", "a series resistor"),
        ("zener", "a Zener"),
        ("reservoir", "a reservoir electrolytic"),
    ):
        if need not in by_role:
            raise BadValueError(
                f"{where}: found no {need} ({what}); the audit needs one to compute the "
                f"stresses. Name it with --role REF={need}"
            )
    # fill missing ratings from the catalogue
    frame = kw["catalogue"]
    seen_fill: set[int] = set()
    for role, group in by_role.items():
        wanted = kw["fields_by_role"].get(role, ())
        for a in group:
            if id(a.ratings) in seen_fill:
                continue
            seen_fill.add(id(a.ratings))
            fam = fill_from_catalogue(a.ratings, wanted, frame)
            if fam:
                fields = ", ".join(sorted(a.ratings.assumed))
                assumed_refs.setdefault(f"{fields} assumed from family {fam}", []).append(
                    a.part.ref
                )
    assumed = [f"{', '.join(refs)}: {text}" for text, refs in assumed_refs.items()]
    for role in ("x_capacitor", "series_resistor", "bleeder", "zener", "reservoir"):
        for a in by_role.get(role, []):
            if a.ratings.value is None:
                raise BadRowError(
                    table.path,
                    a.part.row,
                    table.column_map.get("value"),
                    f"{a.part.ref} has the role {role} but its line gives no value for it",
                )
    # circuit values from the BOM
    xs = tuple(a.ratings.value for a in by_role["x_capacitor"])
    series_r = sum(a.ratings.value for a in by_role["series_resistor"])
    bleeders = by_role.get("bleeder", [])
    bleeder_r = sum(a.ratings.value for a in bleeders) if bleeders else math.inf
    vz = sum(a.ratings.value for a in by_role["zener"])
    res = sum(a.ratings.value for a in by_role["reservoir"])
    topology = kw["topology"] or rm.topology
    if topology is None:
        raise BadValueError(
            f"{where}: found no rectifier (bridge or diodes); name it with --role REF=rectifier "
            "or give --topology"
        )
    if rm.topology is not None and kw["topology"] and kw["topology"] != rm.topology:
        notes.append(f"--topology {kw['topology']} used; the BOM looks {rm.topology}")
    tol = kw["tolerances"]
    tol_changes: dict[str, float] = {}

    def known_tol(group: Sequence[Assigned]) -> list[tuple[float, float | None]]:
        return [(a.ratings.value or 0.0, a.ratings.tolerance) for a in group]

    if "cap_tol" not in kw["pinned"]:
        # all parallel parts at +t_i: the total moves by sum(C_i t_i) / sum(C_i)
        pairs = known_tol(by_role["x_capacitor"])
        if all(t is not None for _, t in pairs):
            tol_changes["cap_tol"] = sum(c * t for c, t in pairs) / sum(c for c, _ in pairs)  # type: ignore[operator]
    if "r_tol" not in kw["pinned"]:
        # the engine's r_tol covers the series resistors and the bleeder
        ts = [t for _, t in known_tol(by_role["series_resistor"] + bleeders)]
        if ts:
            tol_changes["r_tol"] = max(t if t is not None else tol.r_tol for t in ts)
    if "zener_tol" not in kw["pinned"]:
        ts = [t for _, t in known_tol(by_role["zener"]) if t is not None]
        if ts:
            tol_changes["zener_tol"] = max(ts)
    tol_changes = {k: v for k, v in tol_changes.items() if abs(v - getattr(tol, k)) > 1e-12}
    if tol_changes:
        tol = dataclasses.replace(tol, **tol_changes)
        notes.append(
            "tolerances from the BOM: "
            + ", ".join(f"{k} {v * 100:.3g} %" for k, v in tol_changes.items())
        )
    # rectifier and Zener model parameters: the option when given, else the parts' own (BOM or
    # catalogue family), else the engine's defaults
    model = dict(kw["circuit_defaults"])
    rect = by_role.get("rectifier", [])
    if "diode_drop_v" not in model:
        vfs = [a.ratings.vf_v for a in rect if a.ratings.vf_v is not None]
        if vfs:
            model["diode_drop_v"] = max(vfs)
    if "diode_resistance_ohm" not in model:
        rss = [a.ratings.rs_ohm for a in rect if a.ratings.rs_ohm is not None]
        if rss:
            model["diode_resistance_ohm"] = max(rss)
    if "zener_impedance_ohm" not in model:
        zzs = [a.ratings.zz_ohm for a in by_role["zener"]]
        if zzs and all(z is not None for z in zzs):
            model["zener_impedance_ohm"] = sum(zzs)  # type: ignore[arg-type]
    try:
        circuit = kw["circuit_cls"](
            topology=topology,
            x_capacitors_f=xs,
            series_resistance_ohm=series_r,
            bleeder_resistance_ohm=bleeder_r,
            zener_voltage_v=vz,
            reservoir_f=res,
            load=kw["load"],
            regulator=kw["regulator"],
            **model,
        )
    except OutOfRangeError as exc:
        raise BadValueError(
            f"{where}: the BOM's values are outside the engine's range: {exc}"
        ) from None
    key = (circuit, kw["mains"], tol, kw["conditions"])
    analysis = kw["cache"].get(key)
    if analysis is None:
        analysis = kw["analyse"](circuit, kw["mains"], tol, kw["conditions"])
        kw["cache"][key] = analysis
    # parts for the rules
    parts_by_role: dict[str, list] = {}
    placeholder_bleeder = False
    for role, group in by_role.items():
        total = sum(a.ratings.value or 0.0 for a in group)
        rated = []
        for g in _groups(group):
            if role in ("series_resistor", "bleeder") and total > 0:
                share = sum(a.ratings.value or 0.0 for a in g) / total
            else:
                share = 1.0
            rated.append(rated_part(role, g, share, _ARRANGEMENT[role]))
        parts_by_role[role] = rated
    if "bleeder" not in parts_by_role:
        from ..rules import RatedPart

        parts_by_role["bleeder"] = [RatedPart(role="bleeder", ref=None, description="none fitted")]
        placeholder_bleeder = True
        notes.append("no bleeder fitted (no resistor >= 100 kohm); the discharge rule decides")
    # the same context keys, computed the same way, as the design solver passes
    load = kw["load"]
    res_tol = max(
        (a.ratings.tolerance for a in by_role["reservoir"] if a.ratings.tolerance is not None),
        default=_RESERVOIR_TOL,
    )
    avg_a = load.current_a + (kw["regulator"].quiescent_a if kw["regulator"] else 0.0)
    if load.burst_current_a > 0 and load.burst_period_s > 0:
        avg_a += load.burst_current_a * load.burst_duration_s / load.burst_period_s
    context = {
        "mains_max_v": float(kw["mains"].high_v),
        "mains_min_v": float(kw["mains"].low_v),
        "ambient_c": float(kw["conditions"].ambient_c),
        "surge_level_v": float(kw["conditions"].surge_v),
        "load_a": avg_a,
        # fault current with a shorted X capacitor: series resistance at its upper tolerance
        "series_resistance_ohm": series_r * (1 + tol.r_tol),
        "zener_voltage_v": vz,
        "reservoir_min_f": res * (1 - res_tol),
    }
    if load.burst_current_a > 0:
        context["burst_current_a"] = (
            load.burst_current_a
            + avg_a
            - (load.burst_current_a * load.burst_duration_s / load.burst_period_s)
        )
        context["burst_duration_s"] = load.burst_duration_s
    # equal boards (same circuit, same parts, same refs) are evaluated once
    memo_key = (
        key,
        tuple((role, tuple(ps)) for role, ps in sorted(parts_by_role.items())),
        kw["policy"],
        tuple(sorted(context.items())),
    )
    raw = kw["cache"].get(memo_key)
    if raw is None:
        raw = kw["rules_evaluate"](
            parts_by_role, analysis, kw["policy"], context=context, corners=corners_of(analysis)
        )
        kw["cache"][memo_key] = raw
    findings: list[AuditFinding] = []
    for f in raw:
        if placeholder_bleeder and f.part == "bleeder" and f.rule != "bleeder.discharge":
            continue
        note = f.note
        if placeholder_bleeder and f.rule == "bleeder.discharge":
            note = (note + "; " if note else "") + "no bleeder fitted"
        findings.append(
            AuditFinding(
                board=board,
                ref=f.ref,
                role=f.part,
                rule=f.rule,
                stress=f.stress,
                rating=f.limit,
                unit=f.unit,
                margin=f.margin,
                severity=f.severity,
                source=f.source,
                corner=f.corner,
                note=note,
                description=f.description,
            )
        )
    if "fuse" not in by_role:
        findings.append(
            AuditFinding(
                board=board,
                ref=None,
                role="fuse",
                rule="fuse.fitted",
                stress=None,
                rating=None,
                unit="",
                margin=None,
                severity="warn",
                source="[P] common practice, no source",
                corner=None,
                note="no fuse or fusible resistor found in the BOM",
                description="a fuse (or a fusible series resistor) protects against a shorted "
                "X capacitor or rectifier",
            )
        )
    return BoardAudit(board, rm, circuit, findings, assumed=assumed, notes=notes)
