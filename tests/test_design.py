"""Design solver: exactness against brute force, every design passes every rule, infeasibility.

The search is checked against an independent brute force over every combination of the search
space (issue 4, item 2) on a small catalogue, both sides evaluating candidates with the same
closed-form stand-in for the engine (tests/test_design_support.py) and the same rules; the
physics of the designs is checked against the real engine and ngspice in test_design_engine.py.
"""

from __future__ import annotations

import csv
import random

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_design_support import brute_force, design_key, small_catalogue, standin_analyse

from selector import design as D
from selector import rules as R
from selector.engine.circuit import Conditions, Mains
from selector.errors import BadValueError, InfeasibleError
from selector.policy import Policy
from selector.rules.life import life_context

CAT = small_catalogue()


def _req(**kw):
    # a 500 V surge: at 1 kV no set of the small catalogue holds the bus peak of this request
    # (whole.bus_surge_peak; brute force finds none: the resistance that holds the bus then
    # takes more of the surge than its limiting voltage allows, series_r.surge_voltage)
    base = dict(
        load_a=0.008,
        vout_v=5.1,
        mains=Mains(230.0, 0.10, (50.0, 60.0)),
        conditions=Conditions(40.0, "iec60335", 500.0),
    )
    base.update(kw)
    return D.Requirement(**base)


def _random_requirements(n: int, seed: int = 4):
    rnd = random.Random(seed)
    out = []
    for _ in range(n):
        out.append(
            _req(
                load_a=rnd.choice([0.001, 0.003, 0.005, 0.008, 0.012, 0.02, 0.04]),
                vout_v=rnd.choice([5.1, 12.0, 6.2, 4.0]),
                mains=Mains(
                    rnd.choice([230.0, 120.0, 240.0]),
                    rnd.choice([0.06, 0.10]),
                    rnd.choice([(50.0,), (60.0,), (50.0, 60.0)]),
                ),
                conditions=Conditions(
                    rnd.choice([25.0, 40.0, 60.0]), "iec60335", rnd.choice([0.0, 500.0, 1000.0])
                ),
                topology=rnd.choice(["bridge", "bridge", "half-wave", "any"]),
                minimize=rnd.choice(["price", "price", "area", "count"]),
            )
        )
    return out


_BRUTE: dict = {}


def _brute(req):
    if req not in _BRUTE:
        _BRUTE[req] = brute_force(CAT, req, Policy())
    return _BRUTE[req]


@pytest.mark.parametrize("req", _random_requirements(50), ids=lambda r: f"{r.load_a * 1e3:g}mA")
def test_solver_optimum_equals_brute_force(req):
    brute = _brute(req)
    if brute is None:
        with pytest.raises(InfeasibleError):
            D.design(CAT, req, Policy(), analyse=standin_analyse)
        return
    got = D.design(CAT, req, Policy(), analyse=standin_analyse)
    assert design_key(got[0], req.minimize) == brute[0]


def test_some_random_requirements_are_feasible():
    # the agreement above must not be vacuous: most requirements have a design (unequal
    # series pairs winning on the built-in catalogue: tests/test_design_engine.py)
    results = [_brute(r) for r in _random_requirements(50)]
    assert sum(b is not None for b in results) >= 25


def _recheck(d: D.Design, req: D.Requirement) -> list[R.Finding]:
    """Evaluate the design again from its own parts and analysis (every rule, worst case)."""
    parts = {k: v if len(v) > 1 else v[0] for k, v in d.rated_parts.items()}
    return R.evaluate(
        parts,
        d.analysis,
        Policy(),
        context={
            "mains_max_v": req.mains.high_v,
            "mains_min_v": req.mains.low_v,
            "ambient_c": req.conditions.ambient_c,
            "surge_level_v": req.conditions.surge_v,
            "load_a": req.load_a,
            "series_resistance_ohm": d.effective["series_resistance_ohm"] * 1.05,
            "zener_voltage_v": d.effective["zener_voltage_v"],
            "reservoir_min_f": d.effective["reservoir_f"] * 0.8,
            # target life, humidity, switch-ons and the loss in the analysis (life rules)
            **life_context(req.conditions, req.cap_loss),
        },
    )


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    load=st.sampled_from([0.002, 0.005, 0.01, 0.015, 0.03]),
    vout=st.sampled_from([5.1, 12.0]),
    freqs=st.sampled_from([(50.0,), (60.0,), (50.0, 60.0)]),
    surge=st.sampled_from([0.0, 1000.0]),
    top=st.sampled_from(["bridge", "half-wave"]),
    n=st.integers(1, 3),
)
def test_every_design_passes_every_rule(load, vout, freqs, surge, top, n):
    req = _req(
        load_a=load,
        vout_v=vout,
        mains=Mains(230.0, 0.1, freqs),
        conditions=Conditions(40.0, "iec60335", surge),
        topology=top,
        top=n,
    )
    try:
        designs = D.design(CAT, req, Policy(), analyse=standin_analyse)
    except InfeasibleError as exc:
        assert exc.rule
        return
    keys = [design_key(d) for d in designs]
    assert keys == sorted(keys) and len(designs) <= n
    for d in designs:
        # every rule passes; a warning only where a rule's waiver applies (the fuse against a
        # shorted IEC 60384-14 X capacitor)
        assert d.checks and not R.blocking(d.checks)
        assert all(f.severity == "pass" or f.waived for f in d.checks)
        assert {f.part for f in d.checks} >= {
            "x_capacitor",
            "series_resistor",
            "bleeder",
            "rectifier",
            "zener",
            "reservoir",
            "fuse",
            "whole",
        }
        again = _recheck(d, req)
        assert not R.blocking(again), [f for f in again if not f.ok]


