"""Surge rules (selector/rules: x_capacitor, resistors, semiconductors, fuse, whole): worked
examples from the docstrings.

Sources: IFSM half-sine I^2 t = IFSM^2 t / 2 (mean of sin^2 is 1/2, textbook; 8.3 ms [P]);
IEC 60384-14 peak impulse voltages in service X1 4 kV / X2 2.5 kV / X3 1.2 kV [S]; pulse-power
square-root scaling [P]; IEC 60115-1 short-time overload factor [M] (policy default 2).
"""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest

from selector.engine import Circuit, Conditions, Mains, Tolerances, analyse
from selector.policy import Policy
from selector.rules import fuse, resistors, semiconductors, stresses_from_analysis, whole
from selector.rules import x_capacitor as xc

POL = Policy()


def test_ifsm_i2t_half_sine() -> None:
    # integral of (I sin(pi t / T))^2 over T = I^2 T / 2 (textbook), T = 8.3 ms [P]
    assert semiconductors.ifsm_i2t(30.0) == pytest.approx(3.735)
    t = np.linspace(0.0, 8.3e-3, 100001)
    i = 30.0 * np.sin(np.pi * t / 8.3e-3)
    assert float(np.trapezoid(i * i, t)) == pytest.approx(3.735, rel=1e-6)


def test_zener_pulse_limit_square_root_law() -> None:
    assert semiconductors.zener_pulse_limit(100.0, 100e-6, 25e-6) == pytest.approx(200.0)
    # a longer pulse than the rating is not scaled up
    assert semiconductors.zener_pulse_limit(100.0, 100e-6, 1e-3) == pytest.approx(100.0)


def test_zener_surge_power_example() -> None:
    s = {"surge_zener_peak_power_w": 40.0, "surge_zener_pulse_energy_j": 2e-3}
    p = SimpleNamespace(
        zener_pulse_power_w=100.0, zener_pulse_width_s=100e-6, power_w=1.0, power_share=1.0
    )
    stress, lim = semiconductors.zener_surge_power_vs_pulse_rating(s, p, POL)
    assert stress == 40.0
    assert lim == pytest.approx(100.0 * np.sqrt(2.0))  # 141.4 W


def test_rectifier_and_fuse_examples() -> None:
    s = {"surge_rectifier_i2t_a2s": 0.0115, "surge_fuse_i2t_a2s": 0.0126}
    stress, lim = semiconductors.rectifier_surge_i2t_vs_ifsm_i2t(
        s, SimpleNamespace(ifsm_a=30.0), POL
    )
    assert (stress, lim) == (0.0115, pytest.approx(3.735))
    stress, lim = fuse.surge_i2t_vs_melting_i2t(s, SimpleNamespace(i2t_a2s=0.02), POL)
    assert stress > lim == pytest.approx(0.01)  # fuse_i2t_fraction 0.5 [P]


def test_bleeder_and_x_cap_examples() -> None:
    s = {"surge_x_cap_peak_total_v": 1740.0}
    p = SimpleNamespace(voltage_share=1 / 3, limiting_voltage_v=200.0)
    stress, lim = resistors.bleeder_surge_voltage_vs_pulse_limit(s, p, POL)
    assert stress == pytest.approx(580.0) and lim == pytest.approx(320.0)
    s = {"surge_x_cap_peak_total_v": 1614.0}
    # IEC 60384-14: X2 2.5 kV, X3 1.2 kV in service [S]
    assert (
        xc.surge_total_vs_class_impulse(s, SimpleNamespace(class_impulse_v=2500.0), POL)[1]
        == 2500.0
    )
    stress, lim = xc.surge_total_vs_class_impulse(s, SimpleNamespace(class_impulse_v=1200.0), POL)
    assert stress > lim


def test_rules_read_the_flat_stresses_of_an_analysis() -> None:
    # the surge section flattens to surge_* keys that these functions read; the acceptance
    # circuit of issue 11 with 47 ohm exceeds 1.3 x 5.1 V on the bus at 2 kV, 470 ohm does not
    base = dict(
        x_capacitors_f=(330e-9,),
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=5.1,
        reservoir_f=470e-6,
    )
    for r, fails in ((47.0, True), (470.0, False)):
        a = analyse(
            Circuit(series_resistance_ohm=r, **base),
            Mains(230.0, 0.1, (50.0,)),
            Tolerances(),
            Conditions(surge_v=2000.0),
        )
        s, corners = stresses_from_analysis(a, {"zener_voltage_v": 5.1})
        stress, lim = whole.bus_surge_peak_vs_vout_max(s, None, POL)
        assert lim == pytest.approx(1.3 * 5.1)
        assert (stress > lim) == fails
        assert "surge_bus_peak_v" in corners
        stress, lim = semiconductors.rectifier_surge_i2t_vs_ifsm_i2t(
            s, SimpleNamespace(ifsm_a=30.0), POL
        )
        assert stress > 0 and stress < lim


