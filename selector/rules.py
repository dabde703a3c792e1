"""The rule engine shared by `dropper design` and `dropper audit`.

Each rule is one pure function ``(stresses, part, policy) -> (stress, limit)`` in SI units that
works on floats and on numpy arrays alike (the design solver screens whole candidate arrays with
the same functions the auditor reports with). A rule passes when ``stress <= limit``; its margin
is ``(limit - stress) / limit`` (the fraction of the limit left; negative = violated). For rules
of the form "rating >= requirement" the requirement is the stress and the rating the limit.

``evaluate(parts_by_role, analysis, policy)`` runs every registered rule on one analysed circuit
and returns ``Finding`` records. A rating the part lacks gives a 'warn' finding ("rating
unknown"), never a silent pass. Sources: DOMAIN.md section 4 and 5; marks [S] checked in a
published source, [M] from memory, [P] common practice, no source.

Adding a rule: write a function ``_my_rule(s, p, pol) -> (stress, limit)`` using only numpy
operations on the stress keys (see ``STRESS_KEYS``) and the part's attributes (``RatedPart``),
then append ``Rule(id, role, description, source, unit, fn, ratings=(...), stress_keys=(...))``
to ``RULES``; add a worked-example test in tests/test_rules.py.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Final

import numpy as np

from .errors import OutOfRangeError
from .policy import Policy

__all__ = [
    "ARRANGEMENTS",
    "RESISTOR_GENERIC_DERATING_C",
    "ROLES",
    "RULES",
    "X_CLASS_IMPULSE_V",
    "ZENER_GENERIC_DERATING_C",
    "Finding",
    "RatedPart",
    "Rule",
    "derated_power",
    "discharge_time",
    "evaluate",
    "margin",
    "rated_part_from_row",
    "rules_for",
    "stresses_from_analysis",
    "summarise",
    "x_class_impulse_v",
]

ROLES: Final[tuple[str, ...]] = (
    "x_capacitor",
    "series_resistor",
    "bleeder",
    "rectifier",
    "zener",
    "reservoir",
    "fuse",
    "whole",
)
ARRANGEMENTS: Final[tuple[str, ...]] = ("single", "series", "parallel")

#: IEC 60384-14, peak impulse voltage in service that each X subclass is meant for [S]
#: (X1: 2.5-4 kV, X2: <= 2.5 kV, X3: <= 1.2 kV); any other part across the mains: 0 (fails).
X_CLASS_IMPULSE_V: Final[dict[str, float]] = {"X1": 4000.0, "X2": 2500.0, "X3": 1200.0}

#: resistor power derating when the catalogue row has none: full power to 70 C, linear to zero
#: at 155 C (generic thick-film / metal-film datasheets; DOMAIN.md table 5) [S]
RESISTOR_GENERIC_DERATING_C: Final[tuple[float, float]] = (70.0, 155.0)
#: Zener power derating when the row has none: full power at 25 C, zero at Tj max 150 C [S]
ZENER_GENERIC_DERATING_C: Final[tuple[float, float]] = (25.0, 150.0)


# ---------------------------------------------------------------------------------------------
# parts and findings


@dataclass(frozen=True)
class RatedPart:
    """The ratings of one part (or one group of equal parts) as arranged in the circuit.

    Ratings are per element, SI units, ``None`` when unknown. ``qty`` equal elements are arranged
    ``single`` / ``series`` / ``parallel``: elements in series share voltage and power, in parallel
    they share current and power. ``share`` is the fraction of the role's total stress this group
    carries (1 when it is the only group; the auditor sets R_i / R_total for unequal resistors in
    series). ``value``: F for capacitors, ohm for resistors, V (Vz) for Zeners, A for fuses.
    """

    role: str
    kind: str | None = None
    code: str | None = None
    ref: str | None = None
    description: str | None = None
    qty: int = 1
    arrangement: str = "single"
    share: float = 1.0
    value: float | None = None
    tolerance: float | None = None
    safety_class: str | None = None
    rated_voltage_v: float | None = None
    rated_voltage_ac_v: float | None = None
    limiting_voltage_v: float | None = None
    power_w: float | None = None
    derate_start_c: float | None = None
    derate_end_c: float | None = None
    pulse_energy_j: float | None = None
    impulse_v: float | None = None
    dvdt_v_per_s: float | None = None
    vrrm_v: float | None = None
    if_av_a: float | None = None
    ifsm_a: float | None = None
    tj_max_c: float | None = None
    ripple_a: float | None = None
    temp_max_c: float | None = None
    i2t_a2s: float | None = None
    fusible: bool | None = None

    def __post_init__(self) -> None:
        if self.role not in ROLES:
            raise ValueError(f"unknown role '{self.role}'; valid roles: {', '.join(ROLES)}")
        if self.arrangement not in ARRANGEMENTS:
            raise ValueError(
                f"unknown arrangement '{self.arrangement}'; valid: {', '.join(ARRANGEMENTS)}"
            )
        if self.qty < 1:
            raise ValueError(f"qty must be >= 1, got {self.qty}")

    # per-element shares of the role's total stress
    @property
    def n_series(self) -> int:
        return self.qty if self.arrangement == "series" else 1

    @property
    def power_share(self) -> float:
        """Fraction of the role's power (and pulse energy) one element takes (equal parts)."""
        return self.share / self.qty

    @property
    def voltage_share(self) -> float:
        """Fraction of the role's voltage one element takes (equal parts in series)."""
        return self.share / self.n_series

    @property
    def class_impulse_v(self) -> float | None:
        return x_class_impulse_v(self.safety_class)


