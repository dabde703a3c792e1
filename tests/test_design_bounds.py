"""The design screen's bounds against the exact engine (the screen must stay a relaxation).

Each bound the solver prunes with must never exceed the figure the exact engine reports for the
same circuit (a lower bound of a stress), or a feasible set could be pruned. Outside references:
the worked examples reproduce textbook formulas (RC discharge V = V0 exp(-t / RC) [S]; the mains
phase at which a rectifier stops and restarts conducting, from u = Vpk sin(wt) [S]); the
property checks compare with selector.engine.analyse, whose own agreement with ngspice is
asserted in tests/test_ngspice*.py.
"""

from __future__ import annotations

import math
import random

import numpy as np
import pytest

from selector.design import bounds as B
from selector.design.requirement import Requirement
from selector.engine import Circuit, Conditions, Load, Mains, Tolerances, analyse
from selector.engine.analysis import min_dc_current, surge_lower_bounds
from selector.engine.surge_circuit import SURGE_STRESSES


def _req(volts=230.0, freqs=(50.0,), profile="iec60335", load=0.01, surge=1000.0):
    return Requirement(
        load_a=load,
        vout_v=5.1,
        mains=Mains(volts, 0.10, freqs),
        conditions=Conditions(40.0, profile, surge),
    )


def test_ripple_discharge_time_worked_example():
    # 207 V rms (Vpk 292.7 V), 50 Hz, swing 13.5 V, R C -> 0:
    # acos(1 - 13.5 / 292.7) / (2 pi 50) = 0.970 ms (mains phase where conduction restarts)
    t = B.ripple_discharge_time("bridge", 207 * math.sqrt(2), 50.0, 13.5, 0.0, 0.0)
    assert float(t) == pytest.approx(0.970e-3, abs=0.001e-3)
    # half-wave: no supply for half a cycle
    assert float(B.ripple_discharge_time("half-wave", 300.0, 50.0, 13.5, 0.0, 0.0)) == 0.01


def test_bleeder_ceiling_worked_example():
    # IEC 60335-1 22.5: 34 V after 1 s [S]. 253 V rms high line (crest 357.8 V), 330 nF + 10 %
    # (363 nF): Rb <= 1 / (363e-9 ln(357.8 / 34)) = 1.170 Mohm (RC discharge, textbook [S])
    rb = float(B.bleeder_resistance_ceiling(_req(), 330e-9, 0.10))
    assert rb == pytest.approx(1.170e6, rel=1e-3)
    # at or below 0.1 uF the capacitor is exempt under IEC 60335-1 and IEC 60950-1 [S]
    assert math.isinf(float(B.bleeder_resistance_ceiling(_req(), 100e-9, 0.2)))
    assert math.isinf(float(B.bleeder_resistance_ceiling(_req(profile="iec60950"), 100e-9, 0.2)))
    # IEC 60950-1 2.1.1.7: R C <= 1 s [S]
    rb950 = float(B.bleeder_resistance_ceiling(_req(profile="iec60950"), 1e-6, 0.0))
    assert rb950 == pytest.approx(1e6, rel=1e-6)


def _random_circuits(n: int, seed: int):
    rnd = random.Random(seed)
    for _ in range(n):
        top = rnd.choice(["bridge", "half-wave"])
        yield (
            top,
            Circuit(
                topology=top,
                x_capacitors_f=(rnd.choice([100e-9, 220e-9, 470e-9, 1e-6, 2.2e-6]),),
                series_resistance_ohm=rnd.choice([3.3, 4.7, 6.8, 10.0, 22.0, 47.0, 100.0, 470.0]),
                bleeder_resistance_ohm=1e6,
                diode_drop_v=0.8,
                diode_resistance_ohm=0.1,
                zener_voltage_v=rnd.choice([5.1, 12.0]),
                zener_impedance_ohm=rnd.choice([2.0, 7.0]),
                reservoir_f=rnd.choice([22e-6, 100e-6, 470e-6]),
                load=Load(current_a=rnd.choice([0.002, 0.005, 0.01])),
            ),
            Tolerances(cap_tol=rnd.choice([0.1, 0.2]), cap_loss=0.1, r_tol=0.05, zener_tol=0.05),
            Mains(rnd.choice([120.0, 230.0]), 0.10, rnd.choice([(50.0,), (60.0,), (50.0, 60.0)])),
            rnd.choice([500.0, 1000.0, 2000.0]),
        )


