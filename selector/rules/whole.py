"""Stress and limit of each whole-circuit rule: minimum current, standby power, burst hold-up,
the bus peak during the surge and the output window.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``); ``part`` is None, these rules look at the circuit only.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import numpy as np

from ..engine.circuit import VOUT_MAX_FACTOR, VOUT_MIN_FACTOR
from ..policy import Policy


def load_vs_min_dc_current(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Load x (1 + ``load_margin``) [A] against the worst-case minimum DC current [A]."""
    return stresses["load_a"] * (1.0 + policy.load_margin), stresses["min_dc_current_a"]


def no_load_power_vs_standby_limit(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """No-load real power [W] against ``standby_limit_w`` [W], or None when no limit is set
    (the default: the limit belongs to products with a standby mode, EU 2023/826: 0.5 W [S]);
    the finding then passes and notes the figure next to the common 0.5 W limit."""
    return stresses["no_load_real_power_w"], policy.standby_limit_w


def burst_droop_vs_bus_fraction(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Reservoir droop during a burst the dropper cannot feed [V] against the Zener voltage x
    ``burst_droop_fraction``.

    dV = max(I_burst - I_dc,min, 0) t_burst / C_min (C dV = I dt [S]; C floored at 1 pF).
    """
    deficit_a = np.maximum(stresses["burst_current_a"] - stresses["min_dc_current_a"], 0.0)
    reservoir_min_f = stresses["reservoir_min_f"]
    droop_v = deficit_a * stresses["burst_duration_s"] / np.maximum(reservoir_min_f, 1e-12)
    return droop_v, stresses["zener_voltage_v"] * policy.burst_droop_fraction


def _given(value: Any) -> bool:
    return value is not None and not (isinstance(value, float) and math.isnan(value))


def vout_max_of(stresses: Mapping[str, Any]) -> Any:
    """The highest bus voltage the load tolerates [V]: ``vout_max_v`` (the analysis's
    ``Conditions.vout_max``, ``--vout-max``), else the surge section's ``surge_vout_max_v``,
    else 1.3 x ``zener_voltage_v`` [P] (a bare stress mapping)."""
    for key in ("vout_max_v", "surge_vout_max_v"):
        if _given(stresses.get(key)):
            return stresses[key]
    return VOUT_MAX_FACTOR * np.asarray(stresses["zener_voltage_v"], dtype=float)


def vout_min_of(stresses: Mapping[str, Any]) -> Any:
    """The lowest bus voltage the load tolerates [V]: ``vout_min_v`` (the analysis's
    ``Conditions.vout_min``: default 0.9 x the bus voltage, vout - 10 % [P]), else 0.9 x
    ``zener_voltage_v`` (a bare stress mapping)."""
    if _given(stresses.get("vout_min_v")):
        return stresses["vout_min_v"]
    return VOUT_MIN_FACTOR * np.asarray(stresses["zener_voltage_v"], dtype=float)


def bus_surge_peak_vs_vout_max(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The bus voltage's peak during the surge [V] (``surge_bus_peak_v``) against the highest
    voltage the load tolerates (:func:`vout_max_of`; default 1.3 x the bus voltage [P]).

    Example: 14.4 V against 6.63 V (5.1 V bus): fails; 6.39 V passes.

    The design meets it in verification (DEVELOPERS.md, "The bus peak during the surge in the
    search"): the screen has no bound for it.
    """
    return stresses["surge_bus_peak_v"], vout_max_of(stresses)


def highest_output_vs_vout_max(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Upper edge of the output window: the highest steady bus voltage [V] (no load, high
    corner, ripple crest: ``max_output_voltage_v``) against :func:`vout_max_of` [V].

    Example: 5.89 V against 1.3 x 5.1 V = 6.63 V: passes.
    """
    return stresses["max_output_voltage_v"], vout_max_of(stresses)


def vout_min_vs_lowest_output(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Lower edge of the output window, a requirement: the lowest voltage the load tolerates
    (:func:`vout_min_of`, default 0.9 x the bus voltage [P]) [V] against the lowest steady bus
    voltage (full load, low corner, ripple trough: ``min_output_voltage_v``) [V].

    Example: 0.9 x 5.1 V = 4.59 V against a trough of 4.62 V: passes; 4.5 V fails.

    The design meets it in verification, with a larger reservoir as the remedy (DEVELOPERS.md,
    "The bus peak during the surge in the search"); behind a regulator the regulator's
    headroom rule judges the bus instead (``table.bus_feeds_the_load``).
    """
    return vout_min_of(stresses), stresses["min_output_voltage_v"]
