"""`dropper parts ratings FILE`: the figures the rules would use per line, and their sources.

Files: tests/data/description_stock.csv (DEMO data, invented) and BOMs written here (invented).
Figures are checked against the units module's reading of the texts (IEC 60062 codes: 330R is
330 ohm) and against the catalogue's own family rows for the family defaults.
"""

from __future__ import annotations

import json
from pathlib import Path

from typer.testing import CliRunner

from selector.cli import app

DATA = Path(__file__).parent / "data"
DESCRIBED = DATA / "description_stock.csv"
runner = CliRunner()


def _json(*args: str) -> tuple[int, dict]:
    done = runner.invoke(app, ["parts", "ratings", *args, "--json"])
    return done.exit_code, json.loads(done.stdout)


def test_stock_list_figures_and_their_sources(catalogue_url):
    code, doc = _json(str(DESCRIBED), "--db", catalogue_url)
    assert code == 0 and doc["layout"] == "stock list" and doc["refused"] == []
    lines = {line["label"]: line for line in doc["lines"]}
    oxide = lines["TD-0202"]["figures"]  # "Metal oxide resistor 330R 2W 5% axial"
    assert oxide["value"] == {"value": 330.0, "source": "description"}  # IEC 60062: 330R
    assert oxide["power_w"] == {"value": 2.0, "source": "description"}
    assert oxide["pulse_energy_j"]["source"] == "family axial-metal-oxide"
    assert lines["TD-0101"]["figures"]["dvdt_v_per_s"]["source"] == "family x2-film"


def test_bom_figures_column_description_ratings_column_and_family(catalogue_url, tmp_path):
    bom = tmp_path / "bom.csv"
    bom.write_text(
        "Reference,Value,Description,Power,Ratings\n"
        "R1,330,metal oxide resistor axial 5%,2W,pulse_energy_j=1.5\n"
        "C1,330n,X2 film capacitor 305VAC 10%,,\n",
        encoding="utf-8",
    )
    code, doc = _json(str(bom), "--db", catalogue_url)
    assert code == 0 and doc["layout"] == "bom"
    r1, c1 = doc["lines"]
    assert r1["figures"]["value"] == {"value": 330.0, "source": "column"}
    assert r1["figures"]["power_w"] == {"value": 2.0, "source": "column"}
    assert r1["figures"]["tolerance"] == {"value": 0.05, "source": "description"}
    assert r1["figures"]["pulse_energy_j"] == {"value": 1.5, "source": "ratings column"}
    assert r1["figures"]["derate_start_c"]["source"].startswith("family ")
    assert c1["figures"]["rated_voltage_ac_v"] == {"value": 305.0, "source": "description"}
    assert c1["figures"]["dvdt_v_per_s"]["source"].startswith("family x")


def test_text_output_and_a_refused_line(catalogue_url, tmp_path):
    bom = tmp_path / "bom.csv"
    bom.write_text(
        "Reference,Value,Description\nR1,330,metal oxide resistor 2W\nC1,,X2 film capacitor\n",
        encoding="utf-8",
    )
    done = runner.invoke(app, ["parts", "ratings", str(bom), "--db", catalogue_url])
    assert done.exit_code == 2
    assert "Ratings the rules would use, bom.csv (bom):" in done.stdout
    assert "  row 2: R1 (resistor, family axial-metal-oxide)" in done.stdout
    assert "      power_w                     2 W  description" in done.stdout
    assert "invented demo model" in done.stdout
    assert f"refused: {bom}, row 3" in done.stderr


def test_help_text():
    done = runner.invoke(app, ["parts", "ratings", "--help"])
    assert done.exit_code == 0 and "--json" in done.stdout and "--db" in done.stdout
