"""Worst-case analysis of one dropper: nominal point, corners, transients.

Corners (DOMAIN.md section 3): mains low/high x every frequency of the set x X capacitance
(min = C (1 - tol)(1 - end-of-life loss), max = C (1 + tol)) x series resistance and bleeder
(+/- r_tol) x Zener voltage (+/- zener_tol). Ambient does not move the circuit's stresses; it is
carried in the conditions for the rules that derate ratings.

Every corner is first screened with the vectorised closed forms (:mod:`.closed_form`), which are
monotonic in each corner variable as the exact solution is; the corner that is extreme for each
quantity is then solved exactly (:mod:`.steady_state`). The stresses follow DOMAIN.md section 2:
Zener power is worst at high line, +C, the higher frequency and ZERO load; the available current
is least at low line, -C -loss, the lower frequency, +R and +Vz, with the actual load.

A distorted mains (``Mains.harmonics``) applies at every corner: the harmonics scale with the
corner's fundamental voltage. Each extreme corner is then solved twice, on the distorted wave and
on the pure sine of the same fundamental, and the worse of the two is reported (its corner record
carries ``thd``, 0 for the sine): harmonics raise the line current and the series-R power in
proportion to their order, but a flat-topped wave lowers the crest and with it the DC current and
the Zener power, and a grid that is distorted at some hours is clean at others, so the sine stays
a corner. The crest that the rectifier's reverse voltage, the switch-on and the discharge start
from is the higher of the two waves' crests (``Mains.crest_factor``, at least 1); the switch-on
happens at that crest's instant. The closed forms that pick the extreme corners stay the sine
ones: the harmonic content is the same at every corner, so the monotonic directions in V, f, C, R
and Vz do not change. The nominal figures are those of the given (distorted) mains.
"""

from __future__ import annotations

import copy
import itertools
import math
from collections.abc import Callable
from dataclasses import dataclass, replace

import numpy as np

from ..errors import OutOfRangeError
from . import closed_form as cf
from . import reuse
from .circuit import Circuit, Conditions, Mains, Tolerances
from .steady_state import SteadyState
from .transients import (
    Discharge,
    Holdup,
    Inrush,
    Startup,
    Surge,
    discharge,
    inrush,
    replug_residual_v,
    startup,
    surge,
)

__all__ = [
    "Analysis",
    "Corner",
    "Nominal",
    "WorstCase",
    "analyse",
    "corner_circuit",
    "corners",
    "min_dc_current",
    "surge_lower_bounds",
    "surge_through_circuit",
    "weakest_corner",
]


@dataclass(frozen=True)
class Corner:
    """One corner: mains rms [V], frequency [Hz], total X capacitance [F], series R [ohm],
    bleeder [ohm], Zener voltage [V], and whether the load is connected."""

    mains_v: float
    freq_hz: float
    cap_f: float
    r_ohm: float
    bleeder_ohm: float
    vz_v: float
    loaded: bool = True

    def record(self, circuit: Circuit) -> dict:
        """The corner as a JSON-ready dict (keys with SI unit suffixes)."""
        load = circuit.bus_demand_a() if self.loaded else 0.0
        return {
            "mains_v": self.mains_v,
            "freq_hz": self.freq_hz,
            "cap_f": self.cap_f,
            "r_ohm": self.r_ohm,
            "vz_v": self.vz_v,
            "load_a": load,
        }


@dataclass
class Nominal:
    """Nominal mains (first frequency of the set), nominal values, the actual load (JSON keys).

    ``zener_power_w`` is with the actual load; the worst case (``WorstCase.max_zener_power_w``)
    is at zero load, so the two agree only for a circuit without load."""

    freq_hz: float
    dc_current_a: float
    zener_power_w: float
    zener_current_a: float
    output_voltage_v: float
    ripple_v: float
    line_current_rms_a: float
    line_current_peak_a: float
    series_r_power_w: float
    bleeder_power_w: float
    real_power_w: float
    reactive_power_var: float
    apparent_power_va: float
    power_factor: float
    load_current_a: float
    regulator_power_w: float | None


