"""Engine: steady state, corners and the analysis contract.

Outside references are named at each check (textbook circuit laws, DOMAIN.md figures); checks
of internal consistency (charge balance, energy balance, symmetry) are marked as such.
"""

from __future__ import annotations

import dataclasses
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from selector.engine import (
    Circuit,
    Conditions,
    Load,
    Mains,
    Regulator,
    Tolerances,
    analyse,
    corners,
    solve_steady_state,
    waveforms,
)
from selector.engine import (
    closed_form as cf,
)
from selector.errors import OutOfRangeError

ZERO_TOL = Tolerances(0.0, 0.0, 0.0, 0.0)


def bridge(**kw) -> Circuit:
    base = dict(x_capacitors_f=(330e-9,), series_resistance_ohm=470.0, zener_voltage_v=12.0)
    base.update(kw)
    return Circuit(**base)


def test_bridge_small_r_matches_charge_balance() -> None:
    # DOMAIN.md 2: with R -> 0, I_dc = 4 f C (Vpk - Vo'); the exact solver must agree within 1 %
    c = bridge(series_resistance_ohm=10.0, zener_impedance_ohm=0.0, diode_resistance_ohm=0.0)
    s = solve_steady_state(c, 230.0, 50.0)
    expect = 4 * 50 * 330e-9 * (math.sqrt(2) * 230 - 12 - 1.6)
    assert s.dc_current_a == pytest.approx(expect, rel=0.01)


def test_half_wave_small_r_matches_charge_balance() -> None:
    # derived in closed_form.dc_current_half_wave: I = f C (2 Vpk - Vz - Vf)
    c = bridge(topology="half-wave", series_resistance_ohm=10.0, diode_resistance_ohm=0.0)
    s = solve_steady_state(c, 230.0, 50.0)
    expect = 50 * 330e-9 * (2 * math.sqrt(2) * 230 - 12 - 0.8)
    assert s.dc_current_a == pytest.approx(expect, rel=0.01)


def test_line_current_is_reactance_limited() -> None:
    # textbook: I = V / sqrt(R^2 + Xc^2) while the clamp voltage is small against the mains;
    # a 5.1 V clamp on 230 V moves it by about 2 %
    c = bridge(zener_voltage_v=5.1)
    s = solve_steady_state(c, 230.0, 50.0)
    assert s.line_current_rms_a == pytest.approx(
        float(cf.line_current_rms(230, 330e-9, 50, 470)), rel=0.03
    )


def test_energy_balance() -> None:
    # internal consistency: the real power drawn from the mains equals the sum of the losses
    c = bridge(load=Load(current_a=0.010), diode_resistance_ohm=0.5)
    s = solve_steady_state(c, 230.0, 50.0, keep_trace=True)
    o = s.trace.out
    m = s.trace.mean
    p_load = m(o["i_load"] * o["v_o"])
    p_rect = 2 * (0.8 * m(o["i_rect"]) + 2 * 0.5 * m(o["i_rect"] ** 2) / 2)
    losses = s.series_r_power_w + s.bleeder_power_w + s.zener_power_w + p_load + p_rect
    assert s.real_power_w == pytest.approx(losses, rel=5e-3)


def test_zener_power_equals_vz_times_dc_at_no_load() -> None:
    # DOMAIN.md 2: at no load all the current goes into the Zener: P = Vz x I_dc
    s = solve_steady_state(bridge(), 253.0, 60.0)
    assert s.zener_power_w == pytest.approx(12.0 * s.dc_current_a, rel=1e-4)


def test_overloaded_bus_drops_out_of_regulation() -> None:
    s = solve_steady_state(bridge(load=Load(resistance_ohm=300.0)), 230.0, 50.0)
    assert s.output_voltage_v < 11.0
    assert s.zener_power_w == pytest.approx(0.0, abs=1e-6)
    # charge balance: what the bus receives, the resistor takes
    assert s.load_current_a == pytest.approx(s.dc_current_a, rel=1e-3)


def test_slow_resistive_load_converges_without_simulating_startup() -> None:
    # R_L C_r = 400 ohm x 4.7 mF = 1.9 s, 94 mains cycles: shooting needs a handful of cycles
    c = bridge(reservoir_f=4.7e-3, load=Load(resistance_ohm=400.0))
    s = solve_steady_state(c, 230.0, 50.0)
    assert s.iterations <= 8
    assert s.load_current_a == pytest.approx(s.dc_current_a, rel=1e-3)


def test_corner_grid_size() -> None:
    ks = corners(bridge(), Mains(230, 0.1, (50.0, 60.0)), Tolerances())
    assert len(ks) == 2 * 2 * 2 * 2 * 2
    assert sorted({round(k.mains_v, 6) for k in ks}) == [207.0, 253.0]


