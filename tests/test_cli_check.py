"""`dropper check` in process: the contract's options, JSON keys, table, cautions, exit codes.

Figures asserted here are checked against outside references elsewhere (ngspice in
test_ngspice.py, textbook forms in test_closed_form.py); this file checks the command surface.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from selector.cautions import CAUTIONS
from selector.cli import app

runner = CliRunner()
ISSUE_EXAMPLE = [
    "check", "--mains", "230", "--freq", "50,60", "--cap", "330n", "--series-r", "470",
    "--bleeder", "1M", "--zener", "12", "--reservoir", "220u", "--load", "15m",
]  # fmt: skip


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_issue_example_table_and_cautions() -> None:
    r = invoke(*ISSUE_EXAMPLE)
    lines = r.stdout.splitlines()
    assert lines[0].split()[:3] == ["quantity", "nominal", "worst"]
    assert any(line.startswith("DC current, least") and "207 V 50 Hz" in line for line in lines)
    assert any(line.startswith("Zener power") and "253 V 60 Hz" in line for line in lines)
    assert "Safety cautions:" in r.stdout
    for text in CAUTIONS:
        assert text in r.stdout
    # 330 nF cannot carry 15 mA at 207 V / 50 Hz with -20 % capacitance: exit 1 (findings)
    assert r.exit_code == 1
    assert "NOT ACCEPTED: load not met" in r.stdout


def test_issue_example_json_keys() -> None:
    r = invoke(*ISSUE_EXAMPLE, "--json")
    doc = json.loads(r.stdout)
    assert {
        "dc_current_a",
        "zener_power_w",
        "output_voltage_v",
        "line_current_rms_a",
        "series_r_power_w",
        "real_power_w",
        "power_factor",
    } <= set(doc["nominal"])
    w = doc["worst_case"]
    assert {
        "min_dc_current_a",
        "max_zener_power_w",
        "max_series_r_power_w",
        "max_bleeder_power_w",
        "load_met",
    } <= set(w)
    for key in ("min_dc_current", "max_zener_power", "max_series_r_power", "max_bleeder_power"):
        assert {"mains_v", "freq_hz", "cap_f", "r_ohm", "vz_v", "load_a"} <= set(w[f"{key}_corner"])
    assert {"peak_current_a", "series_r_energy_j", "i2t_a2s"} <= set(doc["inrush"])
    assert {"peak_current_a", "series_r_energy_j", "series_r_peak_voltage_v"} <= set(doc["surge"])
    assert {"limit_v", "time_s"} <= set(doc["discharge"])
    assert doc["cautions"] == list(CAUTIONS)
    assert w["load_met"] is False and r.exit_code == 1
    assert doc["nominal"]["dc_current_a"] == pytest.approx(20.5e-3, rel=0.01)


def test_accepted_design_exits_zero() -> None:
    r = invoke("check", "--cap", "470n", "--bleeder", "680k", "--load", "10m", "--json")
    doc = json.loads(r.stdout)
    assert r.exit_code == 0 and doc["ok"] is True and doc["worst_case"]["load_met"] is True


def test_zero_tolerance_nominal_equals_worst() -> None:
    r = invoke(
        "check",
        "--cap",
        "470n",
        "--load",
        "5m",
        "--mains-tol",
        "0",
        "--cap-tol",
        "0",
        "--cap-loss",
        "0",
        "--r-tol",
        "0",
        "--zener-tol",
        "0",
        "--json",
    )
    doc = json.loads(r.stdout)
    assert doc["worst_case"]["min_dc_current_a"] == pytest.approx(doc["nominal"]["dc_current_a"])


def test_half_wave_repeated_caps_and_regulator() -> None:
    r = invoke(
        "check",
        "--topology",
        "half-wave",
        "--cap",
        "330n",
        "--cap",
        "330n",
        "--zener",
        "5.1",
        "--load",
        "5m",
        "--regulator",
        "3.3",
        "--json",
    )
    doc = json.loads(r.stdout)
    assert doc["topology"] == "half-wave"
    assert doc["worst_case"]["max_regulator_power_w"] > 0
    # 660 nF in parallel: the inrush corner carries C (1 + tol)
    assert doc["inrush"]["corner"]["cap_f"] == pytest.approx(660e-9 * 1.1)


def test_discharge_failure_exits_one() -> None:
    r = invoke("check", "--cap", "1u", "--bleeder", "none", "--json")
    doc = json.loads(r.stdout)
    assert doc["discharge"]["ok"] is False and doc["discharge"]["time_s"] is None  # inf -> null
    assert r.exit_code == 1


@pytest.mark.parametrize(
    "args, fragment",
    [
        (["--cap", "33x"], "--cap"),
        (["--cap", "330n", "--topology", "centre-tap"], "--topology"),
        (["--cap", "330n", "--profile", "ul"], "--profile"),
        (["--cap", "330n", "--freq", "abc"], "--freq"),
        ([], "--cap"),
    ],
)
def test_bad_input_exits_two(args: list[str], fragment: str) -> None:
    r = runner.invoke(app, ["check", *args])
    assert r.exit_code == 2
    assert r.stderr.startswith("Error: ") and fragment in r.stderr


def test_help() -> None:
    r = invoke("check", "--help")
    assert r.exit_code == 0
    for opt in (
        "--topology",
        "--mains",
        "--mains-tol",
        "--freq",
        "--cap",
        "--cap-tol",
        "--cap-loss",
        "--series-r",
        "--r-tol",
        "--bleeder",
        "--zener",
        "--zener-tol",
        "--zener-z",
        "--reservoir",
        "--load",
        "--load-r",
        "--diode-drop",
        "--ambient",
        "--profile",
        "--surge",
        "--json",
        "--db",
    ):
        assert opt in r.stdout


def test_harmonics_profile_json_and_line() -> None:
    r = invoke(*ISSUE_EXAMPLE[:-2], "--load", "5m", "--harmonics", "en50160", "--json")
    doc = json.loads(r.stdout)
    m = doc["mains"]
    # EN 50160 individual limits of the 3rd, 5th and 7th [M]
    assert [(h["order"], h["percent"], h["phase_deg"]) for h in m["harmonics"]] == [
        (3, 5.0, 0.0),
        (5, 6.0, 0.0),
        (7, 5.0, 0.0),
    ]
    assert m["thd"] == pytest.approx(0.0927, abs=1e-4) and "[M]" in m["harmonics_source"]
    assert m["max_peak_v"] == pytest.approx(253 * 2**0.5 * m["crest_factor"])
    assert doc["worst_case"]["max_line_current_rms_corner"]["thd"] == pytest.approx(m["thd"])
    text = invoke(*ISSUE_EXAMPLE[:-2], "--load", "5m", "--harmonics", "en50160").stdout
    line = [ln for ln in text.splitlines() if ln.startswith("Mains: ")]
    assert len(line) == 1
    assert "3rd 5 % 5th 6 % 7th 5 %" in line[0] and "THD 9.27 %" in line[0]
    assert "[M]" in line[0]


def test_no_harmonics_mains_section_is_a_sine() -> None:
    doc = json.loads(invoke("check", "--cap", "470n", "--json").stdout)
    m = doc["mains"]
    assert m["harmonics"] == [] and m["thd"] == 0.0 and m["crest_factor"] == 1.0
    assert "thd" not in doc["worst_case"]["min_dc_current_corner"]
    text = invoke("check", "--cap", "470n").stdout
    assert "pure sine" in text


def test_harmonics_custom_with_phase() -> None:
    doc = json.loads(
        invoke("check", "--cap", "470n", "--harmonics", "5:6@180, 2:1.5%", "--json").stdout
    )
    hs = doc["mains"]["harmonics"]
    assert [(h["order"], h["fraction"], h["phase_deg"]) for h in hs] == [
        (5, 0.06, 180.0),
        (2, 0.015, 0.0),
    ]


@pytest.mark.parametrize(
    "text, token",
    [
        ("5:6,7", "'7'"),
        ("x:6", "'x:6'"),
        ("5.5:6", "'5.5:6'"),
        ("5:abc", "'5:abc'"),
        ("1:5", "'1:5'"),
        ("45:1", "'45:1'"),
        ("5:40", "'5:40'"),
        ("5:6,5:2", "'5:2'"),
        ("5:6@x", "'5:6@x'"),
        ("en50161", "'en50161'"),
    ],
)
def test_bad_harmonics_exit_two(text: str, token: str) -> None:
    r = runner.invoke(app, ["check", "--cap", "330n", "--harmonics", text])
    assert r.exit_code == 2
    assert r.stderr.startswith("Error: --harmonics") and token in r.stderr
    # the valid forms are named
    assert "order:percent" in r.stderr and "en50160" in r.stderr


@pytest.mark.parametrize("command", ["check", "design", "audit"])
def test_harmonics_option_on_every_circuit_command(command: str) -> None:
    r = invoke(command, "--help")
    assert "--harmonics" in r.stdout


SURGE_EXAMPLE = [
    "check", "--mains", "230", "--cap", "330n", "--series-r", "47", "--bleeder", "1M",
    "--zener", "5.1", "--reservoir", "470u", "--load", "12m", "--surge", "2k",
]  # fmt: skip


def test_surge_json_keys_and_acceptance() -> None:
    # issue 11: the surge section keeps its keys and gains the whole-circuit stresses, each with
    # its corner and phase; with 47 ohm at 2 kV the bus peak is well above 5.1 V, with 470 ohm
    # it stays below 1.3 x 5.1 V (the default --vout-max, common practice [P])
    doc = json.loads(invoke(*SURGE_EXAMPLE, "--json").stdout)
    s = doc["surge"]
    old = {
        "level_v",
        "peak_current_a",
        "series_r_energy_j",
        "series_r_peak_voltage_v",
        "x_cap_voltage_step_v",
        "x_cap_dvdt_v_per_s",
        "i2t_a2s",
        "corner",
    }
    new = {
        "zener_peak_current_a",
        "zener_pulse_energy_j",
        "rectifier_peak_current_a",
        "rectifier_i2t_a2s",
        "fuse_i2t_a2s",
        "bus_peak_v",
        "x_cap_peak_total_v",
        "phase_deg",
        "vout_max_v",
        "bus_ok",
        "reservoir_esr_ohm",
        "corners",
    }
    assert old | new <= set(s)
    assert s["vout_max_v"] == pytest.approx(1.3 * 5.1)
    assert s["bus_peak_v"] > 2 * 5.1 and s["bus_ok"] is False
    assert s["phase_deg"] in (0.0, 90.0, 180.0, 270.0)
    assert {"phase_deg", "polarity", "cap_f", "r_ohm"} <= set(s["corners"]["bus_peak_v"])
    doc470 = json.loads(
        invoke(*[a if a != "47" else "470" for a in SURGE_EXAMPLE], "--json").stdout
    )
    assert doc470["surge"]["bus_peak_v"] < 1.3 * 5.1 and doc470["surge"]["bus_ok"] is True


def test_surge_bus_peak_refuses_the_values() -> None:
    # issue 11's done-when: 47 ohm at 2 kV lifts the 5.1 V bus far above 1.3 x 5.1 V (ngspice:
    # 9.5-14 V at 1-2 kV, the issue's table; our figure is checked in test_ngspice_surge.py), so
    # check must refuse the values, exit 1 and name the rule in text and JSON; 470 ohm passes it
    r = invoke(*SURGE_EXAMPLE)
    assert r.exit_code == 1
    verdict = [ln for ln in r.stdout.splitlines() if ln.startswith("bridge dropper:")]
    assert len(verdict) == 1
    assert verdict[0].startswith("bridge dropper: NOT ACCEPTED: surge bus peak")
    assert "(whole.bus_surge_peak)" in verdict[0]
    rj = invoke(*SURGE_EXAMPLE, "--json")
    doc = json.loads(rj.stdout)
    assert rj.exit_code == 1 and doc["ok"] is False
    assert [f["rule"] for f in doc["failures"]] == ["whole.bus_surge_peak"]
    args470 = [a if a != "47" else "470" for a in SURGE_EXAMPLE]
    r470 = invoke(*args470, "--json")
    doc470 = json.loads(r470.stdout)
    assert r470.exit_code == 0 and doc470["ok"] is True and doc470["failures"] == []
    assert "bridge dropper: ACCEPTED" in invoke(*args470).stdout


def test_verdict_follows_every_block_that_feeds_it() -> None:
    # the verdict reads the table, the standby line and the life figures: it comes after all
    # of them and before the cautions (which close every output)
    lines = invoke(*ISSUE_EXAMPLE, "--standby-limit", "0.1").stdout.splitlines()
    at = next(i for i, ln in enumerate(lines) if ln.startswith("bridge dropper:"))
    assert "(whole.min_current)" in lines[at] and "(whole.standby_power)" in lines[at]
    for head in ("Surge bus peak", "Life figures:", "No-load power", "Mains:"):
        assert next(i for i, ln in enumerate(lines) if ln.startswith(head)) < at
    assert at < lines.index("Safety cautions:")


def test_surge_options_reservoir_esr_zener_z_vout_max() -> None:
    base = json.loads(invoke(*SURGE_EXAMPLE, "--json").stdout)["surge"]
    doc = json.loads(
        invoke(
            *SURGE_EXAMPLE, "--reservoir-esr", "1", "--zener-z", "2", "--vout-max", "40", "--json"
        ).stdout
    )["surge"]
    assert doc["reservoir_esr_ohm"] == 1.0 and doc["zener_slope_ohm"] == 2.0
    assert doc["vout_max_v"] == 40.0 and doc["bus_ok"] is True
    assert doc["vout_max_default"] is False and base["vout_max_default"] is True
    # more ESR and a softer Zener: the bus rises higher (series resistances, circuit theory)
    assert doc["bus_peak_v"] > base["bus_peak_v"]
    table = invoke(*SURGE_EXAMPLE).stdout
    assert "Surge bus peak" in table and "Bus limit (--vout-max)" in table
    assert "default 1.3 x bus voltage (common practice)" in table
    r = runner.invoke(app, [*SURGE_EXAMPLE, "--reservoir-esr", "-1"])
    assert r.exit_code == 2
    # the bus limit shows in every output, also without a surge
    no_surge = [*SURGE_EXAMPLE[:-1], "0"]
    assert "Bus limit (--vout-max)" in invoke(*no_surge).stdout
    doc = json.loads(invoke(*no_surge, "--json").stdout)
    assert doc["vout_max_v"] == pytest.approx(1.3 * 5.1) and doc["vout_max_default"] is True