def x_class_impulse_v(safety_class: str | None) -> float | None:
    """Peak impulse voltage in service an X subclass is meant for [V] (IEC 60384-14 [S]).

    ``'X2'`` -> 2500.0; a part of no X subclass (general-purpose film, ceramic, Y) -> 0.0;
    unknown (``None``) -> None.
    """
    if safety_class is None:
        return None
    return X_CLASS_IMPULSE_V.get(str(safety_class).strip().upper(), 0.0)


#: catalogue columns that carry ratings (DEVELOPERS.md "Catalogue")
_RATING_COLUMNS: Final[tuple[str, ...]] = tuple(
    f.name
    for f in dataclasses.fields(RatedPart)
    if f.name not in {"role", "kind", "code", "ref", "description", "qty", "arrangement", "share"}
)


def _clean(v: Any) -> Any:
    if v is None:
        return None
    if isinstance(v, float) and math.isnan(v):
        return None
    if isinstance(v, (np.floating, np.integer)):
        v = v.item()
        if isinstance(v, float) and math.isnan(v):
            return None
    if v is getattr(np, "nan", object()):
        return None
    try:
        import pandas as pd

        if v is pd.NA or v is pd.NaT:
            return None
    except ImportError:  # pragma: no cover
        pass
    return v


def rated_part_from_row(
    row: Mapping[str, Any],
    role: str,
    qty: int = 1,
    arrangement: str = "single",
    ref: str | None = None,
    share: float = 1.0,
) -> RatedPart:
    """A RatedPart from a catalogue row (a ``parts_frame`` row or any mapping of its columns)."""
    kw: dict[str, Any] = {}
    for name in _RATING_COLUMNS:
        if name in row:
            v = _clean(row[name])
            if name == "fusible" and v is not None:
                v = bool(v)
            elif name == "safety_class" and v is not None:
                v = str(v)
            elif v is not None:
                v = float(v)
            kw[name] = v
    return RatedPart(
        role=role,
        kind=_clean(row.get("kind")),
        code=_clean(row.get("code")),
        description=_clean(row.get("description")),
        ref=ref,
        qty=qty,
        arrangement=arrangement,
        share=share,
        **kw,
    )


@dataclass(frozen=True)
class Finding:
    """One rule applied to one part: ok iff stress <= limit (see module docstring)."""

    rule: str
    part: str
    stress: float | None
    limit: float | None
    unit: str
    margin: float | None
    ok: bool
    severity: str  # 'fail' | 'warn' | 'pass'
    source: str
    corner: str | None = None
    ref: str | None = None
    description: str = ""
    note: str = ""


# ---------------------------------------------------------------------------------------------
# pure helpers (numpy-friendly)


