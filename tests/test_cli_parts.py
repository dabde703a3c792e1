"""`dropper parts build | find | stats` in process: exact output and exit codes.

The rows shown come from the built-in catalogue (its outside checks are in test_catalogue.py);
the exact texts below are regression pins of the output format and of the invented demo prices.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from selector.catalogue import builtin_rows
from selector.cli import app

runner = CliRunner()


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_find_exact_output(catalogue_url):
    result = invoke("parts", "find", "x2 330n 305", "--limit", "2", "--db", catalogue_url)
    assert result.exit_code == 0
    assert result.stdout == (
        "code                       kind         value   ratings                           "
        "package     price\n"
        "xcap.x2.305vac.330n.20pct  x_capacitor  330 nF  X2 305 VAC ±20 %, 2.5 kV impulse  "
        "box P22.5  0.1056\n"
        "xcap.x2.305vac.330n.10pct  x_capacitor  330 nF  X2 305 VAC ±10 %, 2.5 kV impulse  "
        "box P22.5  0.1141\n"
        "Prices: demo price model, invented.\n"
    )


def test_find_x2_330n_lists_real_rows(catalogue_url):
    result = invoke("parts", "find", "x2 330n", "--db", catalogue_url)
    assert result.exit_code == 0
    lines = result.stdout.splitlines()
    rows = lines[1:-1]
    assert len(rows) == 8  # 3 voltages x K/M of x2-film + 2 voltages of x2-film-humid
    assert all(" x_capacitor  330 nF  X2 " in line for line in rows)


def test_find_json(catalogue_url):
    result = invoke("parts", "find", "4k7 1206", "--json", "--db", catalogue_url)
    assert result.exit_code == 0
    doc = json.loads(result.stdout)
    assert doc["count"] == 1
    (part,) = doc["parts"]
    assert part["code"] == "res.thick.1206.4k7.5pct"
    assert part["value"] == 4700.0 and part["value_unit"] == "ohm"  # SI
    assert part["power_w"] == 0.25 and part["limiting_voltage_v"] == 200.0
    assert part["price_note"] == "demo price model, invented"
    assert doc["query"]["text"] == "4k7 1206"


def test_find_options(catalogue_url):
    result = invoke(
        "parts",
        "find",
        "--kind",
        "zener",
        "--value",
        "5.1",
        "--min-power",
        "3W",
        "--json",
        "--db",
        catalogue_url,
    )
    assert result.exit_code == 0
    codes = [p["code"] for p in json.loads(result.stdout)["parts"]]
    assert codes == ["zener.smd.3w.5v1.5pct", "zener.tht.5w.5v1.5pct"]


def test_find_bad_kind_is_one_error_line(catalogue_url):
    result = invoke("parts", "find", "--kind", "zenr", "--db", catalogue_url)
    assert result.exit_code == 2
    assert result.stdout == ""
    assert result.stderr.count("\n") == 1
    assert result.stderr.startswith(
        "Error: unknown kind 'zenr'; did you mean 'zener'? valid kinds:"
    )


@pytest.mark.parametrize(
    "args",
    [
        ("--value", "abc"),
        ("--min-voltage", "lots"),
        ("--limit", "0"),
    ],
)
def test_find_bad_input_exits_2(catalogue_url, args):
    result = invoke("parts", "find", *args, "--db", catalogue_url)
    assert result.exit_code == 2
    assert result.stderr.startswith("Error: ") and result.stderr.count("\n") == 1


def test_find_nothing_exits_1(catalogue_url):
    result = invoke("parts", "find", "qqqzzz", "--db", catalogue_url)
    assert result.exit_code == 1
    assert result.stdout == "No part matches.\n"


def test_bad_db_url_exits_2():
    result = invoke("parts", "stats", "--db", "nosuchdialect://host/x")
    assert result.exit_code == 2
    assert result.stderr.startswith("Error: cannot open catalogue")


def test_stats_json(catalogue_url):
    result = invoke("parts", "stats", "--json", "--db", catalogue_url)
    assert result.exit_code == 0
    doc = json.loads(result.stdout)
    assert doc["parts"] == len(builtin_rows())
    assert doc["price_model"] == "demo price model, invented"
    assert doc["kinds"]["bridge"] == 4 and doc["url"] == catalogue_url


def test_stats_human(catalogue_url):
    result = invoke("parts", "stats", "--db", catalogue_url)
    assert result.exit_code == 0
    lines = result.stdout.splitlines()
    n = len(builtin_rows())
    assert lines[0] == f"Catalogue {catalogue_url}"
    assert lines[1].endswith(f"; {n} parts ({n} builtin).")
    assert "bridge-db          bridge          builtin      2  0.0700 - 0.0800" in lines
    assert lines[-1] == f"Prices and board areas: demo price model, invented ({n} parts)."


def test_build(empty_db_url):
    result = invoke("parts", "build", "--json", "--db", empty_db_url)
    assert result.exit_code == 0
    doc = json.loads(result.stdout)
    assert doc["builtin_parts"] == len(builtin_rows()) and doc["imported_parts"] == 0
    result = invoke("parts", "build", "--db", empty_db_url)
    assert result.exit_code == 0
    first = result.stdout.splitlines()[0]
    assert first.startswith(f"Built {len(builtin_rows())} built-in parts in {empty_db_url} in ")
    assert first.endswith("; 0 imported parts kept.")
    assert result.stdout.splitlines()[1] == "Prices and board areas: demo price model, invented."


def test_default_database_comes_from_the_environment(monkeypatch, tmp_path):
    path = tmp_path / "env.sqlite"
    monkeypatch.setenv("DROPPER_DB", str(path))
    result = invoke("parts", "find", "bridge", "--limit", "1", "--json")
    assert result.exit_code == 0
    assert path.exists()
    assert "Building the built-in catalogue" in result.stderr


@pytest.mark.parametrize("command", ["build", "find", "stats"])
def test_every_parts_command_has_help(command):
    result = invoke("parts", command, "--help")
    assert result.exit_code == 0
    assert "--db" in result.stdout and "--json" in result.stdout
    from selector.cli.parts import parts_app

    for info in parts_app.registered_commands:
        assert (info.callback.__doc__ or "").strip()
