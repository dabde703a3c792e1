"""`dropper yield` in process: text, --json keys, cautions, exit codes, bad input, --bom.

The figures themselves are checked against outside references in test_production_yield.py;
here the command surface, plus two cross-checks with the other commands: values that
`dropper check` accepts give 100 %, and a BOM's misses only come from rules `dropper audit`
fails at the worst case (a unit's values lie inside the worst-case corners, DOMAIN.md
section 10 [P]).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from selector.cautions import CAUTIONS
from selector.cli import app

runner = CliRunner()
DATA = Path(__file__).parent / "data"
ISSUE_EXAMPLE = [
    "yield", "--mains", "230", "--freq", "50,60", "--cap", "330n", "--series-r", "470",
    "--bleeder", "1M", "--zener", "12", "--reservoir", "220u", "--load", "15m",
    "--samples", "10000", "--seed", "1",
]  # fmt: skip


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_help_names_the_command() -> None:
    r = invoke("--help")
    assert r.exit_code == 0 and "yield" in r.stdout
    r = invoke("yield", "--help")
    assert r.exit_code == 0
    for opt in ("--samples", "--seed", "--dist", "--line", "--bom", "--cap-loss", "--mains"):
        assert opt in r.stdout


def test_issue_example_text_exits_0_with_misses() -> None:
    r = invoke(*ISSUE_EXAMPLE)
    assert r.exit_code == 0, r.output  # a yield is a figure, not a finding
    out = r.stdout
    lines = out.splitlines()
    assert lines[0] == ("Production yield of a bridge dropper: 10000 units, uniform draws, seed 1")
    assert lines[1].startswith("  Units that pass: ") and "95 % Wilson interval" in lines[1]
    assert "at 207 V 50 Hz (lowest line and frequency)" in out
    assert "whole.min_current" in out
    assert "Driver of the misses: x_capacitance_f" in out
    assert "end-of-life X capacitance loss applied as a fixed 10 %" in out
    assert "Safety cautions:" in out
    assert out.rstrip().endswith(CAUTIONS[-1])


def test_issue_example_json_keys_and_repeatability() -> None:
    r = invoke(*ISSUE_EXAMPLE, "--json")
    assert r.exit_code == 0
    doc = json.loads(r.stdout)
    assert {
        "yield_fraction",
        "ci_low",
        "ci_high",
        "samples",
        "seed",
        "misses_by_rule",
        "driver",
        "cautions",
        "calibration",
        "demand_a",
    } <= set(doc)
    assert doc["samples"] == 10000 and doc["seed"] == 1
    assert doc["ci_low"] <= doc["yield_fraction"] <= doc["ci_high"]
    assert doc["misses_by_rule"] == {"whole.min_current": 10000 - doc["passed"]}
    assert doc["driver"]["parameter"] == "x_capacitance_f"
    assert doc["cautions"] == list(CAUTIONS)
    again = json.loads(invoke(*ISSUE_EXAMPLE, "--json").stdout)
    assert again == doc


def test_values_check_accepts_give_full_yield() -> None:
    values = [
        "--mains", "230", "--freq", "50,60", "--cap", "470n", "--series-r", "470",
        "--bleeder", "680k", "--zener", "12", "--reservoir", "220u", "--load", "15m",
    ]  # fmt: skip
    assert invoke("check", *values).exit_code == 0
    doc = json.loads(invoke("yield", *values, "--seed", "4", "--json").stdout)
    assert doc["yield_fraction"] == 1.0 and doc["driver"] is None
    doc = json.loads(invoke("yield", *values, "--dist", "normal", "--json").stdout)
    assert doc["yield_fraction"] == 1.0


def test_large_runs_show_a_progress_bar_on_stderr_only() -> None:
    args = ["yield", "--cap", "330n", "--load", "15m", "--seed", "1", "--samples", "200000"]
    r = invoke(*args)
    assert r.exit_code == 0
    assert "drawing units" in r.stderr and "drawing units" not in r.stdout
    assert "drawing units" not in invoke(*args, "--json").stderr


def test_options_reach_the_run() -> None:
    doc = json.loads(
        invoke(
            "yield", "--cap", "330n", "--load", "10m", "--samples", "500", "--seed", "3",
            "--dist", "normal", "--line", "drawn", "--reservoir-tol", "10", "--r-tol", "1",
            "--json",
        ).stdout
    )  # fmt: skip
    assert doc["dist"] == "normal" and doc["line"] == "drawn" and doc["samples"] == 500
    assert doc["tolerances"]["reservoir_tol"] == pytest.approx(0.10)
    assert doc["tolerances"]["r_tol"] == pytest.approx(0.01)
    assert doc["criterion_mains_v"] is None  # each unit at its own mains


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--cap", "330n", "--samples", "0"], "--samples"),
        (["--cap", "330n", "--dist", "gauss"], "--dist"),
        (["--cap", "330n", "--line", "nominal"], "--line"),
        (["--cap", "330n", "--seed", "-2"], "--seed"),
        (["--cap", "330n", "--reservoir-tol", "lots"], "--reservoir-tol"),
        (["--cap", "330x"], "--cap"),
        ([], "--cap"),
        (["--cap", "330n", "--role", "C1=x_capacitor"], "--bom"),
        (["--cap", "330n", "--bom", "x.csv"], "either --bom"),
    ],
)
def test_bad_input_exits_2_with_one_error_line(args, message) -> None:
    r = runner.invoke(app, ["yield", *args])
    assert r.exit_code == 2, r.output
    err = r.stderr.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("Error: ") and message in err[0]


def test_bom_sound_design_passing_the_audit_yields_100(catalogue_url) -> None:
    common = ["--freq", "50,60", "--load", "5m", "--db", catalogue_url]
    audit = invoke("audit", str(DATA / "audit_vent_sound.csv"), *common)
    assert audit.exit_code == 0, audit.output
    r = invoke("yield", "--bom", str(DATA / "audit_vent_sound.csv"), *common, "--json")
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    assert doc["yield_fraction"] == 1.0
    assert doc["bom"].endswith("audit_vent_sound.csv")
    assert "zener.power" in doc["misses_by_rule"] and "series_r.power" in doc["misses_by_rule"]
    assert doc["x_capacitance_f"] == pytest.approx(220e-9)


def test_bom_misses_only_where_the_audit_fails(catalogue_url) -> None:
    common = ["--freq", "50,60", "--load", "10m", "--db", catalogue_url]
    audit = json.loads(
        invoke("audit", str(DATA / "audit_vent_faulty.csv"), *common, "--json").stdout
    )
    failed = {f["rule"] for f in audit["findings"] if f["severity"] == "fail"}
    r = invoke("yield", "--bom", str(DATA / "audit_vent_faulty.csv"), *common, "--seed", "2")
    assert r.exit_code == 0
    doc = json.loads(
        invoke(
            "yield", "--bom", str(DATA / "audit_vent_faulty.csv"), *common, "--seed", "2",
            "--json",
        ).stdout
    )  # fmt: skip
    missed = {rule for rule, count in doc["misses_by_rule"].items() if count}
    assert missed and missed <= failed
    # the general-purpose film capacitor fails its class on every unit, whatever the draws
    assert doc["misses_by_rule"]["x_cap.safety_class"] == doc["samples"]
    assert any("x_cap.safety_class" in n for n in doc["notes"])
    assert "Safety cautions:" in r.stdout
