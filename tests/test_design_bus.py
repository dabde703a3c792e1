"""The bus peak during the surge as the design search uses it (issue 11).

The search rules out (Zener, reservoir) pairs by dominance after one fails the bus rule
(selector.design.bus_rechoice.dominated) and cuts points with less series resistance or more X
capacitance after the strongest completion fails by more than 10 % (search.BUS_CUT_RULES). Both
rest on the bus peak being monotone in each of these values, on the quick bound and on the full
analysis alike. Physics behind it: the surge drives a current through the series resistance into
the bus, where the reservoir absorbs its charge (C dV = I dt [S], so a larger C rises less) and
the Zener clamps (V = Vz + I Zz [S], so a lower slope and a lower Vz hold it lower); the current
falls as the series resistance grows (Ohm's law) and grows with the X capacitance, which charges
less during the pulse. The tests check these directions on the engine's whole-circuit model,
whose figures agree with ngspice (tests/test_ngspice_surge.py and the closing notes).
"""

from __future__ import annotations

import dataclasses

import pytest

from selector.engine.analysis import analyse, surge_lower_bounds
from selector.engine.circuit import Circuit, Conditions, Load, Mains, Tolerances

MAINS = Mains(230.0, 0.10, (50.0, 60.0))
TOL = Tolerances(cap_tol=0.1, cap_loss=0.1, r_tol=0.05, zener_tol=0.05)
BASE = Circuit(
    topology="bridge",
    x_capacitors_f=(330e-9,),
    series_resistance_ohm=220.0,
    bleeder_resistance_ohm=1e6,
    diode_drop_v=0.75,
    diode_resistance_ohm=0.1,
    zener_voltage_v=5.1,
    zener_impedance_ohm=10.0,
    reservoir_f=100e-6,
    load=Load(current_a=0.012),
)


def bound(circuit: Circuit, tol: Tolerances = TOL, level: float = 1000.0) -> float:
    return surge_lower_bounds(circuit, MAINS, tol, level)["surge_bus_peak_v"]


def increasing(values: list[float]) -> bool:
    return all(b >= a - 1e-9 for a, b in zip(values, values[1:], strict=False))


@pytest.mark.parametrize("topology", ["bridge", "half-wave"])
def test_bus_bound_falls_with_reservoir_and_rises_with_zener_slope_and_tolerance(topology):
    base = dataclasses.replace(BASE, topology=topology)
    caps = [10e-6, 47e-6, 100e-6, 470e-6, 2200e-6]
    peaks = [bound(dataclasses.replace(base, reservoir_f=c)) for c in caps]
    assert increasing(peaks[::-1]) and peaks[0] > peaks[-1]
    slopes = [1.0, 5.0, 10.0, 30.0]
    peaks = [bound(dataclasses.replace(base, zener_impedance_ohm=z)) for z in slopes]
    assert increasing(peaks) and peaks[-1] > peaks[0]
    peaks = [bound(base, dataclasses.replace(TOL, zener_tol=t)) for t in (0.01, 0.02, 0.05)]
    assert increasing(peaks)


@pytest.mark.parametrize("level", [1000.0, 2000.0])
def test_bus_bound_falls_with_series_resistance_and_rises_with_x_capacitance(level):
    rs = [22.0, 47.0, 100.0, 220.0, 470.0, 1000.0]
    peaks = [bound(dataclasses.replace(BASE, series_resistance_ohm=r), level=level) for r in rs]
    assert increasing(peaks[::-1]) and peaks[0] > peaks[-1]
    xs = [100e-9, 220e-9, 470e-9, 1e-6]
    peaks = [bound(dataclasses.replace(BASE, x_capacitors_f=(c,)), level=level) for c in xs]
    assert increasing(peaks)


def test_rectifier_and_bleeder_move_the_bus_bound_by_far_less_than_the_cut_tolerance():
    # the cut on the strongest completion (search.SURGE_CUT_TOLERANCE, 10 %) also removes
    # points whose rectifier and bleeder differ: over the catalogue's range of diode slope
    # (0.05-0.5 ohm here) and bleeder (330 k - 4.7 M) the bus bound moves by under 2 %
    from selector.design.search import SURGE_CUT_TOLERANCE

    for r in (22.0, 100.0, 470.0):
        c = dataclasses.replace(BASE, series_resistance_ohm=r)
        ref = bound(c)
        for kw in (
            {"diode_resistance_ohm": 0.05},
            {"diode_resistance_ohm": 0.5},
            {"diode_drop_v": 1.0},
            {"bleeder_resistance_ohm": 330e3},
            {"bleeder_resistance_ohm": 4.7e6},
        ):
            moved = bound(dataclasses.replace(c, **kw))
            assert abs(moved / ref - 1) < 0.02 < SURGE_CUT_TOLERANCE, (r, kw)


