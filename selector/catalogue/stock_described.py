"""A stock row's description read by the BOM reader, and where each of its figures came from.

A stock list and a BOM are the same kind of table: a code, a free-text description, maybe value
and rating columns. The description of a stock row is read by the one reader of part texts,
:func:`selector.audit.ratings.read_ratings` (the auditor's reader of BOM lines; numbers go
through :mod:`selector.units`), as the kind of the row's family. A figure the file gives in a
column wins; a figure the description gives comes next; every other figure is the family
default (the template part, see :func:`selector.catalogue.stock_rows.template`).

:data:`PROVENANCE_FIELDS` names, per kind, the figures whose origin the import reports: the
value, tolerance and package and the ratings the design rules read for a part of that kind
(``selector.audit.rated_parts.rule_fields``; a test keeps the two in step).
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any, Final

from ..audit.ratings import KINDS as TEXT_KINDS
from ..audit.ratings import Ratings, read_ratings

__all__ = [
    "DESCRIBED_COLUMNS",
    "PROVENANCE_FIELDS",
    "SOURCES",
    "described_value",
    "matching_package",
    "read_description",
]

#: where a figure of an imported row came from
SOURCES: Final[tuple[str, ...]] = ("column", "description", "family", "none")

#: per kind: the figures whose source the import counts (parts columns)
PROVENANCE_FIELDS: Final[dict[str, tuple[str, ...]]] = {
    "x_capacitor": (
        "value", "tolerance", "package", "rated_voltage_ac_v", "rated_voltage_v", "dvdt_v_per_s",
        "humidity_grade",
    ),
    "film_capacitor": ("value", "tolerance", "package", "rated_voltage_v", "rated_voltage_ac_v"),
    "resistor": (
        "value", "tolerance", "package", "power_w", "limiting_voltage_v", "pulse_energy_j",
        "derate_start_c", "derate_end_c",
    ),
    "zener": (
        "value", "tolerance", "package", "power_w", "tj_max_c", "derate_start_c",
        "derate_end_c", "zz_ohm",
    ),
    "diode": ("value", "package", "vrrm_v", "ifsm_a", "vf_v", "rs_ohm"),
    "bridge": ("value", "package", "vrrm_v", "ifsm_a", "vf_v", "rs_ohm"),
    "electrolytic": (
        "value", "tolerance", "package", "rated_voltage_v", "ripple_a", "rated_life_h",
        "temp_max_c",
    ),
    "fuse": ("value", "package", "rated_voltage_ac_v", "i2t_a2s"),
    "varistor": ("value", "package", "rated_voltage_ac_v", "pulse_energy_j", "ifsm_a"),
}  # fmt: skip

#: Ratings attribute -> the parts column it sets (the value and package are handled apart)
DESCRIBED_COLUMNS: Final[tuple[str, ...]] = (
    "tolerance",
    "rated_voltage_v",
    "rated_voltage_ac_v",
    "limiting_voltage_v",
    "power_w",
    "vrrm_v",
    "ifsm_a",
    "i2t_a2s",
    "temp_max_c",
    "rated_life_h",
    "humidity_grade",
    "dvdt_v_per_s",
    "pulse_energy_j",
    "ripple_a",
)


def read_description(description: str, kind: str, value_text: str = "") -> Ratings | None:
    """The description read as a part of catalogue ``kind`` (None for a kind the text reader
    does not know, such as a varistor, or an empty description).

    ``value_text``: the row's value cell, when it has one, so the reader does not demand a
    value from the description. Raises :class:`selector.errors.BadValueError` as
    :func:`read_ratings` does (the message starts with the field, e.g. ``value: ...``).

    >>> r = read_description("Zener diode 12V 1W 5% DO-41", "zener")
    >>> (r.value, r.power_w, r.tolerance, r.package)
    (12.0, 1.0, 0.05, 'do41')
    """
    if not description.strip() or kind not in TEXT_KINDS:
        return None
    return read_ratings("", value_text, description, kind=kind)


def described_value(ratings: Ratings, kind: str) -> float | None:
    """The row's ``value`` (in the unit of its kind) as the description gives it: a diode's
    or bridge's value is its IF(AV)."""
    if kind in ("diode", "bridge"):
        return ratings.if_av_a
    return ratings.value


def _letters_digits(text: Any) -> str:
    return re.sub(r"[^0-9a-z]+", "", str(text or "").lower())


def matching_package(ratings: Ratings | None, parts: Sequence[Mapping[str, Any]]) -> str | None:
    """The built-in package name (as the family spells it) that the description's package
    or lead pitch names, e.g. ``do41`` -> ``DO-41``, ``pitch 15mm`` -> ``box P15``; None when
    no built-in part of the family has it."""
    if ratings is None:
        return None
    if ratings.pitch_mm is not None:  # a film capacitor's box is named by its lead pitch
        for part in parts:
            pitch = part.get("pitch_mm")
            if part["package"] and pitch and abs(pitch - ratings.pitch_mm) < 0.05:
                return str(part["package"])
    if not ratings.package:
        return None
    wanted = _letters_digits(ratings.package)
    for part in parts:
        if part["package"] and _letters_digits(part["package"]) == wanted:
            return str(part["package"])
    for part in parts:  # the reader's name holds the family's: melf_0207 -> 0207
        name = _letters_digits(part["package"])
        if len(name) >= 3 and name in wanted:
            return str(part["package"])
    return None


def fits_description(ratings: Ratings, parts: Sequence[Mapping[str, Any]]) -> bool:
    """Whether some built-in part of a family has the power rating and package the description
    states (used to break a tie between families of one kind, e.g. ``12V 1W DO-41`` between
    the 1 W and 5 W Zener families)."""
    wanted_package = _letters_digits(ratings.package) if ratings.package else None
    for part in parts:
        if ratings.power_w is not None and not (
            part["power_w"] and abs(part["power_w"] - ratings.power_w) <= 1e-9
        ):
            continue
        if wanted_package and _letters_digits(part["package"]) != wanted_package:
            continue
        return True
    return False