def margin(stress: Any, limit: Any) -> Any:
    """Fraction of the limit left: ``(limit - stress) / limit``; ok iff >= 0.

    With limit <= 0 the margin is 0 when stress <= limit (nothing allowed, nothing there) and -1
    otherwise. Example: stress 0.3 W against a limit of 0.5 W -> margin 0.4.
    """
    if isinstance(stress, (int, float)) and isinstance(limit, (int, float)):
        s_, l_ = float(stress), float(limit)
        if l_ > 0:
            return (l_ - s_) / l_
        return 0.0 if s_ <= l_ else -1.0
    s = np.asarray(stress, dtype=float)
    lim = np.asarray(limit, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        m = np.where(
            lim > 0, (lim - s) / np.where(lim > 0, lim, 1.0), np.where(s <= lim, 0.0, -1.0)
        )
    return m.item() if m.ndim == 0 else m


def derated_power(rated_w: Any, ambient_c: Any, start_c: Any, end_c: Any) -> Any:
    """Power a part may dissipate at ``ambient_c``: linear derating [W].

    P(T) = P_rated for T <= T_start; P_rated * (T_end - T) / (T_end - T_start) up to T_end;
    0 above. Units: W, C. Valid for T_end > T_start. Source: generic resistor datasheets, full
    power to 70 C and zero at 155 C (DOMAIN.md table 5) [S]; Zeners from 25 C to Tj max [S].
    Example: a 0.25 W 1206 resistor at 100 C: 0.25 * (155 - 100) / (155 - 70) = 0.162 W.
    """
    if all(isinstance(v, (int, float)) for v in (rated_w, ambient_c, start_c, end_c)):
        if end_c <= start_c:
            raise OutOfRangeError(
                f"derating end ({end_c} C) must lie above its start ({start_c} C)"
            )
        return float(rated_w) * min(max((end_c - ambient_c) / (end_c - start_c), 0.0), 1.0)
    start = np.asarray(start_c, dtype=float)
    end = np.asarray(end_c, dtype=float)
    if np.any(end <= start):
        raise OutOfRangeError(f"derating end ({end_c} C) must lie above its start ({start_c} C)")
    frac = np.clip((end - np.asarray(ambient_c, dtype=float)) / (end - start), 0.0, 1.0)
    out = np.asarray(rated_w, dtype=float) * frac
    return out.item() if out.ndim == 0 else out


def discharge_time(v0: Any, limit_v: Any, tau_s: Any) -> Any:
    """Time for an RC discharge from ``v0`` to ``limit_v`` [s]: t = tau * ln(v0 / limit).

    V(t) = V0 * exp(-t / tau) (RC discharge, any circuits textbook [S]); 0 when v0 <= limit.
    Valid for limit > 0. Example: 358 V (the crest of 253 V rms) through 1 Mohm x 330 nF
    (tau 0.33 s) reaches 34 V after 0.33 * ln(358 / 34) = 0.777 s (IEC 60335-1 22.5 allows 1 s).
    """
    lim = np.asarray(limit_v, dtype=float)
    if np.any(lim <= 0):
        raise OutOfRangeError("discharge limit voltage must be > 0")
    ratio = np.maximum(np.asarray(v0, dtype=float) / lim, 1.0)
    out = np.asarray(tau_s, dtype=float) * np.log(ratio)
    return out.item() if out.ndim == 0 else out


def _resistor_derating(p: Any) -> tuple[Any, Any]:
    start = _or(p.derate_start_c, RESISTOR_GENERIC_DERATING_C[0])
    end = _or(p.derate_end_c, RESISTOR_GENERIC_DERATING_C[1])
    return start, end


def _zener_derating(p: Any) -> tuple[Any, Any]:
    start = _or(p.derate_start_c, ZENER_GENERIC_DERATING_C[0])
    end = _or(p.derate_end_c, _or(p.tj_max_c, ZENER_GENERIC_DERATING_C[1]))
    return start, end


def _or(v: Any, default: float) -> Any:
    if v is None:
        return default
    if isinstance(v, np.ndarray):
        return np.where(np.isnan(v), default, v)
    if isinstance(v, float) and math.isnan(v):
        return default
    return v


# ---------------------------------------------------------------------------------------------
# the rules: fn(s, p, pol) -> (stress, limit); s maps STRESS_KEYS to floats or arrays


def _x_class(s, p, pol):
    """Safety class: stress 1 (an X subclass is required), limit 1 for X1/X2/X3 parts and 0 for
    anything else (general-purpose film, ceramic, Y); whether X3 suffices is x_cap.impulse."""
    return np.ones_like(np.asarray(p.class_impulse_v, dtype=float)), np.where(
        np.asarray(p.class_impulse_v, dtype=float) > 0, 1.0, 0.0
    )


def _x_ac_voltage(s, p, pol):
    return s["mains_max_v"], p.rated_voltage_ac_v * pol.x_cap_voltage_fraction


def _x_impulse(s, p, pol):
    lim = p.class_impulse_v
    return s["surge_level_v"], lim


def _x_dvdt_on(s, p, pol):
    return s["inrush_x_cap_dvdt_v_per_s"], p.dvdt_v_per_s * pol.dvdt_fraction


def _x_dvdt_surge(s, p, pol):
    return s["surge_x_cap_dvdt_v_per_s"], p.dvdt_v_per_s * pol.dvdt_fraction


def _r_power(s, p, pol):
    start, end = _resistor_derating(p)
    lim = derated_power(p.power_w, s["ambient_c"], start, end) * pol.series_r_power_fraction
    return s["max_series_r_power_w"] * p.power_share, lim


def _r_energy_on(s, p, pol):
    return s[
        "inrush_series_r_energy_j"
    ] * p.power_share, p.pulse_energy_j * pol.pulse_energy_fraction


def _r_energy_surge(s, p, pol):
    return s[
        "surge_series_r_energy_j"
    ] * p.power_share, p.pulse_energy_j * pol.pulse_energy_fraction


def _r_peak_voltage(s, p, pol):
    # steady state: peak line current through one element
    stress = math.sqrt(2.0) * s["max_line_current_rms_a"] * p.value
    return stress, p.limiting_voltage_v * pol.limiting_voltage_fraction


def _r_pulse_voltage_on(s, p, pol):
    stress = s["inrush_peak_current_a"] * p.value
    lim = p.limiting_voltage_v * pol.pulse_voltage_factor * pol.limiting_voltage_fraction
    return stress, lim


def _r_pulse_voltage_surge(s, p, pol):
    stress = s["surge_series_r_peak_voltage_v"] * p.voltage_share
    lim = p.limiting_voltage_v * pol.pulse_voltage_factor * pol.limiting_voltage_fraction
    return stress, lim


def _b_discharge(s, p, pol):
    # the profile's time (or time constant for iec60950) against the time it allows;
    # an exempt capacitor (e.g. <= 0.1 uF under IEC 60335-1 22.5) passes with stress 0
    exempt = s["discharge_exempt"]
    t = s["discharge_time_s"]
    return np.where(exempt, 0.0, t), s["discharge_allowed_s"]


def _b_power(s, p, pol):
    start, end = _resistor_derating(p)
    lim = derated_power(p.power_w, s["ambient_c"], start, end) * pol.bleeder_power_fraction
    return s["max_bleeder_power_w"] * p.power_share, lim


def _b_voltage(s, p, pol):
    stress = s["max_bleeder_voltage_v"] * p.voltage_share
    return stress, p.limiting_voltage_v * pol.limiting_voltage_fraction


def _d_vrrm(s, p, pol):
    stress = np.maximum(s["max_rectifier_reverse_voltage_v"], s["mains_max_v"] * math.sqrt(2.0))
    return stress, p.vrrm_v * pol.rectifier_voltage_fraction


def _d_ifsm(s, p, pol):
    return s["inrush_rectifier_peak_current_a"], p.ifsm_a * pol.rectifier_surge_fraction


def _d_avg(s, p, pol):
    return s["max_rectifier_avg_current_a"], p.if_av_a


def _z_power(s, p, pol):
    start, end = _zener_derating(p)
    lim = derated_power(p.power_w, s["ambient_c"], start, end) * pol.zener_power_fraction
    return s["max_zener_power_w"] * p.power_share, lim


def _c_voltage(s, p, pol):
    return s["max_output_voltage_v"], p.rated_voltage_v * pol.reservoir_voltage_fraction


def _c_ripple(s, p, pol):
    return s["max_reservoir_ripple_current_a"], p.ripple_a * pol.reservoir_ripple_fraction


def _c_temperature(s, p, pol):
    return s["ambient_c"] + pol.reservoir_temp_margin_c, p.temp_max_c


def _f_i2t(s, p, pol):
    return s["inrush_i2t_a2s"], p.i2t_a2s * pol.fuse_i2t_fraction


def _f_opens(s, p, pol):
    # fuse: shorted X capacitor leaves the series resistance alone across the low mains
    fault_a = s["mains_min_v"] / np.maximum(s["series_resistance_ohm"], 1e-3)
    return p.value * pol.fuse_fault_factor, fault_a


def _f_fusible_opens(s, p, pol):
    # fusible series resistor serving as the fuse: element power with a shorted X capacitor
    fault_w = s["mains_min_v"] ** 2 / np.maximum(s["series_resistance_ohm"], 1e-3) * p.power_share
    return p.power_w * pol.fusible_fault_factor, fault_w


def _w_current(s, p, pol):
    return s["load_a"] * (1.0 + pol.load_margin), s["min_dc_current_a"]


def _w_standby(s, p, pol):
    return s["no_load_real_power_w"], pol.standby_limit_w


def _c_ripple_voltage(s, p, pol):
    # steady output ripple p-p at the worst corner against a fraction of the bus voltage
    return s["max_output_ripple_v"], s["zener_voltage_v"] * pol.output_ripple_fraction


def _w_burst(s, p, pol):
    # reservoir droop during a burst the dropper cannot feed: dV = (I_burst - I_min) t / C_min
    deficit = np.maximum(s["burst_current_a"] - s["min_dc_current_a"], 0.0)
    c_min = s["reservoir_min_f"]
    droop = deficit * s["burst_duration_s"] / np.maximum(c_min, 1e-12)
    return droop, s["zener_voltage_v"] * pol.burst_droop_fraction


SOURCE_P: Final[str] = "[P] common practice, no source"


@dataclass(frozen=True)
class Rule:
    """One registered rule."""

    id: str
    role: str
    description: str
    source: str
    unit: str
    fn: Callable[[Mapping[str, Any], Any, Policy], tuple[Any, Any]]
    ratings: tuple[str, ...] = ()
    stress_keys: tuple[str, ...] = ()
    #: the stress key whose worst-case corner the finding reports
    corner_key: str | None = None
    #: only for parts of this kind (e.g. fusible resistors), or when this stress key is truthy
    applies: Callable[[Mapping[str, Any], RatedPart], bool] | None = None

    def check(self, s: Mapping[str, Any], p: Any, pol: Policy) -> tuple[Any, Any, Any]:
        """(stress, limit, margin); arrays in, arrays out."""
        stress, limit = self.fn(s, p, pol)
        return stress, limit, margin(stress, limit)


def _is_fuse_not_fusible(s, p):
    return not bool(p.fusible)


def _is_fusible(s, p):
    return bool(p.fusible)


def _has_surge(s, p):
    # no surge level (0): the surge rules do not apply (the engine computes no surge)
    v = s.get("surge_level_v")
    return v is not None and not (isinstance(v, float) and math.isnan(v)) and v > 0


def _has_burst(s, p):
    return bool(s.get("burst_current_a")) and bool(s.get("burst_duration_s"))


RULES: Final[tuple[Rule, ...]] = (
    Rule(
        "x_cap.safety_class",
        "x_capacitor",
        "an X1/X2/X3 safety capacitor across the mains (X3 only for surges <= 1.2 kV); never a "
        "general-purpose film or ceramic",
        "IEC 60384-14 (subclasses X1/X2/X3) [S]",
        "class",
        _x_class,
        ratings=("safety_class",),
    ),
    Rule(
        "x_cap.ac_voltage",
        "x_capacitor",
        "rated AC voltage >= highest mains rms",
        SOURCE_P,
        "V",
        _x_ac_voltage,
        ratings=("rated_voltage_ac_v",),
        stress_keys=("mains_max_v",),
    ),
    Rule(
        "x_cap.impulse",
        "x_capacitor",
        "impulse class covers the surge level (X3 <= 1.2 kV, X2 <= 2.5 kV, X1 <= 4 kV peak)",
        "IEC 60384-14, peak impulse voltage in service [S]; surge per IEC 61000-4-5",
        "V",
        _x_impulse,
        ratings=("safety_class",),
        stress_keys=("surge_level_v",),
    ),
    Rule(
        "x_cap.dvdt_switch_on",
        "x_capacitor",
        "dV/dt at switch-on at the crest <= rated dV/dt",
        SOURCE_P,
        "V/s",
        _x_dvdt_on,
        ratings=("dvdt_v_per_s",),
        stress_keys=("inrush_x_cap_dvdt_v_per_s",),
    ),
    Rule(
        "x_cap.dvdt_surge",
        "x_capacitor",
        "dV/dt during the mains surge <= rated dV/dt",
        SOURCE_P + "; surge per IEC 61000-4-5",
        "V/s",
        _x_dvdt_surge,
        ratings=("dvdt_v_per_s",),
        stress_keys=("surge_x_cap_dvdt_v_per_s",),
        applies=_has_surge,
    ),
    Rule(
        "series_r.power",
        "series_resistor",
        "continuous power per element <= rating derated to the ambient x policy fraction",
        SOURCE_P + "; derating 70 C -> 155 C from generic datasheets [S]",
        "W",
        _r_power,
        ratings=("power_w",),
        stress_keys=("max_series_r_power_w", "ambient_c"),
        corner_key="max_series_r_power_w",
    ),
    Rule(
        "series_r.switch_on_energy",
        "series_resistor",
        "switch-on pulse energy per element (0.5 C V^2) within the family's pulse capability",
        SOURCE_P + "; energy 0.5 C V^2 of RC charging [S]",
        "J",
        _r_energy_on,
        ratings=("pulse_energy_j",),
        stress_keys=("inrush_series_r_energy_j",),
    ),
    Rule(
        "series_r.surge_energy",
        "series_resistor",
        "surge pulse energy per element within the family's pulse capability",
        SOURCE_P + "; surge per IEC 61000-4-5",
        "J",
        _r_energy_surge,
        ratings=("pulse_energy_j",),
        stress_keys=("surge_series_r_energy_j",),
        applies=_has_surge,
    ),
    Rule(
        "series_r.peak_voltage",
        "series_resistor",
        "steady-state peak voltage per element <= limiting element voltage x policy fraction",
        SOURCE_P,
        "V",
        _r_peak_voltage,
        ratings=("limiting_voltage_v", "value"),
        stress_keys=("max_line_current_rms_a",),
        corner_key="max_line_current_rms_a",
    ),
    Rule(
        "series_r.switch_on_voltage",
        "series_resistor",
        "switch-on peak voltage per element <= limiting voltage x pulse factor x policy fraction",
        SOURCE_P + "; pulse factor from IEC 60115-1 short-time overload [M]",
        "V",
        _r_pulse_voltage_on,
        ratings=("limiting_voltage_v", "value"),
        stress_keys=("inrush_peak_current_a",),
    ),
    Rule(
        "series_r.surge_voltage",
        "series_resistor",
        "surge peak voltage per element <= limiting voltage x pulse factor x policy fraction",
        SOURCE_P + "; pulse factor from IEC 60115-1 short-time overload [M]",
        "V",
        _r_pulse_voltage_surge,
        ratings=("limiting_voltage_v",),
        stress_keys=("surge_series_r_peak_voltage_v",),
        applies=_has_surge,
    ),
    Rule(
        "bleeder.discharge",
        "bleeder",
        "the X capacitor discharges to the profile's limit in the time it allows",
        "discharge profile: IEC 60335-1 22.5 (34 V after 1 s; C <= 0.1 uF exempt) [S], "
        "IEC 62368-1 5.5.2.2 (2 s [S], 60 V [M]), IEC 60950-1 2.1.1.7 (R C <= 1 s) [S]",
        "s",
        _b_discharge,
        ratings=(),
        stress_keys=("discharge_time_s", "discharge_allowed_s"),
    ),
    Rule(
        "bleeder.power",
        "bleeder",
        "continuous power per element <= rating derated to the ambient x policy fraction",
        SOURCE_P + "; derating 70 C -> 155 C from generic datasheets [S]",
        "W",
        _b_power,
        ratings=("power_w",),
        stress_keys=("max_bleeder_power_w", "ambient_c"),
        corner_key="max_bleeder_power_w",
    ),
    Rule(
        "bleeder.voltage",
        "bleeder",
        "peak voltage per element (split among elements in series) <= limiting voltage x "
        "policy fraction",
        SOURCE_P + "; resistor working voltage min(sqrt(P R), LEV) [S]",
        "V",
        _b_voltage,
        ratings=("limiting_voltage_v",),
        stress_keys=("max_bleeder_voltage_v",),
        corner_key="max_bleeder_voltage_v",
    ),
    Rule(
        "rectifier.vrrm",
        "rectifier",
        "VRRM >= highest mains crest",
        SOURCE_P,
        "V",
        _d_vrrm,
        ratings=("vrrm_v",),
        stress_keys=("max_rectifier_reverse_voltage_v", "mains_max_v"),
        corner_key="max_rectifier_reverse_voltage_v",
    ),
    Rule(
        "rectifier.ifsm",
        "rectifier",
        "switch-on peak current <= IFSM",
        SOURCE_P,
        "A",
        _d_ifsm,
        ratings=("ifsm_a",),
        stress_keys=("inrush_rectifier_peak_current_a",),
    ),
    Rule(
        "rectifier.avg_current",
        "rectifier",
        "average forward current <= IF(AV)",
        SOURCE_P,
        "A",
        _d_avg,
        ratings=("if_av_a",),
        stress_keys=("max_rectifier_avg_current_a",),
        corner_key="max_rectifier_avg_current_a",
    ),
    Rule(
        "zener.power",
        "zener",
        "worst-case dissipation per element (zero load, high line, high frequency) <= power "
        "derated to the ambient x policy fraction",
        SOURCE_P + "; derating to zero at Tj max from generic datasheets [S]",
        "W",
        _z_power,
        ratings=("power_w",),
        stress_keys=("max_zener_power_w", "ambient_c"),
        corner_key="max_zener_power_w",
    ),
    Rule(
        "reservoir.voltage",
        "reservoir",
        "highest bus voltage <= rated voltage x policy fraction (rated >= Vz_max / 0.8)",
        SOURCE_P,
        "V",
        _c_voltage,
        ratings=("rated_voltage_v",),
        stress_keys=("max_output_voltage_v",),
        corner_key="max_output_voltage_v",
    ),
    Rule(
        "reservoir.ripple",
        "reservoir",
        "ripple current <= rated ripple current",
        SOURCE_P,
        "A",
        _c_ripple,
        ratings=("ripple_a",),
        stress_keys=("max_reservoir_ripple_current_a",),
        corner_key="max_reservoir_ripple_current_a",
    ),
    Rule(
        "reservoir.output_ripple",
        "reservoir",
        "output ripple (peak to peak, worst corner) <= Zener voltage x policy fraction",
        SOURCE_P + "; ripple of a reservoir between charging pulses, C dV = I dt [S]",
        "V",
        _c_ripple_voltage,
        ratings=("value",),
        stress_keys=("max_output_ripple_v", "zener_voltage_v"),
        corner_key="max_output_ripple_v",
    ),
    Rule(
        "reservoir.temperature",
        "reservoir",
        "temperature class >= max ambient + policy margin",
        SOURCE_P,
        "C",
        _c_temperature,
        ratings=("temp_max_c",),
        stress_keys=("ambient_c",),
    ),
    Rule(
        "fuse.inrush_i2t",
        "fuse",
        "the fuse does not open at switch-on: switch-on I^2t <= melting I^2t x policy fraction",
        SOURCE_P + "; I^2t = Vpk^2 C / (2 R) of RC charging [S]",
        "A2s",
        _f_i2t,
        ratings=("i2t_a2s",),
        stress_keys=("inrush_i2t_a2s",),
        applies=_is_fuse_not_fusible,
    ),
    Rule(
        "fuse.opens_on_short",
        "fuse",
        "the fuse opens if the X capacitor shorts: low-line fault current through the series "
        "resistance >= rated current x policy factor",
        SOURCE_P,
        "A",
        _f_opens,
        ratings=("value",),
        stress_keys=("mains_min_v", "series_resistance_ohm"),
        applies=_is_fuse_not_fusible,
    ),
    Rule(
        "fuse.fusible_opens_on_short",
        "fuse",
        "a fusible series resistor opens if the X capacitor shorts: fault power per element >= "
        "rated power x policy factor",
        SOURCE_P,
        "W",
        _f_fusible_opens,
        ratings=("power_w",),
        stress_keys=("mains_min_v", "series_resistance_ohm"),
        applies=_is_fusible,
    ),
    Rule(
        "whole.min_current",
        "whole",
        "worst-case minimum DC current >= load x (1 + policy margin)",
        SOURCE_P,
        "A",
        _w_current,
        stress_keys=("load_a", "min_dc_current_a"),
        corner_key="min_dc_current_a",
    ),
    Rule(
        "whole.standby_power",
        "whole",
        "no-load real power <= standby limit",
        "EU Regulation 2023/826, off/standby mode <= 0.5 W [S]",
        "W",
        _w_standby,
        stress_keys=("no_load_real_power_w",),
        corner_key="no_load_real_power_w",
    ),
    Rule(
        "whole.burst_holdup",
        "whole",
        "the reservoir holds the bus through a load burst: droop <= Zener voltage x policy "
        "fraction",
        SOURCE_P + "; C dV = I t [S]",
        "V",
        _w_burst,
        stress_keys=("burst_current_a", "burst_duration_s", "reservoir_min_f", "zener_voltage_v"),
        corner_key="min_dc_current_a",
        applies=_has_burst,
    ),
)


def rules_for(role: str) -> tuple[Rule, ...]:
    """The registered rules of one role."""
    if role not in ROLES:
        raise ValueError(f"unknown role '{role}'; valid roles: {', '.join(ROLES)}")
    return tuple(r for r in RULES if r.role == role)


# ---------------------------------------------------------------------------------------------
# from an engine analysis to flat stresses

#: analysis sections flattened with a prefix (worst_case fields keep their own names)
_SECTIONS: Final[tuple[tuple[str, str], ...]] = (
    ("worst_case", ""),
    ("inrush", "inrush_"),
    ("surge", "surge_"),
    ("discharge", "discharge_"),
    ("startup", "startup_"),
)


def _as_mapping(obj: Any) -> dict[str, Any]:
    if obj is None:
        return {}
    if isinstance(obj, Mapping):
        return dict(obj)
    if dataclasses.is_dataclass(obj):
        return {f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)}
    return {k: v for k, v in vars(obj).items() if not k.startswith("_")}


