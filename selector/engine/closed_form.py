"""Closed-form approximations: the fast, numpy-broadcasting screen for the design solver.

Every function takes SI floats or numpy arrays (broadcast together) and returns the same shape.
They are approximations of the exact periodic solution in :mod:`.steady_state`; their error
against it, measured by ``tests/test_closed_form.py::test_error_table`` over the useful range
(230 V and 120 V, 50/60 Hz, X capacitor 100 nF..1 uF, series R 47 ohm..1 kohm with
w R C <= 0.4, Zener 5.1 and 24 V, reservoir 470 uF, zero load, Vf 0.8 V), is:

===============================  ==================================  =====================
quantity                         formula                             max |error| vs exact
===============================  ==================================  =====================
bridge DC current, R -> 0        ``4 f C (Vpk - Vz - 2 Vf)``          8.3 % (grows with wRC)
bridge DC current, R corrected   ``4 f C (Vpk / k - Vz - 2 Vf)``      0.63 %
half-wave DC current, R corr.    ``f C (2 Vpk / k - Vz - Vf)``        0.72 %
line current rms                 ``V / sqrt(R^2 + Xc^2)``             10.1 % (ignores the
                                                                      clamp: 24 V on 120 V)
===============================  ==================================  =====================

with ``k = sqrt(1 + (w R C)^2)``: the series RC divides the crest seen by the capacitor. The bounds
in the table are asserted by that test (measured maxima; the test allows them rounded up).

On a distorted mains (harmonics relative to the fundamental, ``V`` the fundamental's rms) the
sine forms above are no longer estimates; the bounds below bracket the exact solution instead,
measured by ``tests/test_closed_form.py::test_distorted_bounds`` over the same range with three
spectra (EN 50160 profile 3rd/5th/7th at 5/6/5 %; the same with peaking phases; 2nd 2 %, 5th 6 %,
11th 3.5 %, 13th 3 % at mixed phases):

==========================  ======================================  ================
bound (distorted mains)     formula                                 measured
==========================  ======================================  ================
DC current, lower           sine form with ``Vpk / k`` x ``lo``     exact >= 1.05 x
DC current, upper           sine form with ``Vpk / k`` x ``hi``     exact <= 0.78 x
line rms, upper (no clamp)  ``sqrt(sum_k (V_k / |Z_k|)^2)``         exact <= 1.00 x
line rms, lower             the same x ``(1 - Vo' / Vpk)``          exact >= 1.007 x
==========================  ======================================  ================

``lo = 1 - sum a_h``, ``hi = 1 + sum h a_h``, ``a_h = (V_h / V_1) k_1 / k_h``
(:func:`harmonic_crest_bounds`); the test asserts each with 1 % to spare. The engine reports
every extreme as the worse of the distorted wave and the pure sine of the same fundamental
(:mod:`.analysis`), so a screen that bounds the minimum current from above and the stresses from
below may keep the sine forms and only tighten with the distorted ones: the line-rms lower bound
(series-R power) rises with the harmonics, the others are the sine's.

Sources: capacitor reactance and the RC divider, any circuits textbook [S]; the charge balance
``I_dc = 4 f C (Vpk - Vo')`` (each half cycle the capacitor swings by ``2 (Vpk - Vo')``) and the
half-wave form are derived in DOMAIN.md section 2 and in the docstrings below; switch-on energy
``0.5 C V^2`` and ``I^2 t = Vpk^2 C / (2 R)`` of charging a capacitor from a step through a
resistor, any textbook [S].
"""

from __future__ import annotations

import math

import numpy as np

from ..errors import OutOfRangeError

__all__ = [
    "crest",
    "dc_current",
    "dc_current_bounds",
    "dc_current_bridge",
    "dc_current_half_wave",
    "harmonic_crest_bounds",
    "discharge_time",
    "holdup_capacitance",
    "inrush_i2t",
    "inrush_peak_current",
    "line_current_rms",
    "line_current_rms_distorted",
    "reactance",
    "rc_factor",
    "series_r_power",
    "startup_time",
    "switch_on_energy",
    "zener_power_no_load",
]

SQRT2 = math.sqrt(2.0)


def _positive(name: str, value) -> np.ndarray:
    """``value`` as a float array; raises OutOfRangeError unless every element is > 0."""
    a = np.asarray(value, dtype=float)
    if not np.all(a > 0):
        raise OutOfRangeError(f"{name} must be > 0 (got {value!r})")
    return a


def crest(v_rms):
    """Crest of a sine: ``Vpk = sqrt(2) Vrms`` [V]. ``crest(230)`` -> 325.27 V."""
    return SQRT2 * np.asarray(v_rms, dtype=float)


