"""From BOM lines to the rule engine's parts: each line's ratings read for its role, equal lines
grouped, each group one :class:`selector.rules.RatedPart` in the role's arrangement.

Also the ratings each role's rules read (``rule_fields``), which are the fields the catalogue
fill tries to supply.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Sequence
from typing import Final

from ..errors import BadRowError, BadValueError
from .bom import BomPart, BomTable
from .fill import CATALOGUE_KIND, ratings_key, x_subclass
from .ratings import Ratings, apply_stated_ratings, read_ratings
from .roles import Assigned

#: kinds stated as not safety-rated: the X-capacitor rule fails them rather than warn
_NOT_SAFETY: Final[dict[str, str]] = {
    "film_capacitor": "general-purpose film",
    "ceramic_capacitor": "ceramic",
    "electrolytic": "electrolytic",
}


def rated_part(role: str, group: Sequence[Assigned], share: float, arrangement: str):
    """One :class:`selector.rules.RatedPart` for a group of equal parts in one role."""
    from ..rules import RatedPart

    first = group[0]
    ratings = first.ratings
    if role == "x_capacitor":
        safety = x_subclass(ratings.safety_class)
        if safety is None and ratings.safety_class:
            safety = ratings.safety_class  # Y only: not an X subclass (the rule fails it)
        if safety is None and ratings.kind in _NOT_SAFETY:
            safety = _NOT_SAFETY[ratings.kind]  # stated general-purpose: fails, never "unknown"
    else:
        safety = ratings.safety_class
    # a temperature written on a Zener line is its junction limit
    junction_max_c = (
        ratings.temp_max_c if ratings.kind == "zener" and ratings.tj_max_c is None else None
    )
    rating_fields = {
        f.name: getattr(ratings, f.name)
        for f in dataclasses.fields(RatedPart)
        if hasattr(ratings, f.name)
        and f.name
        not in {"role", "kind", "ref", "description", "qty", "arrangement", "share", "safety_class"}
    }
    if junction_max_c is not None:
        rating_fields["tj_max_c"] = junction_max_c
        rating_fields.pop("temp_max_c", None)
    return RatedPart(
        role=role,
        kind=CATALOGUE_KIND.get(ratings.kind, ratings.kind),
        ref=", ".join(member.part.ref for member in group),
        description=" ".join(text for text in (first.part.value, first.part.description) if text),
        qty=len(group),
        arrangement=arrangement if len(group) > 1 else "single",
        share=share,
        safety_class=safety,
        **rating_fields,
    )


#: how the parts of each role are arranged in the circuit
ARRANGEMENT: Final[dict[str, str]] = {
    "x_capacitor": "parallel",
    "series_resistor": "series",
    "bleeder": "series",
    "zener": "series",
    "reservoir": "parallel",
    "rectifier": "single",
    "fuse": "series",
    "varistor": "single",
}


def equal_groups(assigned: Sequence[Assigned]) -> list[list[Assigned]]:
    """Equal parts (same value and ratings) grouped, in BOM order."""
    groups: dict[tuple, list[Assigned]] = {}
    for member in assigned:
        key = ratings_key(member.ratings) + (
            member.part.description,
            member.part.value,
            member.also_fuse,
        )
        groups.setdefault(key, []).append(member)
    return list(groups.values())


#: role -> kinds whose ratings make sense in it, and the kind to read the line as otherwise
ROLE_KINDS: Final[dict[str, tuple[tuple[str, ...], str]]] = {
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
    "varistor": (("varistor",), "varistor"),
}


def line_ratings(
    table: BomTable, part: BomPart, memo: dict | None = None, role: str | None = None
) -> Ratings:
    """The part's ratings; equal lines (same designator letters and texts) are read once.

    ``role``: a role the user gave the part; a line whose kind does not fit it is read again as
    the role's kind (a Zener written ``D3 5V1`` is read as a Zener, not as a diode).
    """
    if role == "other":
        return Ratings(kind="other")  # the user said: not a dropper part; nothing to read
    if role is not None and role in ROLE_KINDS:
        fits, forced = ROLE_KINDS[role]
        try:
            ratings = line_ratings(table, part, memo)
        except BadRowError:
            ratings = None
        if ratings is None or ratings.kind not in fits:
            ratings = _read_line(table, part, forced)
        if role == "fuse" and ratings.kind == "resistor":
            ratings.fusible = True  # a resistor serving as the fuse is a fusible resistor
        return ratings
    if memo is not None:
        key = (
            re.match(r"[A-Za-z]*", part.ref).group(0).upper(),  # type: ignore[union-attr]
            part.value,
            part.description,
            part.package,
            part.voltage,
            part.power,
            part.tolerance,
            part.ratings,
        )
        hit = memo.get(key)
        if hit is None:
            hit = memo[key] = line_ratings(table, part)
        return dataclasses.replace(
            hit, words=list(hit.words), notes=list(hit.notes), assumed=dict(hit.assumed)
        )
    return _read_line(table, part, None)


def _read_line(table: BomTable, part: BomPart, kind: str | None) -> Ratings:
    """The line's ratings read as ``kind`` (None: as its text says); a bad value becomes a
    BadRowError naming the file, row and column."""
    try:
        ratings = read_ratings(
            part.ref,
            part.value,
            part.description,
            part.package,
            part.voltage,
            part.power,
            part.tolerance,
            kind=kind,
        )
        if part.ratings:
            apply_stated_ratings(ratings, part.ratings)
        return ratings
    except BadValueError as exc:
        message = str(exc)
        field_name, _, rest = message.partition(": ")
        column = table.column_map.get(field_name)
        if column is None and field_name == "value":
            column = table.column_map.get("description")
        problem = f"{part.ref}: {rest or message}"
        raise BadRowError(table.path, part.row, column, problem) from None


def rule_fields() -> dict[str, tuple[str, ...]]:
    """Role -> the rating fields its rules (and the engine's model) read, value and safety class
    aside: the fields the catalogue fill may supply."""
    from ..rules import RULES

    by_role: dict[str, list[str]] = {}
    for rule in RULES:
        by_role.setdefault(rule.role, []).extend(rule.ratings)
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
                name
                for name in list(names) + list(extra.get(role, ()))
                if name not in ("value", "safety_class")
            )
        )
        for role, names in by_role.items()
    }
