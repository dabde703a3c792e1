"""Queries on the catalogue: free-text search, statistics, and the DataFrame the solver reads.

Free text (:func:`find_parts`) is split into words; each word is one of

* a safety class (``x1 x2 x3 y1 y2 y3 y4``): only parts of that class;
* a kind word (``resistor``, ``zener``, ``fuse``, ``bridge``, ``diode``, ``electrolytic``,
  ``film``, ...): only parts of those kinds;
* a value with a prefix, unit or IEC 60062 letter (``330n``, ``4k7``, ``4R7``, ``100uF``):
  only parts of that value (read per kind: farads for capacitors, ohms for resistors, ...);
  with a unit ``V`` it asks for a voltage rating >= it (``305vac``: AC rating, ``400vdc``: DC
  rating or VRRM, ``305V``: the main rating, AC where the part has one) or a Zener of it,
  with ``W`` for a power rating >= it, an exact rating ranking first; a percentage (``5%``) for
  that tolerance;
* anything else, bare numbers included, is matched fuzzily (rapidfuzz) against code, family and
  description; a bare number equal to a part's value or to one of its ratings ranks it higher.

So ``"x2 330n 305"`` keeps the 330 nF X2 capacitors and puts the 305 VAC ones first.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any, Final

from sqlalchemy import Engine, and_, false, func, or_, select

from ..errors import BadValueError
from ..units import parse_tolerance, parse_value
from .db import current_revision, read_meta
from .frame_cache import stock_selection
from .models import KINDS, VALUE_UNITS, Part
from .row_ranges import TEXT_COLUMNS, drop_unusable_rows, escape_controls

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "PART_COLUMNS",
    "catalogue_stats",
    "check_kind",
    "find_parts",
    "parts_frame",
    "stock_selection",
]

#: the ``parts`` columns in table order (the DataFrame of :func:`parts_frame` has exactly these)
PART_COLUMNS: Final[tuple[str, ...]] = tuple(c.name for c in Part.__table__.columns)

_CLASS_WORDS: Final[frozenset[str]] = frozenset({"x1", "x2", "x3", "y1", "y2", "y3", "y4"})
_KIND_WORDS: Final[dict[str, tuple[str, ...]]] = {
    **{k: (k,) for k in KINDS},
    "resistor": ("resistor",),
    "resistors": ("resistor",),
    "zener": ("zener",),
    "zeners": ("zener",),
    "diode": ("diode",),
    "diodes": ("diode",),
    "rectifier": ("diode", "bridge"),
    "bridge": ("bridge",),
    "fuse": ("fuse",),
    "fuses": ("fuse",),
    "varistors": ("varistor",),
    "mov": ("varistor",),
    "electrolytic": ("electrolytic",),
    "elko": ("electrolytic",),
    "elco": ("electrolytic",),
    "film": ("film_capacitor", "x_capacitor"),
    "capacitor": ("x_capacitor", "film_capacitor", "electrolytic"),
    "capacitors": ("x_capacitor", "film_capacitor", "electrolytic"),
}
_QUANTITIES: Final[tuple[str, ...]] = ("F", "ohm", "V", "A", "W")
_REL: Final[float] = 1e-6
#: fuzzy score (0-100) a part must reach on the text words to be listed
TEXT_CUTOFF: Final[float] = 60.0
#: score added per bare number equal to the part's value or one of its ratings
NUMBER_BOOST: Final[float] = 25.0
_NUMBER_COLUMNS: Final[tuple[str, ...]] = (
    "value",
    "rated_voltage_ac_v",
    "rated_voltage_v",
    "vrrm_v",
    "power_w",
    "limiting_voltage_v",
)


def check_kind(kind: str) -> str:
    """``kind`` if it is one of :data:`~selector.catalogue.models.KINDS`, else BadValueError
    naming the nearest valid kind and listing all."""
    if kind in KINDS:
        return kind
    from rapidfuzz import process

    best = process.extractOne(str(kind), KINDS)
    hint = f"did you mean '{best[0]}'? " if best and best[1] >= 50 else ""
    raise BadValueError(f"unknown kind {kind!r}; {hint}valid kinds: {', '.join(KINDS)}")


def _near(col, value: float):
    lo, hi = sorted((value * (1 - _REL), value * (1 + _REL)))
    return col.between(lo, hi)


def _value_clause(text: str | float, kinds: tuple[str, ...]):
    """Rows whose value equals ``text`` read in each kind's unit (IEC 60062 M/m rule applies)."""
    parts = []
    t = Part.__table__.c
    for kind in kinds:
        try:
            v = parse_value(text, VALUE_UNITS[kind])
        except BadValueError:
            continue
        parts.append(and_(t.kind == kind, _near(t.value, v)))
    return or_(*parts) if parts else None


def _units_of(token: str) -> set[str]:
    ok = set()
    for q in _QUANTITIES:
        try:
            parse_value(token, q)
        except BadValueError:
            continue
        ok.add(q)
    return ok


