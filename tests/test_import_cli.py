"""`dropper parts import` in process: the mapping shown, counts, refused rows, exit codes.

The stock list is tests/data/demo_stock.xlsx: DEMO data, invented.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

from typer.testing import CliRunner

from selector.cli import app

DATA = Path(__file__).parent / "data"
DEMO_XLSX = DATA / "demo_stock.xlsx"
DEMO_CSV = DATA / "demo_stock.csv"

runner = CliRunner()


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_import_twice_text_output(catalogue_copy_url):
    first = invoke(
        "parts", "import", str(DEMO_XLSX), "--supplier", "demo", "--db", catalogue_copy_url
    )
    assert first.exit_code == 0, first.output
    lines = first.stdout.splitlines()
    assert lines[0] == "Columns of demo_stock.xlsx:"
    assert "  Stock code   ->  supplier_code  (match 100)" in lines
    assert "  Price 1000   ->  price at 1000+ pcs" in lines
    assert "  Remark       ->  (ignored)" in lines
    assert lines[-1] == (
        "38 rows: 38 new, 0 changed, 0 unchanged, 0 refused; 0 withdrawn; "
        "supplier 'demo' (source import:demo)."
    )
    second = invoke(
        "parts", "import", str(DEMO_XLSX), "--supplier", "demo", "--db", catalogue_copy_url
    )
    assert second.exit_code == 0
    assert second.stdout.splitlines()[-1].startswith("38 rows: 0 new, 0 changed, 38 unchanged")


def test_import_json(catalogue_copy_url):
    result = invoke(
        "parts", "import", str(DEMO_CSV), "--json", "--dry-run", "--db", catalogue_copy_url
    )
    assert result.exit_code == 0
    doc = json.loads(result.stdout)
    assert doc["supplier"] == "demo_stock" and doc["source"] == "import:demo_stock"
    assert (doc["inserted"], doc["written"], doc["dry_run"]) == (38, False, True)
    assert doc["families"]["x2-film"] == 6
    assert {
        "header": "On hand",
        "field": "stock",
        "score": 100.0,
        "how": "fuzzy",
        "min_qty": None,
    } in doc["mapping"]


def _bad_csv(tmp_path: Path) -> Path:
    with DEMO_CSV.open(encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    rows[2][rows[0].index("Category")] = "tantalum capacitor"
    path = tmp_path / "bad.csv"
    with path.open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows(rows[:4])
    return path


def test_refused_rows_exit_2_and_partial_exit_1(catalogue_copy_url, tmp_path):
    path = _bad_csv(tmp_path)
    result = invoke("parts", "import", str(path), "--db", catalogue_copy_url)
    assert result.exit_code == 2
    assert (
        f"refused: {path}, row 3, column 'Category': family 'tantalum capacitor' not "
        "recognised; nearest: " in result.stderr
    )
    assert "nothing written" in result.stderr
    partial = invoke("parts", "import", str(path), "--partial", "--db", catalogue_copy_url)
    assert partial.exit_code == 1
    assert partial.stdout.splitlines()[-1].startswith(
        "3 rows: 2 new, 0 changed, 0 unchanged, 1 refused"
    )


def test_map_option_and_its_error(catalogue_copy_url, tmp_path):
    path = tmp_path / "odd.csv"
    path.write_text("Thing,Ref,Sort,Cost\n330n,A1,x2-film,0.2\n", encoding="utf-8")
    ok = invoke(
        "parts", "import", str(path), "--map", "Thing=value", "--map", "Sort=family",
        "--map", "Ref=supplier_code", "--db", catalogue_copy_url,
    )  # fmt: skip
    assert ok.exit_code == 0, ok.output
    assert "  Thing  ->  value  (--map)" in ok.stdout
    bad = invoke("parts", "import", str(path), "--map", "Thing", "--db", catalogue_copy_url)
    assert bad.exit_code == 2
    assert bad.stderr.startswith("Error: --map 'Thing': write it as COLUMN=FIELD")


def test_progress_bar_for_big_lists(catalogue_copy_url, tmp_path):
    path = tmp_path / "big.csv"
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(["SKU", "Family", "Value", "Package", "Stock", "Unit price"])
        for i in range(2500):
            w.writerow([f"B{i}", "chip-thick-film", f"{100 + i}", "0603", 10, 0.001])
    result = invoke("parts", "import", str(path), "--db", catalogue_copy_url)
    assert result.exit_code == 0
    assert "importing big.csv" in result.stderr
    assert "2500 new" in result.stdout


def test_help_text():
    result = invoke("parts", "import", "--help")
    assert result.exit_code == 0
    assert "Import your own stock list" in result.stdout