@dataclass
class WorstCase:
    """Extremes over the corners, each with the corner that produced it (JSON keys).

    ``max_zener_current_a`` is the mean breakdown current, ``max_zener_peak_current_a`` its
    peak; both at the Zener-power corner with no load. ``max_bleeder_voltage_v`` is the peak
    across the bleeder (= X capacitor), ``max_x_cap_voltage_v`` the rms. ``load_margin_a`` is
    the least available current minus the average demand (negative: not met); when the weakest
    corner falls out of regulation the available current is read with the bus clamped (no
    load) at that corner. ``max_rectifier_reverse_voltage_v`` is the highest mains crest (the
    design basis when the X capacitor shorts or the clamp opens, [P]).
    """

    min_dc_current_a: float
    min_dc_current_corner: dict
    max_dc_current_a: float
    max_dc_current_corner: dict
    max_zener_power_w: float
    max_zener_power_corner: dict
    max_zener_current_a: float
    max_zener_current_corner: dict
    max_zener_peak_current_a: float
    max_series_r_power_w: float
    max_series_r_power_corner: dict
    max_bleeder_power_w: float
    max_bleeder_power_corner: dict
    max_bleeder_voltage_v: float
    max_bleeder_voltage_corner: dict
    max_x_cap_voltage_v: float
    max_x_cap_voltage_corner: dict
    max_line_voltage_v: float
    max_output_voltage_v: float
    max_output_voltage_corner: dict
    min_output_voltage_v: float
    min_output_voltage_corner: dict
    #: largest peak-to-peak output ripple over the solved corners (reservoir sizing)
    max_output_ripple_v: float
    max_output_ripple_corner: dict
    max_rectifier_avg_current_a: float
    max_rectifier_peak_current_a: float
    max_rectifier_reverse_voltage_v: float
    rectifier_corner: dict
    max_line_current_rms_a: float
    max_line_current_rms_corner: dict
    max_reservoir_ripple_current_a: float
    max_reservoir_ripple_current_corner: dict
    no_load_real_power_w: float
    no_load_real_power_corner: dict
    load_demand_a: float
    load_met: bool
    load_margin_a: float
    in_regulation: bool
    max_regulator_power_w: float | None
    min_regulator_headroom_v: float | None
    regulator_ok: bool | None
    #: the output window the load tolerates (Conditions.vout_max / vout_min) [V]
    vout_max_v: float | None = None
    vout_min_v: float | None = None


@dataclass
class Analysis:
    """Everything ``dropper check`` reports; each attribute's fields are JSON keys."""

    nominal: Nominal
    worst_case: WorstCase
    inrush: Inrush
    surge: Surge
    discharge: Discharge
    startup: Startup
    holdup: Holdup | None
    ambient_c: float
    topology: str
    exact_solves: int

    @property
    def failures(self) -> list[dict[str, str]]:
        """The analysis's own verdicts that refuse these values, each ``{"rule", "reason"}``.

        ``rule`` is the id of the rule that judges the same figure (in ``selector.rules.RULES``),
        so that ``check`` names what design and audit would name: the load at every corner
        (``whole.min_current``; here without the policy margin), the discharge profile
        (``bleeder.discharge``), the bottom of the output window without a regulator
        (``whole.output_window_min``) and, when the surge ran through the whole circuit, the bus
        peak during the surge against the highest voltage the load tolerates
        (``whole.bus_surge_peak``, :func:`selector.rules.whole.bus_surge_peak_vs_vout_max`).
        ``ok`` is their absence, the one verdict every caller reads.
        """
        from ..units import format_value

        out: list[dict[str, str]] = []
        if not self.worst_case.load_met:
            out.append({"rule": "whole.min_current", "reason": "load not met at every corner"})
        if not self.discharge.ok:
            out.append(
                {
                    "rule": "bleeder.discharge",
                    "reason": f"discharge too slow ({self.discharge.rule})",
                }
            )
        w = self.worst_case
        if (
            w.vout_min_v is not None
            and w.regulator_ok is None
            and w.min_output_voltage_v < w.vout_min_v
        ):
            out.append(
                {
                    "rule": "whole.output_window_min",
                    "reason": f"lowest bus voltage {format_value(w.min_output_voltage_v, 'V')} "
                    f"below the load's limit {format_value(w.vout_min_v, 'V')} (--vout-min)",
                }
            )
        s = self.surge
        if s.bus_ok is False:
            out.append(
                {
                    "rule": "whole.bus_surge_peak",
                    "reason": f"surge bus peak {format_value(s.bus_peak_v, 'V')} above the "
                    f"load's limit {format_value(s.vout_max_v, 'V')} (--vout-max)",
                }
            )
        return out

    @property
    def ok(self) -> bool:
        """True when no verdict of :attr:`failures` refuses the values: the load is met at
        every corner, the discharge rule holds and the surge keeps the bus within the load's
        limit."""
        return not self.failures