def _is_bare_number(token: str) -> bool:
    try:
        return math.isfinite(float(token))
    except ValueError:
        return False


def _voltage_clause(v: float, token: str):
    """A voltage word: ``...vac`` asks for an AC rating, ``...vdc`` for a DC rating or VRRM,
    plain ``V`` for the part's main rating (AC where it has one, else DC, else VRRM); a Zener
    of that voltage always matches."""
    t = Part.__table__.c
    low = v * (1 - _REL)
    word = token.lower()
    if word.endswith("vac"):
        rating = t.rated_voltage_ac_v >= low
    elif word.endswith("vdc"):
        rating = or_(t.rated_voltage_v >= low, t.vrrm_v >= low)
    else:
        rating = func.coalesce(t.rated_voltage_ac_v, t.rated_voltage_v, t.vrrm_v) >= low
    return or_(rating, and_(t.kind == "zener", _near(t.value, v)))


def _row_dict(row: Any) -> dict[str, Any]:
    d = dict(row._mapping)
    if d.get("created_at") is not None and hasattr(d["created_at"], "isoformat"):
        d["created_at"] = d["created_at"].isoformat()
    d["value_unit"] = VALUE_UNITS.get(d["kind"])
    for column in TEXT_COLUMNS:
        if isinstance(d.get(column), str):
            d[column] = escape_controls(d[column])
    return d


def find_parts(
    engine: Engine,
    text: str | None = None,
    kind: str | None = None,
    value: str | float | None = None,
    min_voltage: str | float | None = None,
    min_power: str | float | None = None,
    limit: int = 20,
) -> list[dict[str, Any]]:
    """Parts matching free ``text`` and the filters, best first.

    ``kind``: one of KINDS. ``value``: the part's value (SI float, or text like ``330n`` read in
    the kind's unit). ``min_voltage`` [V]: any voltage rating (AC, DC/working, VRRM) at least
    this. ``min_power`` [W]: power rating at least this. ``limit`` > 0 rows at most.
    Each result is a dict of the ``parts`` columns plus ``value_unit`` (unit of ``value``) and
    ``score`` (fuzzy text score 0-100 plus number boosts). Ties go to the cheaper part, then the
    code. Raises BadValueError for an unknown kind or an unreadable value.
    """
    if isinstance(limit, bool) or not isinstance(limit, int) or limit <= 0:
        raise BadValueError(f"limit must be a whole number > 0, not {limit!r}")
    t = Part.__table__.c
    kinds: tuple[str, ...] = KINDS
    where = []
    if kind is not None:
        kinds = (check_kind(kind),)
        where.append(t.kind == kinds[0])
    if value is not None:
        clause = _value_clause(value, kinds)
        if clause is None:
            raise BadValueError(
                f"cannot read {value!r} as a part value; write it like '330n', '4k7' or '12'"
            )
        where.append(clause)
    if min_voltage is not None:
        where.append(_voltage_clause_min(parse_value(min_voltage, "V")))
    if min_power is not None:
        where.append(t.power_w >= parse_value(min_power, "W") * (1 - _REL))

    words: list[str] = []
    numbers: list[float] = []
    kind_hints: set[str] = set()
    for token in (text or "").replace(",", " ").split():
        low = token.lower()
        if low in _CLASS_WORDS:
            where.append(func.lower(t.safety_class) == low)
            continue
        if low in _KIND_WORDS:
            kind_hints.update(_KIND_WORDS[low])
            continue
        if _is_bare_number(token):
            numbers.append(float(token))
            words.append(low)
            continue
        if token.endswith("%"):
            try:
                tol = parse_tolerance(token)
            except BadValueError:
                words.append(low)
                continue
            where.append(_near(t.tolerance, tol))
            continue
        units = _units_of(token)
        if not units:
            words.append(low)
        elif units == {"V"}:
            volts = parse_value(token, "V")
            where.append(_voltage_clause(volts, token))
            numbers.append(volts)  # an exact rating ranks first
        elif units == {"W"}:
            watts = parse_value(token, "W")
            where.append(t.power_w >= watts * (1 - _REL))
            numbers.append(watts)
        elif len(units) == 1:
            (unit,) = units
            clause = _value_clause(token, tuple(k for k in kinds if VALUE_UNITS[k] == unit))
            where.append(false() if clause is None else clause)
        else:
            clause = _value_clause(token, kinds)
            where.append(false() if clause is None else clause)
    if kind_hints:
        where.append(t.kind.in_(sorted(kind_hints)))

    with engine.connect() as conn:
        rows = [_row_dict(r) for r in conn.execute(select(Part.__table__).where(*where))]
    if not rows:
        return []

    if words:
        from rapidfuzz import fuzz, process

        choices = [f"{r['code']} {r['family']} {r['description']}".lower() for r in rows]
        matrix = process.cdist(words, choices, scorer=fuzz.partial_ratio, workers=1)
        text_scores = matrix.mean(axis=0).tolist()
    else:
        text_scores = [100.0] * len(rows)
    kept = []
    for row, score in zip(rows, text_scores, strict=True):
        if score < TEXT_CUTOFF:
            continue
        for n in numbers:
            if any(
                row[c] is not None and abs(row[c] - n) <= abs(n) * _REL for c in _NUMBER_COLUMNS
            ):
                score += NUMBER_BOOST
        row["score"] = round(float(score), 2)
        kept.append(row)
    kept.sort(
        key=lambda r: (
            -r["score"],
            r["unit_price"] if r["unit_price"] is not None else math.inf,
            r["code"],
        )
    )
    return kept[:limit]


