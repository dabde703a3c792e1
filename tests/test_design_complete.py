"""The search is complete over its space, and its explanations point the right way (issue 13).

Outside reference: ``dropper audit`` (selector.audit, which reads a BOM as any reviewer's file
and evaluates it with the engine and the shared rules) decides what is compliant; the solver's
set must audit clean, and no cheaper set that audits clean may exist among random swaps of its
parts (tests/bench/random_sets_vs_design.py runs the same search on 50 requests). The stand-in
analysis of tests/test_design_support.py (textbook closed forms) keeps the explanation tests
fast.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest
from test_design_support import small_catalogue, standin_analyse

from selector import design as D
from selector.audit.evaluate import audit_bom
from selector.cli.audit import audit_options
from selector.engine import Conditions, Mains
from selector.errors import InfeasibleError
from selector.policy import Policy

sys.path.insert(0, str(Path(__file__).parent / "bench"))
import random_sets_vs_design as RS  # noqa: E402


@pytest.fixture(scope="module")
def frame(builtin_frame):
    return builtin_frame


def _req(load, vout, volts=230.0, freqs=(50.0, 60.0), top="bridge"):
    return D.Requirement(
        load_a=load,
        vout_v=vout,
        mains=Mains(volts, 0.10, freqs),
        conditions=Conditions(40.0, "iec60335", 1000.0),
        topology=top,
    )


def _audit_clean(d, tmp_path, load: str) -> dict:
    path = tmp_path / "design.csv"
    D.write_bom(d, path)
    return audit_bom(path, **audit_options(mains="230", freq="50,60", load=load)).to_dict()


def test_readme_request_uses_two_different_series_resistors_and_audits_clean(frame, tmp_path):
    # the README's request: the space now holds a fusible resistor with a plain one in series
    d = D.design(frame, _req(0.012, 5.1), Policy())[0]
    series = [p for p in d.parts if p.role == "series_resistor"]
    assert len({p.code for p in series}) == 2
    assert any("fusible" in p.family for p in series)
    assert not any(p.role == "fuse" for p in d.parts)  # the fusible resistor is the fuse
    assert d.search["exhaustive"] and d.search["best_possible_key"] == d.search["best_found_key"]
    summary = _audit_clean(d, tmp_path, "12m")["summary"]
    assert summary["fail"] == 0 and summary["warn"] == 0 and summary["pass"] >= 31


def test_request_refused_before_now_gets_an_audit_clean_design(frame, tmp_path):
    # 230 V 50/60 Hz, 3.3 V, 20 mA: "no design" from the previous solver (verification cap)
    d = D.design(frame, _req(0.020, 3.3), Policy())[0]
    assert d.search["exhaustive"]
    summary = _audit_clean(d, tmp_path, "20m")["summary"]
    assert summary["fail"] == 0 and summary["warn"] == 0


@pytest.mark.parametrize(
    "req",
    [
        {"load": "12m", "vout": "5.1", "mains": "230", "freq": "50,60", "topology": "bridge"},
        {"load": "5m", "vout": "12", "mains": "240", "freq": "50", "topology": "half-wave"},
    ],
    ids=["bridge", "half-wave"],
)
def test_no_cheaper_swap_audits_clean(frame, tmp_path, req):
    price, cheaper = RS.search(req, swaps=24, seed=3, frame=frame, tmp=tmp_path)
    assert price is not None
    assert cheaper == []


def _explained_infeasible():
    from test_design import _random_requirements

    cat = small_catalogue()
    for req in _random_requirements(50):
        try:
            D.design(cat, req, Policy(), analyse=standin_analyse)
        except InfeasibleError as exc:
            if getattr(exc, "relaxed_requirement", None) is not None:
                yield cat, req, exc


def test_relaxation_applied_makes_the_request_feasible():
    cases = list(_explained_infeasible())
    assert len(cases) >= 5
    for cat, req, exc in cases:
        assert exc.rule in str(exc) and exc.relaxation in str(exc)
        assert "checked" in str(exc)
        # apply the relaxation the message gives and search again: a design exists
        got = D.design(cat, exc.relaxed_requirement, exc.relaxed_policy, analyse=standin_analyse)
        assert got
        # and it is a relaxation: the changed request asks for no more than the original
        assert exc.relaxed_requirement.load_a <= req.load_a
        assert exc.relaxed_requirement.conditions.surge_v <= req.conditions.surge_v


def test_time_limit_says_the_search_was_not_completed(frame):
    # a limit shorter than any search: no design is proven absent, and the message says so
    with pytest.raises(InfeasibleError, match="time limit") as info:
        D.design(frame, _req(0.020, 3.3), Policy(), time_limit_s=1e-6)
    assert "may still exist" in str(info.value)
    assert info.value.relaxation == "a longer --time-limit"
