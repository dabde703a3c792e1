"""Filling the ratings a BOM line lacks from the best-matching catalogue family.

``fill_from_catalogue`` scores the catalogue's families of the part's kind against what the line
says (package, class words, safety class, value range, stated ratings) and copies the missing
ratings from the winner, the most conservative figure within it; ``CatalogueIndex`` prepares a
catalogue DataFrame for many such look-ups. Every filled field is recorded in
``Ratings.assumed`` so the audit shows it as "assumed from family ...".
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any, Final

from .ratings import Ratings

#: audit kind -> catalogue kind (kinds without a catalogue family are never filled)
CATALOGUE_KIND: Final[dict[str, str]] = {
    "x_capacitor": "x_capacitor",
    "film_capacitor": "film_capacitor",
    "resistor": "resistor",
    "zener": "zener",
    "bridge": "bridge",
    "diode": "diode",
    "electrolytic": "electrolytic",
    "fuse": "fuse",
    "varistor": "varistor",
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
    "rated_life_h",
    "i2t_a2s",
    "derate_start_c",
    "derate_end_c",
)
_FILL_HIGH: Final[tuple[str, ...]] = ("tolerance",)
#: model parameters (not ratings): the family's median (one value per family in the built-in
#: catalogue, so the audit builds the same circuit the design solver analysed)
_FILL_TYPICAL: Final[tuple[str, ...]] = ("vf_v", "rs_ohm", "zz_ohm")
#: a varistor's clamp model (varistor voltage at 1 mA, clamping voltage and its current): taken
#: together from one row, the family's least capable one (lowest energy rating) among the rows
#: like the line, so that the model is a real part's and never a mix of rows
_FILL_VARISTOR_MODEL: Final[tuple[str, ...]] = ("value", "limiting_voltage_v", "clamp_current_a")

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
    "varistor": ("varistor",),
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


_RATINGS_SCALARS: Final[tuple[str, ...]] = tuple(
    f.name for f in dataclasses.fields(Ratings) if f.name not in ("words", "notes", "assumed")
)


def ratings_key(ratings: Ratings) -> tuple:
    """The scalar fields of ``ratings`` as a hashable key (equal lines, equal keys)."""
    return tuple(getattr(ratings, name) for name in _RATINGS_SCALARS)


def x_subclass(safety_class: str | None) -> str | None:
    """The X subclass named in a safety-class text ('X2', ...), or None."""
    if not safety_class:
        return None
    found = re.search(r"X[123]", safety_class.upper())
    return found.group(0) if found else None


def _norm(text: Any) -> str:
    """Lower-case letters and digits only: 'DO-41' -> 'do41'."""
    return re.sub(r"[^0-9a-z]+", "", str(text or "").lower())


@dataclass
class _Family:
    """One catalogue family prepared for scoring: its text and its rows' columns as arrays."""

    name: str
    kind: str
    text: str
    ntext: str
    cols: dict[str, Any]  # column -> numpy array over the family's rows
    packages: Any  # numpy array of normalised package names
    safety: frozenset[str]
    #: the humidity robustness grades of the family's rows (X capacitors; IEC 60384-14 Amd 1)
    grades: frozenset[str] = frozenset()


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
            ("value",)
            + _FILL_LOW
            + _FILL_HIGH
            + _FILL_TYPICAL
            + _FILL_VARISTOR_MODEL
            + tuple(c for c, _ in _STATED_MATCH)
        )
        for (kind, family), rows in frame.groupby(["kind", "family"], sort=False):
            package_names = (
                [str(name) for name in rows["package"].unique()[:20]] if "package" in rows else []
            )
            first_description = (
                [str(text) for text in rows["description"].head(1)] if "description" in rows else []
            )
            text = " ".join([str(family)] + first_description + package_names).lower()
            columns = {
                column: rows[column].to_numpy(dtype=float)
                for column in dict.fromkeys(wanted)
                if column in rows
            }
            packages = (
                np.array([_norm(name) for name in rows["package"]]) if "package" in rows else None
            )
            safety = (
                frozenset(str(cls).upper() for cls in rows["safety_class"].dropna().unique())
                if "safety_class" in rows
                else frozenset()
            )
            grades = (
                frozenset(str(g) for g in rows["humidity_grade"].dropna().unique())
                if "humidity_grade" in rows
                else frozenset()
            )
            self.by_kind.setdefault(str(kind), []).append(
                _Family(
                    str(family), str(kind), text, _norm(text), columns, packages, safety, grades
                )
            )


