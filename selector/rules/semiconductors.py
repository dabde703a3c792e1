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
from .limits import derated_power, zener_derating_span


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