def test_zero_tolerance_single_frequency_nominal_equals_worst() -> None:
    # issue 3: with every tolerance 0 and one frequency, nominal and worst_case agree
    c = bridge(load=Load(current_a=0.005))
    a = analyse(c, Mains(230, 0.0, (50.0,)), ZERO_TOL, Conditions())
    assert a.worst_case.min_dc_current_a == pytest.approx(a.nominal.dc_current_a, rel=1e-9)
    assert a.worst_case.max_dc_current_a == pytest.approx(a.nominal.dc_current_a, rel=1e-9)
    assert a.worst_case.max_series_r_power_w == pytest.approx(a.nominal.series_r_power_w)
    a0 = analyse(bridge(), Mains(230, 0.0, (50.0,)), ZERO_TOL, Conditions())
    assert a0.worst_case.max_zener_power_w == pytest.approx(a0.nominal.zener_power_w)


def test_worst_corners_follow_domain_rules() -> None:
    # DOMAIN.md 2: Zener power worst at HIGH line, +C, HIGHER frequency, ZERO load;
    # least current at LOW line, -C -loss, LOWER frequency, +R, +Vz
    c = bridge(load=Load(current_a=0.005))
    a = analyse(c, Mains(230, 0.1, (50.0, 60.0)), Tolerances(0.1, 0.1, 0.05, 0.05))
    k = a.worst_case.max_zener_power_corner
    assert k["mains_v"] == pytest.approx(253) and k["freq_hz"] == 60 and k["load_a"] == 0
    assert k["cap_f"] == pytest.approx(363e-9)
    k = a.worst_case.min_dc_current_corner
    assert k["mains_v"] == pytest.approx(207) and k["freq_hz"] == 50
    assert k["cap_f"] == pytest.approx(330e-9 * 0.9 * 0.9)
    assert k["r_ohm"] == pytest.approx(493.5) and k["vz_v"] == pytest.approx(12.6)
    assert a.worst_case.load_met and a.worst_case.load_margin_a > 0
    # a 50 Hz design on 60 Hz carries about 20 % more current (DOMAIN.md 3)
    assert a.worst_case.max_dc_current_a > 1.15 * a.nominal.dc_current_a


def test_load_beyond_capacity_is_not_met() -> None:
    a = analyse(bridge(load=Load(current_a=0.030)), Mains(230, 0.1, (50.0,)))
    assert not a.worst_case.load_met
    assert a.worst_case.load_margin_a < 0
    assert not a.ok
    assert math.isinf(a.startup.time_s)


def test_regulator_dissipation_and_headroom() -> None:
    c = bridge(load=Load(current_a=0.005), regulator=Regulator(3.3, 1.0, 0.002))
    a = analyse(c, Mains(230, 0.1, (50.0,)))
    w = a.worst_case
    # (Vbus - Vout) x I_out + Vbus x Iq at the highest bus voltage
    assert w.max_regulator_power_w == pytest.approx((12.6 - 3.3) * 0.005 + 12.6 * 0.002, rel=0.02)
    assert w.min_regulator_headroom_v > 5 and w.regulator_ok


def test_json_keys_of_the_contract() -> None:
    a = analyse(bridge(load=Load(current_a=0.005)), Mains(230, 0.1, (50.0, 60.0)))
    nominal = {f.name for f in dataclasses.fields(a.nominal)}
    assert {
        "dc_current_a",
        "zener_power_w",
        "output_voltage_v",
        "line_current_rms_a",
        "series_r_power_w",
        "real_power_w",
        "power_factor",
    } <= nominal
    worst = {f.name for f in dataclasses.fields(a.worst_case)}
    assert {
        "min_dc_current_a",
        "max_zener_power_w",
        "max_series_r_power_w",
        "max_bleeder_power_w",
        "load_met",
    } <= worst
    assert {"peak_current_a", "series_r_energy_j", "i2t_a2s"} <= set(vars(a.inrush))
    assert {"peak_current_a", "series_r_energy_j", "series_r_peak_voltage_v"} <= set(vars(a.surge))
    assert {"limit_v", "time_s"} <= set(vars(a.discharge))


def test_waveforms_cover_two_cycles() -> None:
    w = waveforms(bridge(), 230.0, 50.0)
    assert w["t_s"][-1] == pytest.approx(0.04, rel=1e-9)
    assert len(w["t_s"]) == len(w["line_current_a"]) == len(w["output_voltage_v"])


def test_out_of_range_raises() -> None:
    with pytest.raises(OutOfRangeError):
        bridge(topology="centre-tap")
    with pytest.raises(OutOfRangeError):
        Mains(230, 0.1, (5.0,))
    with pytest.raises(OutOfRangeError):
        Conditions(profile="nowhere")


# --- property tests (hypothesis) -------------------------------------------------------------
caps = st.floats(100e-9, 1e-6)
volts = st.sampled_from([5.1, 6.2, 9.1, 12.0, 15.0, 24.0])
topologies = st.sampled_from(["bridge", "half-wave"])