def test_zener_generic_pulse_rating_from_power_class() -> None:
    # no pulse rating on the part: 40 W per W of steady power at 100 us [M] (the generic figure
    # sits below the 30 W / 0.5 W glass, 40 W / 0.3 W SOT-23 and 60 W / 1.3 W DO-41 recalled
    # at 100 us, [M]); a 0.5 W part -> 20 W at 100 us, 20 x sqrt(100 / 25) = 40 W for 25 us
    p = SimpleNamespace(power_w=0.5, power_share=1.0)
    assert semiconductors.zener_pulse_rating(p) == (pytest.approx(20.0), pytest.approx(100e-6))
    s = {"surge_zener_peak_power_w": 30.0, "surge_zener_pulse_energy_j": 30.0 * 25e-6}
    stress, lim = semiconductors.zener_surge_power_vs_pulse_rating(s, p, POL)
    assert (stress, lim) == (30.0, pytest.approx(40.0))
    # two equal Zeners in series share the power (each takes half)
    p2 = SimpleNamespace(power_w=0.5, power_share=0.5)
    assert semiconductors.zener_surge_power_vs_pulse_rating(s, p2, POL)[0] == 15.0


def test_output_window_examples() -> None:
    # defaults [P]: vout_max 1.3 x bus, vout_min 0.9 x bus (vout - 10 %)
    s = {"max_output_voltage_v": 5.89, "min_output_voltage_v": 4.62, "zener_voltage_v": 5.1}
    stress, lim = whole.highest_output_vs_vout_max(s, None, POL)
    assert stress == 5.89 and lim == pytest.approx(6.63)
    need, low = whole.vout_min_vs_lowest_output(s, None, POL)
    assert need == pytest.approx(4.59) and low == 4.62
    s["min_output_voltage_v"] = 4.5
    need, low = whole.vout_min_vs_lowest_output(s, None, POL)
    assert need > low
    # the analysis's window (Conditions.vout_max_v / vout_min_v) wins over the defaults
    s.update(vout_max_v=5.5, vout_min_v=4.0)
    assert whole.highest_output_vs_vout_max(s, None, POL)[1] == 5.5
    assert whole.vout_min_vs_lowest_output(s, None, POL)[0] == 4.0


def test_surge_rules_are_registered_and_skip_without_a_surge() -> None:
    from selector.rules import RULES, RatedPart, evaluate

    ids = {r.id for r in RULES}
    new = {
        "zener.surge_power",
        "rectifier.surge_i2t",
        "fuse.surge_i2t",
        "bleeder.surge_voltage",
        "x_cap.surge_total",
        "whole.bus_surge_peak",
    }
    assert new <= ids
    base = dict(
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=470.0,
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=5.1,
        reservoir_f=470e-6,
    )
    parts = {
        "zener": RatedPart(role="zener", value=5.1, power_w=1.0),
        "rectifier": RatedPart(role="rectifier", ifsm_a=30.0),
        "fuse": RatedPart(role="fuse", value=0.1, i2t_a2s=0.5, fusible=False),
        "bleeder": RatedPart(role="bleeder", qty=2, arrangement="series", limiting_voltage_v=350),
        "x_capacitor": RatedPart(role="x_capacitor", safety_class="X2"),
    }
    ctx = {"zener_voltage_v": 5.1, "ambient_c": 40.0}
    for level, expected in ((1000.0, new), (0.0, set())):
        a = analyse(
            Circuit(**base), Mains(230.0, 0.1, (50.0,)), Tolerances(), Conditions(surge_v=level)
        )
        found = {f.rule: f for f in evaluate(parts, a, POL, context=ctx) if f.rule in new}
        assert set(found) == expected
        # a Zener with a power rating but no pulse rating is judged, never 'rating unknown'
        for f in found.values():
            assert f.severity in {"pass", "fail"}, (f.rule, f.note)