def reactance(c_f, f_hz):
    """Reactance of a capacitor ``X_C = 1 / (2 pi f C)`` [ohm].

    Valid for any C > 0, f > 0. Source: any circuits textbook [S].

    >>> round(float(reactance(70.1e-9, 50.0)))
    45407
    """
    c = _positive("capacitance", c_f)
    f = _positive("frequency", f_hz)
    return 1.0 / (2.0 * np.pi * f * c)


def rc_factor(c_f, f_hz, r_ohm):
    """``k = sqrt(1 + (w R C)^2)``: by how much the series R lowers the crest across C [-]."""
    r = np.asarray(r_ohm, float)
    if np.any(r < 0):
        raise OutOfRangeError(f"series resistance must be >= 0 (got {r_ohm!r})")
    wrc = 2.0 * np.pi * _positive("frequency", f_hz) * r * _positive("capacitance", c_f)
    return np.sqrt(1.0 + wrc * wrc)


def line_current_rms(v_rms, c_f, f_hz, r_ohm=0.0):
    """Line current while the load is small: ``I = V / sqrt(R^2 + X_C^2)`` [A].

    Source: series RC impedance, any textbook [S]. Ignores the clamp voltage (a few % at 12 V on
    230 V). Example: 230 V, 330 nF, 50 Hz, 470 ohm -> 23.8 mA.
    """
    xc = reactance(c_f, f_hz)
    r = np.asarray(r_ohm, dtype=float)
    return np.asarray(v_rms, float) / np.sqrt(r * r + xc * xc)


def dc_current_bridge(v_rms, c_f, f_hz, vz_v, vf_v=0.8, r_ohm=0.0):
    """DC current a bridge dropper delivers into a clamped bus [A].

    ``I_dc = 4 f C (Vpk / k - Vz - 2 Vf)``, ``k = sqrt(1 + (w R C)^2)``, clipped at 0.

    Derivation: with the bus clamped at ``Vo' = Vz + 2 Vf``, the capacitor swings from
    ``-(Vpk - Vo')`` to ``+(Vpk - Vo')`` every half cycle; all of that charge passes the bridge into
    the bus, twice per cycle (DOMAIN.md section 2). The factor ``k`` is this module's correction for
    the series resistor. Valid for Vz + 2 Vf < Vpk / k; error table in the module docstring.
    Example: 230 V, 330 nF, 50 Hz, 12 V, 0.8 V, R = 0 -> 20.57 mA.
    """
    vpk = crest(v_rms) / rc_factor(c_f, f_hz, r_ohm)
    swing = vpk - np.asarray(vz_v, float) - 2.0 * np.asarray(vf_v, float)
    return np.maximum(4.0 * np.asarray(f_hz, float) * np.asarray(c_f, float) * swing, 0.0)


def dc_current_half_wave(v_rms, c_f, f_hz, vz_v, vf_v=0.8, r_ohm=0.0):
    """DC current a half-wave shunt dropper delivers into its Zener node [A].

    ``I_dc = f C (2 Vpk / k - Vz - Vf)``: node A is held at ``+Vz`` (Zener in breakdown) on the
    positive crest and at ``-Vf`` (Zener forward) on the negative crest, so the capacitor swings by
    ``2 Vpk - Vz - Vf`` once per cycle. ``k`` as in :func:`dc_current_bridge`. Valid while the
    Zener conducts (load below the result). Example: 230 V, 330 nF, 50 Hz, 12 V -> 10.52 mA.
    """
    vpk = crest(v_rms) / rc_factor(c_f, f_hz, r_ohm)
    swing = 2.0 * vpk - np.asarray(vz_v, float) - np.asarray(vf_v, float)
    return np.maximum(np.asarray(f_hz, float) * np.asarray(c_f, float) * swing, 0.0)


def dc_current(topology: str, v_rms, c_f, f_hz, vz_v, vf_v=0.8, r_ohm=0.0):
    """:func:`dc_current_bridge` or :func:`dc_current_half_wave` by topology name."""
    if topology == "bridge":
        return dc_current_bridge(v_rms, c_f, f_hz, vz_v, vf_v, r_ohm)
    if topology == "half-wave":
        return dc_current_half_wave(v_rms, c_f, f_hz, vz_v, vf_v, r_ohm)
    raise ValueError(f"unknown topology {topology!r}")