def stresses_from_analysis(
    analysis: Any, extra: Mapping[str, Any] | None = None
) -> tuple[dict[str, Any], dict[str, str]]:
    """Flat stress values and their corners from an engine Analysis.

    worst_case fields keep their names (``max_zener_power_w``); the transient sections get a
    prefix (``inrush_i2t_a2s``, ``surge_level_v``, ``discharge_time_s``). A field
    ``<name>_corner`` (or a ``corners`` mapping) gives the corner of ``<name>``. ``extra`` adds
    context: ``ambient_c``, ``mains_max_v``, ``mains_min_v`` (rms), ``load_a``,
    ``series_resistance_ohm``, ``burst_current_a``, ``burst_duration_s``, ``reservoir_min_f``,
    ``zener_voltage_v``.
    """
    s: dict[str, Any] = {}
    corners: dict[str, str] = {}
    for section, prefix in _SECTIONS:
        data = _as_mapping(getattr(analysis, section, None))
        own: dict[str, str] = {}
        section_corner = ""
        for k, v in data.items():
            if k == "corners" and isinstance(v, Mapping):
                for ck, cv in v.items():
                    own[prefix + ck] = _corner_text(cv)
            elif k == "corner":
                section_corner = _corner_text(v)
            elif k.endswith("_corner"):
                own[prefix + k[: -len("_corner")]] = _corner_text(v)
            else:
                s[prefix + k] = v
        keys = [prefix + k for k in data if not k.endswith("corner") and k != "corners"]
        for key in keys:
            # the corner of a field: its own record, else the one named by its stem
            # (max_zener_power_corner -> max_zener_power_w; rectifier_corner -> *rectifier*),
            # else the section's corner
            text = own.get(key)
            if text is None:
                for base, ctext in own.items():
                    stem = base[len(prefix) :]
                    if key.startswith(base + "_") or (stem == "rectifier" and "rectifier" in key):
                        text = ctext
                        break
            if text is None and section_corner:
                text = section_corner
            if text:
                corners[key] = text
    if extra:
        s.update(extra)
    return s, corners