def _package_terms(ratings: Ratings) -> tuple[str, ...]:
    """Search words for the line's package (its own name when no terms are listed)."""
    return _PACKAGE_TERMS.get(ratings.package or "", (ratings.package,) if ratings.package else ())


def _best_family(ratings: Ratings, families: list[_Family]) -> _Family | None:
    """The family that scores highest against the line (see ``fill_from_catalogue``)."""
    import numpy as np

    terms = [term for word in ratings.words for term in _WORD_TERMS.get(word, ())]
    for attr in (ratings.technology, ratings.dielectric):
        if attr:
            terms += list(_WORD_TERMS.get(attr, ()))
    package_terms = _package_terms(ratings)
    best: tuple[float, _Family] | None = None
    for family in families:
        score = 0.0
        if package_terms and any(_norm(term) in family.ntext for term in package_terms):
            score += 4
        for term in dict.fromkeys(terms):
            if term in family.text or _norm(term) in family.ntext:
                score += 3
        subclass = x_subclass(ratings.safety_class)
        if subclass and subclass in family.safety:
            score += 3
        values = family.cols.get("value")
        if ratings.value is not None and values is not None and len(values):
            if np.nanmin(values) * 0.999 <= ratings.value <= np.nanmax(values) * 1.001:
                score += 2
        for column, points in _STATED_MATCH:
            stated = getattr(ratings, column, None)
            column_values = family.cols.get(column)
            if stated is not None and column_values is not None:
                if np.any(np.abs(column_values - stated) <= 1e-9 * max(abs(stated), 1.0)):
                    score += points
        if best is None or score > best[0]:
            best = (score, family)
        elif score == best[0] and ratings.kind == "varistor":
            # a varistor of unstated size: the family of the least energy (conservative)
            if _least_energy(family) < _least_energy(best[1]):
                best = (score, family)
    if best is None or best[0] < 3:
        return None
    return best[1]


def _least_energy(family: _Family) -> float:
    import numpy as np

    energy = family.cols.get("pulse_energy_j")
    if energy is None or not np.any(~np.isnan(energy)):
        return float("inf")
    return float(np.nanmin(energy))


def _family_fill(ratings: Ratings, family: _Family, missing: Sequence[str]) -> dict[str, float]:
    """The missing fields' most conservative figures among the family's rows like the line."""
    import numpy as np

    n_rows = len(next(iter(family.cols.values()))) if family.cols else 0
    keep = np.ones(n_rows, dtype=bool)
    package_terms = _package_terms(ratings)

    def narrow(mask: Any) -> None:
        nonlocal keep
        if np.any(keep & mask):
            keep = keep & mask

    if package_terms and family.packages is not None:
        narrow(
            np.array(
                [
                    any(_norm(term) in package for term in package_terms)
                    for package in family.packages
                ]
            )
        )
    if ratings.value is not None and "value" in family.cols:
        narrow(np.abs(family.cols["value"] - ratings.value) <= 1e-6 * ratings.value)
    if ratings.power_w is not None and "power_w" in family.cols:
        narrow(np.abs(family.cols["power_w"] - ratings.power_w) < 1e-9)
    filled: dict[str, float] = {}
    if ratings.kind == "varistor":
        stated_ac = ratings.rated_voltage_ac_v
        if stated_ac is not None and "rated_voltage_ac_v" in family.cols:
            narrow(np.abs(family.cols["rated_voltage_ac_v"] - stated_ac) <= 1e-6 * stated_ac)
        model = [name for name in _FILL_VARISTOR_MODEL if getattr(ratings, name) is None]
        energy = family.cols.get("pulse_energy_j")
        rows = np.flatnonzero(keep)
        if model and len(rows) and all(name in family.cols for name in model):
            order = np.nan_to_num(energy[rows], nan=np.inf) if energy is not None else rows
            row = int(rows[int(np.argmin(order))])
            for name in model:
                value = float(family.cols[name][row])
                if not np.isnan(value):
                    filled[name] = value
        missing = [name for name in missing if name not in _FILL_VARISTOR_MODEL]
    for name in missing:
        column_values = family.cols.get(name)
        if column_values is None:
            continue
        values = column_values[keep]
        values = values[~np.isnan(values)]
        if len(values) == 0:
            continue
        if name in _FILL_LOW:
            filled[name] = float(values.min())
        elif name in _FILL_HIGH:
            filled[name] = float(values.max())
        elif name in _FILL_TYPICAL:
            filled[name] = float(np.median(values))
    return filled


