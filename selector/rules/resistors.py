"""Stress and limit of each resistor rule: the series resistor and the bleeder.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``). Stresses are the role's totals; ``part.power_share`` and
``part.voltage_share`` give one element's part of them (equal elements in series or parallel).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any, Final

import numpy as np

from ..policy import Policy
from .fuse import pulse_curve_fraction
from .limits import derated_power, resistor_derating_span

#: Repetition derating of a resistor's single-pulse energy rating: (pulses, fraction of the
#: single-pulse energy each of that many pulses may carry), log-linear in the count (see
#: :func:`selector.rules.fuse.pulse_curve_fraction`). An assumption of this project, no source:
#: makers draw single-pulse and repetitive-pulse load diagrams whose figures differ by family;
#: this curve takes the time-lag fuse's shape (thermal fatigue of a film or wire by repeated
#: heating), 1 at one pulse, 0.4 at 1e4, 0.3 at 1e5. Replace it with the maker's diagram.
RESISTOR_PULSE_CURVE: Final[tuple[tuple[float, float], ...]] = (
    (1.0, 1.0),
    (1e3, 0.5),
    (1e4, 0.4),
    (1e5, 0.3),
    (1e6, 0.24),
)

# --- series resistor ------------------------------------------------------------------------


def series_r_power_vs_derated_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Continuous power per element [W] against the rating derated to the ambient x fraction.

    Derating: the part's own span, else full power to 70 C and zero at 155 C [S].
    """
    start, end = resistor_derating_span(part)
    limit = derated_power(part.power_w, stresses["ambient_c"], start, end)
    return (
        stresses["max_series_r_power_w"] * part.power_share,
        limit * policy.series_r_power_fraction,
    )


def switch_on_energy_vs_pulse_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Switch-on pulse energy per element [J] (0.5 C V^2, more after a re-plug) against the
    single-pulse energy rating x ``pulse_energy_fraction`` x the repetition derating for
    ``switch_ons`` pulses (``RESISTOR_PULSE_CURVE``, an assumption, no source).

    The switch-on pulse repeats at every plug-in or power-up. Example: 0.021 J per element
    against a 0.1 J rating at 30,000 switch-ons: 0.1 x 1.0 x 0.352 = 0.0352 J, passes; at
    one switch-on the limit is the full 0.1 J.
    """
    repeat = pulse_curve_fraction(RESISTOR_PULSE_CURVE, stresses["switch_ons"])
    return (
        stresses["inrush_series_r_energy_j"] * part.power_share,
        part.pulse_energy_j * policy.pulse_energy_fraction * repeat,
    )


def surge_energy_vs_pulse_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Surge pulse energy per element [J] against pulse energy x fraction."""
    return (
        stresses["surge_series_r_energy_j"] * part.power_share,
        part.pulse_energy_j * policy.pulse_energy_fraction,
    )


def steady_peak_voltage_vs_limiting_voltage(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Steady-state peak voltage of one element [V], sqrt(2) I_rms,max R_element, against the
    limiting element voltage x ``limiting_voltage_fraction``."""
    stress = math.sqrt(2.0) * stresses["max_line_current_rms_a"] * part.value
    return stress, part.limiting_voltage_v * policy.limiting_voltage_fraction


def switch_on_voltage_vs_pulse_limit(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Switch-on peak voltage of one element [V], I_peak R_element, against the limiting
    voltage x pulse factor x ``limiting_voltage_fraction``."""
    stress = stresses["inrush_peak_current_a"] * part.value
    limit = part.limiting_voltage_v * policy.pulse_voltage_factor * policy.limiting_voltage_fraction
    return stress, limit


def surge_voltage_vs_pulse_limit(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Surge peak voltage per element [V] (the role's peak split among elements in series)
    against the limiting voltage x pulse factor x ``limiting_voltage_fraction``."""
    stress = stresses["surge_series_r_peak_voltage_v"] * part.voltage_share
    limit = part.limiting_voltage_v * policy.pulse_voltage_factor * policy.limiting_voltage_fraction
    return stress, limit


# --- bleeder --------------------------------------------------------------------------------


def discharge_time_vs_profile(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The profile's discharge time (or time constant for iec60950) [s] against the time it
    allows [s]; an exempt capacitor (e.g. <= 0.1 uF under IEC 60335-1 22.5) has stress 0."""
    exempt = stresses["discharge_exempt"]
    return np.where(exempt, 0.0, stresses["discharge_time_s"]), stresses["discharge_allowed_s"]


def bleeder_power_vs_derated_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Continuous power per bleeder element [W] against the derated rating x fraction."""
    start, end = resistor_derating_span(part)
    limit = derated_power(part.power_w, stresses["ambient_c"], start, end)
    return (
        stresses["max_bleeder_power_w"] * part.power_share,
        limit * policy.bleeder_power_fraction,
    )


def bleeder_voltage_vs_limiting_voltage(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Peak voltage per bleeder element [V] (split among elements in series) against the
    limiting voltage x ``limiting_voltage_fraction``."""
    stress = stresses["max_bleeder_voltage_v"] * part.voltage_share
    return stress, part.limiting_voltage_v * policy.limiting_voltage_fraction


def bleeder_surge_voltage_vs_pulse_limit(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Peak voltage on one bleeder element during the surge [V] against the limiting element
    voltage x pulse factor x ``limiting_voltage_fraction`` [V].

    The bleeder sits across the X capacitor, so it sees the capacitor's total surge peak (charge
    plus step, ``surge_x_cap_peak_total_v``), split among elements in series
    (``part.voltage_share``); the limit is that of ``surge_voltage_vs_pulse_limit`` (pulse
    factor from IEC 60115-1 short-time overload [M]). Example: 1740 V over three 1206 elements
    in series (580 V each) against 200 V x 2 x 0.8 = 320 V: fails.
    """
    stress = np.asarray(stresses["surge_x_cap_peak_total_v"], dtype=float) * part.voltage_share
    limit = part.limiting_voltage_v * policy.pulse_voltage_factor * policy.limiting_voltage_fraction
    return stress, limit