def zener_power_no_load(topology: str, v_rms, c_f, f_hz, vz_v, vf_v=0.8, r_ohm=0.0):
    """Zener dissipation with no load [W]: ``Vz I_dc`` (bridge); half-wave adds the forward
    half, ``(Vz + Vf) I_dc`` (the forward charge equals the reverse charge per cycle)."""
    i = dc_current(topology, v_rms, c_f, f_hz, vz_v, vf_v, r_ohm)
    vz = np.asarray(vz_v, float)
    if topology == "half-wave":
        return (vz + np.asarray(vf_v, float)) * i
    return vz * i


def series_r_power(v_rms, c_f, f_hz, r_ohm):
    """Continuous power in the series resistor ``R I_rms^2`` [W] (small-load approximation)."""
    i = line_current_rms(v_rms, c_f, f_hz, r_ohm)
    return np.asarray(r_ohm, float) * i * i


def inrush_peak_current(v_rms_max, r_ohm, drop_v=0.0, r_extra_ohm=0.0):
    """Switch-on at the crest, everything discharged: ``I_pk = (Vpk - drops) / (R + r)`` [A].

    Source: RC charging from a step, any textbook [S]. Example: 253 V, 470 ohm -> 0.761 A.
    """
    return (crest(v_rms_max) - drop_v) / (np.asarray(r_ohm, float) + r_extra_ohm)


def switch_on_energy(c_f, v_step):
    """Energy dissipated in the series resistance while C charges from a step: ``0.5 C V^2``
    [J], independent of R. Source: RC charging, any textbook [S].

    Example: 330 nF, 325.3 V -> 17.46 mJ.
    """
    v = np.asarray(v_step, float)
    return 0.5 * np.asarray(c_f, float) * v * v


def inrush_i2t(c_f, v_step, r_ohm):
    """``I^2 t = integral (V/R)^2 exp(-2t/RC) dt = V^2 C / (2 R)`` [A^2 s]. Textbook RC [S]."""
    v = np.asarray(v_step, float)
    return v * v * np.asarray(c_f, float) / (2.0 * np.asarray(r_ohm, float))


def discharge_time(v0, v_limit, r_ohm, c_f):
    """Time for an RC to fall from ``v0`` to ``v_limit``: ``t = R C ln(v0 / v_limit)`` [s]
    (0 when already below). Source: RC discharge, any textbook [S].

    Example: 1 Mohm, 330 nF, 357.8 V -> 34 V: 0.777 s.
    """
    v0 = np.asarray(v0, float)
    tau = np.asarray(r_ohm, float) * np.asarray(c_f, float)
    ratio = np.maximum(v0 / np.asarray(v_limit, float), 1.0)
    return tau * np.log(ratio)


def startup_time(c_res_f, v_bus, i_dc, i_load):
    """Start-up time to regulation ``t ~ C_res V / (I_dc - I_load)`` [s]; ``inf`` when the load
    takes everything (DOMAIN.md section 2, [P])."""
    net = np.asarray(i_dc, float) - np.asarray(i_load, float)
    with np.errstate(divide="ignore"):
        t = np.asarray(c_res_f, float) * np.asarray(v_bus, float) / net
    return np.where(net > 0, t, np.inf)


def holdup_capacitance(i_burst, t_burst, dv_allowed):
    """Reservoir needed to ride through a burst: ``C >= I_burst t_burst / dV`` [F] ([P])."""
    return np.asarray(i_burst, float) * np.asarray(t_burst, float) / np.asarray(dv_allowed, float)


# --- distorted mains -------------------------------------------------------------------------
def _orders_fractions(harmonics) -> tuple[np.ndarray, np.ndarray]:
    """(orders, fractions) of a harmonic sequence (``Harmonic`` objects or (order, fraction)
    pairs), as float arrays."""
    hs = [(h.order, h.fraction) if hasattr(h, "order") else (h[0], h[1]) for h in harmonics]
    if not hs:
        return np.zeros(0), np.zeros(0)
    o, a = (np.asarray(x, dtype=float) for x in zip(*hs, strict=True))
    if np.any(o < 2) or np.any(a < 0):
        raise OutOfRangeError(f"harmonics need orders >= 2 and fractions >= 0 (got {harmonics!r})")
    return o, a


