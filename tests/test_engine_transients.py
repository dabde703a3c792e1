"""Transients: switch-on, IEC 61000-4-5 surge, discharge, start-up, hold-up.

Outside references: RC charging and discharge (any circuits textbook); IEC 61000-4-5 wave shape
definitions (front time T1 = 1.67 (t90 - t30) = 1.2 us +/- 30 %, time to half value 50 us
+/- 20 %); IEC 60335-1 22.5 (34 V after 1 s, C <= 0.1 uF exempt); IEC 60950-1 2.1.1.7 (RC <= 1 s).
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from selector.engine import Circuit, Load, solve_steady_state
from selector.engine.steady_state import build_system
from selector.engine.transients import (
    discharge,
    holdup,
    inrush,
    replug_residual_v,
    startup,
    surge,
    surge_wave,
)


def circuit(**kw) -> Circuit:
    base = dict(x_capacitors_f=(330e-9,), series_resistance_ohm=470.0, zener_voltage_v=12.0)
    base.update(kw)
    return Circuit(**base)


def test_switch_on_energy_is_half_c_v_squared() -> None:
    # textbook: charging C from a step V through R dissipates 0.5 C V^2 in R, whatever R is.
    # With R C << 1/f the crest is a step; drops of the bridge (1.6 V) and the mains' slope
    # during the pulse move it by < 2 %.
    vpk = math.sqrt(2) * 230
    for r in (47.0, 100.0, 220.0):
        res = inrush(circuit(series_resistance_ohm=r, diode_resistance_ohm=0.0), 230, 50, {})
        assert res.series_r_energy_j == pytest.approx(0.5 * 330e-9 * vpk**2, rel=0.02)
        # I^2 t = V^2 C / (2 R) (textbook)
        assert res.i2t_a2s == pytest.approx(vpk**2 * 330e-9 / (2 * r), rel=0.02)
        # peak = V / R at the instant of switching
        assert res.peak_current_a == pytest.approx((vpk - 1.6) / r, rel=1e-3)
        # k0 = 2 integral (dV/dt)^2 dt = V^2 / (R C) for an RC step (textbook RC charging)
        assert res.x_cap_k0_v2_per_s == pytest.approx(vpk**2 / (r * 330e-9), rel=0.02)


def test_replug_residual_worked_examples() -> None:
    # RC discharge V(t) = V0 exp(-t / RC) (textbook [S]) that just meets the profile:
    # IEC 60335-1 22.5, 34 V after 1 s [S]: 357.8 V -> 357.8 (34 / 357.8)^0.2 = 223.4 V at 0.2 s
    crest = math.sqrt(2) * 253
    assert replug_residual_v("iec60335", crest, 330e-9, 0.3, 0.2) == pytest.approx(223.4, abs=0.1)
    # IEC 60950-1 2.1.1.7, R C <= 1 s [S]: 357.8 exp(-0.2) = 292.9 V
    assert replug_residual_v("iec60950", crest, 330e-9, 0.3, 0.2) == pytest.approx(292.9, abs=0.1)
    # IEC 62368-1 5.5.2.2, 60 V [M] after 2 s [S]: 357.8 (60 / 357.8)^0.1 = 299.2 V
    assert replug_residual_v("iec62368", crest, 330e-9, 0.3, 0.2) == pytest.approx(299.2, abs=0.1)
    # C <= 0.1 uF is exempt (IEC 60335-1 [S]): its own bleeder decides, RC = 0.1 s -> e^-2
    assert replug_residual_v("iec60335", crest, 100e-9, 0.1, 0.2) == pytest.approx(
        crest * math.exp(-2.0)
    )
    # ... and without a bleeder it keeps the crest: the full 2 Vpk step
    assert replug_residual_v("iec60335", crest, 100e-9, math.inf, 0.2) == pytest.approx(crest)
    # no delay: the crest itself
    assert replug_residual_v("iec60335", crest, 330e-9, 0.3, 0.0) == pytest.approx(crest)


def test_replug_at_the_opposite_crest_scales_the_switch_on_pulse() -> None:
    # a step of Vpk + V_res from -V_res: energy 0.5 C (Vpk + V_res)^2, peak (Vpk + V_res) / R
    # (RC charging from a step, textbook [S]); with V_res = Vpk the step is 2 Vpk, so the peak
    # current doubles and the energy quadruples (DOMAIN.md section 10 [P])
    vpk = math.sqrt(2) * 230
    c = circuit(series_resistance_ohm=100.0, diode_resistance_ohm=0.0)
    empty = inrush(c, 230, 50, {})
    for res in (0.5 * vpk, vpk):
        got = inrush(c, 230, 50, {}, residual_v=res, replug_delay_s=0.2)
        v = vpk + res
        assert got.series_r_energy_j == pytest.approx(0.5 * 330e-9 * v**2, rel=0.02)
        assert got.peak_current_a == pytest.approx((v - 1.6) / 100.0, rel=1e-3)
        assert got.replug_residual_v == res
    full = inrush(c, 230, 50, {}, residual_v=vpk)
    assert full.peak_current_a / empty.peak_current_a == pytest.approx(2.0, rel=0.01)
    assert full.series_r_energy_j / empty.series_r_energy_j == pytest.approx(4.0, rel=0.03)


def test_surge_wave_shape_meets_iec61000_4_5() -> None:
    t = np.linspace(0, 200e-6, 400001)
    v = surge_wave(t, 1000.0)
    pk = v.max()
    t30 = t[np.argmax(v >= 0.3 * pk)]
    t90 = t[np.argmax(v >= 0.9 * pk)]
    i = int(np.argmax(v))
    t50 = t[i + np.argmax(v[i:] <= 0.5 * pk)]
    assert pk == pytest.approx(1000.0, rel=0.01)
    assert 1.67 * (t90 - t30) == pytest.approx(1.2e-6, rel=0.3)
    assert t50 == pytest.approx(50e-6, rel=0.2)


def test_surge_through_large_resistor_follows_the_open_circuit_wave() -> None:
    # R_loop >> 2 ohm and X_C small for microseconds: i ~ v(t) / R_loop, so the peak is about
    # V / R_loop and the energy in R about R integral (v / R_loop)^2 dt
    c = circuit(series_resistance_ohm=1000.0, diode_resistance_ohm=0.0, x_capacitors_f=(10e-6,))
    s = surge(c, 2000.0, {})
    assert s.peak_current_a == pytest.approx(2000.0 / 1002.0, rel=0.01)
    t = np.linspace(0, 2e-3, 2_000_001)
    v = surge_wave(t, 2000.0)
    e = 1000.0 * float(np.sum((v / 1002.0) ** 2) * (t[1] - t[0]))
    assert s.series_r_energy_j == pytest.approx(e, rel=0.02)
    assert s.series_r_peak_voltage_v == pytest.approx(1000.0 * s.peak_current_a)


def test_discharge_iec60335() -> None:
    # V(t) = V0 exp(-t / RC) (textbook); IEC 60335-1 22.5: <= 34 V after 1 s
    d = discharge("iec60335", 357.8, 363e-9, 1.05e6, 330e-9, {})
    assert d.time_s == pytest.approx(1.05e6 * 363e-9 * math.log(357.8 / 34), rel=1e-9)
    assert d.ok and not d.exempt
    slow = discharge("iec60335", 357.8, 1.1e-6, 1.05e6, 1e-6, {})
    assert not slow.ok
    # C <= 0.1 uF is exempt (IEC 60335-1 22.5)
    assert discharge("iec60335", 357.8, 110e-9, math.inf, 100e-9, {}).exempt


def test_discharge_iec60950_time_constant() -> None:
    d = discharge("iec60950", 357.8, 470e-9, 2.2e6, 470e-9, {})
    assert d.time_s == pytest.approx(470e-9 * 2.2e6)
    assert not d.ok  # 1.03 s > 1 s (IEC 60950-1 2.1.1.7)


def test_startup_time_against_simulated_switch_on() -> None:
    # DOMAIN.md 2: t ~ C_res Vz / (I_dc - I_load). The charge integral of startup() is checked
    # against the exact piecewise-linear simulation of the switch-on (internal consistency) and
    # bracketed by the rough estimate (the current is largest while the bus is low).
    c = circuit(load=Load(current_a=0.005), reservoir_f=100e-6)
    st = solve_steady_state(c, 230, 50)
    s = startup(c, 230, 50, st.dc_current_a, {})
    rough = 100e-6 * 12 / (st.dc_current_a - 0.005)
    assert 0.8 * rough <= s.time_s <= rough
    system = build_system(c, 230, 50)
    t0 = system.period / 4

    def reached(mode, x, t) -> bool:
        return x[1] >= 0.999 * 12.0

    simulated = _time_to(system, t0, reached)
    assert s.time_s == pytest.approx(simulated, abs=0.012, rel=0.05)


def _time_to(system, t0, reached) -> float:
    t, x, key = t0, (0.0, 0.0), (0, 0, 0)
    step = system.period / 8
    while t < t0 + 5.0:
        x, key, _, _ = system.run(key, x, t, t + step)
        t += step
        if reached(None, x, t):
            return t - t0
    return math.inf


def test_holdup_droop() -> None:
    # reservoir droop dV = I_deficit t / C (charge on a capacitor, textbook)
    c = circuit(
        load=Load(
            current_a=0.005, burst_current_a=0.030, burst_duration_s=0.02, burst_period_s=2.0
        ),
        reservoir_f=1e-3,
    )
    h = holdup(c, 0.020)
    assert h.droop_v == pytest.approx((0.005 + 0.030 - 0.020) * 0.02 / 1e-3)
    assert h.ok == (h.droop_v <= 1.2)


def test_startup_never_when_the_weakest_corner_cannot_carry_the_load() -> None:
    # DOMAIN.md section 2: start-up time C_r Vz / (I_dc - I_load) has no finite value when
    # I_load >= I_dc. Here the weakest corner (207 V, 50 Hz, 330 nF less tolerance and
    # end-of-life loss) gives ~14.9 mA against a 15 mA load: the bus never reaches the clamp.
    from selector.engine import Conditions, Mains, Tolerances, analyse

    circuit = Circuit(
        topology="bridge",
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=470.0,
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=12.0,
        reservoir_f=220e-6,
        load=Load(current_a=15e-3),
    )
    mains = Mains(230.0, 0.10, (50.0, 60.0))
    short = analyse(circuit, mains, Tolerances(), Conditions())
    assert not short.worst_case.load_met
    assert math.isinf(short.startup.time_s)
    light = analyse(
        circuit.with_values(load=Load(current_a=10e-3)), mains, Tolerances(), Conditions()
    )
    assert light.worst_case.load_met and math.isfinite(light.startup.time_s)


def test_x_cap_dvdt_and_k0_are_taken_at_the_lowest_capacitance() -> None:
    # RC step of height V [S] (textbook): i(0) = V / R whatever C, so dV/dt = i / C and
    # k0 ~ V^2 / (R C) are largest at the LOWEST capacitance of the corners (here 330 nF less
    # the 10 % tolerance and the end-of-life loss), not at the highest one, where the energy
    # and I^2t peak.
    from selector.engine import Conditions, Mains, Tolerances, analyse
    from selector.engine.analysis import corner_circuit, corners

    base = Circuit(
        topology="bridge",
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=100.0,
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=12.0,
        reservoir_f=220e-6,
        load=Load(current_a=5e-3),
    )
    mains = Mains(230.0, 0.10, (50.0, 60.0))
    an = analyse(base, mains, Tolerances(), Conditions())
    grid = corners(base, mains, Tolerances())
    k_lo = min(grid, key=lambda k: (k.cap_f, k.r_ohm))
    k_hi = max(grid, key=lambda k: (k.cap_f, -k.r_ohm))
    assert k_lo.cap_f < k_hi.cap_f and k_lo.r_ohm == k_hi.r_ohm
    pulse = {}
    for k in (k_lo, k_hi):
        pulse[k.cap_f] = inrush(
            corner_circuit(base, k),
            mains.high_v,
            60.0,
            {},
            residual_v=an.inrush.replug_residual_v,
        )
    lo, hi = pulse[k_lo.cap_f], pulse[k_hi.cap_f]
    assert lo.x_cap_dvdt_v_per_s > 1.1 * hi.x_cap_dvdt_v_per_s
    assert an.inrush.x_cap_dvdt_v_per_s == pytest.approx(lo.x_cap_dvdt_v_per_s, rel=1e-9)
    assert an.inrush.x_cap_k0_v2_per_s == pytest.approx(lo.x_cap_k0_v2_per_s, rel=1e-9)