def test_top_three_are_distinct_and_ranked():
    # a one-year life at 30 % RH: the life rules leave this small catalogue only two sets at
    # the ten-year default; the ranking, not the life, is under test here (500 V: see _req)
    dry_year = Conditions(40.0, "iec60335", 500.0, life_s=8760 * 3600.0, humidity=0.3)
    ds = D.design(CAT, _req(top=3, conditions=dry_year), Policy(), analyse=standin_analyse)
    assert [d.rank for d in ds] == [1, 2, 3]
    sets = {tuple((p.code, p.qty) for p in d.parts) for d in ds}
    assert len(sets) == 3
    assert ds[0].total_price <= ds[1].total_price <= ds[2].total_price


def test_infeasible_one_amp_names_rule_and_relaxation():
    with pytest.raises(InfeasibleError) as exc:
        D.design(CAT, _req(load_a=1.0), Policy(), analyse=standin_analyse)
    assert exc.value.rule == "whole.min_current"
    # the relaxation was applied and searched again (issue 13): a lower load that has a design
    assert "load of at most" in exc.value.relaxation and "checked" in str(exc.value)
    relaxed = exc.value.relaxed_requirement
    assert relaxed.load_a < 1.0
    assert D.design(CAT, relaxed, exc.value.relaxed_policy, analyse=standin_analyse)
    assert exc.value.exit_code == 1
    assert "whole.min_current" in str(exc.value)


def test_infeasible_zener_power_names_power_class():
    # 40 mA of 12 V Zener power at no load with only 0.5/1 W Zeners x 50 % derating
    with pytest.raises(InfeasibleError) as exc:
        D.design(
            CAT,
            _req(load_a=0.04, vout_v=12.0, topology="bridge"),
            Policy(),
            analyse=standin_analyse,
        )
    assert exc.value.rule in {"zener.power", "whole.standby_power", "whole.min_current"}


def test_filters_and_bad_requests():
    # 250 V: without the fusible resistors the small catalogue holds the bus peak only at a
    # lower surge (whole.bus_surge_peak; at 500 V the search finds none)
    low_surge = Conditions(40.0, "iec60335", 250.0)
    ds = D.design(
        CAT,
        _req(smd_only=False, exclude=("fusible",), conditions=low_surge),
        Policy(),
        analyse=standin_analyse,
    )
    assert all(p.family != "fusible" for p in ds[0].parts)
    with pytest.raises(BadValueError, match="families"):
        D.design(CAT, _req(exclude=("nosuch",)), Policy(), analyse=standin_analyse)
    with pytest.raises(BadValueError):
        _req(minimize="weight")
    with pytest.raises(BadValueError):
        _req(topology="full-wave")
    with pytest.raises(BadValueError, match="Zener"):
        D.design(CAT, _req(zener_v=7.5), Policy(), analyse=standin_analyse)


def test_smd_only_removes_tht_parts_or_is_infeasible():
    try:
        ds = D.design(CAT, _req(smd_only=True), Policy(), analyse=standin_analyse)
    except InfeasibleError:
        return  # the small catalogue has no SMD X capacitor: a clear infeasible is right
    assert all(p.mount == "smd" for p in ds[0].parts)


# --- the look-up structures against naive loops ---------------------------------------------


