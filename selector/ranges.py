"""Physical ranges of every quantity that enters dropper: the one table, each bound with its reason.

Every number that comes in from outside (a CLI option, a BOM or stock-list cell, a policy file,
a catalogue row read back from the database) is finite and inside the range of its quantity, or
it is refused. The bounds are deliberately wide: they do not judge a design (the rules do that),
they only keep numbers that no part, mains or load of this trade can have from reaching the
engine, where an ``inf`` or a ``1e-320`` turns into NaN margins or numpy errors far from the
cause. Zero is allowed for every magnitude (a surge level of 0 means none, a load of 0 no load);
callers that need a strictly positive value say so themselves.

Marks as in DOMAIN.md: [P] common practice, no source; [S] a published figure.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Final

from .errors import BadValueError

__all__ = ["RANGES", "Range", "check_count", "check_range"]


@dataclass(frozen=True)
class Range:
    """Inclusive bounds of a quantity: zero, or a magnitude from ``low`` to ``high``.

    ``lowest``: the most negative value allowed (None: no negative value is physical, as
    for farads; temperatures go down to absolute zero).
    """

    low: float
    high: float
    unit: str
    reason: str
    lowest: float | None = None

    @property
    def negative(self) -> bool:
        return self.lowest is not None


#: quantity -> its range; the keys are the canonical units of ``selector.units`` plus a few
#: dimensionless quantities. ``None`` is any value typed without a quantity (``snap 1e30``).
RANGES: Final[dict[str | None, Range]] = {
    "F": Range(
        1e-13,
        10.0,
        "F",
        "0.1 pF is the smallest IEC 60062 code (p10) and below any discrete capacitor; 10 F is a "
        "supercapacitor, more than any dropper reservoir or hold-up store [P]",
    ),
    "ohm": Range(
        1e-4,
        1e12,
        "ohm",
        "0.1 mohm is below any diode's or Zener's dynamic resistance and any ESR; 1 Tohm is the "
        "insulation resistance of a film capacitor, above any bleeder [P]",
    ),
    "V": Range(
        1e-3,
        1e5,
        "V",
        "1 mV is below any diode drop or regulator dropout; 100 kV is above every surge level "
        "(IEC 61000-4-5 up to 4 kV) and the Y1 impulse test (8 kV) [S: DOMAIN.md table 5]",
    ),
    "A": Range(
        1e-9,
        1e4,
        "A",
        "1 nA is leakage, no load; 10 kA is above a miniature fuse's breaking capacity [P]",
    ),
    "W": Range(
        1e-6,
        1e4,
        "W",
        "1 uW is below any standby figure; 10 kW is above any part on a dropper board [P]",
    ),
    "Hz": Range(
        1.0,
        1e6,
        "Hz",
        "mains is 50/60 Hz [S]; harmonics and ripple-control signals stay below a few kHz; "
        "1 Hz .. 1 MHz leaves room for both [P]",
    ),
    "s": Range(
        1e-12,
        1e10,
        "s",
        "1 ps is below any surge edge (1.2 us front, IEC 61000-4-5); 1e10 s (~300 years) is "
        "above any service life [P]",
    ),
    "J": Range(
        1e-12,
        1e6,
        "J",
        "switch-on and surge pulse energies are mJ to J; 1 MJ is far above any part [P]",
    ),
    "A2s": Range(
        1e-12,
        1e6,
        "A2s",
        "fuse and diode I^2t ratings are 1e-3 .. 1e3 A^2 s; 1e6 leaves room above [P]",
    ),
    "V/s": Range(
        1.0,
        1e13,
        "V/s",
        "film capacitors are rated 1 .. 10,000 V/us (1e6 .. 1e10 V/s); a switch-on edge "
        "through a few ohms stays below 1e13 V/s [P]",
    ),
    "mm2": Range(
        1e-3,
        1e6,
        "mm2",
        "a 01005 chip is 0.08 mm2, a whole board under 1 m2 (1e6 mm2) [P]",
    ),
    "mm": Range(
        1e-2,
        1e4,
        "mm",
        "lead pitches and bodies from 0.01 mm to 10 m cover every part [P]",
    ),
    None: Range(
        1e-15,
        1e15,
        "",
        "engineering notation as dropper reads and prints it spans pico (1e-12) to tera (1e12); "
        "a thousand times either way is the widest any quantity here reaches",
        lowest=-1e15,
    ),
    "tolerance": Range(
        0.0,
        0.999999,
        "",
        "a tolerance is a fraction of the value in [0, 100 %): at 100 % the part may be "
        "absent; IEC 60062 letters go to 20 % (M) [S]",
    ),
    "temperature_c": Range(
        0.0,
        400.0,
        "C",
        "from absolute zero (-273.15 C) to 400 C: wirewound and cement resistors derate to zero "
        "at 275-350 C (generic datasheets), no board part is rated above that [P]",
        lowest=-273.15,
    ),
    "count": Range(
        0.0,
        1e9,
        "",
        "a quantity or stock count is a whole number up to a thousand million pieces [P]",
    ),
    "price": Range(
        0.0,
        1e6,
        "",
        "a unit price above a million (any currency) is a typing error for one part [P]",
    ),
}


def _fmt(x: float) -> str:
    return f"{x:g}"


def check_range(value: float, quantity: str | None, what: str = "value") -> float:
    """``value`` as a float when it is finite and inside the range of ``quantity``; else
    :class:`BadValueError` naming ``what``, the bounds and the reason.

    >>> check_range(330e-9, "F")
    3.3e-07
    >>> check_range(0.0, "A")
    0.0
    """
    bounds = RANGES[quantity]
    x = float(value)
    unit = f" {bounds.unit}" if bounds.unit else ""
    if not math.isfinite(x):
        raise BadValueError(f"{what} {value!r} is not a finite number")
    if x < 0 and bounds.lowest is None:
        raise BadValueError(f"{what} {_fmt(x)}{unit} must not be negative")
    if bounds.lowest is not None and x < bounds.lowest:
        raise BadValueError(
            f"{what} {_fmt(x)}{unit} is below {_fmt(bounds.lowest)}{unit}, out of range "
            f"({bounds.reason})"
        )
    magnitude = abs(x)
    if magnitude > bounds.high:
        raise BadValueError(
            f"{what} {_fmt(x)}{unit} is above {_fmt(bounds.high)}{unit}, out of range "
            f"({bounds.reason})"
        )
    if 0 < magnitude < bounds.low:
        raise BadValueError(
            f"{what} {_fmt(x)}{unit} is below {_fmt(bounds.low)}{unit}, out of range "
            f"({bounds.reason})"
        )
    return x


def check_count(value: float | int, what: str = "count") -> int:
    """A whole number of pieces in [0, 1e9] (quantities, stock counts), else BadValueError."""
    if isinstance(value, bool):
        raise BadValueError(f"{what} {value!r} is not a number")
    if isinstance(value, int):
        if not 0 <= value <= RANGES["count"].high:
            shown = f"{value}" if abs(value) < 10**30 else f"of {value.bit_length()} bits"
            raise BadValueError(f"{what} {shown} is out of range ({RANGES['count'].reason})")
        return value
    x = check_range(value, "count", what)
    if not x.is_integer():
        raise BadValueError(f"{what} must be a whole number, got {_fmt(x)}")
    return int(x)
