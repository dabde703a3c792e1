"""Stress and limit of each fuse rule: survives switch-on, opens on a shorted X capacitor.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``). The "opens" rules are requirements of the form
"fault >= rating x factor", so the rating is the stress and the fault the limit.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..policy import Policy


def switch_on_i2t_vs_melting_i2t(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Switch-on I^2t [A^2 s] against the fuse's melting I^2t x ``fuse_i2t_fraction``."""
    return stresses["inrush_i2t_a2s"], part.i2t_a2s * policy.fuse_i2t_fraction


def surge_i2t_vs_melting_i2t(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The surge's line-current I^2t [A^2 s] (``surge_fuse_i2t_a2s``) against the fuse's melting
    I^2t x ``fuse_i2t_fraction`` [A^2 s] (the same pulse derating as switch-on, [P]; the test
    sequence applies five pulses of each polarity [M]).

    Example: 0.0126 A^2 s against a 0.02 A^2 s fuse at 0.5: limit 0.01 A^2 s, fails.
    """
    return (
        stresses["surge_fuse_i2t_a2s"],
        np.asarray(part.i2t_a2s, dtype=float) * policy.fuse_i2t_fraction,
    )


def rated_current_vs_fault_current(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Rated current x ``fuse_fault_factor`` [A] against the fault current with a shorted X
    capacitor, I_fault = V_rms,min / R_series [A] (R floored at 1 mohm)."""
    fault_a = stresses["mains_min_v"] / np.maximum(stresses["series_resistance_ohm"], 1e-3)
    return part.value * policy.fuse_fault_factor, fault_a


def rated_power_vs_fault_power(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """A fusible series resistor as the fuse: rated power x ``fusible_fault_factor`` [W] against
    the fault power per element with a shorted X capacitor, V_rms,min^2 / R_series x share [W]."""
    fault_w = (
        stresses["mains_min_v"] ** 2
        / np.maximum(stresses["series_resistance_ohm"], 1e-3)
        * part.power_share
    )
    return part.power_w * policy.fusible_fault_factor, fault_w
