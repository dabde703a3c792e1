"""The rule table: every rule design and audit apply, one entry per rule.

An entry names the rule id (``<role>.<what>``), its role, what it checks, the source, the unit,
and the function that gives its ``(stress, limit)`` (from the role modules), then the part
ratings it reads (``ratings``; a missing one gives a 'warn' finding), the stress keys it needs
(``stress_keys``), the key whose corner the finding reports (``corner_key``, default the first
stress key) and when it applies (``applies``, default always).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import Any, Final

import numpy as np

from ..policy import Policy
from .fuse import (
    rated_current_vs_fault_current,
    rated_power_vs_fault_power,
    surge_i2t_vs_melting_i2t,
    switch_on_i2t_vs_melting_i2t,
)
from .life import (
    end_of_life_known,
    load_vs_end_of_life_current,
    reservoir_target_vs_estimated_life,
)
from .limits import margin
from .parts import ROLES, RatedPart
from .reservoir import (
    ambient_vs_temperature_class,
    bus_voltage_vs_rated_voltage,
    output_ripple_vs_bus_fraction,
    ripple_current_vs_rating,
)
from .resistors import (
    bleeder_power_vs_derated_rating,
    bleeder_surge_voltage_vs_pulse_limit,
    bleeder_voltage_vs_limiting_voltage,
    discharge_time_vs_profile,
    series_r_power_vs_derated_rating,
    steady_peak_voltage_vs_limiting_voltage,
    surge_energy_vs_pulse_rating,
    surge_voltage_vs_pulse_limit,
    switch_on_energy_vs_pulse_rating,
    switch_on_voltage_vs_pulse_limit,
)
from .semiconductors import (
    average_current_vs_if_av,
    mains_crest_vs_vrrm,
    rectifier_surge_i2t_vs_ifsm_i2t,
    switch_on_peak_current_vs_ifsm,
    zener_power_vs_derated_rating,
    zener_surge_power_vs_pulse_rating,
)
from .varistor import (
    mains_rms_vs_continuous_voltage,
    surge_current_vs_peak_rating,
    surge_energy_vs_rating,
)
from .whole import (
    burst_droop_vs_bus_fraction,
    bus_surge_peak_vs_vout_max,
    highest_output_vs_vout_max,
    load_vs_min_dc_current,
    no_load_power_vs_standby_limit,
    vout_min_vs_lowest_output,
)
from .x_capacitor import (
    mains_rms_vs_rated_ac_voltage,
    safety_class_is_x_subclass,
    surge_dvdt_vs_rating,
    surge_level_vs_class_impulse,
    surge_total_vs_class_impulse,
    switch_on_dvdt_vs_rating,
    switch_on_k0_vs_rating,
)

SOURCE_P: Final[str] = "[P] common practice, no source"


@dataclass(frozen=True)
class Rule:
    """One registered rule (see the module docstring for the fields)."""

    id: str
    role: str
    description: str
    source: str
    unit: str
    #: (stresses, part, policy) -> (stress, limit)
    fn: Callable[[Mapping[str, Any], Any, Policy], tuple[Any, Any]]
    ratings: tuple[str, ...] = ()
    stress_keys: tuple[str, ...] = ()
    #: the stress key whose worst-case corner the finding reports
    corner_key: str | None = None
    #: only for parts of this kind (e.g. fusible resistors), or when this stress key is truthy
    applies: Callable[[Mapping[str, Any], RatedPart], bool] | None = None
    #: when this returns a note, a failure of the rule is a 'warn' finding (waived) with it
    waiver: Callable[[Mapping[str, Any]], str | None] | None = None

    def check(self, stresses: Mapping[str, Any], part: Any, policy: Policy) -> tuple[Any, Any, Any]:
        """(stress, limit, margin); arrays in, arrays out.

        A limit of None (no limit set, e.g. ``whole.standby_power`` without a standby limit)
        gives an infinite limit and a margin of 1 (nothing is bounded). Otherwise a stress or
        limit that is infinite cannot be evaluated (a rating of ``1e999`` V is no rating): its
        limit comes back NaN, so that ``stress <= limit`` is False in every caller and the rule
        fails, never passes. A NaN limit stays NaN; the margin of either is NaN.
        """
        stress, limit = self.fn(stresses, part, policy)
        if limit is None:
            return stress, math.inf, 1.0
        return stress, *_unevaluable_as_nan(stress, limit)


def _unevaluable_as_nan(stress: Any, limit: Any) -> tuple[Any, Any]:
    """(limit, margin) with NaN wherever the stress or the limit is infinite (or NaN)."""
    if isinstance(stress, (int, float)) and isinstance(limit, (int, float)):
        if math.isfinite(stress) and math.isfinite(limit):
            m = margin(stress, limit)
            # a margin that overflows (a limit near zero) cannot be evaluated either
            return (limit, m) if math.isfinite(m) else (math.nan, math.nan)
        return (math.nan if math.isinf(stress) or math.isinf(limit) else limit), math.nan
    stress_a = np.asarray(stress, dtype=float)
    limit_a = np.asarray(limit, dtype=float)
    infinite = np.isinf(stress_a) | np.isinf(limit_a)
    bad = infinite | np.isnan(stress_a) | np.isnan(limit_a)
    if not np.any(bad):
        m = margin(stress, limit)
        if np.all(np.isfinite(m)):
            return limit, m
        bad = infinite = ~np.isfinite(np.broadcast_to(m, np.broadcast(stress_a, limit_a).shape))
    limit_a = np.where(
        infinite, np.nan, np.broadcast_to(limit_a, np.broadcast(stress_a, limit_a).shape)
    )
    margin_a = np.where(bad, np.nan, margin(stress_a, np.where(bad, 1.0, limit_a)))
    return (limit_a.item() if limit_a.ndim == 0 else limit_a), (
        margin_a.item() if np.ndim(margin_a) == 0 else margin_a
    )


def not_fusible_resistor(stresses: Mapping[str, Any], part: Any) -> bool:
    """A real fuse, not a fusible series resistor serving as one."""
    return not bool(part.fusible)


def fusible_resistor(stresses: Mapping[str, Any], part: Any) -> bool:
    """A fusible series resistor serving as the fuse."""
    return bool(part.fusible)


#: the stress key that says every X capacitor is of an IEC 60384-14 class (set by evaluate)
X_CAP_IEC60384_14_KEY: Final[str] = "x_cap_iec60384_14"

SHORTED_X_CAP_EXEMPTION: Final[str] = (
    "IEC 60335-1 19.11.2 does not apply a short circuit to capacitors complying with "
    "IEC 60384-14 [M] from memory, not checked against the standard's text"
)


def shorted_x_cap_exempt(stresses: Mapping[str, Any]) -> str | None:
    """The waiver of the 'fuse opens on a shorted X capacitor' rules: a note when every X
    capacitor is of an IEC 60384-14 class (the fault is not applied to it), else None."""
    if bool(stresses.get(X_CAP_IEC60384_14_KEY)):
        return (
            "warning only: the X capacitor is of an IEC 60384-14 class; " + SHORTED_X_CAP_EXEMPTION
        )
    return None


def surge_given(stresses: Mapping[str, Any], part: Any) -> bool:
    """A surge level > 0 is set (with none the engine computes no surge and the rules skip)."""
    level = stresses.get("surge_level_v")
    return level is not None and not (isinstance(level, float) and math.isnan(level)) and level > 0


def real_fuse_and_surge(stresses: Mapping[str, Any], part: Any) -> bool:
    """A real fuse (not a fusible resistor) and a surge level is set."""
    return not_fusible_resistor(stresses, part) and surge_given(stresses, part)


def bus_feeds_the_load(stresses: Mapping[str, Any], part: Any) -> bool:
    """No regulator between the bus and the load (``regulator_ok`` is None): the load sees the
    bus, so its window applies; behind a regulator its headroom rule judges the bus instead."""
    return stresses.get("regulator_ok") is None


def burst_given(stresses: Mapping[str, Any], part: Any) -> bool:
    """The load has a burst (current and duration both set)."""
    return bool(stresses.get("burst_current_a")) and bool(stresses.get("burst_duration_s"))


_PULSE_FACTOR_SOURCE: Final[str] = (
    SOURCE_P + "; pulse factor from IEC 60115-1 short-time overload [M]"
)
_FUSE_PULSE_SOURCE: Final[str] = (
    "pulse-count derating: fast-acting 0.22 at 1e5 pulses, time-lag 0.3 [M] from memory of "
    "fuse makers' pulse-cycle charts; other points an assumption (rules.fuse.FUSE_PULSE_CURVES)"
)
_RESISTOR_PULSE_SOURCE: Final[str] = (
    "repetition derating an assumption of this project, no source "
    "(rules.resistors.RESISTOR_PULSE_CURVE)"
)
_SURGE_SOURCE: Final[str] = "surge per IEC 61000-4-5, through the whole circuit"
_RESISTOR_DERATING_SOURCE: Final[str] = (
    SOURCE_P + "; derating 70 C -> 155 C from generic datasheets [S]"
)

# One entry per rule: Rule(id, role, what it checks, source, unit, stress-and-limit function,
# ratings=, stress_keys=, corner_key=, applies=).
# fmt: off
RULES: Final[tuple[Rule, ...]] = (
    # --- X capacitor (x_capacitor.py) -------------------------------------------------------
    Rule("x_cap.safety_class", "x_capacitor",
         "an X1/X2/X3 safety capacitor across the mains (X3 only for surges <= 1.2 kV); never a "
         "general-purpose film or ceramic",
         "IEC 60384-14 (subclasses X1/X2/X3) [S]",
         "class", safety_class_is_x_subclass,
         ratings=("safety_class",)),
    Rule("x_cap.ac_voltage", "x_capacitor",
         "rated AC voltage >= highest mains rms",
         SOURCE_P,
         "V", mains_rms_vs_rated_ac_voltage,
         ratings=("rated_voltage_ac_v",), stress_keys=("mains_max_v",)),
    Rule("x_cap.impulse", "x_capacitor",
         "impulse class covers the surge level (X3 <= 1.2 kV, X2 <= 2.5 kV, X1 <= 4 kV peak)",
         "IEC 60384-14, peak impulse voltage in service [S]; surge per IEC 61000-4-5",
         "V", surge_level_vs_class_impulse,
         ratings=("safety_class",), stress_keys=("surge_level_v",)),
    Rule("x_cap.dvdt_switch_on", "x_capacitor",
         "dV/dt at switch-on at the crest (repeated at every switch-on) <= rated dV/dt, "
         "taken as the rating for repeated pulses at the rated voltage, no count derating",
         SOURCE_P + "; makers rate dV/dt for repeated pulses [M] from memory",
         "V/s", switch_on_dvdt_vs_rating,
         ratings=("dvdt_v_per_s",), stress_keys=("inrush_x_cap_dvdt_v_per_s",)),
    Rule("x_cap.k0_switch_on", "x_capacitor",
         "pulse characteristic of the switch-on pulse, k0 = 2 x integral (dV/dt)^2 dt <= "
         "2 x rated DC voltage x rated dV/dt x policy fraction (at every switch-on)",
         "k0 and its rating 2 U_R (dV/dt)_R from film-capacitor makers' application notes [M] "
         "from memory, not checked; k0 = V^2 / (R C) of an RC step [S]",
         "V2/s", switch_on_k0_vs_rating,
         ratings=("dvdt_v_per_s", "rated_voltage_v"),
         stress_keys=("inrush_x_cap_k0_v2_per_s",)),
    Rule("x_cap.dvdt_surge", "x_capacitor",
         "dV/dt during the mains surge <= rated dV/dt",
         SOURCE_P + "; surge per IEC 61000-4-5",
         "V/s", surge_dvdt_vs_rating,
         ratings=("dvdt_v_per_s",), stress_keys=("surge_x_cap_dvdt_v_per_s",),
         applies=surge_given),
    Rule("x_cap.surge_total", "x_capacitor",
         "highest voltage during the surge (charge at the phase + step) <= the class's peak "
         "impulse in service (X3 1.2 kV, X2 2.5 kV, X1 4 kV)",
         "IEC 60384-14, peak impulse voltage in service [S]; " + _SURGE_SOURCE,
         "V", surge_total_vs_class_impulse,
         ratings=("safety_class",), stress_keys=("surge_x_cap_peak_total_v",),
         applies=surge_given),
    # --- series resistor (resistors.py) -----------------------------------------------------
    Rule("series_r.power", "series_resistor",
         "continuous power per element <= rating derated to the ambient x policy fraction",
         _RESISTOR_DERATING_SOURCE,
         "W", series_r_power_vs_derated_rating,
         ratings=("power_w",), stress_keys=("max_series_r_power_w", "ambient_c"),
         corner_key="max_series_r_power_w"),
    Rule("series_r.switch_on_energy", "series_resistor",
         "switch-on pulse energy per element (0.5 C V^2 of the step) <= single-pulse "
         "capability x policy fraction x repetition derating for --switch-ons",
         SOURCE_P + "; energy 0.5 C V^2 of RC charging [S]; " + _RESISTOR_PULSE_SOURCE,
         "J", switch_on_energy_vs_pulse_rating,
         ratings=("pulse_energy_j",), stress_keys=("inrush_series_r_energy_j", "switch_ons"),
         corner_key="inrush_series_r_energy_j"),
    Rule("series_r.surge_energy", "series_resistor",
         "surge pulse energy per element within the family's pulse capability",
         SOURCE_P + "; surge per IEC 61000-4-5",
         "J", surge_energy_vs_pulse_rating,
         ratings=("pulse_energy_j",), stress_keys=("surge_series_r_energy_j",),
         applies=surge_given),
    Rule("series_r.peak_voltage", "series_resistor",
         "steady-state peak voltage per element <= limiting element voltage x policy fraction",
         SOURCE_P,
         "V", steady_peak_voltage_vs_limiting_voltage,
         ratings=("limiting_voltage_v", "value"), stress_keys=("max_line_current_rms_a",),
         corner_key="max_line_current_rms_a"),
    Rule("series_r.switch_on_voltage", "series_resistor",
         "switch-on peak voltage per element <= limiting voltage x pulse factor x policy fraction",
         _PULSE_FACTOR_SOURCE,
         "V", switch_on_voltage_vs_pulse_limit,
         ratings=("limiting_voltage_v", "value"), stress_keys=("inrush_peak_current_a",)),
    Rule("series_r.surge_voltage", "series_resistor",
         "surge peak voltage per element <= limiting voltage x pulse factor x policy fraction",
         _PULSE_FACTOR_SOURCE,
         "V", surge_voltage_vs_pulse_limit,
         ratings=("limiting_voltage_v",), stress_keys=("surge_series_r_peak_voltage_v",),
         applies=surge_given),
    # --- bleeder (resistors.py) -------------------------------------------------------------
    Rule("bleeder.discharge", "bleeder",
         "the X capacitor discharges to the profile's limit in the time it allows",
         "discharge profile: IEC 60335-1 22.5 (34 V after 1 s; C <= 0.1 uF exempt) [S], "
         "IEC 62368-1 5.5.2.2 (2 s [S], 60 V [M]), IEC 60950-1 2.1.1.7 (R C <= 1 s) [S]",
         "s", discharge_time_vs_profile,
         ratings=(), stress_keys=("discharge_time_s", "discharge_allowed_s")),
    Rule("bleeder.power", "bleeder",
         "continuous power per element <= rating derated to the ambient x policy fraction",
         _RESISTOR_DERATING_SOURCE,
         "W", bleeder_power_vs_derated_rating,
         ratings=("power_w",), stress_keys=("max_bleeder_power_w", "ambient_c"),
         corner_key="max_bleeder_power_w"),
    Rule("bleeder.voltage", "bleeder",
         "peak voltage per element (split among elements in series) <= limiting voltage x "
         "policy fraction",
         SOURCE_P + "; resistor working voltage min(sqrt(P R), LEV) [S]",
         "V", bleeder_voltage_vs_limiting_voltage,
         ratings=("limiting_voltage_v",), stress_keys=("max_bleeder_voltage_v",),
         corner_key="max_bleeder_voltage_v"),
    Rule("bleeder.surge_voltage", "bleeder",
         "surge peak voltage per element (the X capacitor's total surge peak, split among "
         "elements in series) <= limiting voltage x pulse factor x policy fraction",
         _PULSE_FACTOR_SOURCE + "; " + _SURGE_SOURCE,
         "V", bleeder_surge_voltage_vs_pulse_limit,
         ratings=("limiting_voltage_v",), stress_keys=("surge_x_cap_peak_total_v",),
         applies=surge_given),
    # --- rectifier and Zener (semiconductors.py) --------------------------------------------
    Rule("rectifier.vrrm", "rectifier",
         "VRRM >= highest mains crest",
         SOURCE_P,
         "V", mains_crest_vs_vrrm,
         ratings=("vrrm_v",), stress_keys=("max_rectifier_reverse_voltage_v", "mains_max_v"),
         corner_key="max_rectifier_reverse_voltage_v"),
    Rule("rectifier.ifsm", "rectifier",
         "switch-on peak current <= IFSM",
         SOURCE_P,
         "A", switch_on_peak_current_vs_ifsm,
         ratings=("ifsm_a",), stress_keys=("inrush_rectifier_peak_current_a",)),
    Rule("rectifier.avg_current", "rectifier",
         "average forward current <= IF(AV)",
         SOURCE_P,
         "A", average_current_vs_if_av,
         ratings=("if_av_a",), stress_keys=("max_rectifier_avg_current_a",),
         corner_key="max_rectifier_avg_current_a"),
    Rule("rectifier.surge_i2t", "rectifier",
         "surge I^2t per diode <= I^2t of the IFSM half sine (IFSM^2 x 8.3 ms / 2) x policy "
         "fraction",
         SOURCE_P + "; I^2t of a half sine = I^2 t / 2 [S]; " + _SURGE_SOURCE,
         "A2s", rectifier_surge_i2t_vs_ifsm_i2t,
         ratings=("ifsm_a",), stress_keys=("surge_rectifier_i2t_a2s",),
         applies=surge_given),
    Rule("zener.power", "zener",
         "worst-case dissipation per element (zero load, high line, high frequency) <= power "
         "derated to the ambient x policy fraction",
         SOURCE_P + "; derating to zero at Tj max from generic datasheets [S]",
         "W", zener_power_vs_derated_rating,
         ratings=("power_w",), stress_keys=("max_zener_power_w", "ambient_c"),
         corner_key="max_zener_power_w"),
    Rule("zener.surge_power", "zener",
         "surge peak power per element <= non-repetitive pulse rating scaled to the surge's "
         "width (sqrt law) x policy fraction; without a pulse rating 40 W per W of steady "
         "power at 100 us [M]",
         SOURCE_P + "; generic pulse rating 40 W/W at 100 us [M] from memory; "
         + _SURGE_SOURCE,
         "W", zener_surge_power_vs_pulse_rating,
         ratings=("power_w",),
         stress_keys=("surge_zener_peak_power_w", "surge_zener_pulse_energy_j"),
         applies=surge_given),
    # --- reservoir (reservoir.py) -----------------------------------------------------------
    Rule("reservoir.voltage", "reservoir",
         "highest bus voltage <= rated voltage x policy fraction (rated >= Vz_max / 0.8)",
         SOURCE_P,
         "V", bus_voltage_vs_rated_voltage,
         ratings=("rated_voltage_v",), stress_keys=("max_output_voltage_v",),
         corner_key="max_output_voltage_v"),
    Rule("reservoir.ripple", "reservoir",
         "ripple current <= rated ripple current",
         SOURCE_P,
         "A", ripple_current_vs_rating,
         ratings=("ripple_a",), stress_keys=("max_reservoir_ripple_current_a",),
         corner_key="max_reservoir_ripple_current_a"),
    Rule("reservoir.output_ripple", "reservoir",
         "output ripple (peak to peak, worst corner) <= Zener voltage x policy fraction",
         SOURCE_P + "; ripple of a reservoir between charging pulses, C dV = I dt [S]",
         "V", output_ripple_vs_bus_fraction,
         ratings=("value",), stress_keys=("max_output_ripple_v", "zener_voltage_v"),
         corner_key="max_output_ripple_v"),
    Rule("reservoir.life", "reservoir",
         "target life <= estimated life at the core temperature (ambient + ripple "
         "self-heating, 5 K at the rated ripple [M]) by the 10-degree rule, at most 15 x the "
         "rated life [M]",
         "[P] 10-degree rule (Arrhenius); extrapolation cap and rated-ripple rise [M] from "
         "memory",
         "h", reservoir_target_vs_estimated_life,
         ratings=("rated_life_h", "temp_max_c", "ripple_a"),
         stress_keys=("target_life_h", "ambient_c", "max_reservoir_ripple_current_a"),
         corner_key="max_reservoir_ripple_current_a"),
    Rule("reservoir.temperature", "reservoir",
         "temperature class >= max ambient + policy margin",
         SOURCE_P,
         "C", ambient_vs_temperature_class,
         ratings=("temp_max_c",), stress_keys=("ambient_c",)),
    # --- fuse (fuse.py) ---------------------------------------------------------------------
    Rule("fuse.inrush_i2t", "fuse",
         "the fuse carries the switch-on pulse at every switch-on: switch-on I^2t <= melting "
         "I^2t x min(policy fraction, pulse-count derating of its type for --switch-ons; an "
         "unstated type counts as fast-acting)",
         SOURCE_P + "; I^2t = Vpk^2 C / (2 R) of RC charging [S]; " + _FUSE_PULSE_SOURCE,
         "A2s", switch_on_i2t_vs_melting_i2t,
         ratings=("i2t_a2s",), stress_keys=("inrush_i2t_a2s", "switch_ons"),
         applies=not_fusible_resistor),
    Rule("fuse.surge_i2t", "fuse",
         "the fuse does not open on the surge: surge I^2t <= melting I^2t x policy fraction",
         SOURCE_P + "; " + _SURGE_SOURCE,
         "A2s", surge_i2t_vs_melting_i2t,
         ratings=("i2t_a2s",), stress_keys=("surge_fuse_i2t_a2s",),
         applies=real_fuse_and_surge),
    Rule("fuse.opens_on_short", "fuse",
         "the fuse opens if the X capacitor shorts: low-line fault current through the series "
         "resistance >= rated current x policy factor (a warning only for an IEC 60384-14 X "
         "capacitor)",
         SOURCE_P + "; exemption: " + SHORTED_X_CAP_EXEMPTION,
         "A", rated_current_vs_fault_current,
         ratings=("value",), stress_keys=("mains_min_v", "series_resistance_ohm"),
         applies=not_fusible_resistor, waiver=shorted_x_cap_exempt),
    Rule("fuse.fusible_opens_on_short", "fuse",
         "a fusible series resistor opens if the X capacitor shorts: fault power per element >= "
         "rated power x policy factor (a warning only for an IEC 60384-14 X capacitor)",
         SOURCE_P + "; exemption: " + SHORTED_X_CAP_EXEMPTION,
         "W", rated_power_vs_fault_power,
         ratings=("power_w",), stress_keys=("mains_min_v", "series_resistance_ohm"),
         applies=fusible_resistor, waiver=shorted_x_cap_exempt),
    # --- varistor across the line (varistor.py) ---------------------------------------------
    Rule("varistor.continuous_voltage", "varistor",
         "highest mains rms <= the varistor's maximum continuous AC voltage",
         SOURCE_P,
         "V", mains_rms_vs_continuous_voltage,
         ratings=("rated_voltage_ac_v",), stress_keys=("mains_max_v",)),
    Rule("varistor.surge_energy", "varistor",
         "the varistor's surge energy (worst corner and phase) <= its energy rating",
         SOURCE_P + "; " + _SURGE_SOURCE + "; varistor power law I = k V^alpha [M]",
         "J", surge_energy_vs_rating,
         ratings=("pulse_energy_j",), stress_keys=("surge_varistor_energy_j",),
         applies=surge_given),
    Rule("varistor.surge_current", "varistor",
         "the varistor's surge peak current <= its 8/20 us single-pulse rating",
         SOURCE_P + "; " + _SURGE_SOURCE + "; varistor power law I = k V^alpha [M]",
         "A", surge_current_vs_peak_rating,
         ratings=("ifsm_a",), stress_keys=("surge_varistor_peak_current_a",),
         applies=surge_given),
    # --- whole circuit (whole.py) -----------------------------------------------------------
    Rule("whole.min_current", "whole",
         "worst-case minimum DC current >= load x (1 + policy margin)",
         SOURCE_P,
         "A", load_vs_min_dc_current,
         stress_keys=("load_a", "min_dc_current_a"),
         corner_key="min_dc_current_a"),
    Rule("whole.end_of_life_current", "whole",
         "worst-case minimum DC current after the X capacitor's capacitance loss at the end "
         "of the target life >= load x (1 + policy margin)",
         "[P]; loss from the humidity grade's test (IEC 60384-14 Amd 1 [S]) by Peck's model "
         "(IEEE IRPS 1986 [S]; n = 3, Ea = 0.8 eV [M]), or --cap-loss",
         "A", load_vs_end_of_life_current,
         stress_keys=("load_a", "min_dc_current_a", "x_cap_end_of_life_loss",
                      "cap_loss_in_analysis"),
         corner_key="min_dc_current_a", applies=end_of_life_known),
    Rule("whole.standby_power", "whole",
         "no-load real power <= standby limit (only when one is set: --standby-limit or "
         "--product-class)",
         "EU Regulation 2023/826, off/standby mode <= 0.5 W [S]; other classes in "
         "selector.policy.PRODUCT_CLASSES",
         "W", no_load_power_vs_standby_limit,
         stress_keys=("no_load_real_power_w",),
         corner_key="no_load_real_power_w"),
    Rule("whole.burst_holdup", "whole",
         "the reservoir holds the bus through a load burst: droop <= Zener voltage x policy "
         "fraction",
         SOURCE_P + "; C dV = I t [S]",
         "V", burst_droop_vs_bus_fraction,
         stress_keys=("burst_current_a", "burst_duration_s", "reservoir_min_f",
                      "zener_voltage_v"),
         corner_key="min_dc_current_a", applies=burst_given),
    Rule("whole.output_window_max", "whole",
         "output window, top: highest bus voltage (no load, high corner) <= highest voltage "
         "the load tolerates (default 1.3 x bus)",
         SOURCE_P,
         "V", highest_output_vs_vout_max,
         stress_keys=("max_output_voltage_v", "zener_voltage_v"),
         corner_key="max_output_voltage_v"),
    Rule("whole.output_window_min", "whole",
         "output window, bottom: lowest voltage the load tolerates (default 0.9 x bus) <= "
         "lowest bus voltage (full load, low corner, ripple trough)",
         SOURCE_P,
         "V", vout_min_vs_lowest_output,
         stress_keys=("min_output_voltage_v", "zener_voltage_v"),
         corner_key="min_output_voltage_v", applies=bus_feeds_the_load),
    Rule("whole.bus_surge_peak", "whole",
         "bus peak during the surge (worst corner and phase) <= highest voltage the load "
         "tolerates (default 1.3 x bus)",
         SOURCE_P + "; " + _SURGE_SOURCE,
         "V", bus_surge_peak_vs_vout_max,
         stress_keys=("surge_bus_peak_v", "zener_voltage_v"),
         corner_key="surge_bus_peak_v", applies=surge_given),
)
# fmt: on


def rules_for(role: str) -> tuple[Rule, ...]:
    """The registered rules of one role."""
    if role not in ROLES:
        raise ValueError(f"unknown role '{role}'; valid roles: {', '.join(ROLES)}")
    return tuple(r for r in RULES if r.role == role)