def test_quick_bound_is_below_the_full_analysis_bus_peak():
    # the design rejects on the quick bound before the full analysis: the bound (fewer
    # corners) must never exceed the analysis' figure
    for r, c in ((47.0, 470e-6), (220.0, 100e-6), (470.0, 22e-6)):
        circ = dataclasses.replace(BASE, series_resistance_ohm=r, reservoir_f=c)
        full = analyse(circ, MAINS, TOL, Conditions(surge_v=1000.0)).surge.bus_peak_v
        assert bound(circ) <= full * (1 + 1e-9)


def test_full_analysis_bus_peak_falls_with_reservoir():
    peaks = [
        analyse(
            dataclasses.replace(BASE, reservoir_f=c), MAINS, TOL, Conditions(surge_v=1000.0)
        ).surge.bus_peak_v
        for c in (22e-6, 100e-6, 470e-6)
    ]
    assert increasing(peaks[::-1])


def test_vout_max_sets_the_bus_limit_of_design_and_audit(catalogue_url, tmp_path):
    """`--vout-max` is the load's limit in design and audit alike (issue 11): a BOM designed
    at the default 1.3 x 5.1 V = 6.63 V fails the bus rule when the load tolerates only 6 V, and
    a design for 6 V keeps its bus peak below 6 V (the check of `check` on its own values)."""
    import json

    from typer.testing import CliRunner

    from selector.cli import app

    runner = CliRunner()
    common = ["--load", "12m", "--mains", "230", "--freq", "50,60", "--db", catalogue_url]
    bom = tmp_path / "default.csv"
    made = runner.invoke(app, ["design", "--vout", "5.1", *common, "--bom", str(bom), "--json"])
    assert made.exit_code == 0, made.output
    doc = json.loads(made.stdout)
    assert doc["requirement"]["vout_max_v"] is None  # the default limit
    audited = runner.invoke(app, ["audit", str(bom), *common, "--vout-max", "6", "--json"])
    fails = [f["rule"] for f in json.loads(audited.stdout)["findings"] if f["severity"] == "fail"]
    assert fails == ["whole.bus_surge_peak"] and audited.exit_code == 1
    tight = runner.invoke(app, ["design", "--vout", "5.1", *common, "--vout-max", "6", "--json"])
    assert tight.exit_code == 0, tight.output
    design = json.loads(tight.stdout)["designs"][0]
    bus = next(c for c in design["checks"] if c["rule"] == "whole.bus_surge_peak")
    assert bus["limit"] == pytest.approx(6.0) and bus["stress"] <= 6.0


@pytest.mark.parametrize("topology", ["bridge", "half-wave"])
def test_ripple_trough_rises_with_reservoir(topology):
    # the design rules out every smaller reservoir with the same Zener after a failure of the
    # window's bottom (verify.WINDOW_RULES): the trough must not fall as C grows (C dV = I dt)
    base = dataclasses.replace(BASE, topology=topology, series_resistance_ohm=100.0)
    troughs = [
        analyse(
            dataclasses.replace(base, reservoir_f=c), MAINS, TOL, Conditions(surge_v=0.0)
        ).worst_case.min_output_voltage_v
        for c in (22e-6, 47e-6, 100e-6, 470e-6)
    ]
    assert increasing(troughs) and troughs[-1] > troughs[0]


def test_check_refuses_a_trough_below_vout_min():
    """`check`'s verdict includes the window's bottom (issue 11): 12 mA from 22 uF droops below
    0.9 x 5.1 V = 4.59 V; a load that tolerates 3.5 V (--vout-min 3.5) accepts it."""
    import json

    from typer.testing import CliRunner

    from selector.cli import app

    args = ["check", "--mains", "230", "--cap", "470n", "--series-r", "100", "--bleeder",
            "680k", "--zener", "5.1", "--reservoir", "22u", "--load", "12m", "--surge", "0",
            "--json"]  # fmt: skip
    runner = CliRunner()
    low = runner.invoke(app, args)
    doc = json.loads(low.stdout)
    assert doc["worst_case"]["min_output_voltage_v"] < doc["vout_min_v"] == pytest.approx(4.59)
    assert [f["rule"] for f in doc["failures"]] == ["whole.output_window_min"]
    assert low.exit_code == 1
    ok = runner.invoke(app, [*args, "--vout-min", "3.5"])
    assert json.loads(ok.stdout)["failures"] == [] and ok.exit_code == 0
