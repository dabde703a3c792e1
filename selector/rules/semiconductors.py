"""Stress and limit of each semiconductor rule: the rectifier (bridge or diodes) and the Zener.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from ..policy import Policy
from .limits import ZENER_GENERIC_PULSE, derated_power, value_or_default, zener_derating_span

#: IFSM is rated for one half sine of a 60 Hz cycle, 8.3 ms ([P] common practice of rectifier
#: datasheets, no source)
IFSM_HALF_SINE_S = 8.3e-3


def mains_crest_vs_vrrm(stresses: Mapping[str, Any], part: Any, policy: Policy) -> tuple[Any, Any]:
    """Reverse voltage [V], at least the highest mains crest sqrt(2) V_rms,max, against
    VRRM x ``rectifier_voltage_fraction``."""
    stress = np.maximum(
        stresses["max_rectifier_reverse_voltage_v"], stresses["mains_max_v"] * math.sqrt(2.0)
    )
    return stress, part.vrrm_v * policy.rectifier_voltage_fraction


def switch_on_peak_current_vs_ifsm(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Switch-on peak rectifier current [A] against IFSM x ``rectifier_surge_fraction``."""
    return (
        stresses["inrush_rectifier_peak_current_a"],
        part.ifsm_a * policy.rectifier_surge_fraction,
    )


def average_current_vs_if_av(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Average forward current [A] against IF(AV) [A]."""
    return stresses["max_rectifier_avg_current_a"], part.if_av_a


def zener_power_vs_derated_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Worst-case dissipation per Zener element [W] against its power derated to the ambient
    (its own span, else 25 C -> Tj max) x ``zener_power_fraction``."""
    start, end = zener_derating_span(part)
    limit = derated_power(part.power_w, stresses["ambient_c"], start, end)
    return stresses["max_zener_power_w"] * part.power_share, limit * policy.zener_power_fraction


def ifsm_i2t(ifsm_a: Any, width_s: float = IFSM_HALF_SINE_S) -> Any:
    """I^2t [A^2 s] of the half-sine surge a rectifier's IFSM [A] is rated for.

    ``I^2t = IFSM^2 t / 2`` (the mean of sin^2 over a half period is 1/2; textbook) with
    ``t`` = 8.3 ms [P]. Valid for pulses no longer than ``t``. Example: IFSM = 30 A ->
    30^2 x 8.3 ms / 2 = 3.735 A^2 s.
    """
    return np.asarray(ifsm_a, dtype=float) ** 2 * width_s / 2.0


def rectifier_surge_i2t_vs_ifsm_i2t(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Rectifier I^2t during the surge, per diode [A^2 s] (``surge_rectifier_i2t_a2s``), against
    the I^2t of its IFSM half sine (:func:`ifsm_i2t`, IFSM^2 x 8.3 ms / 2 [P]) x
    ``rectifier_surge_fraction``.

    Example: 0.0115 A^2 s against IFSM 30 A (3.735 A^2 s): passes with a large margin.
    """
    return (
        stresses["surge_rectifier_i2t_a2s"],
        ifsm_i2t(part.ifsm_a) * policy.rectifier_surge_fraction,
    )


def zener_pulse_limit(rated_w: Any, rated_width_s: Any, width_s: Any) -> Any:
    """Allowed non-repetitive peak power [W] for a pulse of ``width_s`` [s] from a rating
    ``rated_w`` [W] at ``rated_width_s`` [s].

    ``P = P_rated sqrt(t_rated / t)``: the junction heats by one-dimensional diffusion, so the
    energy it absorbs to a given temperature rise grows with sqrt(t) ([P] the square-root law
    of pulse-power curves, no source). Pulses longer than the rating's are not scaled (the
    rating is kept, which overstates the limit for much longer pulses; the surge's are tens of
    us). Example: 100 W at 100 us allows 100 x sqrt(100 / 25) = 200 W for 25 us.
    """
    r = np.asarray(rated_w, dtype=float)
    ratio = np.asarray(rated_width_s, dtype=float) / np.maximum(np.asarray(width_s, float), 1e-12)
    return r * np.sqrt(np.maximum(ratio, 1.0))


def zener_pulse_rating(part: Any) -> tuple[Any, Any]:
    """(pulse power [W], its width [s]) of a Zener element: its own ``zener_pulse_power_w`` at
    ``zener_pulse_width_s`` (100 us when unstated), else the generic figure
    ``ZENER_GENERIC_PULSE`` (40 W per W of steady power at 100 us, [M]) from ``power_w``.

    Example: a 0.5 W Zener without a pulse rating -> (20 W, 100 us).
    """
    ratio, width = ZENER_GENERIC_PULSE
    own = getattr(part, "zener_pulse_power_w", None)
    own_width = getattr(part, "zener_pulse_width_s", None)
    power = part.power_w
    generic = None if power is None else np.asarray(power, dtype=float) * ratio
    rated = generic if own is None else value_or_default(np.asarray(own, dtype=float), generic)
    return rated, value_or_default(own_width, width)


def zener_surge_power_vs_pulse_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Zener surge peak power per element [W] against its non-repetitive pulse rating scaled to
    the surge's effective width x ``zener_pulse_fraction`` [W].

    Stress ``surge_zener_peak_power_w`` x ``part.power_share``. Effective width ``t = E / P``
    with ``E = surge_zener_pulse_energy_j`` (a rectangle of the same peak and energy). Limit
    :func:`zener_pulse_limit` of :func:`zener_pulse_rating` (the part's own rating, else the
    generic 40 W per W at 100 us [M]). Example: 40 W peak, 2 mJ (t = 50 us), rating 100 W at
    100 us -> limit 141.4 W, passes.
    """
    peak = np.asarray(stresses["surge_zener_peak_power_w"], dtype=float)
    energy = np.asarray(stresses["surge_zener_pulse_energy_j"], dtype=float)
    width = energy / np.maximum(peak, 1e-30)
    rated_w, rated_width_s = zener_pulse_rating(part)
    limit = zener_pulse_limit(rated_w, rated_width_s, width)
    return peak * part.power_share, limit * policy.zener_pulse_fraction
