"""Rating formulas the catalogue build applies (pure functions, SI units).

Each function gives its formula, units, validity range, source and a worked example:
:func:`resistor_working_voltage`, :func:`x_impulse_test_voltage`, :func:`diode_i2t`,
:func:`zener_impedance`. Re-exported by :mod:`selector.catalogue.build`.
"""

from __future__ import annotations

import math

import numpy as np
from numpy.typing import ArrayLike

from ..errors import OutOfRangeError

__all__ = ["diode_i2t", "resistor_working_voltage", "x_impulse_test_voltage", "zener_impedance"]


def resistor_working_voltage(power_w: ArrayLike, resistance_ohm: ArrayLike, lev_v: ArrayLike):
    """Highest continuous voltage across a resistor: U = min(sqrt(P * R), LEV).

    ``power_w`` [W] rated power, ``resistance_ohm`` [ohm], ``lev_v`` [V] limiting element
    voltage. Valid for P > 0, R > 0, LEV > 0 (raises OutOfRangeError otherwise). Below the
    critical resistance LEV**2 / P the power limits, above it the LEV does.
    Source: generic resistor makers' data (rated voltage definition, IEC 60115-1) [S generic].

    Worked example: a 1206 chip (0.25 W, LEV 200 V) of 100 kohm: sqrt(0.25 * 1e5) = 158.1 V;
    of 1 Mohm: sqrt(2.5e5) = 500 V, limited to 200 V.

    >>> round(float(resistor_working_voltage(0.25, 100e3, 200.0)), 1)
    158.1
    >>> float(resistor_working_voltage(0.25, 1e6, 200.0))
    200.0
    """
    p = np.asarray(power_w, dtype=float)
    r = np.asarray(resistance_ohm, dtype=float)
    lev = np.asarray(lev_v, dtype=float)
    if np.any(p <= 0) or np.any(r <= 0) or np.any(lev <= 0):
        raise OutOfRangeError("resistor_working_voltage needs P > 0, R > 0 and LEV > 0")
    out = np.minimum(np.sqrt(p * r), lev)
    return float(out) if out.ndim == 0 else out


def x_impulse_test_voltage(impulse_test_v: float, capacitance_f: float) -> float:
    """Impulse test voltage of an X capacitor: Up for C <= 1 uF, Up / sqrt(C / 1 uF) above.

    ``impulse_test_v`` [V] the subclass's test voltage Up (X1 4 kV, X2 2.5 kV),
    ``capacitance_f`` [F] rated capacitance, > 0. Source: IEC 60384-14, impulse test [S].

    Worked example: X2 (Up = 2.5 kV), 2.2 uF: 2500 / sqrt(2.2) = 1685.5 V; 470 nF: 2500 V.

    >>> round(x_impulse_test_voltage(2500.0, 2.2e-6), 1)
    1685.5
    >>> x_impulse_test_voltage(2500.0, 470e-9)
    2500.0
    """
    if not (impulse_test_v > 0 and capacitance_f > 0):
        raise OutOfRangeError("x_impulse_test_voltage needs Up > 0 and C > 0")
    ratio = capacitance_f / 1e-6
    if ratio <= 1.0 + 1e-9:
        return float(impulse_test_v)
    return float(impulse_test_v / math.sqrt(ratio))


def diode_i2t(ifsm_a: float, duration_s: float = 8.3e-3) -> float:
    """I^2 t of a single half-sine current pulse of peak IFSM lasting ``duration_s``.

    I^2 t = integral_0^T (Ip sin(pi t / T))^2 dt = Ip^2 * T / 2. ``ifsm_a`` [A] peak,
    ``duration_s`` [s] the half-sine width (8.3 ms: one half cycle at 60 Hz, the width generic
    rectifier data use for IFSM [S generic]). Valid for Ip > 0, 0 < T <= 10 ms.
    Source: the integral of sin^2 over a half period (any calculus text).

    Worked example: IFSM = 30 A, 8.3 ms: 900 * 0.0083 / 2 = 3.735 A^2 s.

    >>> round(diode_i2t(30.0), 3)
    3.735
    """
    if not (ifsm_a > 0 and 0 < duration_s <= 10e-3):
        raise OutOfRangeError("diode_i2t needs IFSM > 0 and 0 < T <= 10 ms")
    return ifsm_a**2 * duration_s / 2.0


def zener_impedance(vz_v: float, ref_ohm: float, ref_v: float = 6.8, exponent: float = 1.5):
    """Dynamic impedance Zz of a Zener of voltage Vz in the catalogue's demo model [P, invented].

    Zz = ref_ohm * (Vz / ref_v) ** exponent for Vz >= ref_v, ref_ohm * (ref_v / Vz) ** exponent
    below: lowest near ref_v (about 6.8 V, where avalanche and field emission meet) and rising on
    both sides, the shape generic data sheets show; the figures are invented for the demo.
    ``vz_v`` [V] 1..300, ``ref_ohm`` [ohm] > 0, ``ref_v`` [V] > 0.

    Worked example: ref 3.5 ohm at 6.8 V, Vz = 27.2 V: 3.5 * 4 ** 1.5 = 28 ohm.

    >>> zener_impedance(27.2, 3.5)
    28.0
    """
    if not (1.0 <= vz_v <= 300.0 and ref_ohm > 0 and ref_v > 0):
        raise OutOfRangeError(f"zener_impedance holds for 1 V <= Vz <= 300 V, not {vz_v!r}")
    ratio = vz_v / ref_v if vz_v >= ref_v else ref_v / vz_v
    return float(round(ref_ohm * ratio**exponent, 6))
