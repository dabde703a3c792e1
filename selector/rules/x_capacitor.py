"""Stress and limit of each X-capacitor rule (IEC 60384-14 class, AC voltage, impulse, dV/dt).

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)``; the rule passes when
stress <= limit. ``stresses`` maps the flat stress keys of ``stresses_from_analysis`` to floats or
numpy arrays, ``part`` is a ``RatedPart`` (or any object with its attributes, arrays allowed).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..policy import Policy


def safety_class_is_x_subclass(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Stress 1 (an X subclass is required); limit 1 for an X1/X2/X3 part, 0 for anything else.

    General-purpose film, ceramic and Y parts have no X impulse class and fail (IEC 60384-14
    [S]); whether X3 suffices for the surge is ``surge_level_vs_class_impulse``.
    """
    class_impulse_v = np.asarray(part.class_impulse_v, dtype=float)
    return np.ones_like(class_impulse_v), np.where(class_impulse_v > 0, 1.0, 0.0)


def mains_rms_vs_rated_ac_voltage(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Highest mains rms [V] against rated AC voltage x ``x_cap_voltage_fraction`` [V]."""
    return stresses["mains_max_v"], part.rated_voltage_ac_v * policy.x_cap_voltage_fraction


def surge_level_vs_class_impulse(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Surge level [V] against the peak impulse in service of the part's X subclass [V].

    X3 <= 1.2 kV, X2 <= 2.5 kV, X1 <= 4 kV (IEC 60384-14 [S]; ``X_CLASS_IMPULSE_V``).
    """
    return stresses["surge_level_v"], part.class_impulse_v


def switch_on_dvdt_vs_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """dV/dt on the X capacitor at switch-on at the crest [V/s] against rated dV/dt x fraction."""
    return stresses["inrush_x_cap_dvdt_v_per_s"], part.dvdt_v_per_s * policy.dvdt_fraction


def surge_dvdt_vs_rating(stresses: Mapping[str, Any], part: Any, policy: Policy) -> tuple[Any, Any]:
    """dV/dt on the X capacitor during the mains surge [V/s] against rated dV/dt x fraction."""
    return stresses["surge_x_cap_dvdt_v_per_s"], part.dvdt_v_per_s * policy.dvdt_fraction


def surge_total_vs_class_impulse(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The X capacitor's highest voltage during the surge [V] (its charge at the surge's phase
    plus the step, ``surge_x_cap_peak_total_v``) against the peak impulse voltage in service of
    its class [V] (IEC 60384-14 [S]: X1 4 kV, X2 2.5 kV, X3 1.2 kV; ``X_CLASS_IMPULSE_V``).

    Example: 1614 V on an X2 (2500 V) passes; on an X3 (1200 V) it fails.
    """
    return stresses["surge_x_cap_peak_total_v"], part.class_impulse_v


def switch_on_k0_vs_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The switch-on pulse characteristic k0 = 2 * integral (dV/dt)^2 dt [V^2/s]
    (``inrush_x_cap_k0_v2_per_s``) against the part's k0 rating 2 * U_R * (dV/dt)_R x
    ``dvdt_fraction`` [V^2/s], with U_R the rated DC voltage and (dV/dt)_R the rated dV/dt.

    k0 is the pulse figure of film-capacitor makers (IEC 60384-14 names dV/dt but not k0 [M]);
    its rating 2 U_R (dV/dt)_R is that of a linear ramp of height U_R at the rated rise, from
    memory of makers' film-capacitor application notes [M], not checked. For an RC step of
    height V, dV/dt = V/(R C) e^(-t/(R C)) and k0 = V^2/(R C) (= V x the peak dV/dt), so with
    V < 2 U_R the dV/dt rule binds first. Example: 716 V through 10 ohm into 330 nF:
    k0 = 716^2 / 3.3e-6 = 1.55e11 V^2/s against 2 x 630 V x 100 V/us = 1.26e11: fails.
    """
    limit = 2.0 * part.rated_voltage_v * part.dvdt_v_per_s * policy.dvdt_fraction
    return stresses["inrush_x_cap_k0_v2_per_s"], limit