CIRCUITS = list(_random_circuits(24, seed=11))


@pytest.mark.parametrize("case", CIRCUITS, ids=lambda c: c[0])
def test_screen_bounds_stay_below_the_engine(case):
    top, circ, tol, mains, level = case
    an = analyse(circ, mains, tol, Conditions(40.0, "iec60335", level))
    c, r = circ.x_capacitance_f, circ.series_resistance_ohm
    rd = circ.diode_resistance_ohm * (2 if top == "bridge" else 1)
    # surge: the loop-model bound at the engine's transient corner (-R, +C), scaled (bounds.py)
    sb = B.surge_bounds(level, np.array([r * (1 - tol.r_tol)]), np.array([c * (1 + tol.cap_tol)]),
                        1.0, rd)  # fmt: skip
    assert sb["surge_series_r_energy_j"][0] <= an.surge.series_r_energy_j
    assert sb["surge_series_r_peak_voltage_v"][0] <= an.surge.series_r_peak_voltage_v
    assert sb["surge_x_cap_dvdt_v_per_s"][0] <= an.surge.x_cap_dvdt_v_per_s
    # the quick surge bound of the verification is a lower bound of the full analysis
    q = surge_lower_bounds(circ, mains, tol, level)
    assert set(q) == {"surge_" + name for name in SURGE_STRESSES}
    for name in SURGE_STRESSES:
        assert q["surge_" + name] <= getattr(an.surge, name) * (1 + 1e-12), name
    # the quick minimum current is the analysis' own figure
    assert min_dc_current(circ, mains, tol) == an.worst_case.min_dc_current_a
    # ripple: the nominal reservoir the ripple rule needs, from the bound, is at most the one
    # that gives the engine's ripple as the limit (a reservoir at the bound gives at least it)
    if an.worst_case.load_met:
        limit = an.worst_case.max_output_ripple_v
        need = B.ripple_reservoir_need(
            Requirement(
                load_a=circ.load.current_a,
                vout_v=1.0,
                mains=mains,
                conditions=Conditions(40.0, "iec60335", level),
            ),
            top,
            circ.zener_voltage_v,
            tol.zener_tol,
            circ.diode_drop_v,
            limit,
            r * (1 + tol.r_tol),
            c * (1 - tol.cap_tol) * (1 - tol.cap_loss),
        )
        assert float(need) <= circ.reservoir_f * (1 + 1e-9)


#: the stresses the search's surge cuts read (search.X_SURGE_CUT_RULES, R_SURGE_CUT_RULES)
_X_CUT_STRESSES = ("surge_x_cap_dvdt_v_per_s", "surge_x_cap_peak_total_v")
_R_CUT_STRESSES = ("surge_series_r_peak_voltage_v",)


@pytest.mark.parametrize("case", CIRCUITS[:12], ids=lambda c: c[0])
def test_surge_cuts_hold(case):
    """The search's surge cuts (search.SURGE_CUT_TOLERANCE): the X figures do not grow with the
    series resistance, the series-R peak voltage does not fall with the X capacitance, and the
    completion parts move both by less than the cut's tolerance. Reference: the engine's own
    surge simulation (agreement with ngspice in tests/test_ngspice_surge*.py)."""
    import dataclasses
    import itertools

    from selector.design.search import SURGE_CUT_TOLERANCE

    top, circ, tol, mains, level = case
    base = surge_lower_bounds(circ, mains, tol, level)
    more_r = dataclasses.replace(circ, series_resistance_ohm=circ.series_resistance_ohm * 1.1)
    more_c = dataclasses.replace(circ, x_capacitors_f=(circ.x_capacitors_f[0] * 1.1,))
    up_r = surge_lower_bounds(more_r, mains, tol, level)
    up_c = surge_lower_bounds(more_c, mains, tol, level)
    for k in _X_CUT_STRESSES:
        assert up_r[k] <= base[k] * (1 + 1e-9), k
    for k in _R_CUT_STRESSES:
        assert up_c[k] >= base[k] * (1 - 1e-9), k
    variants = [
        surge_lower_bounds(
            dataclasses.replace(
                circ,
                zener_impedance_ohm=zz,
                reservoir_f=c_res,
                bleeder_resistance_ohm=rb,
                diode_drop_v=vf,
            ),
            mains,
            tol,
            level,
        )
        for zz, c_res, rb, vf in itertools.product(
            (1.0, 16.0), (10e-6, 470e-6), (0.47e6, 4.7e6), (0.75, 1.0)
        )
    ]
    for k in _X_CUT_STRESSES + _R_CUT_STRESSES:
        lo, hi = min(v[k] for v in variants), max(v[k] for v in variants)
        assert hi <= lo * (1 + SURGE_CUT_TOLERANCE), (k, hi / lo)