_CORNER_FIELDS: Final[tuple[tuple[str, str, str], ...]] = (
    ("mains_v", "", "V"),
    ("freq_hz", "", "Hz"),
    ("cap_f", "C=", "F"),
    ("r_ohm", "R=", "ohm"),
    ("bleeder_ohm", "Rb=", "ohm"),
    ("vz_v", "Vz=", "V"),
)


def _corner_text(c: Any) -> str:
    if c is None:
        return ""
    if isinstance(c, str):
        return c
    if isinstance(c, Mapping):
        from .units import format_value

        parts = []
        for key, label, unit in _CORNER_FIELDS:
            v = c.get(key)
            if isinstance(v, (int, float)) and math.isfinite(v):
                parts.append(label + format_value(float(v), unit, digits=3))
        if "loaded" in c:
            parts.append("loaded" if c["loaded"] else "no load")
        load = c.get("load_a")
        if isinstance(load, (int, float)) and "loaded" not in c:
            parts.append(f"load {format_value(float(load), 'A')}" if load > 0 else "no load")
        rest = [
            f"{k}={v}"
            for k, v in c.items()
            if k not in {f[0] for f in _CORNER_FIELDS} and k not in {"loaded", "load_a"}
        ]
        return " ".join(parts + rest)
    if dataclasses.is_dataclass(c):
        return ", ".join(f"{f.name}={getattr(c, f.name)}" for f in dataclasses.fields(c))
    return str(c)