def fill_from_catalogue(ratings: Ratings, fields: Sequence[str], catalogue: Any) -> str | None:
    """Fill the ``fields`` that ``ratings`` lacks from the best-matching catalogue family.

    ``catalogue`` is a ``selector.catalogue.parts_frame`` DataFrame (columns per DEVELOPERS.md)
    or a :class:`CatalogueIndex` built from one. Families of the part's kind are scored on
    package (4), class words (3 each), safety class (3), the part's value inside the family's
    range (2) and its stated ratings among the family's rows (1 each; temperature class 2); the
    best family scoring >= 3 wins (ties: first in the catalogue). Within it, rows of the same
    package (and value and power, when present) are kept and each missing rating takes the
    family's most conservative figure (lowest rating, highest tolerance). The safety class and
    the value are never filled, except a varistor's clamp model (value = voltage at 1 mA,
    clamping voltage and current), taken together from one row (``_FILL_VARISTOR_MODEL``).
    Returns the family's name, or None when nothing matched (the ratings stay unknown and the
    rules warn). Records each filled field in ``ratings.assumed``.
    """
    kind = CATALOGUE_KIND.get(ratings.kind)
    fillable = _FILL_LOW + _FILL_HIGH + _FILL_TYPICAL
    if ratings.kind == "varistor":
        fields = tuple(fields) + _FILL_VARISTOR_MODEL
        fillable = fillable + _FILL_VARISTOR_MODEL
    missing = tuple(
        dict.fromkeys(
            name for name in fields if name in fillable and getattr(ratings, name, None) is None
        )
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
        ratings_key(ratings),
        tuple(ratings.words),
    )
    hit = index._memo.get(key)
    if hit is None:
        family = _best_family(ratings, families)
        hit = (
            (None, {}) if family is None else (family.name, _family_fill(ratings, family, missing))
        )
        index._memo[key] = hit
    family_name, values = hit
    for name, value in values.items():
        setattr(ratings, name, value)
        ratings.assumed[name] = family_name  # type: ignore[assignment]
    return family_name if values else None


def humidity_grade_from_family(ratings: Ratings, line_text: str, catalogue: Any) -> str | None:
    """Fill an X capacitor's missing humidity grade from the catalogue family its line names.

    A family is named when its name appears in the line's text (letters and digits compared,
    'x2-film-humid' in 'C1 330n X2-FILM-HUMID 305VAC'); the longest such name wins, and it must
    give one grade to all its rows. Sets ``ratings.humidity_grade``, records it in
    ``ratings.assumed`` and returns the family's name; None when the line names no family (the
    life model then takes grade I, the least robust, and the audit says so).
    """
    if ratings.humidity_grade is not None or catalogue is None:
        return None
    index = catalogue if isinstance(catalogue, CatalogueIndex) else CatalogueIndex(catalogue)
    text = _norm(line_text)
    named = [
        f
        for f in index.by_kind.get("x_capacitor", [])
        if _norm(f.name) and _norm(f.name) in text and len(f.grades) == 1
    ]
    if not named:
        return None
    family = max(named, key=lambda f: len(_norm(f.name)))
    ratings.humidity_grade = next(iter(family.grades))
    ratings.assumed["humidity_grade"] = family.name  # type: ignore[assignment]
    return family.name