def corners(circuit: Circuit, mains: Mains, tol: Tolerances) -> list[Corner]:
    """Every corner of the worst-case grid (2 x n_f x 2 x 2 x 2; the bleeder follows R)."""
    c = circuit.x_capacitance_f
    cs = sorted({c * (1 - tol.cap_tol) * (1 - tol.cap_loss), c * (1 + tol.cap_tol)})
    r = circuit.series_resistance_ohm
    rb = circuit.bleeder_resistance_ohm
    rs = sorted({r * (1 - tol.r_tol), r * (1 + tol.r_tol)})
    vz = circuit.zener_voltage_v
    vzs = sorted({vz * (1 - tol.zener_tol), vz * (1 + tol.zener_tol)})
    vs = sorted({mains.low_v, mains.high_v})
    out = []
    for v, f, cc, rr, z in itertools.product(vs, sorted(set(mains.frequencies_hz)), cs, rs, vzs):
        out.append(Corner(v, f, cc, rr, rb * (rr / r), z))
    return out


def corner_circuit(circuit: Circuit, k: Corner) -> Circuit:
    """The circuit with the corner's values (the capacitance as one part).

    The corner values stay inside the validated ranges of ``circuit`` by construction (a few
    per cent around them), so the copy skips the dataclass validation (hot path of analyse).
    """
    c = copy.copy(circuit)
    object.__setattr__(c, "x_capacitors_f", (k.cap_f,))
    object.__setattr__(c, "series_resistance_ohm", k.r_ohm)
    object.__setattr__(c, "bleeder_resistance_ohm", k.bleeder_ohm)
    object.__setattr__(c, "zener_voltage_v", k.vz_v)
    return c


