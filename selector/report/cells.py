"""The generic formatting of one JSON leaf for the HTML report: its text, cell and line breaks.

The report reads the JSON document generically: numeric leaves whose key ends in a unit suffix
(``_a _v _w _f _ohm _s _j _hz _a2s``, ``_var _va`` for reactive and apparent power, and ``_c``
for degrees Celsius, see :data:`UNIT_SUFFIXES`) are shown in engineering notation; unit-less
fractions (keys with a word such as ``tol``, ``tolerance``, ``loss``, ``fraction`` or
``margin``, see :data:`FRACTION_WORDS`) as percentages (``0.1`` -> ``10 %``); other leaves are
shown as text. A :class:`_Cell` keeps the shown text with the exact SI value and the JSON path;
:func:`_breakable` and :attr:`_Cell.css` share one rule (:func:`_wrap_word_joints`) for where a
name may wrap.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Mapping
from typing import Any

import markupsafe

from ..units import format_percent, format_value

__all__ = ["FRACTION_WORDS", "UNIT_SUFFIXES"]


#: JSON key suffix -> unit passed to ``format_value`` (longest suffixes first)
UNIT_SUFFIXES: tuple[tuple[str, str], ...] = (
    ("_a2s", "A2s"),
    ("_ohm", "ohm"),
    ("_var", "var"),
    ("_va", "VA"),
    ("_v_per_s", "V/s"),
    ("_hz", "Hz"),
    ("_mm2", "mm²"),
    ("_a", "A"),
    ("_v", "V"),
    ("_w", "W"),
    ("_f", "F"),
    ("_s", "s"),
    ("_j", "J"),
    ("_c", "°C"),
)


def _unit_of(key: str) -> str | None:
    for suffix, unit in UNIT_SUFFIXES:
        if key.endswith(suffix):
            return unit
    return None


def _quantity_name(key: str) -> str:
    for suffix, _ in UNIT_SUFFIXES:
        if key.endswith(suffix):
            key = key[: -len(suffix)]
            break
    return key.replace("_", " ")


#: words of a unit-less key that make its value a fraction shown as a percentage
#: (``mains_tolerance``, ``cap_tol``, ``cap_loss``, ``zener_power_fraction``, ``load_margin``)
FRACTION_WORDS = frozenset({"tol", "tolerance", "loss", "fraction", "margin"})


def _is_fraction_key(key: str) -> bool:
    """Whether a JSON key names a fraction (0.1 = 10 %): no unit suffix, and one of its
    ``_``-separated words is in :data:`FRACTION_WORDS`."""
    return _unit_of(key) is None and not FRACTION_WORDS.isdisjoint(key.lower().split("_"))


def _is_number(x: Any) -> bool:
    return isinstance(x, (int, float)) and not isinstance(x, bool)


def _show(key: str, value: Any) -> str:
    """Human text of one JSON leaf."""
    if value is None:
        return "–"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if _is_number(value):
        unit = _unit_of(key)
        if not math.isfinite(float(value)):
            return str(value)
        if key == "margin":  # a computed margin: signed, one decimal, so the column aligns
            return f"{float(value) * 100:+.1f} %"
        if unit is None and _is_fraction_key(key):
            return format_percent(float(value))
        if unit is None:
            return f"{value:.4g}" if isinstance(value, float) else str(value)
        if unit == "°C":
            return f"{value:.4g} °C"
        if unit in ("V/s", "mm²"):
            return f"{format_value(float(value), '', 3)}{unit}".replace(" ", "")
        return format_value(float(value), unit, 4)
    if isinstance(value, (list, tuple)):
        return ", ".join(_show(key, v) for v in value)
    if isinstance(value, Mapping):
        return "; ".join(f"{k}: {_show(str(k), v)}" for k, v in value.items())
    return str(value)


@dataclasses.dataclass(frozen=True)
class _Cell:
    """One shown value: text for people, ``key``/``si`` for checking against the JSON."""

    text: str
    key: str = ""
    si: str = ""

    @property
    def css(self) -> str:
        """``num`` (right-aligned, one line), ``text long`` (a word too long for a narrow
        column, e.g. a stock code, may break anywhere), ``text prose`` (a sentence: on a
        narrow page it may break anywhere too) or ``text`` (wraps between words and at the
        ``.`` and ``_`` joints of names, see :func:`_breakable`)."""
        if self.si:
            return "num"
        # a text cell wraps at spaces and where :func:`_breakable` puts a joint, nowhere else
        pieces = re.split(r"\s+|<wbr>", _JOINED_WORD.sub(_wrap_word_joints, self.text))
        if any(len(w) > 16 for w in pieces):
            return "text long"
        return "text prose" if len(self.text) > 30 else "text"

    @classmethod
    def of(cls, key: str, value: Any, path: str) -> _Cell:
        """``key`` picks the unit (its suffix), ``path`` locates the value in the JSON."""
        si = repr(float(value)) if _is_number(value) and math.isfinite(float(value)) else ""
        return cls(_show(key, value), path, si)


def _flatten(prefix: str, obj: Any, rows: list[tuple[str, Any]]) -> None:
    if isinstance(obj, Mapping):
        for k, v in obj.items():
            _flatten(f"{prefix}.{k}" if prefix else str(k), v, rows)
    else:
        rows.append((prefix, obj))


#: a word made of letter/digit runs joined by ``.`` or ``_`` (a name, a part code, a number)
_JOINED_WORD = re.compile(r"[A-Za-z0-9]+(?:[._][A-Za-z0-9]+)+")


def _wrap_word_joints(match: re.Match[str]) -> str:
    """The word of ``match`` (see :data:`_JOINED_WORD`) with ``<wbr>`` after each joint, except
    after a one-letter head (``x_capacitor``) and inside a number: a run of digits before the
    joint and a digit after it (``4.84``, ``1.2MV``, ``0805.100k``)."""
    pieces = re.split(r"([._])", match.group(0))
    out = [pieces[0]]
    for i in range(1, len(pieces), 2):
        head, joint, tail = pieces[i - 1], pieces[i], pieces[i + 1]
        number = head.isdigit() and tail[0].isdigit()
        one_letter_head = i == 1 and len(head) < 2
        out.append(joint + ("" if number or one_letter_head else "<wbr>") + tail)
    return "".join(out)


def _breakable(text: Any) -> markupsafe.Markup:
    """Escaped text with a line-break opportunity (``<wbr>``) after each ``.`` and ``_`` that
    joins two parts of a name or a part code (``series_r.surge_voltage``,
    ``res.fusible.0w5.8R2.5pct``), so it wraps at its joints in a narrow column instead of
    anywhere; not in numbers (``4.84``) and not after a one-letter head (``x_capacitor``).
    :attr:`_Cell.css` counts on these joints when it judges whether a word fits a column."""
    escaped = str(markupsafe.escape(text))
    return markupsafe.Markup(_JOINED_WORD.sub(_wrap_word_joints, escaped))
