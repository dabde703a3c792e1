"""Ordinary bad BOMs exit 2 with file/row/column, never 3 (issue 14). Demo BOM: invented data."""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest
from typer.testing import CliRunner

from selector.cli import app

DATA = Path(__file__).parent / "data"
runner = CliRunner()


@pytest.mark.parametrize(
    "qty_or_ref",
    [
        '"R1, R2",inf,',
        '"R1, R2",nan,',
        '"R1, R2",' + "9" * 400 + ",",
        '"R1-R' + "9" * 5000 + '",2,',
    ],
)
def test_hostile_qty_and_designators_exit_2(tmp_path, qty_or_ref, catalogue_url):
    src = (DATA / "audit_vent_sound.csv").read_text()
    path = tmp_path / "bom.csv"
    path.write_text(src.replace('"R1, R2",2,', qty_or_ref, 1))
    r = runner.invoke(app, ["audit", str(path), "--load", "10m", "--db", catalogue_url])
    assert r.exit_code == 2, r.stderr
    lines = r.stderr.splitlines()
    assert len(lines) == 1 and "row 4" in lines[0] and len(lines[0]) < 300


def test_xlsx_with_a_cell_at_the_last_row_and_column_is_bounded(tmp_path, catalogue_url):
    book = openpyxl.load_workbook(DATA / "audit_vent_fault_no_bleeder.xlsx")
    book.active.cell(row=1048576, column=16384).value = "x"
    path = tmp_path / "big.xlsx"
    book.save(path)
    r = runner.invoke(app, ["audit", str(path), "--load", "10m", "--db", catalogue_url])
    assert r.exit_code == 2 and "row 1048576" in r.stderr