def surge_through_circuit(
    circuit: Circuit,
    grid: list[Corner],
    level_v: float,
    vout_max_v: float,
    vout_max_default: bool = True,
) -> Surge:
    """The surge section from :func:`.surge_circuit.worst_surge`: every stress at its own worst
    corner, phase and polarity over ``grid``; ``bus_ok`` compares the bus peak with
    ``vout_max_v``. The corners' load is off (see :func:`.surge_circuit.surge_case`)."""
    from .surge_circuit import worst_surge, zener_surge_slope

    # the bleeder and the Zener voltage follow the grid; the load does not change the stresses
    distinct = list(dict.fromkeys(grid))
    vals, where = worst_surge(circuit, distinct, level_v)
    return Surge(
        level_v=level_v,
        peak_current_a=vals["peak_current_a"],
        series_r_energy_j=vals["series_r_energy_j"],
        series_r_peak_voltage_v=vals["series_r_peak_voltage_v"],
        x_cap_voltage_step_v=vals["x_cap_voltage_step_v"],
        x_cap_dvdt_v_per_s=vals["x_cap_dvdt_v_per_s"],
        i2t_a2s=vals["fuse_i2t_a2s"],
        corner=where["peak_current_a"],
        zener_peak_current_a=vals["zener_peak_current_a"],
        zener_pulse_energy_j=vals["zener_pulse_energy_j"],
        zener_peak_power_w=vals["zener_peak_power_w"],
        rectifier_peak_current_a=vals["rectifier_peak_current_a"],
        rectifier_i2t_a2s=vals["rectifier_i2t_a2s"],
        fuse_i2t_a2s=vals["fuse_i2t_a2s"],
        bus_peak_v=vals["bus_peak_v"],
        x_cap_peak_total_v=vals["x_cap_peak_total_v"],
        phase_deg=where["peak_current_a"]["phase_deg"],
        vout_max_v=vout_max_v,
        vout_max_default=vout_max_default,
        bus_ok=bool(vals["bus_peak_v"] <= vout_max_v),
        reservoir_esr_ohm=circuit.reservoir_esr_ohm,
        zener_slope_ohm=zener_surge_slope(circuit),
        corners=where,
        method="IEC 61000-4-5 generator circuit in series with the mains, whole circuit, "
        "all corners x 8 phases x both polarities"
        + (", varistor across the line" if circuit.varistor is not None else ""),
        varistor_peak_current_a=vals.get("varistor_peak_current_a"),
        varistor_energy_j=vals.get("varistor_energy_j"),
        line_peak_v=vals.get("line_peak_v"),
        varistor_code=(circuit.varistor.code or None) if circuit.varistor is not None else None,
    )


def _regulator_figures(circuit: Circuit, st: SteadyState):
    reg = circuit.regulator
    if reg is None:
        return None, None
    i_out = circuit.load.demand_a(reg.output_v)
    power = (st.output_max_v - reg.output_v) * i_out + st.output_max_v * reg.quiescent_a
    headroom = st.output_min_v - reg.output_v - reg.dropout_v
    return power, headroom


def weakest_corner(circuit: Circuit, mains: Mains, tol: Tolerances) -> Corner:
    """The corner of least available DC current, as ``analyse`` picks it: the closed forms'
    argmin over the corner grid (monotonic in every corner variable like the exact solution)."""
    grid = corners(circuit, mains, tol)
    i_cf = cf.dc_current(
        circuit.topology,
        np.array([k.mains_v for k in grid]),
        np.array([k.cap_f for k in grid]),
        np.array([k.freq_hz for k in grid]),
        np.array([k.vz_v for k in grid]),
        circuit.diode_drop_v,
        np.array([k.r_ohm for k in grid]),
    )
    return grid[int(np.argmin(i_cf))]


def min_dc_current(circuit: Circuit, mains: Mains, tolerances: Tolerances | None = None) -> float:
    """``analyse(...).worst_case.min_dc_current_a`` alone, for a quick exact rejection [A].

    The same corner (``weakest_corner``), the same supply states and the same reading out of
    regulation as ``analyse``, with one or two exact solves instead of all of them; equal to
    the full analysis to the last bit (tests/test_engine.py).
    """
    tol = tolerances or Tolerances()
    k = weakest_corner(circuit, mains, tol)
    cc = corner_circuit(circuit, k)
    hs_given = tuple(mains.harmonics)
    states: tuple[tuple, ...] = (hs_given, ()) if hs_given else ((),)
    solves = [(hs, reuse.steady_state(cc, k.mains_v, k.freq_hz, hs)) for hs in states]
    hs_min, s_min = min(solves, key=lambda t: t[1].dc_current_a)
    if s_min.zener_current_a > 1e-9 or circuit.load.is_zero:
        return float(s_min.dc_current_a)
    return float(
        reuse.steady_state(cc, k.mains_v, k.freq_hz, hs_min, load_a=0.0, load_g=0.0).dc_current_a
    )