def _voltage_clause_min(v: float):
    t = Part.__table__.c
    return or_(
        t.rated_voltage_ac_v >= v * (1 - _REL),
        t.rated_voltage_v >= v * (1 - _REL),
        t.vrrm_v >= v * (1 - _REL),
    )


def catalogue_stats(engine: Engine) -> dict[str, Any]:
    """Counts per kind, per family and per source, the price notes, and build facts.

    Keys: ``parts`` (total), ``kinds`` {kind: count} in KINDS order, ``families`` (list of
    ``{family, kind, source, parts, min_price, max_price}``), ``sources`` {source: count},
    ``price_notes`` {note: count}, ``price_model`` (label of the built-in prices),
    ``data_checksum``, ``built_at``, ``schema_revision``.
    """
    t = Part.__table__.c
    with engine.connect() as conn:
        fam_rows = conn.execute(
            select(
                t.family,
                t.kind,
                t.source,
                func.count(),
                func.min(t.unit_price),
                func.max(t.unit_price),
            )
            .group_by(t.family, t.kind, t.source)
            .order_by(t.kind, t.family, t.source)
        ).all()
        notes = conn.execute(
            select(t.price_note, func.count()).group_by(t.price_note).order_by(t.price_note)
        ).all()
    order = {k: i for i, k in enumerate(KINDS)}
    families = sorted(
        (
            {
                "family": f,
                "kind": k,
                "source": s,
                "parts": int(n),
                "min_price": lo,
                "max_price": hi,
            }
            for f, k, s, n, lo, hi in fam_rows
        ),
        key=lambda d: (order.get(d["kind"], len(order)), d["kind"], d["family"], d["source"]),
    )
    kinds: dict[str, int] = {}
    sources: dict[str, int] = {}
    for fam in families:
        kinds[fam["kind"]] = kinds.get(fam["kind"], 0) + fam["parts"]
        sources[fam["source"]] = sources.get(fam["source"], 0) + fam["parts"]
    meta = read_meta(engine)
    return {
        "parts": sum(kinds.values()),
        "kinds": kinds,
        "families": families,
        "sources": sources,
        "price_notes": {(note or ""): int(n) for note, n in notes},
        "price_model": meta.get("price_model"),
        "data_checksum": meta.get("data_checksum"),
        "built_at": meta.get("built_at"),
        "schema_revision": current_revision(engine),
    }


def parts_frame(
    engine: Engine,
    kinds: str | list[str] | tuple[str, ...] | None = None,
    stock_only: bool = False,
    min_stock: int | None = None,
    *,
    checked: bool = True,
) -> pd.DataFrame:
    """All parts (or those of ``kinds``) as a pandas DataFrame with every ``parts`` column.

    Columns: :data:`PART_COLUMNS`, in table order; numeric columns are float64 with NaN for
    missing, ``fusible`` is bool, ``stock`` is float64 (NaN when the list gives none).
    ``stock_only`` keeps the rows of imported lists that are not withdrawn (see
    :func:`stock_selection`); ``min_stock``
    additionally drops those whose stock count is given and below it. Withdrawn rows are never
    in the frame. Rows are ordered by kind, value, code. With ``checked`` (the default) rows
    with numbers out of their physical range are left out and named in
    ``frame.attrs["skipped_parts"]`` (:func:`drop_unusable_rows`).
    """
    import pandas as pd

    t = Part.__table__.c
    stmt = select(Part.__table__)
    if kinds is not None:
        wanted = [kinds] if isinstance(kinds, str) else list(kinds)
        stmt = stmt.where(t.kind.in_([check_kind(k) for k in wanted]))
    stmt = stmt.order_by(t.kind, t.value, t.code)
    with engine.connect() as conn:
        result = conn.execute(stmt)
        frame = pd.DataFrame(result.all(), columns=list(result.keys()))
    for col in Part.__table__.columns:
        name = col.name
        py = col.type.python_type
        if name == "id":
            frame[name] = frame[name].astype("int64")
        elif py is float:
            frame[name] = pd.to_numeric(frame[name], errors="coerce").astype("float64")
        elif py is bool:
            frame[name] = frame[name].fillna(False).astype(bool)
        elif py is int:  # checked as float first: a stored 1e30 cannot become an Int64
            frame[name] = pd.to_numeric(frame[name], errors="coerce").astype("float64")
    frame = stock_selection(frame[list(PART_COLUMNS)], stock_only, min_stock)
    return drop_unusable_rows(frame) if checked else frame
