"""Stress and limit of the life rules: the reservoir's life at its core temperature and the
minimum DC current after the X capacitor's end-of-life capacitance loss.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``). The models are in :mod:`selector.engine.life`.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any, Final

import numpy as np

from ..engine.life import (
    electrolytic_core_temperature_c,
    electrolytic_life_h,
    x_cap_end_of_life_loss,
)
from ..policy import Policy

#: the stress keys the life rules read besides the analysis's (set by ``life_context`` and
#: ``evaluate``)
EOL_LOSS_KEY: Final[str] = "x_cap_end_of_life_loss"
EOL_NOTE_KEY: Final[str] = "x_cap_end_of_life_note"


def life_context(conditions: Any, cap_loss_in_analysis: float) -> dict[str, Any]:
    """The context the life rules need from the conditions: target life [h], humidity
    [fraction], switch-ons, the end-of-life loss override (``--cap-loss``; absent: Peck's model)
    and the capacitance loss the analysis already applied (the minimum current's)."""
    out: dict[str, Any] = {
        "target_life_h": float(conditions.life_s) / 3600.0,
        "humidity": float(conditions.humidity),
        "switch_ons": float(conditions.switch_ons),
        "cap_loss_in_analysis": float(cap_loss_in_analysis),
    }
    if getattr(conditions, "end_of_life_loss", None) is not None:
        out["end_of_life_loss_override"] = float(conditions.end_of_life_loss)
    return out


def end_of_life_loss(x_parts: Sequence[Any], stresses: Mapping[str, Any]) -> tuple[float, str]:
    """(loss fraction, note) of the X capacitors after the target life: the ``--cap-loss``
    override, else the worst part's by Peck's model at the ambient, humidity and highest mains.
    """
    override = stresses.get("end_of_life_loss_override")
    if override is not None:
        return float(override), "--cap-loss (override of the humidity model)"
    worst = (0.0, "")
    for part in x_parts:
        rated = part.rated_voltage_ac_v or 0.0
        loss, note = x_cap_end_of_life_loss(
            part.humidity_grade,
            float(stresses["target_life_h"]),
            float(stresses["ambient_c"]),
            float(stresses["humidity"]),
            float(stresses["mains_max_v"]),
            float(rated),
        )
        if loss >= worst[0]:
            worst = (loss, f"{part.ref or part.code or 'X capacitor'}: {note}")
    return worst


def end_of_life_current_factor(loss: Any, loss_in_analysis: Any) -> Any:
    """The factor from the analysis's minimum DC current to the current after the end-of-life
    loss: (1 - loss) / (1 - loss in the analysis), at most 1.

    Conservative: the DC current is at most proportional to C (I_dc = 4 f C (Vpk - Vo') with the
    bus clamped [S: DOMAIN.md section 2]; a series R makes it less sensitive), so scaling down
    linearly never overstates it. Example: 6.2 % loss, 10 % in the analysis -> factor 1 (the
    day-one figure already covers it); 30 % -> 0.7 / 0.9 = 0.778.
    """
    f = (1.0 - np.asarray(loss, dtype=float)) / (1.0 - np.asarray(loss_in_analysis, dtype=float))
    out = np.clip(f, 0.0, 1.0)
    return out.item() if out.ndim == 0 else out


def reservoir_target_vs_estimated_life(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Target life [h] against the reservoir's estimated life [h] at its core temperature
    (ambient + ripple self-heating) by the 10-degree rule with the extrapolation cap.

    Example: 87600 h against an 85 C / 2000 h part at 40 C with little ripple (the cap,
    30000 h): fails; a 105 C / 10000 h part: 150000 h (the cap), passes.
    """
    core_c = electrolytic_core_temperature_c(
        stresses["ambient_c"], stresses["max_reservoir_ripple_current_a"], part.ripple_a
    )
    life_h = electrolytic_life_h(part.rated_life_h, part.temp_max_c, core_c)
    return stresses["target_life_h"], life_h


def load_vs_end_of_life_current(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Load x (1 + ``load_margin``) [A] against the worst-case minimum DC current after the
    X capacitor's end-of-life loss [A] (:func:`end_of_life_current_factor`)."""
    factor = end_of_life_current_factor(stresses[EOL_LOSS_KEY], stresses["cap_loss_in_analysis"])
    return stresses["load_a"] * (1.0 + policy.load_margin), stresses["min_dc_current_a"] * factor


def end_of_life_known(stresses: Mapping[str, Any], part: Any) -> bool:
    """The end-of-life loss is known (the X capacitors are among the parts evaluated)."""
    return EOL_LOSS_KEY in stresses


def life_record(
    stresses: Mapping[str, Any], parts_by_role: Mapping[str, Any] | None = None
) -> dict[str, Any]:
    """The ``life`` section of a design, check or audit: the target and duty, the reservoir's
    core temperature and estimated life (the shortest-lived part), the X capacitor's loss at
    the end of the life and the minimum DC current then. A figure that needs a part the caller
    does not have (``check`` has no catalogue parts) is None, with the reason in ``notes``."""
    parts_by_role = parts_by_role or {}
    out: dict[str, Any] = {
        "target_life_h": stresses.get("target_life_h"),
        "humidity_fraction": stresses.get("humidity"),
        "switch_ons": stresses.get("switch_ons"),
        "reservoir_core_temp_c": None,
        "reservoir_life_h": None,
        "x_cap_loss_fraction": None,
        "end_of_life_min_dc_current_a": None,
        "notes": [],
    }
    ripple = stresses.get("max_reservoir_ripple_current_a")
    reservoirs = _group(parts_by_role.get("reservoir"))
    lives = []
    for part in reservoirs:
        if None in (part.rated_life_h, part.temp_max_c, part.ripple_a) or ripple is None:
            continue
        core = electrolytic_core_temperature_c(stresses["ambient_c"], ripple, part.ripple_a)
        lives.append((electrolytic_life_h(part.rated_life_h, part.temp_max_c, core), core))
    if lives:
        out["reservoir_life_h"], out["reservoir_core_temp_c"] = (float(v) for v in min(lives))
    else:
        out["notes"].append("reservoir life: needs a part with rated life, temperature, ripple")
    x_parts = _group(parts_by_role.get("x_capacitor"))
    if EOL_LOSS_KEY in stresses:
        loss, note = float(stresses[EOL_LOSS_KEY]), str(stresses.get(EOL_NOTE_KEY, ""))
    elif x_parts or "end_of_life_loss_override" in stresses:
        loss, note = end_of_life_loss(x_parts, stresses)
    else:
        loss, note = None, "X capacitor loss: needs the part's humidity grade, or --cap-loss"
    if loss is not None:
        out["x_cap_loss_fraction"] = loss
        if stresses.get("min_dc_current_a") is not None and "cap_loss_in_analysis" in stresses:
            out["end_of_life_min_dc_current_a"] = float(
                stresses["min_dc_current_a"]
                * end_of_life_current_factor(loss, stresses["cap_loss_in_analysis"])
            )
    out["notes"].append(note)
    return out


def _group(got: Any) -> list[Any]:
    if got is None:
        return []
    return list(got) if isinstance(got, (list, tuple)) else [got]