@pytest.mark.parametrize("case", CIRCUITS[:12], ids=lambda c: c[0])
@pytest.mark.parametrize("profile", ["iec60335", "iec60950"])
def test_switch_on_bounds_stay_below_the_engine_after_a_replug(case, profile):
    # the switch-on bounds (with the re-plug residual the profile allows, the engine's own
    # formula) never exceed the engine's exact switch-on figures (RC charging, textbook [S])
    top, circ, tol, mains, level = case
    cond = Conditions(40.0, profile, level)
    an = analyse(circ, mains, tol, cond)
    assert an.inrush.replug_residual_v > 0
    req = Requirement(load_a=0.005, vout_v=5.1, mains=mains, conditions=cond,
                      cap_loss=tol.cap_loss, topology=top)  # fmt: skip
    b = B.screen_bounds(req, top, circ.zener_voltage_v, np.array([circ.x_capacitance_f]),
                        np.array([tol.cap_tol]), np.array([circ.series_resistance_ohm]),
                        np.array([tol.r_tol]), circ.diode_drop_v, circ.diode_drop_v,
                        surge=False)  # fmt: skip
    ins = an.inrush
    assert b["inrush_peak_current_a"][0] <= ins.peak_current_a
    assert b["inrush_series_r_energy_j"][0] <= ins.series_r_energy_j
    assert b["inrush_i2t_a2s"][0] <= ins.i2t_a2s
    assert b["inrush_x_cap_dvdt_v_per_s"][0] <= ins.x_cap_dvdt_v_per_s
    assert b["inrush_x_cap_k0_v2_per_s"][0] <= ins.x_cap_k0_v2_per_s


@pytest.mark.parametrize("case", CIRCUITS[:12], ids=lambda c: c[0])
def test_end_of_life_screen_never_rejects_what_the_exact_rule_passes(case):
    # whole.end_of_life_current on the screen's upper bound of the minimum current, with each
    # X option's exact end-of-life factor, against the rule on the engine's exact figure
    from selector.design.candidates import rule_by_id
    from selector.policy import Policy
    from selector.rules.life import EOL_LOSS_KEY

    top, circ, tol, mains, level = case
    cond = Conditions(40.0, "iec60335", level)
    an = analyse(circ, mains, tol, cond)
    req = Requirement(load_a=0.005, vout_v=5.1, mains=mains, conditions=cond,
                      cap_loss=tol.cap_loss, topology=top)  # fmt: skip
    b = B.screen_bounds(req, top, circ.zener_voltage_v, np.array([circ.x_capacitance_f]),
                        np.array([tol.cap_tol]), np.array([circ.series_resistance_ohm]),
                        np.array([tol.r_tol]), circ.diode_drop_v, circ.diode_drop_v,
                        surge=False)  # fmt: skip
    assert b["min_dc_current_a"][0] >= an.worst_case.min_dc_current_a
    rule = rule_by_id("whole.end_of_life_current")
    exact_i = an.worst_case.min_dc_current_a
    for loss in (0.05, 0.2, 0.5):
        for load in (0.3 * exact_i, 0.6 * exact_i, 0.9 * exact_i):
            ctx = {"load_a": load, EOL_LOSS_KEY: loss, "cap_loss_in_analysis": tol.cap_loss}
            st, lim, _ = rule.check({**ctx, "min_dc_current_a": exact_i}, None, Policy())
            st_b, lim_b, _ = rule.check({**ctx, "min_dc_current_a": b["min_dc_current_a"]},
                                        None, Policy())  # fmt: skip
            assert (st <= lim) <= (st_b <= lim_b)  # exact pass implies screen pass
