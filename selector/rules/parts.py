"""The parts a rule looks at and the findings it returns.

``RatedPart`` holds the ratings of one part (or one group of equal parts) as arranged in the
circuit; ``rated_part_from_row`` makes one from a catalogue row; ``Finding`` is one rule applied to
one part. Roles and arrangements are fixed here; ratings are per element, SI units.
"""

from __future__ import annotations

import dataclasses
import math
import re
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Final

import numpy as np

ROLES: Final[tuple[str, ...]] = (
    "x_capacitor",
    "series_resistor",
    "bleeder",
    "rectifier",
    "zener",
    "reservoir",
    "fuse",
    "varistor",
    "whole",
)
ARRANGEMENTS: Final[tuple[str, ...]] = ("single", "series", "parallel")

#: IEC 60384-14, peak impulse voltage in service that each X subclass is meant for [S]
#: (X1: 2.5-4 kV, X2: <= 2.5 kV, X3: <= 1.2 kV); any other part across the mains: 0 (fails).
X_CLASS_IMPULSE_V: Final[dict[str, float]] = {"X1": 4000.0, "X2": 2500.0, "X3": 1200.0}


@dataclass(frozen=True)
class RatedPart:
    """The ratings of one part (or one group of equal parts) as arranged in the circuit.

    Ratings are per element, SI units, ``None`` when unknown. ``qty`` equal elements are arranged
    ``single`` / ``series`` / ``parallel``: elements in series share voltage and power, in parallel
    they share current and power. ``share`` is the fraction of the role's total stress this group
    carries (1 when it is the only group; the auditor sets R_i / R_total for unequal resistors in
    series). ``value``: F for capacitors, ohm for resistors, V (Vz) for Zeners, A for fuses.
    """

    role: str
    kind: str | None = None
    code: str | None = None
    ref: str | None = None
    description: str | None = None
    qty: int = 1
    arrangement: str = "single"
    share: float = 1.0
    value: float | None = None
    tolerance: float | None = None
    safety_class: str | None = None
    rated_voltage_v: float | None = None
    rated_voltage_ac_v: float | None = None
    limiting_voltage_v: float | None = None
    power_w: float | None = None
    derate_start_c: float | None = None
    derate_end_c: float | None = None
    pulse_energy_j: float | None = None
    impulse_v: float | None = None
    dvdt_v_per_s: float | None = None
    vrrm_v: float | None = None
    if_av_a: float | None = None
    ifsm_a: float | None = None
    tj_max_c: float | None = None
    ripple_a: float | None = None
    temp_max_c: float | None = None
    i2t_a2s: float | None = None
    fusible: bool | None = None
    #: electrolytic: rated life [h] at its rated temperature ``temp_max_c``
    rated_life_h: float | None = None
    #: X capacitor: humidity robustness grade of IEC 60384-14 Amd 1 (I, II, III)
    humidity_grade: str | None = None
    #: Zener non-repetitive pulse power [W] at ``zener_pulse_width_s`` [s] (optional: read
    #: when a catalogue row or BOM has it; else the generic figure ``ZENER_GENERIC_PULSE``)
    zener_pulse_power_w: float | None = None
    zener_pulse_width_s: float | None = None
    #: varistor: the current [A] at which its clamping voltage (``limiting_voltage_v``) holds
    clamp_current_a: float | None = None

    def __post_init__(self) -> None:
        if self.role not in ROLES:
            raise ValueError(f"unknown role '{self.role}'; valid roles: {', '.join(ROLES)}")
        if self.arrangement not in ARRANGEMENTS:
            raise ValueError(
                f"unknown arrangement '{self.arrangement}'; valid: {', '.join(ARRANGEMENTS)}"
            )
        if self.qty < 1:
            raise ValueError(f"qty must be >= 1, got {self.qty}")

    # per-element shares of the role's total stress
    @property
    def n_series(self) -> int:
        return self.qty if self.arrangement == "series" else 1

    @property
    def power_share(self) -> float:
        """Fraction of the role's power (and pulse energy) one element takes (equal parts)."""
        return self.share / self.qty

    @property
    def voltage_share(self) -> float:
        """Fraction of the role's voltage one element takes (equal parts in series)."""
        return self.share / self.n_series

    @property
    def class_impulse_v(self) -> float | None:
        return x_class_impulse_v(self.safety_class)

    @property
    def fuse_time_lag(self) -> float:
        """Fuse: 1.0 time-lag, 0.0 fast-acting, NaN not stated (:func:`fuse_time_lag_of_text`
        on the description and code)."""
        return fuse_time_lag_of_text(" ".join(t for t in (self.description, self.code) if t))


