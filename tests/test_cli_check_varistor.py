"""`dropper check --varistor`: a catalogue varistor across the line, its rules, text and JSON.

The clamp figures themselves are checked against ngspice in tests/test_ngspice_varistor.py;
this file checks the command surface and that the rules follow the varistor's ratings.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from selector.cautions import CAUTIONS
from selector.cli import app

runner = CliRunner()
BASE = [
    "check", "--mains", "230", "--cap", "330n", "--series-r", "47", "--bleeder", "1M",
    "--zener", "5.1", "--reservoir", "470u", "--load", "12m",
]  # fmt: skip


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_varistor_by_code_in_json(catalogue_url: str) -> None:
    r = invoke(*BASE, "--surge", "2k", "--varistor", "mov.disc.14mm.275vac", "--db", catalogue_url,
               "--json")  # fmt: skip
    doc = json.loads(r.stdout)
    mov = doc["varistor"]
    assert mov["code"] == "mov.disc.14mm.275vac"
    assert mov["varistor_voltage_v"] == 430.0 and mov["clamp_current_a"] == 50.0
    rules = {f["rule"]: f for f in mov["findings"]}
    assert set(rules) == {
        "varistor.continuous_voltage",
        "varistor.surge_energy",
        "varistor.surge_current",
    }
    # 253 V (230 V + 10 %) against the 275 V ac rating
    assert rules["varistor.continuous_voltage"]["stress"] == pytest.approx(253.0)
    assert rules["varistor.continuous_voltage"]["ok"]
    s = doc["surge"]
    assert s["varistor_code"] == "mov.disc.14mm.275vac"
    # the clamp holds the line well below the 2 kV open-circuit wave (and above V1mA)
    assert 430.0 < s["line_peak_v"] < 1000.0
    assert rules["varistor.surge_energy"]["stress"] == pytest.approx(s["varistor_energy_j"])
    assert doc["cautions"] == list(CAUTIONS)


def test_varistor_rules_fail_on_a_small_disc_at_4kv(catalogue_url: str) -> None:
    # a 7 mm disc (1.2 kA, 17 J, invented) takes ~1.7 kA / ~26 J at 4 kV: both fail, exit 1
    r = invoke(*BASE, "--surge", "4k", "--varistor", "430", "--db", catalogue_url)
    assert r.exit_code == 1
    assert "Varistor across the line: mov.disc.7mm.275vac" in r.stdout
    lines = {ln.split()[0]: ln for ln in r.stdout.splitlines() if ln.startswith("  varistor.")}
    assert "FAIL" in lines["varistor.surge_current"]
    assert "FAIL" in lines["varistor.surge_energy"]
    assert "ok" in lines["varistor.continuous_voltage"]
    assert "Safety cautions:" in r.stdout
    # the verdict names both failed varistor rules and comes after the varistor block
    out = r.stdout.splitlines()
    at = next(i for i, ln in enumerate(out) if ln.startswith("bridge dropper:"))
    assert "NOT ACCEPTED" in out[at]
    assert "(varistor.surge_current)" in out[at] and "(varistor.surge_energy)" in out[at]
    assert max(i for i, ln in enumerate(out) if ln.startswith("  varistor.")) < at
    assert at < out.index("Safety cautions:")


def test_continuous_rating_below_high_line_fails(catalogue_url: str) -> None:
    # a 250 V ac varistor on 230 V + 10 % = 253 V: the continuous-voltage rule fails
    r = invoke(*BASE, "--surge", "1k", "--varistor", "250VAC", "--db", catalogue_url, "--json")
    doc = json.loads(r.stdout)
    rules = {f["rule"]: f for f in doc["varistor"]["findings"]}
    assert not rules["varistor.continuous_voltage"]["ok"]
    assert r.exit_code == 1
    assert "varistor.continuous_voltage" in [f["rule"] for f in doc["failures"]]


def test_unknown_varistor_is_bad_input(catalogue_url: str) -> None:
    r = runner.invoke(app, [*BASE, "--varistor", "999", "--db", catalogue_url])
    assert r.exit_code == 2
    assert "no varistor at 999 V" in r.stderr
