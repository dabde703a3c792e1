"""Stock lists whose rows carry only a description: read by the BOM reader of `dropper audit`.

tests/data/description_stock.csv is DEMO data, invented (codes, prices and stock counts of no
real supplier; the layout is the one of issue 12: supplier SKU, description, price, on hand).
Outside references named at each check: IEC 60062 (the letter-and-digit code, ``330R`` is
330 ohm, ``4k7`` 4.7 kohm), IEC 60384-14 (X2 is a safety subclass), and the units module as the
one reader of engineering notation.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from sqlalchemy import select
from typer.testing import CliRunner

from selector.audit.rated_parts import ROLE_KINDS, rule_fields
from selector.catalogue.db import make_engine
from selector.catalogue.importer import import_stock
from selector.catalogue.models import Part
from selector.catalogue.stock_described import PROVENANCE_FIELDS, read_description
from selector.cli import app
from selector.units import parse_tolerance, parse_value

DATA = Path(__file__).parent / "data"
DESCRIBED = DATA / "description_stock.csv"


@pytest.fixture
def engine(catalogue_copy_url):
    eng = make_engine(catalogue_copy_url)
    yield eng
    eng.dispose()


def _rows() -> tuple[list[str], list[list[str]]]:
    with DESCRIBED.open(encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


def _write(path: Path, header: list[str], rows: list[list[str]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(header)
        writer.writerows(rows)
    return path


def _stored(engine, supplier: str) -> dict[str, dict]:
    with engine.connect() as conn:
        rows = conn.execute(
            select(Part.__table__).where(Part.source == f"import:{supplier}")
        ).mappings()
        return {row["supplier_code"]: dict(row) for row in rows}


def test_every_description_only_row_is_recognised(engine):
    header, rows = _rows()
    result = import_stock(engine, DESCRIBED, supplier="trial")
    assert result.problems == [] and result.written
    assert result.inserted == len(rows)
    stored = _stored(engine, "trial")
    # the four lines of issue 12 (the Zener ties 1 W and 5 W by its words: the stated 1 W and
    # DO-41 decide)
    assert stored["TD-0103"]["family"] == "x2-film"
    assert stored["TD-0202"]["family"] == "axial-metal-oxide"
    assert stored["TD-0302"]["family"] == "zener-1w"
    assert stored["TD-0601"]["family"] == "fuse-5x20-slow"
    assert result.provenance["value"]["description"] == len(rows)


def test_figures_read_from_the_description(engine):
    import_stock(engine, DESCRIBED, supplier="trial")
    stored = _stored(engine, "trial")
    x2 = stored["TD-0103"]  # "X2 film capacitor 0.47uF 310VAC 10% pitch 22.5mm"
    assert x2["value"] == pytest.approx(parse_value("470n", "F"))  # units module
    assert x2["rated_voltage_ac_v"] == 310.0
    assert x2["tolerance"] == pytest.approx(parse_tolerance("K"))  # IEC 60062: K = 10 %
    assert x2["safety_class"] == "X2"  # IEC 60384-14 subclass
    assert x2["pitch_mm"] == 22.5
    assert stored["TD-0101"]["pitch_mm"] == 15.0
    oxide = stored["TD-0202"]  # "Metal oxide resistor 330R 2W 5% axial"
    assert oxide["value"] == 330.0  # IEC 60062: 330R is 330 ohm
    assert oxide["power_w"] == 2.0
    assert oxide["tolerance"] == pytest.approx(parse_tolerance("J"))  # IEC 60062: J = 5 %
    zener = stored["TD-0302"]  # "Zener diode 12V 1W 5% DO-41"
    assert (zener["value"], zener["power_w"], zener["package"]) == (12.0, 1.0, "DO-41")
    fuse = stored["TD-0601"]  # "Time-lag fuse 315mA 250VAC 5x20"
    assert fuse["value"] == pytest.approx(parse_value("315m", "A"))
    assert fuse["rated_voltage_ac_v"] == 250.0
    life = stored["TD-0503"]  # "... 220uF 25V 20% 105C 10000h radial"
    assert (life["rated_voltage_v"], life["temp_max_c"], life["rated_life_h"]) == (
        25.0,
        105.0,
        10000.0,
    )
    rectifier = stored["TD-0402"]  # "Silicon rectifier diode 1A 1000V axial DO-41"
    assert (rectifier["value"], rectifier["vrrm_v"]) == (1.0, 1000.0)


def test_provenance_counts_each_source(engine, tmp_path):
    # one row with a value column that wins over its description's figure, one without
    header = ["SKU", "Description", "Value", "Price"]
    rows = [
        ["A1", "Metal oxide resistor 330R 2W 5% axial", "470R", "0.05"],
        ["A2", "Metal oxide resistor 330R 2W 5% axial", "", "0.05"],
    ]
    path = _write(tmp_path / "mixed.csv", header, rows)
    result = import_stock(engine, path, supplier="mixed")
    assert result.problems == []
    assert result.provenance["value"] == {"column": 1, "description": 1, "family": 0, "none": 0}
    assert result.provenance["power_w"]["description"] == 2
    assert result.provenance["pulse_energy_j"]["family"] == 2  # the family default
    stored = _stored(engine, "mixed")
    assert (stored["A1"]["value"], stored["A2"]["value"]) == (470.0, 330.0)


def test_a_row_without_any_value_is_refused_naming_file_row_and_column(engine, tmp_path):
    header, rows = _rows()
    rows[2][1] = "Metal oxide resistor 2W 5% axial"  # no resistance anywhere
    path = _write(tmp_path / "novalue.csv", header, rows)
    result = import_stock(engine, path, supplier="trial")
    assert not result.written
    assert len(result.problems) == 1
    problem = result.problems[0]
    assert (problem.file, problem.row, problem.column) == (str(path), 4, "Description")
    assert "resistance" in problem.problem
    assert result.refused_by_column() == {"Description": 1}


def test_a_class_in_the_description_must_fit_the_family(engine, tmp_path):
    header = ["SKU", "Family", "Description", "Price"]
    rows = [["B1", "x2-film", "X1 film capacitor 0.47uF 440VAC", "0.3"]]
    result = import_stock(engine, _write(tmp_path / "x.csv", header, rows), supplier="x")
    assert [p.column for p in result.problems] == ["Description"]
    assert "contradicts family x2-film" in result.problems[0].problem


def test_zener_families_are_told_apart_by_the_stated_power(engine, tmp_path):
    header = ["SKU", "Description", "Price"]
    rows = [
        ["Z1", "Zener diode 12V 1W 5% DO-41", "0.03"],
        ["Z5", "Zener diode 12V 5W 5% DO-201", "0.20"],
    ]
    import_stock(engine, _write(tmp_path / "z.csv", header, rows), supplier="z")
    stored = _stored(engine, "z")
    assert (stored["Z1"]["family"], stored["Z5"]["family"]) == ("zener-1w", "zener-5w")


def test_reimport_without_one_row_withdraws_it(engine, tmp_path):
    header, rows = _rows()
    import_stock(engine, DESCRIBED, supplier="trial")
    shorter = _write(tmp_path / "shorter.csv", header, rows[1:])
    result = import_stock(engine, shorter, supplier="trial")
    assert (result.withdrawn, result.unchanged) == (1, len(rows) - 1)
    assert _stored(engine, "trial")[rows[0][0]]["withdrawn"]


def test_the_importer_reads_descriptions_with_the_audit_reader():
    # one reader: what the importer reads is what `dropper audit` reads from a BOM line
    from selector.audit.ratings import read_ratings

    text = "Zener diode 12V 1W 5% DO-41"
    assert read_description(text, "zener") == read_ratings("", "", text, kind="zener")


def test_provenance_fields_cover_every_rating_the_rules_read():
    fields = rule_fields()
    for role, (_, kind) in ROLE_KINDS.items():
        if kind == "capacitor":
            kind = "x_capacitor"
        missing = set(fields.get(role, ())) - set(PROVENANCE_FIELDS[kind])
        if role == "fuse":
            missing -= {"power_w"}  # a fusible resistor serving as the fuse, not a fuse
        if role == "rectifier":
            missing -= {"if_av_a"}  # a diode's value is its IF(AV)
        assert not missing, (role, missing)


def test_cli_prints_where_the_figures_came_from(catalogue_copy_url, tmp_path):
    runner = CliRunner()
    done = runner.invoke(
        app, ["parts", "import", str(DESCRIBED), "--supplier", "trial", "--db", catalogue_copy_url]
    )
    assert done.exit_code == 0, done.output
    lines = done.stdout.splitlines()
    assert "Where the figures came from (rows: column / description / family default):" in lines
    _, rows = _rows()
    assert f"  value               0 / {len(rows)} / 0" in lines
    doc = json.loads(
        runner.invoke(
            app,
            ["parts", "import", str(DESCRIBED), "--supplier", "trial", "--json",
             "--db", catalogue_copy_url],
        ).stdout
    )  # fmt: skip
    assert doc["provenance"]["value"]["description"] == len(rows)
    assert doc["refused_by_column"] == {}


def test_a_package_named_in_the_description_picks_the_family_package(engine):
    import_stock(engine, DESCRIBED, supplier="trial")
    stored = _stored(engine, "trial")
    melf = stored["TD-0207"]  # "Thin film MELF resistor 470k 0207 1%"
    # generic MELF 0207 data, DOMAIN.md table 5: 1/2-1 W, 300-350 V (not the 0204's 1/4 W)
    assert (melf["package"], melf["power_w"], melf["limiting_voltage_v"]) == ("0207", 0.5, 300.0)
    assert stored["TD-0206"]["package"] == "1206"


def test_stock_only_design_from_a_description_only_list(catalogue_copy_url):
    runner = CliRunner()
    done = runner.invoke(
        app, ["parts", "import", str(DESCRIBED), "--supplier", "trial", "--db", catalogue_copy_url]
    )
    assert done.exit_code == 0, done.output
    # a one-year, dry life that the demo list's grade I X2 parts can meet (Peck's model)
    made = runner.invoke(
        app,
        ["design", "--load", "10m", "--vout", "5.1", "--stock-only", "--life", "1y",
         "--humidity", "40", "--json", "--db", catalogue_copy_url],
    )  # fmt: skip
    assert made.exit_code == 0, made.output
    parts = json.loads(made.stdout)["designs"][0]["parts"]
    assert parts and all(part["code"].startswith("S:trial:") for part in parts)
