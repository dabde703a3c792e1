"""Stress and limit of each varistor rule: continuous voltage, surge energy, surge peak current.

A varistor (MOV) across the line ahead of the dropper (``Circuit.varistor``); the surge
stresses are the surge simulation's (:mod:`selector.engine.surge_simulation`, the varistor as
chords of its power law). Every function maps ``(stresses, part, policy)`` to ``(stress,
limit)`` as in ``selector.rules.x_capacitor``; the part is a :class:`~.parts.RatedPart` of role
``varistor`` (``rated_voltage_ac_v`` its maximum continuous rms, ``pulse_energy_j`` its energy
rating, ``ifsm_a`` its 8/20 us single-pulse peak current).

The limits are the single-pulse ratings themselves ([P] common practice, no source): the
IEC 61000-4-5 sequence applies five pulses of each polarity [M] and makers derate their
ratings for repeated pulses; a tighter margin is the user's to set through the part's figures.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np

from ..policy import Policy


def mains_rms_vs_continuous_voltage(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Highest mains rms [V] (``mains_max_v``) against the varistor's maximum continuous AC
    voltage [V]: below it the varistor's standing current and heating stay within its
    data sheet ([P]; a varistor run above it heats up and fails short, common practice).

    Example: 253 V (230 V + 10 %) against a 275 V ac varistor: passes; a 250 V ac one fails.
    """
    return stresses["mains_max_v"], np.asarray(part.rated_voltage_ac_v, dtype=float)


def surge_energy_vs_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The varistor's surge energy [J] (``surge_varistor_energy_j``: the integral of v i over
    the pulse at the worst corner and phase) against its energy rating [J].

    Example: 9.6 J at 2 kV (430 V / 14 mm class disc) against an 80 J rating: passes.
    """
    return stresses["surge_varistor_energy_j"], np.asarray(part.pulse_energy_j, dtype=float)


def surge_current_vs_peak_rating(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The varistor's surge peak current [A] (``surge_varistor_peak_current_a``) against its
    8/20 us single-pulse peak current rating [A].

    Example: 1.73 kA at 4 kV against a 1.2 kA (7 mm class) rating: fails.
    """
    return (
        stresses["surge_varistor_peak_current_a"],
        np.asarray(part.ifsm_a, dtype=float),
    )
