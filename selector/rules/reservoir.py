"""Stress and limit of each reservoir-electrolytic rule: voltage, ripple, output ripple,
temperature class.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..policy import Policy


def bus_voltage_vs_rated_voltage(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Highest bus voltage [V] against rated voltage x ``reservoir_voltage_fraction``."""
    return stresses[
        "max_output_voltage_v"
    ], part.rated_voltage_v * policy.reservoir_voltage_fraction


def ripple_current_vs_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Ripple current in the reservoir [A] against rated ripple x ``reservoir_ripple_fraction``."""
    return (
        stresses["max_reservoir_ripple_current_a"],
        part.ripple_a * policy.reservoir_ripple_fraction,
    )


def output_ripple_vs_bus_fraction(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Steady output ripple peak to peak at the worst corner [V] against the Zener voltage x
    ``output_ripple_fraction`` [V]."""
    return stresses["max_output_ripple_v"], stresses[
        "zener_voltage_v"
    ] * policy.output_ripple_fraction


def ambient_vs_temperature_class(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Max ambient + ``reservoir_temp_margin_c`` [C] against the temperature class [C]."""
    return stresses["ambient_c"] + policy.reservoir_temp_margin_c, part.temp_max_c
