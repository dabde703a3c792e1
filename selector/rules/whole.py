"""Stress and limit of each whole-circuit rule: minimum current, standby power, burst hold-up.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``); ``part`` is None, these rules look at the circuit only.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..policy import Policy


def load_vs_min_dc_current(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Load x (1 + ``load_margin``) [A] against the worst-case minimum DC current [A]."""
    return stresses["load_a"] * (1.0 + policy.load_margin), stresses["min_dc_current_a"]


def no_load_power_vs_standby_limit(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """No-load real power [W] against ``standby_limit_w`` (EU 2023/826: 0.5 W [S])."""
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