def harmonic_crest_bounds(harmonics, wrc=0.0):
    """Bounds on the swing a distorted mains gives the X capacitor, per unit of the sine's
    R-corrected crest ``Vpk / k_1`` [-]: ``(lo, hi)`` with

        a_h = (V_h / V_1) k_1 / k_h,   k_h = sqrt(1 + (h w R C)^2),
        lo = 1 - sum_h a_h,            hi = 1 + sum_h h a_h,

    broadcast over ``wrc`` (``w R C`` of the fundamental). Each tone reaches the capacitor
    through the series R C divider of its own order, ``1 / k_h`` (phasor law [S]). ``lo``: at the
    fundamental's crest instant the harmonics can take away at most ``sum a_h``, so the crest is
    at least ``lo`` [derived]. ``hi``: the charge the bridge passes per cycle is C times the total
    variation of the capacitor voltage while conducting, and the total variation of a sum of
    tones is at most the sum of theirs, ``4 h a_h`` per cycle for order h (a pure sine: 4)
    [derived]. Both are 1 without harmonics. Valid for the range of :func:`dc_current_bridge`.

    Example: EN 50160 profile (3rd 5 %, 5th 6 %, 7th 5 %), R = 0: lo = 0.84, hi = 1.80.
    """
    o, a = _orders_fractions(harmonics)
    x = np.asarray(wrc, dtype=float)
    if np.any(x < 0):
        raise OutOfRangeError(f"w R C must be >= 0 (got {wrc!r})")
    k1 = np.sqrt(1.0 + x * x)
    lo = np.ones_like(x)
    hi = np.ones_like(x)
    for h, frac in zip(o, a, strict=True):
        ah = frac * k1 / np.sqrt(1.0 + (h * x) ** 2)
        lo = lo - ah
        hi = hi + h * ah
    return lo, hi


def dc_current_bounds(topology: str, v_rms, c_f, f_hz, vz_v, vf_v=0.8, r_ohm=0.0, harmonics=()):
    """Lower and upper bound of the DC current on a distorted mains [A]: ``(lo, hi)``.

    The sine closed form (:func:`dc_current`) with the R-corrected crest scaled by
    :func:`harmonic_crest_bounds`: bridge ``4 f C (lo Vpk / k - Vz - 2 Vf)`` and
    ``4 f C (hi Vpk / k - Vz - 2 Vf)``; half-wave ``f C (2 lo Vpk / k - Vz - Vf)`` and the same
    with ``hi``. ``V`` is the fundamental's rms. Without harmonics both are :func:`dc_current`.
    They carry the sine form's own error (module table) on top of the bracket; the test
    ``tests/test_closed_form.py::test_distorted_bounds`` asserts that the exact solution lies
    within ``[lo (1 - 1 %), hi (1 + 1 %)]`` over the useful range with EN 50160-like spectra.
    Example: 230 V, 330 nF, 50 Hz, 12 V, R = 0, EN 50160 profile: 17.14 mA .. 37.74 mA (sine:
    20.57 mA).
    """
    wrc = 2.0 * np.pi * _positive("frequency", f_hz) * np.asarray(r_ohm, float) * c_f
    lo, hi = harmonic_crest_bounds(harmonics, wrc)
    v = np.asarray(v_rms, dtype=float)
    return (
        dc_current(topology, v * lo, c_f, f_hz, vz_v, vf_v, r_ohm),
        dc_current(topology, v * hi, c_f, f_hz, vz_v, vf_v, r_ohm),
    )


def line_current_rms_distorted(v_rms, c_f, f_hz, r_ohm=0.0, harmonics=()):
    """Line current of a series R C on a distorted mains, no clamp [A]:

        I = sqrt(sum_k (V_k / |Z_k|)^2),   |Z_k| = sqrt(R^2 + (1 / (k w C))^2),

    summed over the fundamental (k = 1, ``V_1 = v_rms``) and every harmonic
    (``V_k = a_k V_1``): each tone sees the series impedance at its own frequency (phasor law),
    and the rms of a sum of tones of different frequencies is the root-sum-square (Parseval)
    [S: any circuits textbook]. For R = 0 the harmonic current is ``k w C V_k`` (DOMAIN.md
    section 10). Like :func:`line_current_rms` it ignores the clamp voltage, so it is an upper
    estimate; ``(1 - Vo'/Vpk)`` times it is below the exact rms over the useful range (asserted
    by ``test_distorted_bounds``). Example: 230 V, 330 nF, 50 Hz, 470 ohm, EN 50160 profile:
    26.28 mA (sine 23.82 mA).
    """
    o, a = _orders_fractions(harmonics)
    v = np.asarray(v_rms, dtype=float)
    f = _positive("frequency", f_hz)
    i2 = line_current_rms(v, c_f, f, r_ohm) ** 2
    for h, frac in zip(o, a, strict=True):
        i2 = i2 + line_current_rms(v * frac, c_f, f * h, r_ohm) ** 2
    return np.sqrt(i2)
