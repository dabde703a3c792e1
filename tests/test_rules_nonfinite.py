"""A rule whose stress or limit is not a finite number fails ("cannot evaluate"), never passes.

Property tests over every registered rule (issue 14: an X capacitor rated ``1e999`` V passed
``x_cap.ac_voltage`` with margin NaN). The property is the definition of a pass, not a figure
from outside: a pass needs a finite stress, a finite limit, stress <= limit and a margin >= 0.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from selector import rules as R
from selector.errors import DropperError
from selector.policy import Policy

#: stresses with plausible finite values (a 230 V bridge design, invented for the test)
_BASE_STRESSES = {
    "ambient_c": 40.0,
    "burst_current_a": 0.03,
    "burst_duration_s": 0.005,
    "discharge_allowed_s": 1.0,
    "discharge_exempt": False,
    "discharge_time_s": 0.5,
    "inrush_i2t_a2s": 0.01,
    "inrush_peak_current_a": 0.7,
    "inrush_rectifier_peak_current_a": 0.7,
    "inrush_series_r_energy_j": 0.02,
    "inrush_x_cap_dvdt_v_per_s": 1e6,
    "load_a": 0.01,
    "mains_max_v": 253.0,
    "mains_min_v": 207.0,
    "max_bleeder_power_w": 0.05,
    "max_bleeder_voltage_v": 358.0,
    "max_line_current_rms_a": 0.03,
    "max_output_ripple_v": 0.2,
    "max_output_voltage_v": 12.5,
    "max_rectifier_avg_current_a": 0.02,
    "max_rectifier_reverse_voltage_v": 358.0,
    "max_reservoir_ripple_current_a": 0.03,
    "max_series_r_power_w": 0.2,
    "max_zener_power_w": 0.25,
    "min_dc_current_a": 0.02,
    "min_output_voltage_v": 11.5,
    "no_load_real_power_w": 0.3,
    "reservoir_min_f": 1e-4,
    "series_resistance_ohm": 470.0,
    "surge_bus_peak_v": 14.0,
    "surge_fuse_i2t_a2s": 0.05,
    "surge_level_v": 1000.0,
    "surge_rectifier_i2t_a2s": 0.05,
    "surge_series_r_energy_j": 0.1,
    "surge_series_r_peak_voltage_v": 800.0,
    "surge_x_cap_dvdt_v_per_s": 1e7,
    "surge_x_cap_peak_total_v": 1300.0,
    "surge_zener_peak_power_w": 50.0,
    "surge_zener_pulse_energy_j": 0.001,
    "vout_min_v": 10.0,
    "zener_voltage_v": 12.0,
}

_FLOAT_RATINGS = [
    f.name
    for f in dataclasses.fields(R.RatedPart)
    if f.name not in {"qty", "share"} and "float" in str(f.type)
]

#: the numbers a poisoned row or a broken computation can hand a rule
_ANY_NUMBER = st.one_of(
    st.sampled_from([math.nan, math.inf, -math.inf, 1e308, 0.0, -1.0]),
    st.floats(allow_nan=True, allow_infinity=True),
)


def _part(role: str, ratings: dict[str, float]) -> R.RatedPart:
    base = dict(
        value=470.0,
        tolerance=0.1,
        safety_class="X2",
        rated_voltage_v=25.0,
        rated_voltage_ac_v=305.0,
        limiting_voltage_v=200.0,
        power_w=0.25,
        pulse_energy_j=1.0,
        impulse_v=2500.0,
        dvdt_v_per_s=1e8,
        vrrm_v=1000.0,
        if_av_a=1.0,
        ifsm_a=30.0,
        tj_max_c=150.0,
        ripple_a=0.1,
        temp_max_c=105.0,
        i2t_a2s=1.0,
        fusible=False,
    )
    base.update(ratings)
    return R.RatedPart(role, **base)


@st.composite
def _poisoned(draw):
    stresses = dict(_BASE_STRESSES)
    for key in draw(st.lists(st.sampled_from(sorted(_BASE_STRESSES)), max_size=3)):
        if key != "discharge_exempt":
            stresses[key] = draw(_ANY_NUMBER)
    ratings = {
        k: draw(_ANY_NUMBER) for k in draw(st.lists(st.sampled_from(_FLOAT_RATINGS), max_size=3))
    }
    return stresses, ratings


def _evaluate(stresses, ratings):
    parts = {role: _part(role, ratings) for role in R.ROLES if role != "whole"}
    try:
        return R.evaluate(parts, None, Policy(), stresses=stresses)
    except DropperError:  # e.g. a derating end below its start: refused, not passed
        return []


@settings(max_examples=600, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(_poisoned())
def test_no_rule_passes_with_a_non_finite_stress_limit_or_margin(case):
    stresses, ratings = case
    for finding in _evaluate(stresses, ratings):
        if finding.severity == "pass" and finding.limit is None:
            # an optional limit not set (whole.standby_power without --standby-limit): a pass
            # that bounds nothing, with a finite stress and a note saying so
            assert math.isfinite(finding.stress) and finding.note
            continue
        if finding.severity == "pass":
            assert finding.ok
            assert math.isfinite(finding.stress) and math.isfinite(finding.limit)
            assert math.isfinite(finding.margin) and finding.margin >= 0
            assert finding.stress <= finding.limit


@settings(max_examples=400, deadline=None)
@given(st.sampled_from(R.RULES), _ANY_NUMBER, _ANY_NUMBER)
def test_rule_check_never_compares_true_on_non_finite(rule, stress_value, limit_value):
    """The design solver compares ``stress <= limit`` itself: Rule.check hands it a NaN limit
    whenever either side is infinite, scalar and array alike."""
    spy = dataclasses.replace(rule, fn=lambda s, p, pol: (stress_value, limit_value))
    stress, limit, margin = spy.check({}, None, Policy())
    if stress <= limit:
        assert math.isfinite(stress) and math.isfinite(limit) and math.isfinite(margin)
    arrays = dataclasses.replace(
        rule, fn=lambda s, p, pol: (np.array([stress_value, 1.0]), np.array([limit_value, 2.0]))
    )
    stress_a, limit_a, margin_a = arrays.check({}, None, Policy())
    passed = np.asarray(stress_a <= limit_a)
    assert passed[1] and margin_a[1] == pytest.approx(0.5)
    if passed[0]:
        assert np.isfinite(stress_a[0]) and np.isfinite(limit_a[0]) and np.isfinite(margin_a[0])


@pytest.mark.parametrize("rating", ["rated_voltage_ac_v", "power_w"])
def test_issue_14_infinite_rating_cannot_evaluate(rating):
    """The two rows of issue 14: rated 1e999 V (an X capacitor) and 1e999 W (a resistor)."""
    findings = _evaluate(dict(_BASE_STRESSES), {rating: float("1e999")})
    rule_id = {"rated_voltage_ac_v": "x_cap.ac_voltage", "power_w": "series_r.power"}[rating]
    got = next(f for f in findings if f.rule == rule_id)
    assert got.severity == "fail" and not got.ok
    assert got.note.startswith("cannot evaluate") and got.margin is None