@settings(max_examples=60, deadline=None)
@given(
    caps=st.lists(st.floats(0, 10, allow_nan=False), min_size=1, max_size=20),
    keys=st.lists(st.integers(0, 1000), min_size=20, max_size=20),
    needs=st.lists(st.floats(-1, 11, allow_nan=False), min_size=1, max_size=10),
)
def test_cheapest_at_least_matches_naive(caps, keys, needs):
    cap = np.array(caps)
    key = np.array(keys[: len(caps)], dtype=np.int64)
    got = D.lookups.cheapest_at_least(cap, key, np.array(needs))
    for g, need in zip(got, needs, strict=True):
        ok = [i for i in range(len(cap)) if cap[i] >= need]
        if not ok:
            assert g == -1
        else:
            assert key[g] == min(key[i] for i in ok) and cap[g] >= need


@settings(max_examples=60, deadline=None)
@given(
    vals=st.lists(st.floats(0, 100, allow_nan=False), min_size=1, max_size=30),
    keys=st.lists(st.integers(0, 1000), min_size=30, max_size=30),
    lo=st.floats(-5, 105),
    width=st.floats(0, 60),
)
def test_range_min_matches_naive(vals, keys, lo, width):
    v = np.array(vals)
    k = np.array(keys[: len(vals)], dtype=np.int64)
    rm = D.lookups.RangeMinimum(v, k)
    g = int(rm.query(np.array([lo]), np.array([lo + width]))[0])
    ok = [i for i in range(len(v)) if lo <= v[i] <= lo + width]
    if not ok:
        assert g == -1
    else:
        assert k[g] == min(k[i] for i in ok)
        # tie-break policy: among equal keys the largest value (a bleeder's lower loss)
        assert v[g] == max(v[i] for i in ok if k[i] == k[g])


def test_objective_key_is_lexicographic():
    a = D.objective_key(0.10, 500.0, 9, "price")
    b = D.objective_key(0.10, 400.0, 12, "price")
    c = D.objective_key(0.09, 900.0, 20, "price")
    assert c < b < a
    assert D.objective_key(0.5, 100.0, 9, "area") < D.objective_key(0.1, 101.0, 9, "area")
    assert D.objective_key(0.5, 900.0, 8, "count") < D.objective_key(0.1, 100.0, 9, "count")
    # sums of keys are keys of sums
    assert D.objective_key(0.1, 5.0, 1) + D.objective_key(0.2, 7.0, 2) == D.objective_key(
        0.3, 12.0, 3
    )


# --- BOM ----------------------------------------------------------------------------------


def test_bom_written_atomically_with_formula_cells_escaped(tmp_path):
    d = D.design(CAT, _req(), Policy(), analyse=standin_analyse)[0]
    d.parts[0].description = "=HYPERLINK(evil)"
    out = tmp_path / "bom.csv"
    D.write_bom(d, out)
    rows = list(csv.DictReader(out.open(encoding="utf-8")))
    assert list(rows[0]) == [
        "Reference", "Value", "Qty", "Description", "Footprint", "Role",
        "Catalogue code", "Supplier", "Ratings", "Price note",
    ]  # fmt: skip
    assert rows[0]["Description"] == "'=HYPERLINK(evil)"
    assert sum(int(r["Qty"]) for r in rows) == d.part_count
    assert {r["Role"] for r in rows} >= {"x_capacitor", "series_resistor", "bleeder", "zener"}
    assert [p.name for p in tmp_path.iterdir()] == ["bom.csv"]  # no temporary file left
    for cell in ("+A1", "-1+1", "@x", "=1", "\t=1"):
        assert D.result.bom_cell(cell) == "'" + cell
    for cell in ("-1", "+1", "-2.5e-3"):  # plain numbers are no formula and stay numbers
        assert D.result.bom_cell(cell) == cell


@pytest.mark.parametrize("req", _random_requirements(22)[:8], ids=lambda r: f"{r.load_a * 1e3:g}mA")
def test_tiny_batches_give_the_same_optimum(req, monkeypatch):
    # the screen splits work into batches and slices; the branch and bound must not depend on
    # where the cuts fall (regression: slices once left the pending list out of key order)
    monkeypatch.setattr(D.screen, "PHYSICS_SLICE", 7)
    monkeypatch.setattr(D.screen, "POINTS_PER_BATCH", 23)
    brute = _brute(req)
    if brute is None:
        with pytest.raises(InfeasibleError):
            D.design(CAT, req, Policy(), analyse=standin_analyse)
        return
    got = D.design(CAT, req, Policy(), analyse=standin_analyse)
    assert design_key(got[0], req.minimize) == brute[0]