# ---------------------------------------------------------------------------------------------
# evaluate


def _missing(v: Any) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def evaluate(
    parts_by_role: Mapping[str, RatedPart | Sequence[RatedPart]],
    analysis: Any,
    policy: Policy | None = None,
    *,
    context: Mapping[str, Any] | None = None,
    stresses: Mapping[str, Any] | None = None,
    corners: Mapping[str, str] | None = None,
) -> list[Finding]:
    """Every applicable rule on every part: one Finding each.

    ``parts_by_role`` maps a role to one RatedPart or a list of them (the auditor's several
    designators); the 'whole' rules run once. ``analysis`` is an engine Analysis (or None when
    ``stresses`` is given); ``context`` carries what the analysis does not (see
    ``stresses_from_analysis``). Missing ratings give 'warn' findings; a stress the analysis
    lacks gives a 'warn' finding "stress not computed".
    """
    pol = policy or Policy()
    if stresses is None:
        s, cs = stresses_from_analysis(analysis, context)
    else:
        s = dict(stresses)
        if context:
            s.update(context)
        cs = {}
    if corners:
        cs.update(corners)
    out: list[Finding] = []
    for rule in RULES:
        if rule.role == "whole":
            groups: Sequence[RatedPart | None] = [None]
        else:
            got = parts_by_role.get(rule.role)
            if got is None:
                continue
            groups = [got] if isinstance(got, RatedPart) else list(got)
        for p in groups:
            if rule.applies is not None and not rule.applies(s, p):
                continue
            out.append(_one(rule, s, cs, p, pol))
    return out


