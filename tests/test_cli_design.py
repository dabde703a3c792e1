"""`dropper design` in process: the issue's "done when" commands, JSON shape, BOM, exit codes.

Requirements are demo figures (invented) in the range of DOMAIN.md section 1.
"""

from __future__ import annotations

import csv
import json

import pytest
from typer.testing import CliRunner

from selector.cautions import CAUTIONS
from selector.cli import app

runner = CliRunner()

ROLES = {"x_capacitor", "series_resistor", "bleeder", "rectifier", "zener", "reservoir"}


def invoke(*args: str):
    return runner.invoke(app, list(args))


def test_cheapest_set_with_checks_and_cautions(catalogue_url):
    r = invoke(
        "design", "--load", "12m", "--vout", "5.1", "--mains", "230", "--freq", "50,60",
        "--db", catalogue_url,
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    out = r.stdout
    # the life and duty line (issue 10) comes first, then the design
    assert out.startswith("Life: 87600 h (10 y)")
    assert out.splitlines()[1].startswith("Design 1 of 1 (")
    assert "demo price model, invented" in out
    for role in ROLES:
        assert f"  {role} " in out
    assert "worst case:" in out and "min DC current" in out
    assert "checks (binding: " in out
    assert "whole.min_current" in out and "EU Regulation 2023/826" in out
    assert "IEC 60384-14" in out
    assert out.rstrip().endswith(CAUTIONS[-1])
    assert "Safety cautions:" in out


def test_top_three_json(catalogue_url):
    r = invoke(
        "design", "--load", "12m", "--vout", "5.1", "--mains", "230", "--freq", "50,60",
        "--top", "3", "--json", "--db", catalogue_url,
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    designs = doc["designs"]
    assert [d["rank"] for d in designs] == [1, 2, 3]
    prices = [d["total_price"] for d in designs]
    assert prices == sorted(prices)
    assert doc["cautions"] == list(CAUTIONS)
    for d in designs:
        assert set(d) >= {
            "rank", "topology", "total_price", "total_area_mm2", "parts", "effective",
            "worst_case", "checks",
        }  # fmt: skip
        assert {p["role"] for p in d["parts"]} >= ROLES
        for p in d["parts"]:
            assert set(p) >= {"role", "code", "value", "qty", "arrangement", "unit_price"}
            assert p["arrangement"] in {"single", "series", "parallel", "bridge"}
        assert set(d["effective"]) == {
            "x_capacitance_f", "series_resistance_ohm", "bleeder_resistance_ohm",
            "zener_voltage_v", "zener_power_rating_w", "reservoir_f",
        }  # fmt: skip
        assert d["worst_case"]["min_dc_current_a"] >= 0.012 * 1.1
        assert all(c["ok"] for c in d["checks"])
        assert {"rule", "part", "stress", "limit", "margin", "ok", "source"} <= set(d["checks"][0])
    # three distinct sets
    assert len({tuple((p["code"], p["qty"]) for p in d["parts"]) for d in designs}) == 3


def test_impossible_request_exits_1_naming_rule_and_relaxation(catalogue_url):
    r = invoke("design", "--load", "1", "--vout", "5.1", "--mains", "230", "--db", catalogue_url)
    assert r.exit_code == 1
    assert r.stderr.startswith("Error: blocked by rule whole.min_current")
    assert "relax: a load of at most" in r.stderr and "checked" in r.stderr
    assert r.stderr.count("\n") == 1


def test_bom_file(catalogue_url, tmp_path):
    bom = tmp_path / "bom.csv"
    r = invoke(
        "design", "--load", "8m", "--vout", "5.1", "--mains", "230", "--freq", "50",
        "--bom", str(bom), "--db", catalogue_url,
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    rows = list(csv.DictReader(bom.open(encoding="utf-8")))
    assert list(rows[0]) == [
        "Reference", "Value", "Qty", "Description", "Footprint", "Role",
        "Catalogue code", "Supplier", "Ratings", "Price note",
    ]  # fmt: skip
    assert {row["Role"] for row in rows} >= ROLES
    x = next(row for row in rows if row["Role"] == "x_capacitor")
    assert "VAC" in x["Description"] and x["Description"].startswith("X")
    assert f"written to {bom}" in r.stdout


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--minimize", "weight"], "unknown objective"),
        (["--topology", "full"], "unknown topology"),
        (["--exclude", "nosuch-family"], "no family 'nosuch-family'"),
        (["--burst", "30m/5ms"], "--burst"),
        (["--zener", "7.77"], "no such Zener voltage"),
    ],
)
def test_bad_input_exit_2(catalogue_url, args, message):
    r = invoke("design", "--load", "10m", "--vout", "5.1", "--db", catalogue_url, *args)
    assert r.exit_code == 2, r.output
    assert r.stderr.startswith("Error: ") and message in r.stderr


def test_policy_file_bad_key_exit_2(catalogue_url, tmp_path):
    p = tmp_path / "p.toml"
    p.write_text("zener_fraction = 0.3\n", encoding="utf-8")
    r = invoke("design", "--load", "10m", "--vout", "5.1", "--policy", str(p), "--db",
               catalogue_url)  # fmt: skip
    assert r.exit_code == 2
    assert str(p) in r.stderr and "zener_fraction" in r.stderr and "valid keys" in r.stderr


def test_policy_file_changes_the_result(catalogue_url, tmp_path):
    # a stricter load margin needs more current: the chosen minimum current must follow
    p = tmp_path / "strict.toml"
    p.write_text("load_margin = 0.5\n", encoding="utf-8")
    r = invoke("design", "--load", "10m", "--vout", "5.1", "--json", "--policy", str(p),
               "--db", catalogue_url)  # fmt: skip
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    assert doc["policy"]["load_margin"] == 0.5
    assert doc["designs"][0]["worst_case"]["min_dc_current_a"] >= 0.015


def test_burst_compact_form(catalogue_url):
    r = invoke("design", "--load", "5m", "--vout", "5.1", "--burst", "30m/5ms/1s", "--json",
               "--db", catalogue_url)  # fmt: skip
    assert r.exit_code == 0, r.output
    d = json.loads(r.stdout)["designs"][0]
    holdup = next(c for c in d["checks"] if c["rule"] == "whole.burst_holdup")
    assert holdup["ok"]


def test_help_text():
    r = invoke("design", "--help")
    assert r.exit_code == 0
    for opt in (
        "--load",
        "--vout",
        "--topology",
        "--minimize",
        "--top",
        "--policy",
        "--bom",
        "--smd-only",
        "--tht-only",
        "--exclude",
        "--stock-only",
        "--zener",
        "--regulator",
        "--burst",
        "--json",
        "--db",
        "--mains",
        "--freq",
        "--surge",
    ):
        assert opt in r.stdout


@pytest.mark.parametrize("limit", [["--standby-limit", "0.5"], ["--product-class", "standby"]])
def test_standby_limit_blocks_a_12v_20ma_supply(limit):
    # EU Regulation 2023/826: off/standby <= 0.5 W [S], for a product with a standby mode. At
    # no load a 12 V dropper sized for 20 mA (+10 % margin, low corner) dumps about 12.6 V x
    # 40 mA ~ 0.5 W in the Zener at the high corner, plus the series resistor and bleeder, so
    # no set passes: the error must name the whole-supply rule, not a part.
    result = runner.invoke(
        app, ["design", "--load", "20m", "--vout", "12", "--mains", "230", "--freq", "50", *limit]
    )
    assert result.exit_code == 1
    assert "blocked by rule whole.standby_power" in result.stderr
    assert "relax:" in result.stderr


def test_without_a_standby_limit_the_same_supply_is_designed():
    # the scope of the limit (DOMAIN.md section 10): with no product class the no-load power is
    # computed and shown next to the common 0.5 W limit (EU 2023/826), not judged
    result = runner.invoke(
        app, ["design", "--load", "20m", "--vout", "12", "--mains", "230", "--freq", "50"]
    )
    assert result.exit_code == 0, result.stderr
    line = next(x for x in result.stdout.splitlines() if "whole.standby_power" in x)
    assert line.split()[0] == "pass" and "above the common 0.5 W limit" in line
    doc = json.loads(
        runner.invoke(
            app,
            ["design", "--load", "20m", "--vout", "12", "--mains", "120", "--freq", "60",
             "--json"],
        ).stdout
    )  # fmt: skip
    assert doc["designs"] and doc["policy"]["standby_limit_w"] is None
    d = doc["designs"][0]
    assert d["worst_case"]["no_load_real_power_w"] > 0.5


def test_harmonics_reach_the_exact_verification(catalogue_url):
    """design --harmonics: every proposed set is verified by the engine on the distorted mains
    (the corner of the largest line current is the distorted wave's: I_h = h w C V_h)."""
    r = invoke(
        "design", "--load", "10m", "--vout", "12", "--harmonics", "en50160", "--json",
        "--db", catalogue_url,
    )  # fmt: skip
    assert r.exit_code == 0, r.output
    doc = json.loads(r.stdout)
    assert doc["mains"]["thd"] == pytest.approx(0.0927, abs=1e-4)
    w = doc["designs"][0]["worst_case"]
    assert w["max_line_current_rms_corner"]["thd"] == pytest.approx(doc["mains"]["thd"])


def test_a_reservoir_that_cannot_last_the_life_is_refused_by_its_rule():
    # 10-degree rule with the 15 x cap [M]: without the long-life family no electrolytic (85 C
    # or 105 C at 2000 h, at most 30000 h) lasts 10 years at 40 C; the refusal names the rule
    result = runner.invoke(
        app, ["design", "--load", "10m", "--vout", "5.1", "--exclude", "alu-105c-long"]
    )
    assert result.exit_code == 1
    assert "blocked by rule reservoir.life" in result.stderr
    # a 25000 h life is within 15 x 2000 h: designed
    result = runner.invoke(
        app,
        ["design", "--load", "10m", "--vout", "5.1", "--exclude", "alu-105c-long", "--life",
         "25kh", "--json"],
    )  # fmt: skip
    assert result.exit_code == 0, result.stderr
    d = json.loads(result.stdout)["designs"][0]
    life = d["life"]
    assert life["target_life_h"] == 25000.0 and life["switch_ons"] == 30000.0
    assert life["reservoir_life_h"] >= 25000.0
    assert life["end_of_life_min_dc_current_a"] >= 0.010 * 1.1
    assert 0 <= life["x_cap_loss_fraction"] < 1
    assert life["reservoir_core_temp_c"] >= 40.0
    res = next(p for p in d["parts"] if p["role"] == "reservoir")
    assert res["rated_life_h"] == 2000.0
    x = next(p for p in d["parts"] if p["role"] == "x_capacitor")
    assert x["humidity_grade"] in ("I", "II", "III")
