"""Pure, numpy-friendly helpers that turn ratings into limits and limits into margins.

``margin`` is the one definition of a rule's margin; ``derated_power`` and ``discharge_time``
are the formulas several rules share; the generic derating spans stand in for a row that has
none. Floats in give floats out, arrays in give arrays out.
"""

from __future__ import annotations

import math
from typing import Any, Final

import numpy as np

from ..errors import OutOfRangeError

#: resistor power derating when the catalogue row has none: full power to 70 C, linear to zero
#: at 155 C (generic thick-film / metal-film datasheets; DOMAIN.md table 5) [S]
RESISTOR_GENERIC_DERATING_C: Final[tuple[float, float]] = (70.0, 155.0)
#: Zener power derating when the row has none: full power at 25 C, zero at Tj max 150 C [S]
ZENER_GENERIC_DERATING_C: Final[tuple[float, float]] = (25.0, 150.0)
#: Zener non-repetitive pulse rating when the part has none: (peak power per watt of steady
#: power class [W/W], rectangular pulse width [s]): 40 W per W at 100 us, junction at 25 C
#: before the pulse. [M] from memory, not checked: generic small-signal Zener datasheets give
#: some 30 W (0.5 W glass), 40 W (0.3 W SOT-23) and 60 W (1.3 W DO-41) at 100 us, i.e. 45-130
#: W per W; 40 W per W sits below all of them. A datasheet figure (``zener_pulse_power_w``)
#: replaces it.
ZENER_GENERIC_PULSE: Final[tuple[float, float]] = (40.0, 100e-6)


def margin(stress: Any, limit: Any) -> Any:
    """Fraction of the limit left: ``(limit - stress) / limit``; ok iff >= 0.

    With limit <= 0 the margin is 0 when stress <= limit (nothing allowed, nothing there) and -1
    otherwise. Example: stress 0.3 W against a limit of 0.5 W -> margin 0.4.
    """
    if isinstance(stress, (int, float)) and isinstance(limit, (int, float)):
        stress_f, limit_f = float(stress), float(limit)
        if limit_f > 0:
            return (limit_f - stress_f) / limit_f
        return 0.0 if stress_f <= limit_f else -1.0
    stress_a = np.asarray(stress, dtype=float)
    limit_a = np.asarray(limit, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        fraction_left = np.where(
            limit_a > 0,
            (limit_a - stress_a) / np.where(limit_a > 0, limit_a, 1.0),
            np.where(stress_a <= limit_a, 0.0, -1.0),
        )
    return fraction_left.item() if fraction_left.ndim == 0 else fraction_left


def derated_power(rated_w: Any, ambient_c: Any, start_c: Any, end_c: Any) -> Any:
    """Power a part may dissipate at ``ambient_c``: linear derating [W].

    P(T) = P_rated for T <= T_start; P_rated * (T_end - T) / (T_end - T_start) up to T_end;
    0 above. Units: W, C. Valid for T_end > T_start. Source: generic resistor datasheets, full
    power to 70 C and zero at 155 C (DOMAIN.md table 5) [S]; Zeners from 25 C to Tj max [S].
    Example: a 0.25 W 1206 resistor at 100 C: 0.25 * (155 - 100) / (155 - 70) = 0.162 W.
    """
    if all(isinstance(v, (int, float)) for v in (rated_w, ambient_c, start_c, end_c)):
        if end_c <= start_c:
            raise OutOfRangeError(
                f"derating end ({end_c} C) must lie above its start ({start_c} C)"
            )
        return float(rated_w) * min(max((end_c - ambient_c) / (end_c - start_c), 0.0), 1.0)
    start = np.asarray(start_c, dtype=float)
    end = np.asarray(end_c, dtype=float)
    if np.any(end <= start):
        raise OutOfRangeError(f"derating end ({end_c} C) must lie above its start ({start_c} C)")
    frac = np.clip((end - np.asarray(ambient_c, dtype=float)) / (end - start), 0.0, 1.0)
    out = np.asarray(rated_w, dtype=float) * frac
    return out.item() if out.ndim == 0 else out


def discharge_time(v0: Any, limit_v: Any, tau_s: Any) -> Any:
    """Time for an RC discharge from ``v0`` to ``limit_v`` [s]: t = tau * ln(v0 / limit).

    V(t) = V0 * exp(-t / tau) (RC discharge, any circuits textbook [S]); 0 when v0 <= limit.
    Valid for limit > 0. Example: 358 V (the crest of 253 V rms) through 1 Mohm x 330 nF
    (tau 0.33 s) reaches 34 V after 0.33 * ln(358 / 34) = 0.777 s (IEC 60335-1 22.5 allows 1 s).
    """
    lim = np.asarray(limit_v, dtype=float)
    if np.any(lim <= 0):
        raise OutOfRangeError("discharge limit voltage must be > 0")
    ratio = np.maximum(np.asarray(v0, dtype=float) / lim, 1.0)
    out = np.asarray(tau_s, dtype=float) * np.log(ratio)
    return out.item() if out.ndim == 0 else out


def resistor_derating_span(part: Any) -> tuple[Any, Any]:
    """(start, end) of a resistor's power derating [C]: the part's own, else 70 C -> 155 C."""
    start = value_or_default(part.derate_start_c, RESISTOR_GENERIC_DERATING_C[0])
    end = value_or_default(part.derate_end_c, RESISTOR_GENERIC_DERATING_C[1])
    return start, end


def zener_derating_span(part: Any) -> tuple[Any, Any]:
    """(start, end) of a Zener's power derating [C]: its own, else 25 C -> Tj max (or 150 C)."""
    start = value_or_default(part.derate_start_c, ZENER_GENERIC_DERATING_C[0])
    end = value_or_default(
        part.derate_end_c, value_or_default(part.tj_max_c, ZENER_GENERIC_DERATING_C[1])
    )
    return start, end


def value_or_default(value: Any, default: float) -> Any:
    """``value`` with None and NaN (elementwise for arrays) replaced by ``default``."""
    if value is None:
        return default
    if isinstance(value, np.ndarray):
        return np.where(np.isnan(value), default, value)
    if isinstance(value, float) and math.isnan(value):
        return default
    return value
