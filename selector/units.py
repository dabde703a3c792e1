"""Engineering values at the edges: the one module that reads and prints them.

Everything inside dropper is a plain SI float (volts, amps, farads, ohms, watts, seconds,
joules, hertz). This module turns what people type or what a BOM holds into such floats, and
floats back into engineering notation.

Accepted forms
--------------
* plain and scientific numbers: ``1e-6``, ``1.23457e-05``, ``0.33``;
* a number with an SI prefix and/or unit, with or without a space: ``330n``, ``330 nF``,
  ``0.33uF``, ``0.33µF``, ``12mA``, ``2.2k``, ``1.5kΩ``, ``220 ohm``, ``50Hz``;
* the IEC 60062 letter-and-digit code, where the prefix letter (or ``R`` for the unit itself)
  stands in place of the decimal point: ``4R7``, ``R47``, ``470R``, ``2K2``, ``2k2``, ``4M7``,
  ``4n7``, ``1u0``, ``0u33`` (IEC 60062:2016, clause 4 [S]);
* tolerances: the IEC 60062 letters ``B C D F G J K M`` and percentages ``5%``, ``±10 %``.

The ``m`` / ``M`` rule
----------------------
``M`` is mega and ``m`` is milli. The one exception: when the caller says which quantity it wants
and a megaunit of that quantity cannot occur in this trade (farads, amps, watts, seconds, joules),
an ``M`` is read as milli (``4M7`` asked as a capacitance is 4.7 mF). For ohms, volts and hertz
both readings are physical, so the letter's case decides. ``K`` and ``k`` are both kilo;
``u``, ``µ`` (micro sign) and ``μ`` (Greek mu) are all micro. A trailing ``f``/``F`` is the farad
unit, never femto.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from typing import Final

from .errors import BadValueError
from .ranges import check_range

__all__ = [
    "PREFIXES",
    "TOLERANCE_LETTERS",
    "UNITS",
    "format_percent",
    "format_value",
    "format_duration",
    "iec60062_code",
    "decimal_points",
    "decimal_sign_of",
    "parse_count",
    "parse_number",
    "parse_duration",
    "parse_percent",
    "parse_tolerance",
    "parse_value",
]

PREFIXES: Final[dict[str, float]] = {
    "p": 1e-12,
    "n": 1e-9,
    "u": 1e-6,
    "m": 1e-3,
    "k": 1e3,
    "K": 1e3,
    "M": 1e6,
    "G": 1e9,
    "T": 1e12,
}

#: canonical unit symbol -> the spellings accepted for it (matched case-insensitively)
UNITS: Final[dict[str, tuple[str, ...]]] = {
    "F": ("f", "farad", "farads"),
    "ohm": ("ohm", "ohms", "Ω", "Ω", "r"),
    "V": ("v", "vac", "vdc", "volt", "volts"),
    "A": ("a", "amp", "amps", "ampere", "amperes"),
    "W": ("w", "watt", "watts"),
    "Hz": ("hz",),
    "s": ("s", "sec", "second", "seconds"),
    "J": ("j", "joule", "joules"),
    "A2s": ("a2s", "a²s"),
}

#: quantities in which a mega-prefix cannot occur in this trade, so ``M`` means milli
_NO_MEGA: Final[frozenset[str]] = frozenset({"F", "A", "W", "s", "J", "A2s"})

#: IEC 60062:2016 table of tolerance code letters [S]
TOLERANCE_LETTERS: Final[dict[str, float]] = {
    "B": 0.001,
    "C": 0.0025,
    "D": 0.005,
    "F": 0.01,
    "G": 0.02,
    "J": 0.05,
    "K": 0.10,
    "M": 0.20,
}

_SYMBOL = {
    "F": "F",
    "ohm": "Ω",
    "V": "V",
    "A": "A",
    "W": "W",
    "Hz": "Hz",
    "s": "s",
    "J": "J",
    "A2s": "A²s",
}

_EXAMPLES = {
    None: "'330n', '4.7 kΩ', '2k2', '12mA', '1e-6'",
    "F": "'330n', '0.33uF', '4n7', '1u0'",
    "ohm": "'470', '2k2', '4R7', '1.5kΩ', '1M'",
    "V": "'230', '5.1V', '305 VAC'",
    "A": "'12m', '12mA', '0.5A'",
    "W": "'0.25', '250mW', '1W'",
    "Hz": "'50', '60Hz'",
    "s": "'1', '20ms'",
    "J": "'0.5', '20mJ'",
    "A2s": "'0.5', '2 A2s'",
}

_UNIT_LOOKUP: dict[str, str] = {}
for _canon, _spellings in UNITS.items():
    for _s in _spellings:
        _UNIT_LOOKUP[_s.lower()] = _canon

_NUMBER = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"
_UNIT_TEXT = r"(?P<unit>[^\d\s.]*)"
_PLAIN_RE = re.compile(rf"^(?P<num>{_NUMBER})\s*(?P<prefix>[pnuµμmkKMGT])?\s*{_UNIT_TEXT}$")
_CODE_RE = re.compile(rf"^(?P<int>\d*)(?P<letter>[pnuµμmkKMGTRr])(?P<frac>\d+)\s*{_UNIT_TEXT}$")


def _unit_of(text: str, raw: str, quantity: str | None) -> str | None:
    """The canonical unit spelled by ``text`` (may be empty), checked against ``quantity``."""
    if not text:
        return None
    canon = _UNIT_LOOKUP.get(text.lower())
    if canon is None:
        raise BadValueError(
            f"cannot read {raw!r}: unknown unit {text!r}; write it like {_EXAMPLES[quantity]}"
        )
    if quantity is not None and canon != quantity:
        raise BadValueError(
            f"cannot read {raw!r}: it is in {canon}, but a value in {quantity} is wanted "
            f"(e.g. {_EXAMPLES[quantity]})"
        )
    return canon


def _multiplier(letter: str, quantity: str | None, unit: str | None) -> float:
    if letter in "µμ":
        return 1e-6
    if letter in "Rr":
        return 1.0
    effective = quantity or unit
    if letter == "M" and effective in _NO_MEGA:
        return 1e-3
    return PREFIXES[letter]


def parse_value(text: str | float | int, quantity: str | None = None) -> float:
    """Read an engineering value into an SI float.

    ``quantity`` is the canonical unit wanted (``"F"``, ``"ohm"``, ``"V"``, ``"A"``, ``"W"``,
    ``"Hz"``, ``"s"``, ``"J"``, ``"A2s"``) or ``None`` for any. A unit written in the text must
    agree with it. Raises :class:`BadValueError` quoting the text and showing a valid example.

    >>> parse_value("330n", "F")
    3.3e-07
    >>> parse_value("2k2")
    2200.0
    >>> parse_value("4R7", "ohm")
    4.7
    >>> parse_value("12mA")
    0.012
    """
    if isinstance(text, bool):
        raise BadValueError(f"cannot read {text!r} as a value")
    if isinstance(text, (int, float)):
        return _in_range(float(text), text, quantity)
    if quantity is not None and quantity not in UNITS:
        raise BadValueError(f"unknown quantity {quantity!r}; one of {', '.join(UNITS)}")
    raw = text
    s = text.strip().replace("\u00a0", " ").replace("Ω", "Ω")
    if s.startswith("±"):
        s = s[1:]
    if not s:
        raise BadValueError(f"cannot read an empty value; write it like {_EXAMPLES[quantity]}")
    m = _PLAIN_RE.match(s)
    if m:
        prefix = m.group("prefix")
        unit_text = m.group("unit")
        # '470R' (R = ohm), '100nf' (f = farad), '5.1V': the prefix group never eats a unit letter.
        unit = _unit_of(unit_text, raw, quantity)
        mult = _multiplier(prefix, quantity, unit) if prefix else 1.0
        value = float(m.group("num")) * mult
    else:
        m = _CODE_RE.match(s)
        if not m:
            raise BadValueError(
                f"cannot read {raw!r} as a value; write it like {_EXAMPLES[quantity]}"
            )
        letter = m.group("letter")
        unit = _unit_of(m.group("unit"), raw, quantity)
        if letter in "Rr":
            if unit not in (None, "ohm") or quantity not in (None, "ohm"):
                raise BadValueError(
                    f"cannot read {raw!r}: the letter R marks ohms (IEC 60062), "
                    f"but a value in {quantity or unit} is wanted"
                )
        mantissa = float(f"{m.group('int') or '0'}.{m.group('frac')}")
        value = mantissa * _multiplier(letter, quantity, unit)
    # round away binary noise from the multiplication (4.7 * 1e-9 -> 4.7e-09)
    return _in_range(float(f"{value:.12g}"), raw, quantity)


def _in_range(value: float, raw: object, quantity: str | None) -> float:
    """``value`` if finite and inside the physical range of ``quantity`` (selector.ranges)."""
    try:
        return check_range(value, quantity)
    except BadValueError as exc:
        shown = raw if not isinstance(raw, str) or len(raw) <= 40 else raw[:40] + "..."
        raise BadValueError(f"cannot use {shown!r}: {exc}") from None


def parse_tolerance(text: str | float) -> float:
    """Read a tolerance as a fraction: an IEC 60062 letter (``J`` -> 0.05) or a percentage.

    A bare number is read as percent (``5`` -> 0.05). NaN, infinity, negatives and 100 % or
    more are refused (the ``tolerance`` range of :mod:`selector.ranges`).

    >>> parse_tolerance("K")
    0.1
    >>> parse_tolerance("±5 %")
    0.05
    """
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return _tolerance_in_range(float(text), text)
    s = str(text).strip().replace(" ", "").lstrip("±").removeprefix("+/-")
    if s.upper() in TOLERANCE_LETTERS and len(s) == 1:
        return TOLERANCE_LETTERS[s.upper()]
    number = s.removesuffix("%")
    if not re.fullmatch(_NUMBER, number):
        shown = text if len(str(text)) <= 40 else str(text)[:40] + "..."
        raise BadValueError(
            f"cannot read {shown!r} as a tolerance; write a letter "
            f"({' '.join(TOLERANCE_LETTERS)}) or a percentage like '5%'"
        )
    return _tolerance_in_range(float(number), text)


def _tolerance_in_range(percent: float, raw: object) -> float:
    if not math.isfinite(percent) or not 0 <= percent < 100:
        raise BadValueError(
            f"cannot use {raw!r} as a tolerance: it must be a finite percentage from 0 to "
            "below 100 % (at 100 % the part may be absent)"
        )
    return check_range(percent / 100.0, "tolerance", "a tolerance")


#: seconds per duration unit of ``parse_duration``; a year is 8760 h (365 days of continuous
#: operation, so 10 y = 87600 h as product lives are usually stated) [P]
DURATION_UNITS: Final[dict[str, float]] = {
    "s": 1.0,
    "min": 60.0,
    "h": 3600.0,
    "d": 86400.0,
    "y": 8760.0 * 3600.0,
}
#: characters that separate groups of three digits and are never a decimal sign: the space and
#: its no-break / narrow / thin forms (ISO 80000-1:2009 7.3.1 [S]) and the apostrophe (Swiss
#: usage; common practice, no source)
GROUP_SPACES: Final[str] = " \u00a0\u202f\u2009'\u2019"
_SCIENTIFIC_RE = re.compile(r"(?:\d+(?:\.\d*)?|\.\d+)[eE][+-]?\d+")


def _grouped(int_part: str, separators: str) -> str | None:
    """``int_part`` without its group separators when it is 1-3 digits followed by groups of
    exactly three (``1,234,567``), else None."""
    groups = re.split(f"[{re.escape(separators)}]", int_part)
    if len(groups) < 2 or not all(g.isdigit() for g in groups):
        return None
    if not 1 <= len(groups[0]) <= 3 or groups[0].startswith("0"):
        return None
    if any(len(g) != 3 for g in groups[1:]):
        return None
    return "".join(groups)


def _number_parts(s: str, decimal_sign: str | None, whole: bool) -> tuple[str, str] | str:
    """(integer digits, fraction digits) of a number written with group separators and a
    decimal sign, or a reason why it cannot be read."""
    spaced = [ch for ch in GROUP_SPACES if ch in s]
    marks = [ch for ch in s if ch in ",."]
    if len(set(spaced)) > 1:
        return "two kinds of digit-group separator"
    if len(set(marks)) == 2:  # '1.234,50', '1,234.50': the last mark is the decimal sign
        dec = marks[-1]
        if s.count(dec) > 1:
            return "a decimal sign written twice"
        group = "," if dec == "." else "."
        if spaced:
            return "two kinds of digit-group separator"
        int_part, frac = s.split(dec)
        digits = _grouped(int_part, group)
        return (digits, frac) if digits is not None and frac.isdigit() else "malformed groups"
    if len(marks) > 1:  # '1.234.567', '1,20,0': the mark separates groups
        if spaced:
            return "two kinds of digit-group separator"
        digits = _grouped(s, marks[0])
        return (digits, "") if digits is not None else "malformed digit groups"
    if marks:
        mark = marks[0]
        int_part, frac = s.split(mark)
        if not frac.isdigit():
            return "no digits after the decimal sign"
        looks_grouped = not spaced and len(frac) == 3 and _grouped(s, mark) is not None
        if looks_grouped and (whole or (decimal_sign is not None and decimal_sign != mark)):
            return (int_part + frac, "")
        if looks_grouped and decimal_sign is None:
            return (
                f"ambiguous: {mark!r} before three digits may be a decimal sign or a "
                "thousands separator"
            )
    else:
        int_part, frac = s, ""
    if spaced:
        digits = _grouped(int_part, "".join(spaced))
        if digits is None:
            return "malformed digit groups"
        return (digits, frac)
    return (int_part, frac) if int_part.isdigit() or (not int_part and frac) else "not a number"


def parse_number(
    text: str | float | int,
    decimal_sign: str | None = None,
    whole: bool = False,
    what: str = "a number",
) -> float:
    """A plain number as written in a table cell: a decimal point or a decimal comma, and
    digit groups separated by a space, an apostrophe, a comma or a point.

    ISO 80000-1:2009 7.3.1 [S]: the decimal sign is a comma or a point; groups of three digits
    may be separated by a (small) space. Trade exports also separate groups by a comma
    (``1,200``), a point (``1.200``) or an apostrophe (``1'200``) (common practice, no source).
    A cell with one ``,`` or ``.`` before exactly three digits (``1,234``) is ambiguous: it is
    read with ``decimal_sign`` (the file's, see :func:`decimal_sign_of`) and refused when that
    is None. ``whole=True`` (counts, quantities, minimum orders) reads such a mark as a
    thousands separator and refuses a result that is not a whole number (``1,2``).

    >>> parse_number("1.234,50", ",")
    1234.5
    >>> parse_number("1,200", whole=True), parse_number("1 200", whole=True)
    (1200.0, 1200.0)
    >>> parse_number("0,21")
    0.21
    """
    if isinstance(text, bool):
        raise BadValueError(f"cannot read {text!r} as {what}")
    if isinstance(text, (int, float)):
        value = float(text)
    else:
        raw = str(text)
        s = raw.strip()
        sign = -1.0 if s.startswith("-") else 1.0
        s = s[1:].strip() if s[:1] in "+-" else s
        shown = raw if len(raw) <= 40 else raw[:40] + "..."
        if _SCIENTIFIC_RE.fullmatch(s):
            value = sign * float(s)
        else:
            parts = _number_parts(s, decimal_sign, whole) if s else "empty"
            if isinstance(parts, str):
                raise BadValueError(
                    f"cannot read {shown!r} as {what}: {parts}; write it like '1200', "
                    "'1,200', '1.200', '1 200' (whole) or '0.21', '0,21', '1.234,50'"
                )
            value = sign * float(f"{parts[0] or '0'}.{parts[1] or '0'}")
        if whole and math.isfinite(value) and not value.is_integer():
            raise BadValueError(
                f"cannot read {shown!r} as {what}: a whole number is wanted (thousands are "
                "separated by groups of three digits: '1,200', '1.200', '1 200')"
            )
    if not math.isfinite(value):
        shown = repr(text) if len(str(text)) <= 40 else repr(str(text)[:40] + "...")
        raise BadValueError(f"{what} must be finite, got {shown}")
    return value


def decimal_evidence(text: str) -> str | None:
    """The decimal sign a cell shows beyond doubt (``'0,21'`` -> ``,``, ``'1,234.5'`` -> ``.``),
    None when it shows none (``'12'``, ``'1,234'``)."""
    s = str(text).strip().lstrip("+-")
    marks = [ch for ch in s if ch in ",."]
    if len(set(marks)) == 2:
        return marks[-1]
    if len(marks) != 1:
        return None
    parts = _number_parts(s, None, False)
    return marks[0] if isinstance(parts, tuple) and parts[1] else None


def decimal_sign_of(texts: Iterable[str], delimiter: str | None = None) -> str | None:
    """The decimal sign of a file's column of prices, decided once for the file.

    The cells that show their decimal sign beyond doubt decide (``0,21``, ``1.234,50``: comma;
    ``0.21``, ``1,234.50``: point); when none does, a ``;``-delimited file (the export of a
    spreadsheet set up for a decimal comma) has a comma and any other file a point
    (common practice, no source). Cells showing both signs: None, so that an ambiguous cell
    is refused rather than guessed.

    >>> decimal_sign_of(["0,21", "1.234"], ";"), decimal_sign_of(["1.234"], ",")
    (',', '.')
    """
    seen = {sign for sign in map(decimal_evidence, texts) if sign}
    if len(seen) == 2:
        return None
    if seen:
        return seen.pop()
    return "," if delimiter == ";" else "."


_DECIMAL_COMMA_RE = re.compile(r"(?<![\d.,])(\d+),(\d+)(?![\d]|[.,]\d)")


def decimal_points(text: str) -> str:
    """Free text (a part's description) with each decimal comma between digits turned into a
    point: ``'0,47µF'`` -> ``'0.47µF'``, ``'22,5mm'`` -> ``'22.5mm'`` (ISO 80000-1:2009 7.3.1
    [S]: the decimal sign may be a comma). A comma before exactly three digits after a
    1-3-digit number (``'4,700µF'``) may be a thousands separator and is refused; a list
    (``'1,2,3'``) is left alone.

    >>> decimal_points("X2 0,47µF 310VAC 2,2kΩ")
    'X2 0.47µF 310VAC 2.2kΩ'
    """

    def point(found: re.Match[str]) -> str:
        whole, frac = found.group(1), found.group(2)
        if len(frac) == 3 and _grouped(found.group(0), ",") is not None:
            raise BadValueError(
                f"{found.group(0)!r} in {text[:60]!r} is ambiguous: a comma before three digits "
                "may be a decimal comma or a thousands separator; write it with a point or "
                "without the separator"
            )
        return f"{whole}.{frac}"

    return _DECIMAL_COMMA_RE.sub(point, text)


_DURATION_RE = re.compile(rf"^(?P<num>{_NUMBER})\s*(?P<prefix>k)?\s*(?P<unit>[a-z]*)$")
_DURATION_SPELLINGS: Final[dict[str, str]] = {
    "s": "s", "sec": "s", "min": "min", "h": "h", "hr": "h", "hrs": "h", "hour": "h",
    "hours": "h", "d": "d", "day": "d", "days": "d", "y": "y", "yr": "y", "yrs": "y",
    "year": "y", "years": "y", "a": "y",
}  # fmt: skip


def parse_duration(text: str | float, default_unit: str = "h") -> float:
    """Read a duration (a product life) into seconds: a number with h, d, y (8760 h), min or
    s, optionally with a k prefix; a bare number is in ``default_unit``.

    >>> parse_duration("87600h") == parse_duration("10y") == 87600 * 3600.0
    True
    >>> parse_duration("50kh")
    180000000.0
    """
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        value, unit, kilo = float(text), default_unit, False
    else:
        m = _DURATION_RE.match(str(text).strip().lower().replace(" ", ""))
        if not m:
            raise BadValueError(
                f"cannot read {text!r} as a duration; write it like '87600h', '10y', '50kh'"
            )
        value, kilo = float(m["num"]), bool(m["prefix"])
        unit = _DURATION_SPELLINGS.get(m["unit"] or default_unit, "")
        if not unit:
            raise BadValueError(
                f"cannot read the unit of {text!r}; one of h, d, y (8760 h), min, s"
            )
    seconds = value * (1e3 if kilo else 1.0) * DURATION_UNITS[unit]
    if not (math.isfinite(seconds) and seconds > 0):
        raise BadValueError(f"a duration must be > 0, got {text!r}")
    return seconds


def format_duration(seconds: float) -> str:
    """A life in hours and years: ``format_duration(87600 * 3600.0)`` -> '87600 h (10 y)'."""
    hours = seconds / 3600.0
    if math.isinf(hours):
        return "unlimited"
    return f"{hours:.0f} h ({hours / 8760.0:.3g} y)"


def parse_count(text: str | float, what: str = "count") -> float:
    """A count with an optional k or M (mega) prefix: '30k' -> 30000.0, '1e5' -> 100000.0;
    it must be >= 0."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        value = float(text)
    else:
        t = str(text).strip().replace(" ", "").replace("_", "")
        mult = 1.0
        if t[-1:] in ("k", "K"):
            mult, t = 1e3, t[:-1]
        elif t[-1:] == "M":
            mult, t = 1e6, t[:-1]
        try:
            value = float(t) * mult
        except ValueError:
            raise BadValueError(f"cannot read {text!r} as a {what}; write it like '30k'") from None
    if not (math.isfinite(value) and value >= 0):
        raise BadValueError(f"a {what} must be >= 0, got {text!r}")
    return value


def parse_percent(text: str | float, what: str = "percentage") -> float:
    """A percentage as a fraction in [0, 1]: '60' -> 0.6, '85 %' -> 0.85."""
    try:
        value = float(str(text).strip().replace(" ", "").removesuffix("%")) / 100.0
    except ValueError:
        raise BadValueError(f"cannot read {text!r} as a {what}; write it like '60'") from None
    if not 0.0 <= value <= 1.0:
        raise BadValueError(f"a {what} must lie in 0..100 %, got {text!r}")
    return value


_ENG_PREFIX = {-12: "p", -9: "n", -6: "µ", -3: "m", 0: "", 3: "k", 6: "M", 9: "G", 12: "T"}


def format_value(value: float, unit: str = "", digits: int = 3, ascii: bool = False) -> str:
    """Print an SI float in engineering notation: ``3.3e-7, "F"`` -> ``'330 nF'``.

    ``unit`` is a canonical unit (``"ohm"`` prints as ``Ω``) or any text; ``digits`` are the
    significant digits kept (trailing zeros dropped). ``ascii=True`` prints ``u`` and ``ohm``.

    >>> format_value(4700, "ohm")
    '4.7 kΩ'
    >>> format_value(0.012, "A")
    '12 mA'
    """
    symbol = _SYMBOL.get(unit, unit)
    if ascii:
        symbol = {"Ω": "ohm", "A²s": "A2s"}.get(symbol, symbol)
    if value == 0 or not math.isfinite(value):
        return f"{value:g} {symbol}".rstrip()
    rounded = float(f"{value:.{digits}g}")
    exp3 = int(math.floor(math.log10(abs(rounded)) / 3) * 3)
    # a megafarad or megaampere would read back as milli (see the m/M rule): stop at kilo
    exp3 = max(-12, min(3 if unit in _NO_MEGA else 12, exp3))
    mantissa = rounded / 10.0**exp3
    prefix = _ENG_PREFIX[exp3]
    if ascii and prefix == "µ":
        prefix = "u"
    text = f"{mantissa:.{digits}g}"
    if "e" in text:  # e.g. 1000 after rounding: fall back to plain float text
        text = f"{mantissa:.{digits}f}".rstrip("0").rstrip(".")
    unit_part = f"{prefix}{symbol}"
    return f"{text} {unit_part}".rstrip()


def format_percent(fraction: float, digits: int = 3, signed: bool = False) -> str:
    """Print a fraction as a percentage: ``0.1`` -> ``'10 %'`` (the inverse of
    :func:`parse_tolerance` for a bare fraction).

    ``digits`` significant digits are kept (trailing zeros dropped); ``signed=True`` prints a
    ``+`` before positive values (for margins). A non-finite value is printed as it is.

    >>> format_percent(0.1)
    '10 %'
    >>> format_percent(0.0125)
    '1.25 %'
    >>> format_percent(0.496, signed=True)
    '+49.6 %'
    """
    if not math.isfinite(fraction):
        return f"{fraction:g}"
    pct = float(f"{fraction * 100.0:.{digits}g}")
    text = f"{pct:.{digits}g}"
    if "e" in text:  # e.g. 1000 % after rounding: plain text, not scientific
        text = f"{pct:.0f}"
    if text in ("0", "-0"):
        text = "0"
    if signed and pct > 0:
        text = "+" + text
    return f"{text} %"


def iec60062_code(value: float, unit: str = "ohm", digits: int = 3) -> str:
    """The IEC 60062 letter-and-digit code of a value: the prefix letter (``R`` for plain ohms)
    stands where the decimal point would be.

    >>> iec60062_code(4700)
    '4k7'
    >>> iec60062_code(0.47)
    'R47'
    >>> iec60062_code(330e-9, "F")
    '330n'
    """
    if value <= 0 or not math.isfinite(value):
        raise BadValueError(f"no IEC 60062 code for {value!r}")
    rounded = float(f"{value:.{digits}g}")
    if unit == "ohm":
        scales = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, "R")]
    else:
        scales = [
            (1.0, "R" if unit == "ohm" else ""),
            (1e-3, "m"),
            (1e-6, "u"),
            (1e-9, "n"),
            (1e-12, "p"),
        ]
    scale, letter = next(((sc, le) for sc, le in scales if rounded >= sc * (1 - 1e-12)), scales[-1])
    mant = float(f"{rounded / scale:.{digits}g}")
    if mant < 0.01:
        raise BadValueError(f"no IEC 60062 code for {value!r} {unit}: below the code's range")
    if mant == int(mant):
        return f"{int(mant)}{letter or unit}"
    whole, frac = f"{mant:.{digits}g}".split(".")
    if whole == "0":
        whole = "" if letter == "R" else "0"
    return f"{whole}{letter or '.'}{frac}{'' if letter else unit}"
