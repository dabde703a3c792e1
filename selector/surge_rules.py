"""Rules for the stresses of the IEC 61000-4-5 surge through the whole circuit (issue 11).

Each function has the signature of the rules in :mod:`selector.rules`,
``(stresses: dict, part, policy) -> (stress, limit)``, SI units, numpy-friendly; a rule passes
when ``stress <= limit``. They are not registered yet: the lead adds them to the rule table
(ids proposed in each docstring). The stress keys are the flat names that
``rules.stresses_from_analysis`` gives the ``surge`` section (prefix ``surge_``). Part fields
that :class:`selector.rules.RatedPart` does not have yet are named in the docstring
(``zener_pulse_power_w``, ``zener_pulse_width_s``); the functions read them as attributes, so
any object with those attributes works (the tests use a namespace).
"""

from __future__ import annotations

import math

import numpy as np

__all__ = [
    "IFSM_HALF_SINE_S",
    "bleeder_surge_voltage",
    "bus_surge_peak",
    "fuse_surge_i2t",
    "ifsm_i2t",
    "rectifier_surge_i2t",
    "x_cap_surge_total",
    "zener_pulse_limit",
    "zener_surge_power",
]

#: IFSM is rated for one half sine of a 60 Hz cycle, 8.3 ms ([P] common practice of rectifier
#: datasheets, no source)
IFSM_HALF_SINE_S = 8.3e-3


def ifsm_i2t(ifsm_a, width_s: float = IFSM_HALF_SINE_S):
    """I^2 t [A^2 s] of the half-sine surge a rectifier's IFSM [A] is rated for.

    ``I^2 t = IFSM^2 t / 2`` (the mean of sin^2 over a half period is 1/2; textbook) with
    ``t`` = 8.3 ms [P]. Valid for pulses no longer than ``t``. Example: IFSM = 30 A ->
    30^2 x 8.3 ms / 2 = 3.735 A^2 s.
    """
    return np.asarray(ifsm_a, dtype=float) ** 2 * width_s / 2.0


def zener_pulse_limit(rated_w, rated_width_s, width_s):
    """Allowed non-repetitive peak power [W] for a pulse of ``width_s`` [s] from a rating
    ``rated_w`` [W] at ``rated_width_s`` [s].

    ``P = P_rated sqrt(t_rated / t)``: the junction heats by one-dimensional diffusion, so the
    energy it absorbs to a given temperature rise grows with sqrt(t) ([P] the square-root law
    of pulse-power curves, no source). Longer pulses than the rating are not scaled up (the
    rating is kept). Example: 100 W at 100 us allows 100 x sqrt(100 / 25) = 200 W for 25 us.
    """
    r = np.asarray(rated_w, dtype=float)
    ratio = np.asarray(rated_width_s, dtype=float) / np.maximum(np.asarray(width_s, float), 1e-12)
    return r * np.sqrt(np.maximum(ratio, 1.0))


def zener_surge_power(s, p, pol):
    """Proposed id ``zener.surge_power``: Zener surge peak power against its non-repetitive
    pulse rating, scaled to the surge's effective width.

    Stress: ``surge_zener_peak_power_w`` [W]. Effective width ``t = E / P_peak`` with
    ``E = surge_zener_pulse_energy_j`` (a rectangle of the same peak and energy). Limit:
    :func:`zener_pulse_limit` of ``p.zener_pulse_power_w`` at ``p.zener_pulse_width_s`` x
    ``pol.zener_pulse_fraction``. Source: [P] common practice, no source (rating from the part's
    datasheet). Example: 40 W peak, 2 mJ (t = 50 us), rating 100 W at 100 us ->
    limit 141.4 W, passes.
    """
    peak = np.asarray(s["surge_zener_peak_power_w"], dtype=float)
    energy = np.asarray(s["surge_zener_pulse_energy_j"], dtype=float)
    width = energy / np.maximum(peak, 1e-30)
    lim = zener_pulse_limit(p.zener_pulse_power_w, p.zener_pulse_width_s, width)
    return peak, lim * pol.zener_pulse_fraction