_TIME_LAG_RE: Final = re.compile(
    r"TIME[\s-]*LAG|SLOW[\s-]*BLOW|\bSLOW\b|\(T\)|TIME[\s-]*DELAY|\bT\d|\d\s*M?AT\b"
)
_FAST_RE: Final = re.compile(r"FAST[\s-]*ACTING|\bFAST\b|QUICK[\s-]*ACTING|\(F\)|\bF\d|\d\s*M?AF\b")


def fuse_time_lag_of_text(text: str | None) -> float:
    """1.0 when a fuse's text says time-lag (``time-lag``, ``slow-blow``, ``(T)``, ``T100mA``,
    ``100mAT``), 0.0 when it says fast-acting (``fast``, ``quick-acting``, ``(F)``, ``F500mA``),
    NaN when it says neither (speed letters T and F of IEC 60127 [M] from memory).

    Example: '5 x 20 mm glass cartridge fuse, time-lag (T), 100 mA' -> 1.0; 'F500mA' -> 0.0.
    """
    up = (text or "").upper()
    if _TIME_LAG_RE.search(up):
        return 1.0
    if _FAST_RE.search(up):
        return 0.0
    return math.nan


#: the subclasses of IEC 60384-14 (X and Y safety capacitors) [S]
IEC60384_14_CLASSES: Final[frozenset[str]] = frozenset({"X1", "X2", "X3", "Y1", "Y2", "Y3", "Y4"})


def is_iec60384_14_class(safety_class: str | None) -> bool:
    """True for a part of an IEC 60384-14 subclass (X1-X3, Y1-Y4) [S]: 'X2' -> True;
    a general-purpose film ('GP'), a ceramic or an unknown class (None) -> False."""
    return safety_class is not None and str(safety_class).strip().upper() in IEC60384_14_CLASSES


def x_class_impulse_v(safety_class: str | None) -> float | None:
    """Peak impulse voltage in service an X subclass is meant for [V] (IEC 60384-14 [S]).

    ``'X2'`` -> 2500.0; a part of no X subclass (general-purpose film, ceramic, Y) -> 0.0;
    unknown (``None``) -> None.
    """
    if safety_class is None:
        return None
    return X_CLASS_IMPULSE_V.get(str(safety_class).strip().upper(), 0.0)


#: catalogue columns that carry ratings (DEVELOPERS.md "Catalogue")
_RATING_COLUMNS: Final[tuple[str, ...]] = tuple(
    f.name
    for f in dataclasses.fields(RatedPart)
    if f.name not in {"role", "kind", "code", "ref", "description", "qty", "arrangement", "share"}
)


def _clean(value: Any) -> Any:
    """A catalogue cell as a plain Python value; NaN, pandas NA/NaT -> None."""
    if value is None:
        return None
    if isinstance(value, float) and math.isnan(value):
        return None
    if isinstance(value, (np.floating, np.integer)):
        value = value.item()
        if isinstance(value, float) and math.isnan(value):
            return None
    if value is getattr(np, "nan", object()):
        return None
    try:
        import pandas as pd

        if value is pd.NA or value is pd.NaT:
            return None
    except ImportError:  # pragma: no cover
        pass
    return value


def rated_part_from_row(
    row: Mapping[str, Any],
    role: str,
    qty: int = 1,
    arrangement: str = "single",
    ref: str | None = None,
    share: float = 1.0,
) -> RatedPart:
    """A RatedPart from a catalogue row (a ``parts_frame`` row or any mapping of its columns)."""
    ratings: dict[str, Any] = {}
    for name in _RATING_COLUMNS:
        if name in row:
            value = _clean(row[name])
            if name == "fusible" and value is not None:
                value = bool(value)
            elif name in ("safety_class", "humidity_grade") and value is not None:
                value = str(value)
            elif value is not None:
                value = float(value)
            ratings[name] = value
    return RatedPart(
        role=role,
        kind=_clean(row.get("kind")),
        code=_clean(row.get("code")),
        description=_clean(row.get("description")),
        ref=ref,
        qty=qty,
        arrangement=arrangement,
        share=share,
        **ratings,
    )


@dataclass(frozen=True)
class Finding:
    """One rule applied to one part: ok iff stress <= limit (see ``selector.rules``)."""

    rule: str
    part: str
    stress: float | None
    limit: float | None
    unit: str
    margin: float | None
    ok: bool
    severity: str  # 'fail' | 'warn' | 'pass'
    source: str
    corner: str | None = None
    ref: str | None = None
    description: str = ""
    note: str = ""
    #: a failure the rule's waiver turns into a warning (e.g. the fuse against a shorted
    #: X capacitor of an IEC 60384-14 class): reported, yet no reason to refuse a design
    waived: bool = False