def surge_lower_bounds(
    circuit: Circuit, mains: Mains, tolerances: Tolerances | None, level_v: float
) -> dict[str, float]:
    """Lower bounds of every figure of ``analyse(...).surge``, cheaply [SI].

    ``analyse`` reports each surge stress as its maximum over every corner of the grid, every
    phase and both polarities (``surge_through_circuit``); this is the same maximum over the
    corners of the high line, the lowest series resistance and the highest Zener voltage only
    (where the pulse current is largest), so each figure is at most the full analysis' one.
    Keys as in the rules' stresses: ``surge_`` + each name of
    :data:`.surge_circuit.SURGE_STRESSES` (``surge_series_r_energy_j``,
    ``surge_x_cap_dvdt_v_per_s``, ``surge_zener_peak_power_w``, ...).
    """
    return surge_lower_bounds_many([(circuit, mains, tolerances)], level_v)[0]


def surge_lower_bounds_many(
    items: list[tuple[Circuit, Mains, Tolerances | None]], level_v: float
) -> list[dict[str, float]]:
    """:func:`surge_lower_bounds` of each (circuit, mains, tolerances), in one batched
    simulation (:func:`.surge_circuit.worst_surge_many`)."""
    from .surge_circuit import SURGE_STRESSES, worst_surge_many

    jobs = []
    for circuit, mains, tolerances in items:
        grid = corners(circuit, mains, tolerances or Tolerances())
        r_min = min(k.r_ohm for k in grid)
        vz_max = max(k.vz_v for k in grid)
        sub = [
            k for k in grid if k.mains_v == mains.high_v and k.r_ohm == r_min and k.vz_v == vz_max
        ]
        jobs.append((circuit, list(dict.fromkeys(sub))))
    return [
        {"surge_" + name: float(vals[name]) for name in SURGE_STRESSES}
        for vals, _ in worst_surge_many(jobs, level_v)
    ]