def _one(rule: Rule, s: Mapping[str, Any], cs: Mapping[str, str], p, pol) -> Finding:
    role = rule.role
    ref = p.ref if p is not None else None
    ck = rule.corner_key or (rule.stress_keys[0] if rule.stress_keys else None)
    corner = cs.get(ck) if ck else None
    base = dict(
        rule=rule.id,
        part=role,
        unit=rule.unit,
        source=rule.source,
        corner=corner or None,
        ref=ref,
        description=rule.description,
    )
    missing_r = [r for r in rule.ratings if p is not None and _missing(getattr(p, r))]
    if p is not None and rule.id in {"x_cap.safety_class", "x_cap.impulse"}:
        if _missing(p.safety_class):
            missing_r = ["safety_class"]
    missing_s = [k for k in rule.stress_keys if _missing(s.get(k))]
    if missing_r:
        return Finding(
            stress=None,
            limit=None,
            margin=None,
            ok=False,
            severity="warn",
            note=f"rating unknown: {', '.join(missing_r)}",
            **base,
        )
    if missing_s:
        return Finding(
            stress=None,
            limit=None,
            margin=None,
            ok=False,
            severity="warn",
            note=f"stress not computed: {', '.join(missing_s)}",
            **base,
        )
    stress, limit, m = rule.check(s, p, pol)
    stress, limit, m = float(stress), float(limit), float(m)
    ok = bool(stress <= limit)
    note = ""
    if rule.id == "bleeder.discharge" and bool(s.get("discharge_exempt")):
        note = "exempt under the profile"
    if rule.id == "x_cap.safety_class" and p is not None:
        note = f"class {p.safety_class}" + ("" if ok else " is not an X subclass")
    return Finding(
        stress=stress,
        limit=limit,
        margin=m,
        ok=ok,
        severity="pass" if ok else "fail",
        note=note,
        **base,
    )


def summarise(findings: Sequence[Finding]) -> dict[str, int]:
    """Counts of each severity: {'fail': n, 'warn': n, 'pass': n}."""
    out = {"fail": 0, "warn": 0, "pass": 0}
    for f in findings:
        out[f.severity] += 1
    return out