@settings(max_examples=25, deadline=None)
@given(c=caps, vz=volts, top=topologies, r=st.floats(47.0, 1000.0))
def test_dc_current_rises_with_capacitance(c: float, vz: float, top: str, r: float) -> None:
    lo = solve_steady_state(
        bridge(topology=top, x_capacitors_f=(c,), zener_voltage_v=vz, series_resistance_ohm=r),
        230.0,
        50.0,
    )
    hi = solve_steady_state(
        bridge(
            topology=top, x_capacitors_f=(1.1 * c,), zener_voltage_v=vz, series_resistance_ohm=r
        ),
        230.0,
        50.0,
    )
    assert hi.dc_current_a > lo.dc_current_a


@settings(max_examples=25, deadline=None)
@given(c=caps, vz=st.floats(3.0, 30.0), top=topologies)
def test_dc_current_falls_with_zener_voltage(c: float, vz: float, top: str) -> None:
    lo = solve_steady_state(bridge(topology=top, x_capacitors_f=(c,), zener_voltage_v=vz), 230, 50)
    hi = solve_steady_state(
        bridge(topology=top, x_capacitors_f=(c,), zener_voltage_v=vz + 2), 230, 50
    )
    assert hi.dc_current_a < lo.dc_current_a


@settings(max_examples=25, deadline=None)
@given(c=caps, vz=st.floats(3.0, 30.0), v=st.floats(100.0, 264.0), f=st.sampled_from([50, 60]))
def test_no_load_zener_power_is_vz_times_dc(c: float, vz: float, v: float, f: float) -> None:
    # DOMAIN.md 2 (bridge, ideal clamp Zz = 0): P_z = Vz x I_dc at zero load
    s = solve_steady_state(bridge(x_capacitors_f=(c,), zener_voltage_v=vz), v, f)
    assert s.zener_power_w == pytest.approx(vz * s.dc_current_a, rel=1e-4)


@settings(max_examples=30, deadline=None)
@given(
    c=caps,
    r=st.floats(47.0, 1000.0),
    vz=st.floats(3.0, 30.0),
    v=st.floats(100.0, 264.0),
    f=st.sampled_from([50.0, 60.0]),
    top=topologies,
    load_frac=st.floats(0.0, 1.5),
    resistive=st.booleans(),
)
def test_periodic_orbit_balances_charge(c, r, vz, v, f, top, load_frac, resistive) -> None:
    """Internal consistency of the periodic solution (no outside source): over one cycle the
    reservoir's and the X capacitor's charge return to their start, so mean(i_res) = 0 and
    mean(i_line) = mean(v_c) / R_b (KCL at the capacitor-bleeder pair)."""
    i_guess = float(cf.dc_current(top, v, c, f, vz, 0.8, r))
    vbus = vz if top == "bridge" else vz - 0.8
    if resistive:
        load = Load(resistance_ohm=vbus / max(load_frac * i_guess, 1e-6))
    else:
        load = Load(current_a=load_frac * i_guess)
    circ = bridge(
        topology=top, x_capacitors_f=(c,), series_resistance_ohm=r, zener_voltage_v=vz, load=load
    )
    s = solve_steady_state(circ, v, f, keep_trace=True, accept=0.0)
    o, m = s.trace.out, s.trace.mean
    scale = s.line_current_rms_a
    assert abs(m(o["i_res"])) < 1e-4 * scale
    assert abs(m(o["i_line"]) - m(o["v_c"]) / 1e6) < 1e-4 * scale


def test_package_names_resolve_to_the_functions_not_their_modules() -> None:
    # the engine package loads names lazily; a submodule named like a function (waveforms)
    # must not shadow the function, whichever name is asked for first (regression)
    import subprocess
    import sys

    code = (
        "import selector.engine as e; e.switch_on_waveform; "
        "from selector.engine import waveforms, analyse, closed_form; "
        "import types; assert callable(waveforms) and callable(analyse); "
        "assert isinstance(closed_form, types.ModuleType)"
    )
    subprocess.run([sys.executable, "-c", code], check=True)


def test_output_ripple_falls_with_the_reservoir() -> None:
    # C dV = I dt [S]: between charging pulses the reservoir alone feeds the load, so the
    # worst-corner ripple must shrink as the reservoir grows (roughly as 1/C while it is small)
    from selector.engine import Conditions, Mains, Tolerances, analyse

    def ripple(c_res: float) -> float:
        circuit = Circuit(
            topology="bridge",
            x_capacitors_f=(330e-9,),
            series_resistance_ohm=47.0,
            bleeder_resistance_ohm=330e3,
            zener_voltage_v=5.1,
            reservoir_f=c_res,
            load=Load(current_a=10e-3),
        )
        a = analyse(circuit, Mains(230.0, 0.10, (50.0, 60.0)), Tolerances(), Conditions())
        assert a.worst_case.max_output_ripple_v >= a.nominal.ripple_v - 1e-12
        return a.worst_case.max_output_ripple_v

    r10, r22, r100 = ripple(10e-6), ripple(22e-6), ripple(100e-6)
    assert r10 > r22 > r100
    # the load cannot be carried by the reservoir for longer than a half cycle at 50 Hz
    assert r10 <= 10e-3 * (1 / 100) / 10e-6