def analyse(
    circuit: Circuit,
    mains: Mains,
    tolerances: Tolerances | None = None,
    conditions: Conditions | None = None,
    progress: Callable[[int, int], None] | None = None,
    surge_model: str = "circuit",
) -> Analysis:
    """Worst-case analysis of ``circuit`` on ``mains`` (SI throughout). See module docstring.

    The closed forms pick the extreme corner of each quantity; those corners (usually 4-6
    distinct ones) and the nominal point are solved exactly. The surge: ``surge_model``
    ``"circuit"`` (default) simulates the generator through the whole circuit at every corner
    and phase (:func:`surge_through_circuit`); ``"loop"`` is the narrow series-loop model of
    :func:`.transients.surge` at the switch-on corner (what the design screen bounds).
    """
    tol = tolerances or Tolerances()
    cond = conditions or Conditions()
    grid = corners(circuit, mains, tol)
    top = circuit.topology
    vf = circuit.diode_drop_v
    V = np.array([k.mains_v for k in grid])
    F = np.array([k.freq_hz for k in grid])
    C = np.array([k.cap_f for k in grid])
    R = np.array([k.r_ohm for k in grid])
    Z = np.array([k.vz_v for k in grid])
    i_cf = cf.dc_current(top, V, C, F, Z, vf, R)
    pz_cf = cf.zener_power_no_load(top, V, C, F, Z, vf, R)
    pr_cf = cf.series_r_power(V, C, F, R)
    k_min = weakest_corner(circuit, mains, tol)
    k_max_i = grid[int(np.argmax(i_cf))]
    k_max_pz = grid[int(np.argmax(pz_cf))]
    k_max_pr = grid[int(np.argmax(pr_cf))]

    # supply states: the given mains; with harmonics also the pure sine of the same fundamental
    # (a distorted grid is clean at other times, and a flat-topped wave lowers the crest, so the
    # sine can be the worse of the two for the Zener, the crest and the discharge)
    hs_given = tuple(mains.harmonics)
    states: tuple[tuple, ...] = (hs_given, ()) if hs_given else ((),)
    crest_factor = max(1.0, mains.crest_factor)
    crest_hi = math.sqrt(2.0) * mains.high_v * crest_factor  # highest crest of the states [V]
    cache: dict[tuple, SteadyState] = {}
    total = 6 if not hs_given else 11
    done = [0]

    has_load = not circuit.load.is_zero or circuit.regulator is not None

    def solve(k: Corner, loaded: bool, hs: tuple = hs_given) -> SteadyState:
        key = (k, loaded or not has_load, hs)  # without a load both are the same solve
        if key not in cache:
            cc = corner_circuit(circuit, k)
            kw = {} if loaded else {"load_a": 0.0, "load_g": 0.0}
            cache[key] = reuse.steady_state(cc, k.mains_v, k.freq_hz, hs, **kw)
            done[0] += 1
            if progress is not None:
                progress(min(done[0], total), total)
        return cache[key]

    f0 = mains.frequencies_hz[0]
    k_nom = Corner(
        mains.nominal_v,
        f0,
        circuit.x_capacitance_f,
        circuit.series_resistance_ohm,
        circuit.bleeder_resistance_ohm,
        circuit.zener_voltage_v,
    )
    nom = solve(k_nom, True)
    s_min = min((solve(k_min, True, hs) for hs in states), key=lambda st: st.dc_current_a)
    s_pz = max((solve(k_max_pz, False, hs) for hs in states), key=lambda st: st.zener_power_w)
    # no-load real power: the harmonics add loss in R, so the distorted wave can be the worse
    s_p0 = max((solve(k_max_pz, False, hs) for hs in states), key=lambda st: st.real_power_w)
    s_imax = max((solve(k_max_i, True, hs) for hs in states), key=lambda st: st.dc_current_a)
    for hs in states:
        solve(k_max_pr, True, hs)
    thd_of = {hs: math.sqrt(sum(h.fraction**2 for h in hs)) for hs in states}

    def record(k: Corner, hs: tuple, load0: bool) -> dict:
        r = k.record(circuit)
        if load0:
            r["load_a"] = 0.0
        if hs_given:  # which supply state: the THD of the wave (0: the pure sine)
            r["thd"] = thd_of[hs]
        return r

    rec = {id(s): record(k, hs, not ld) for (k, ld, hs), s in cache.items()}
    hs_min = next(hs for (k, ld, hs), st in cache.items() if st is s_min)

    def corner_of(s: SteadyState) -> dict:
        return rec[id(s)]

    # stresses of the operating circuit come from the loaded solves; the no-load solves give
    # the Zener, output-voltage and standby figures (the difference in line current between
    # loaded and unloaded is far below a per mille)
    solved = [st for (_, ld, _), st in cache.items() if ld]

    demand_avg = circuit.load.average_demand_a(circuit.bus_voltage_v)
    if circuit.regulator is not None:
        reg = circuit.regulator
        demand_avg = circuit.load.average_demand_a(reg.output_v) + reg.quiescent_a
    # in regulation: the clamp still takes current at the weakest corner. Out of regulation the
    # delivered current is read at the collapsed bus, so the available current is taken from the
    # same corner with the bus held at the clamp (no load) instead.
    in_reg = s_min.zener_current_a > 1e-9 or circuit.load.is_zero
    min_i = s_min.dc_current_a if in_reg else solve(k_min, False, hs_min).dc_current_a
    margin = min_i - demand_avg
    load_met = bool(margin >= 0 and in_reg)

    rb_min = min(k.bleeder_ohm for k in grid)
    s_vc = max(solved, key=lambda s: s.x_cap_voltage_rms_v)
    vc_rms = s_vc.x_cap_voltage_rms_v
    vc_pk_s = max(solved, key=lambda s: s.x_cap_voltage_peak_v)
    bleed_corner = {**corner_of(s_vc), "bleeder_ohm": rb_min}
    max_pr_s = max(solved, key=lambda s: s.series_r_power_w)
    rect_s = max(solved, key=lambda s: s.rectifier_peak_current_a)
    s_vmin = min(solved, key=lambda s: s.output_min_v)
    reg_p, reg_h = None, None
    if circuit.regulator is not None:
        figs = [
            _regulator_figures(corner_circuit(circuit, k), s)
            for (k, ld, _), s in cache.items()
            if ld
        ]
        reg_p = max(p for p, _ in figs)
        reg_h = min(h for _, h in figs)
    worst = WorstCase(
        min_dc_current_a=min_i,
        min_dc_current_corner=corner_of(s_min),
        max_dc_current_a=s_imax.dc_current_a,
        max_dc_current_corner=corner_of(s_imax),
        max_zener_power_w=s_pz.zener_power_w,
        max_zener_power_corner=corner_of(s_pz),
        max_zener_current_a=s_pz.zener_current_a,
        max_zener_current_corner=corner_of(s_pz),
        max_zener_peak_current_a=s_pz.zener_peak_current_a,
        max_series_r_power_w=max_pr_s.series_r_power_w,
        max_series_r_power_corner=corner_of(max_pr_s),
        max_bleeder_power_w=vc_rms * vc_rms / rb_min if circuit.has_bleeder else 0.0,
        max_bleeder_power_corner=bleed_corner,
        max_bleeder_voltage_v=vc_pk_s.x_cap_voltage_peak_v,
        max_bleeder_voltage_corner=corner_of(vc_pk_s),
        max_x_cap_voltage_v=vc_rms,
        max_x_cap_voltage_corner=corner_of(s_vc),
        max_line_voltage_v=mains.high_v,
        max_output_voltage_v=s_pz.output_max_v,
        max_output_voltage_corner=corner_of(s_pz),
        min_output_voltage_v=s_vmin.output_min_v,
        min_output_voltage_corner=corner_of(s_vmin),
        max_output_ripple_v=max(s.ripple_v for s in solved),
        max_output_ripple_corner=corner_of(max(solved, key=lambda s: s.ripple_v)),
        max_rectifier_avg_current_a=max(s.rectifier_avg_current_a for s in solved),
        max_rectifier_peak_current_a=rect_s.rectifier_peak_current_a,
        # design basis [P]: a shorted X capacitor or an open clamp puts the full crest across it
        max_rectifier_reverse_voltage_v=crest_hi,
        rectifier_corner=corner_of(rect_s),
        max_line_current_rms_a=max(s.line_current_rms_a for s in solved),
        max_line_current_rms_corner=corner_of(max(solved, key=lambda s: s.line_current_rms_a)),
        max_reservoir_ripple_current_a=max(s.reservoir_ripple_current_a for s in solved),
        max_reservoir_ripple_current_corner=corner_of(
            max(solved, key=lambda s: s.reservoir_ripple_current_a)
        ),
        no_load_real_power_w=s_p0.real_power_w,
        no_load_real_power_corner=corner_of(s_p0),
        load_demand_a=demand_avg,
        load_met=load_met,
        load_margin_a=margin,
        in_regulation=bool(in_reg),
        max_regulator_power_w=reg_p,
        min_regulator_headroom_v=reg_h,
        regulator_ok=None if reg_h is None else bool(reg_h >= 0),
        vout_max_v=cond.vout_max(circuit),
        vout_min_v=cond.vout_min(circuit),
    )
    nom_reg_p, _ = _regulator_figures(circuit, nom)
    nominal = Nominal(
        freq_hz=f0,
        dc_current_a=nom.dc_current_a,
        zener_power_w=nom.zener_power_w,
        zener_current_a=nom.zener_current_a,
        output_voltage_v=nom.output_voltage_v,
        ripple_v=nom.ripple_v,
        line_current_rms_a=nom.line_current_rms_a,
        line_current_peak_a=nom.line_current_peak_a,
        series_r_power_w=nom.series_r_power_w,
        bleeder_power_w=nom.bleeder_power_w,
        real_power_w=nom.real_power_w,
        reactive_power_var=nom.reactive_power_var,
        apparent_power_va=nom.apparent_power_va,
        power_factor=nom.power_factor,
        load_current_a=nom.load_current_a,
        regulator_power_w=nom_reg_p,
    )

    # transients at their own worst corners
    c_max = max(k.cap_f for k in grid)
    r_min = min(k.r_ohm for k in grid)
    f_hi = max(mains.frequencies_hz)
    k_in = Corner(mains.high_v, f_hi, c_max, r_min, rb_min, circuit.zener_voltage_v, False)
    cin = corner_circuit(circuit, k_in)
    # switch-on at the higher crest of the supply states (the distorted one when it peaks)
    hs_on = hs_given if mains.crest_factor > 1.0 else ()
    # ... after a re-plug at the opposite crest: the X capacitor keeps the charge the discharge
    # profile allows after the re-plug delay (an exempt one decays at C max, Rb max)
    tau_slow = max(k.bleeder_ohm for k in grid) * c_max
    c_nom = circuit.x_capacitance_f
    res_v = replug_residual_v(cond.profile, crest_hi, c_nom, tau_slow, cond.replug_delay_s)
    ins = inrush(cin, mains.high_v, f_hi, record(k_in, hs_on, False), harmonics=hs_on,
                 residual_v=res_v, replug_delay_s=cond.replug_delay_s)  # fmt: skip
    # the X capacitor's dV/dt (= i / C) and k0 (~ V^2 / (R C)) peak at the LOWEST capacitance,
    # where the current is nearly the same (V / R) but C is smaller: take them from that corner
    c_min = min(k.cap_f for k in grid)
    if c_min < c_max:
        k_lo = Corner(mains.high_v, f_hi, c_min, r_min, rb_min, circuit.zener_voltage_v, False)
        lo = inrush(
            corner_circuit(circuit, k_lo),
            mains.high_v,
            f_hi,
            record(k_lo, hs_on, False),
            harmonics=hs_on,
            residual_v=res_v,
            replug_delay_s=cond.replug_delay_s,
        )
        if lo.x_cap_dvdt_v_per_s > ins.x_cap_dvdt_v_per_s:
            ins = replace(
                ins,
                x_cap_dvdt_v_per_s=lo.x_cap_dvdt_v_per_s,
                x_cap_k0_v2_per_s=max(ins.x_cap_k0_v2_per_s, lo.x_cap_k0_v2_per_s),
                x_cap_corner=lo.corner,
            )
    # the surge rides on the fundamental (the surge model carries the mains as a sine)
    if cond.surge_v <= 0 or surge_model not in ("circuit", "loop"):
        if surge_model not in ("circuit", "loop"):
            raise OutOfRangeError(f"surge model {surge_model!r}: one of circuit, loop")
        sur = surge(cin, 0.0, {})
    elif surge_model == "loop":
        sur = surge(cin, cond.surge_v, k_in.record(circuit))
    else:
        sur = surge_through_circuit(
            circuit, grid, cond.surge_v, cond.vout_max(circuit), cond.vout_max_v is None
        )
    rb_max = max(k.bleeder_ohm for k in grid)
    k_dis = Corner(mains.high_v, f_hi, c_max, r_min, rb_max, circuit.zener_voltage_v, False)
    dis = discharge(
        cond.profile,
        crest_hi,
        c_max,
        rb_max,
        circuit.x_capacitance_f,
        {**record(k_dis, hs_on, False), "bleeder_ohm": rb_max},
    )
    k_su = k_min  # the weakest corner: where min_i was found
    su = startup(
        corner_circuit(circuit, k_su),
        k_su.mains_v,
        k_su.freq_hz,
        min_i,  # the current available at the clamp; the loaded value equals the load when short
        record(k_su, hs_min, False),
    )
    if progress is not None:
        progress(total, total)
    return Analysis(
        nominal=nominal,
        worst_case=worst,
        inrush=ins,
        surge=sur,
        discharge=dis,
        startup=su,
        holdup=su.holdup,
        ambient_c=cond.ambient_c,
        topology=top,
        exact_solves=len(cache),
    )
