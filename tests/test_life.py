"""Life models and rules against their formulas' worked examples.

Sources: the 10-degree rule L = L_r 2^((T_r - T)/10) (Arrhenius, common practice [P]); the
extrapolation cap 15 x rated life and the 5 K core rise at rated ripple [M] from memory; Peck's
model AF = (RH_t/RH_u)^n exp(Ea/k (1/T_u - 1/T_t)) (D. S. Peck, IEEE IRPS 1986 [S]) with n = 3
and Ea = 0.8 eV [M] from memory; the humidity grades' tests of IEC 60384-14 Amd 1 (2016): grade
IIIB 85 C / 85 % RH / 1000 h, end |dC/C| <= 10 % [S]; the Boltzmann constant 8.617333e-5 eV/K
(CODATA [S]).
"""

from __future__ import annotations

import math

import pytest

from selector import rules as R
from selector.engine.life import (
    electrolytic_core_temperature_c,
    electrolytic_life_h,
    peck_acceleration,
    x_cap_end_of_life_loss,
)
from selector.errors import BadValueError, OutOfRangeError
from selector.policy import Policy
from selector.units import format_duration, parse_count, parse_duration, parse_percent


def test_ten_degree_rule_worked_examples():
    # 2000 h at 85 C, core 55 C: 2000 x 2^((85 - 55)/10) = 2000 x 8 = 16000 h [P]
    assert electrolytic_life_h(2000, 85, 55) == pytest.approx(16000)
    # 10000 h at 105 C, core 75 C: 10000 x 2^3 = 80000 h
    assert electrolytic_life_h(10000, 105, 75) == pytest.approx(80000)
    # above the rated temperature the life halves every 10 K: 2000 h at 95 C core on 85 C
    assert electrolytic_life_h(2000, 85, 95) == pytest.approx(1000)
    # the extrapolation cap [M]: 2000 h at 105 C, core 45 C -> 2000 x 64 = 128000 h, capped at
    # 15 x 2000 = 30000 h
    assert electrolytic_life_h(2000, 105, 45) == pytest.approx(30000)


def test_core_temperature_from_the_ripple_rating():
    # dT = 5 K x (I / I_rated)^2 [M]: half the rated ripple heats the core by 1.25 K
    assert electrolytic_core_temperature_c(40.0, 0.055, 0.110) == pytest.approx(41.25)
    assert electrolytic_core_temperature_c(40.0, 0.110, 0.110) == pytest.approx(45.0)


def test_peck_acceleration_at_the_humidity_test_conditions():
    # 85 C / 85 % RH (IEC 60384-14 test B) over 40 C / 60 % RH, by Peck's formula with n = 3,
    # Ea = 0.8 eV [M]: (85/60)^3 = 2.843; 0.8 / 8.617333e-5 x (1/313.15 - 1/358.15) = 3.725
    humidity_term = (0.85 / 0.60) ** 3
    assert humidity_term == pytest.approx(2.843, abs=5e-4)
    exponent = 0.8 / 8.617333e-5 * (1 / 313.15 - 1 / 358.15)
    assert exponent == pytest.approx(3.725, abs=5e-4)
    assert peck_acceleration(85, 0.85, 40, 0.60) == pytest.approx(117.9, abs=0.1)
    # the test at its own conditions: no acceleration
    assert peck_acceleration(85, 0.85, 85, 0.85) == pytest.approx(1.0)
    # humidity alone: 93 % over 60 % at the same 40 C (test A, grade I) -> (93/60)^3 = 3.724
    assert peck_acceleration(40, 0.93, 40, 0.60) == pytest.approx(3.724, abs=1e-3)
    with pytest.raises(OutOfRangeError):
        peck_acceleration(85, 0.85, 40, 0.0)


def test_x_capacitor_loss_after_ten_years():
    # grade IIIB: 87600 h / AF 117.9 = 743 h of test stress = 0.743 x 1000 h; at 253 V of a
    # 305 V part: loss = 10 % x 0.743 x 253/305 = 6.16 %
    loss, note = x_cap_end_of_life_loss("III", 87600, 40, 0.60, 253, 305)
    assert loss == pytest.approx(0.10 * 87600 / 117.9 / 1000 * 253 / 305, rel=2e-3)
    assert loss == pytest.approx(0.0616, abs=5e-4)
    assert "IIIB" in note
    # grade I (40 C / 93 % RH / 21 d): 87600 h / 3.72 = 46.7 x the test: beyond the model,
    # taken as lost; no grade is taken as grade I
    assert x_cap_end_of_life_loss("I", 87600, 40, 0.60, 253, 305)[0] == 1.0
    loss, note = x_cap_end_of_life_loss(None, 87600, 40, 0.60, 253, 305)
    assert loss == 1.0 and "taken as grade I" in note