def rectifier_surge_i2t(s, p, pol):
    """Proposed id ``rectifier.surge_i2t``: rectifier I^2 t during the surge (per diode)
    against the I^2 t of its IFSM half sine (:func:`ifsm_i2t`) x ``pol.rectifier_surge_fraction``.

    Stress ``surge_rectifier_i2t_a2s`` [A^2 s]. Source: IFSM-derived I^2 t = IFSM^2 x 8.3 ms / 2
    [P]. Example: 0.0115 A^2 s against IFSM 30 A (3.735 A^2 s): passes with a large margin.
    """
    return s["surge_rectifier_i2t_a2s"], ifsm_i2t(p.ifsm_a) * pol.rectifier_surge_fraction


def fuse_surge_i2t(s, p, pol):
    """Proposed id ``fuse.surge_i2t``: the surge's line-current I^2 t against the fuse's melting
    I^2 t x ``pol.fuse_i2t_fraction`` (the same pulse derating as switch-on, [P]: the test
    applies five pulses of each polarity [M]).

    Stress ``surge_fuse_i2t_a2s`` [A^2 s], limit ``p.i2t_a2s`` [A^2 s]. Source: [P] common
    practice (fuse application notes on pulse derating, [M]). Example: 0.0126 A^2 s against a
    0.02 A^2 s fuse at 0.5: limit 0.01, fails.
    """
    return s["surge_fuse_i2t_a2s"], np.asarray(p.i2t_a2s, dtype=float) * pol.fuse_i2t_fraction


def bleeder_surge_voltage(s, p, pol):
    """Proposed id ``bleeder.surge_voltage``: peak voltage on one bleeder element during the
    surge (the bleeder sits across the X capacitor: its charge plus the step) against the
    limiting element voltage x pulse factor x ``pol.limiting_voltage_fraction``.

    Stress ``surge_x_cap_peak_total_v x p.voltage_share`` [V]; limit ``p.limiting_voltage_v x
    pol.pulse_voltage_factor x pol.limiting_voltage_fraction`` (as ``series_r.surge_voltage``;
    IEC 60115-1 short-time overload [M]). Example: 1740 V over three 1206 elements in series
    (share 1/3: 580 V) against 200 V x 2 x 0.8 = 320 V: fails.
    """
    stress = np.asarray(s["surge_x_cap_peak_total_v"], dtype=float) * p.voltage_share
    lim = p.limiting_voltage_v * pol.pulse_voltage_factor * pol.limiting_voltage_fraction
    return stress, lim


def x_cap_surge_total(s, p, pol):
    """Proposed id ``x_cap.surge_total``: the X capacitor's highest voltage during the surge
    (charge at the phase plus the step) against the peak impulse voltage in service of its
    class (IEC 60384-14 [S]: X1 4 kV, X2 2.5 kV, X3 1.2 kV; ``p.class_impulse_v``).

    Stress ``surge_x_cap_peak_total_v`` [V]. Example: 1614 V on an X2 (2500 V): passes; on an
    X3 (1200 V): fails.
    """
    return s["surge_x_cap_peak_total_v"], p.class_impulse_v


def bus_surge_peak(s, p, pol):
    """Proposed id ``whole.surge_bus_peak``: the bus voltage's peak during the surge against the
    highest voltage the load tolerates, ``surge_vout_max_v`` (``--vout-max``; default 1.3 x the
    bus voltage, [P] common practice). Part-independent (role ``whole``).

    Example: 14.4 V against 6.63 V (5.1 V bus): fails; 6.39 V: passes.
    """
    lim = s["surge_vout_max_v"]
    if lim is None or (isinstance(lim, float) and math.isnan(lim)):
        lim = 1.3 * np.asarray(s["zener_voltage_v"], dtype=float)
    return s["surge_bus_peak_v"], lim
