"""The varistor's clamp model (selector.engine.varistor) and its place in the surge simulation.

Outside references: the power law I = k V^alpha of metal-oxide varistors (Levinson and Philipp,
J. Appl. Phys. 46 (1975) [M]); the worked example's disc figures are from memory [M]. The
ngspice comparison is tests/test_ngspice_varistor.py.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import pytest

from selector.engine import surge_circuit as scm
from selector.engine.varistor import VARISTOR_SEGMENTS, Varistor
from selector.errors import OutOfRangeError

DISC = Varistor(v_1ma_v=430.0, clamp_v=710.0, clamp_a=50.0)


def test_worked_example_of_the_module_docstring() -> None:
    # alpha = ln(50 A / 1 mA) / ln(710 / 430) = 21.6; 100 A -> 733 V (hand calculation)
    assert DISC.alpha == pytest.approx(math.log(5e4) / math.log(710 / 430))
    assert DISC.alpha == pytest.approx(21.6, abs=0.05)
    assert float(DISC.voltage(100.0)) == pytest.approx(733.0, abs=0.5)
    # the law passes through both data-sheet points, and is odd
    assert float(DISC.current(430.0)) == pytest.approx(1e-3)
    assert float(DISC.current(-710.0)) == pytest.approx(-50.0)


@pytest.mark.parametrize(("clamp_v", "clamp_a", "tol"), [(710, 50, 0.003), (1000, 5, 0.006)])
def test_chords_follow_the_law(clamp_v: float, clamp_a: float, tol: float) -> None:
    m = Varistor(430.0, clamp_v, clamp_a)
    i = np.geomspace(1.001e-3, 2.0**VARISTOR_SEGMENTS * 1e-3, 5000)
    assert np.max(np.abs(m.pwl_voltage(i) / m.voltage(i) - 1.0)) < tol


@pytest.mark.parametrize(
    ("v1", "vc", "ic"), [(430, 400, 50), (430, 710, 1e-4), (430, 431, 50), (0, 710, 50)]
)
def test_bad_varistor_raises(v1: float, vc: float, ic: float) -> None:
    with pytest.raises(OutOfRangeError):
        Varistor(v1, vc, ic)


def _case(varistor):
    return scm.SurgeCase(
        topology="bridge", mains_v=230.0, freq_hz=50.0, cap_f=330e-9, r_ohm=47.0,
        bleeder_ohm=1e6, vf_v=0.9, rd_ohm=0.03, vz_v=5.1, zz_ohm=1.0, reservoir_f=470e-6,
        esr_ohm=0.3, load_a=0.0, load_g=0.0, phases_deg=(90.0,), v_x0=(310.0,), v_o0=(5.1,),
        varistor=varistor,
    )  # fmt: skip


def test_a_batch_mixing_cases_with_and_without_a_varistor_keeps_each_exact() -> None:
    alone = scm.simulate([_case(None)], 2000.0)
    mixed = scm.simulate([_case(None), _case(DISC)], 2000.0)
    for name in scm.SURGE_STRESSES:
        np.testing.assert_allclose(getattr(mixed, name)[:2], getattr(alone, name), rtol=1e-6)
    # without a varistor the line sees the open-circuit wave plus the mains; with it, the clamp
    assert float(np.max(mixed.line_peak_v[:2])) > 1900.0
    clamp = float(np.max(mixed.line_peak_v[2:]))
    ipk = float(np.max(mixed.varistor_peak_current_a[2:]))
    assert clamp == pytest.approx(float(DISC.voltage(ipk)), rel=0.005)
    assert float(np.max(mixed.varistor_peak_current_a[:2])) == 0.0


def test_the_energy_balance_of_the_varistor() -> None:
    # the varistor's energy is at most what the generator can give: 1/2 Cc U0^2
    run = scm.simulate([dataclasses.replace(_case(DISC))], 4000.0)
    u0 = 4000.0 / scm.GENERATOR.peak_per_volt()
    stored = 0.5 * scm.GENERATOR.cc_f * u0 * u0
    assert 0.0 < float(np.max(run.varistor_energy_j)) < stored


# --- the varistor rules' docstring examples (selector.rules.varistor) ---------------------


def test_varistor_rule_examples() -> None:
    from selector.policy import Policy
    from selector.rules import RatedPart
    from selector.rules import varistor as rv

    pol = Policy()
    disc = RatedPart(role="varistor", rated_voltage_ac_v=275.0, pulse_energy_j=80.0, ifsm_a=1200.0)
    st, lim = rv.mains_rms_vs_continuous_voltage({"mains_max_v": 253.0}, disc, pol)
    assert st <= lim
    low = RatedPart(role="varistor", rated_voltage_ac_v=250.0)
    st, lim = rv.mains_rms_vs_continuous_voltage({"mains_max_v": 253.0}, low, pol)
    assert st > lim
    st, lim = rv.surge_energy_vs_rating({"surge_varistor_energy_j": 9.6}, disc, pol)
    assert st <= lim
    st, lim = rv.surge_current_vs_peak_rating({"surge_varistor_peak_current_a": 1730.0}, disc, pol)
    assert st > lim