def _s(**kw):
    base = {
        "target_life_h": 87600.0,
        "ambient_c": 40.0,
        "humidity": 0.6,
        "switch_ons": 30000.0,
        "mains_max_v": 253.0,
        "mains_min_v": 207.0,
        "max_reservoir_ripple_current_a": 0.02,
        "load_a": 0.010,
        "min_dc_current_a": 0.0125,
        "cap_loss_in_analysis": 0.10,
    }
    base.update(kw)
    return base


def _find(findings, rule):
    return next(f for f in findings if f.rule == rule)


@pytest.mark.parametrize(
    ("rated_life_h", "temp_c", "ok"),
    [(2000.0, 85.0, False), (2000.0, 105.0, False), (10000.0, 105.0, True)],
)
def test_reservoir_life_rule(rated_life_h, temp_c, ok):
    # 10 years against: 85 C / 2000 h -> 2000 x 2^(45/10) ~ 45 kh, capped 30 kh; 105 C / 2000 h
    # -> cap 30 kh; 105 C / 10000 h -> cap 150 kh
    cap = R.RatedPart(
        "reservoir", value=100e-6, rated_life_h=rated_life_h, temp_max_c=temp_c, ripple_a=0.2
    )
    f = _find(R.evaluate({"reservoir": cap}, None, Policy(), stresses=_s()), "reservoir.life")
    assert f.ok is ok and f.stress == 87600.0
    assert f.limit == pytest.approx(15 * rated_life_h)
    # a part without a rated life is never passed silently
    bare = R.RatedPart("reservoir", value=100e-6, temp_max_c=105.0, ripple_a=0.2)
    f = _find(R.evaluate({"reservoir": bare}, None, Policy(), stresses=_s()), "reservoir.life")
    assert f.severity == "warn" and "rated_life_h" in f.note


def test_end_of_life_current_rule_scales_the_minimum_current():
    # grade III at 230 V: 6.2 % < the 10 % already in the analysis -> the day-one figure holds
    x3 = R.RatedPart("x_capacitor", value=330e-9, safety_class="X2", rated_voltage_ac_v=305.0,
                     humidity_grade="III")  # fmt: skip
    f = _find(R.evaluate({"x_capacitor": x3}, None, Policy(), stresses=_s()),
              "whole.end_of_life_current")  # fmt: skip
    assert f.ok and f.limit == pytest.approx(0.0125) and "6.2%" in f.note
    # a 30 % override (--cap-loss): 12.5 mA x 0.7 / 0.9 = 9.72 mA < 11 mA
    f = _find(
        R.evaluate({"x_capacitor": x3}, None, Policy(), stresses=_s(end_of_life_loss_override=0.3)),
        "whole.end_of_life_current",
    )
    assert not f.ok and f.limit == pytest.approx(0.0125 * 0.7 / 0.9)
    # grade I: lost over ten years at 60 % RH -> no current at the end of life
    x1 = R.RatedPart("x_capacitor", value=330e-9, safety_class="X2", rated_voltage_ac_v=305.0,
                     humidity_grade="I")  # fmt: skip
    f = _find(R.evaluate({"x_capacitor": x1}, None, Policy(), stresses=_s()),
              "whole.end_of_life_current")  # fmt: skip
    assert not f.ok and f.limit == 0.0


def test_life_and_duty_options_parse_through_units():
    # 10 y = 87600 h (8760 h a year of continuous operation, [P])
    assert parse_duration("87600h") == parse_duration("10y") == 87600 * 3600.0
    assert parse_duration("50kh") == 50000 * 3600.0
    assert format_duration(87600 * 3600.0) == "87600 h (10 y)"
    assert parse_count("30k") == 30000.0
    assert parse_percent("60") == pytest.approx(0.6)
    for bad in ("ten years", "-1y", "5 parsecs"):
        with pytest.raises(BadValueError):
            parse_duration(bad)
    with pytest.raises(BadValueError):
        parse_percent("120")
    assert math.isclose(parse_duration("1 year"), 8760 * 3600.0)
