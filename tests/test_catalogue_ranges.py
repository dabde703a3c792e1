"""Poisoned catalogue rows (issue 14): refused at import with file/row/column, and when already
stored, skipped with a warning naming them, so one row cannot break every design.

The stock rows below are invented test data (demo codes, no maker's part numbers).
"""

from __future__ import annotations

import math

import pytest
from sqlalchemy import text
from typer.testing import CliRunner

from selector.catalogue import catalogue_frame
from selector.catalogue.db import make_engine
from selector.catalogue.importer import import_stock
from selector.catalogue.row_ranges import drop_unusable_rows, out_of_range_columns
from selector.cli import app

runner = CliRunner()
HEADER = "Stock code,Category,Value,Tol.,Voltage,Power,On hand,Price 1\n"
GOOD = "DX-GOOD,X2 film capacitor,330n,K,305,,100,0.2\n"


@pytest.mark.parametrize(
    "row, column",
    [
        ("DX-A,X2 film capacitor,330n,K,1e999,,100,0.2", "Voltage"),  # issue 14
        ("DX-B,X2 film capacitor,1e9F,K,305,,100,0.2", "Value"),  # a gigafarad
        ("DX-C,X2 film capacitor,1e-320,K,305,,100,0.2", "Value"),  # a denormal
        ("DX-D,X2 film capacitor,330n,inf,305,,100,0.2", "Tol."),
        ("DX-E,X2 film capacitor,330n,-50%,305,,100,0.2", "Tol."),
        ("DX-F,X2 film capacitor,330n,200%,305,,100,0.2", "Tol."),
        ("DX-G,X2 film capacitor,330n,K,305,,1e30,0.2", "On hand"),  # a stock of 1e30
        ("DX-H,X2 film capacitor,330n,K,305,,100,1e999", "Price 1"),
        ("DX-I,chip resistor,1k,F,,1e999W,100,0.01", "Power"),  # issue 14
    ],
)
def test_import_refuses_non_finite_and_out_of_range_cells(
    catalogue_copy_url, tmp_path, row, column
):
    path = tmp_path / "stock.csv"
    path.write_text(HEADER + GOOD + row + "\n", encoding="utf-8")
    engine = make_engine(catalogue_copy_url)
    try:
        result = import_stock(engine, path, "lab")
    finally:
        engine.dispose()
    assert not result.written
    assert [(p.row, p.column) for p in result.problems] == [(3, column)], result.problems


def test_stored_poisoned_rows_are_skipped_and_named(catalogue_copy_url):
    engine = make_engine(catalogue_copy_url)
    try:
        with engine.begin() as conn:
            codes = [
                r[0]
                for r in conn.execute(
                    text("SELECT code FROM parts WHERE kind = 'x_capacitor' ORDER BY code LIMIT 3")
                )
            ]
            conn.execute(
                text("UPDATE parts SET rated_voltage_ac_v = :v WHERE code = :c"),
                {"v": math.inf, "c": codes[0]},
            )
            conn.execute(
                text("UPDATE parts SET tolerance = :v WHERE code = :c"), {"v": -0.5, "c": codes[1]}
            )
            conn.execute(
                text("UPDATE parts SET value = :v WHERE code = :c"), {"v": 1e9, "c": codes[2]}
            )
    finally:
        engine.dispose()
    frame = catalogue_frame(catalogue_copy_url)
    assert not set(codes) & set(frame["code"])
    skipped = frame.attrs["skipped_parts"]
    assert len(skipped) == 3 and all(any(c in s for s in skipped) for c in codes)
    # and a design on that catalogue still runs, warning about each row (exit 0 or 1, not 2/3)
    r = runner.invoke(
        app, ["design", "--load", "10m", "--vout", "5.1", "--db", catalogue_copy_url, "--json"]
    )
    assert r.exit_code in (0, 1), r.stderr
    warnings = [line for line in r.stderr.splitlines() if line.startswith("Warning:")]
    assert len(warnings) == 3 and all(any(c in w for w in warnings) for c in codes)


def test_out_of_range_columns_names_each_bad_column():
    row = {"kind": "resistor", "value": 1e3, "power_w": math.inf, "tolerance": 0.05, "stock": 5}
    assert [c for c, _ in out_of_range_columns(row)] == ["power_w"]
    assert out_of_range_columns({"kind": "resistor", "value": 470.0, "zz_ohm": None}) == []


def test_drop_unusable_rows_keeps_sound_rows(builtin_frame):
    """The built-in catalogue itself lies inside every range (no row skipped)."""
    checked = drop_unusable_rows(builtin_frame)
    assert len(checked) == len(builtin_frame) and checked.attrs["skipped_parts"] == []


def test_control_characters_refused_in_codes_and_escaped_on_screen(catalogue_copy_url, tmp_path):
    """A supplier code holding an escape sequence (issue 14: stored, then printed raw by
    `parts find`, it retitled the terminal): refused at import naming row and column; a code
    already stored is shown escaped."""
    path = tmp_path / "stock.csv"
    path.write_text(HEADER + GOOD + "DX-\x1b]0;owned\x07,X2 film capacitor,330n,K,305,,1,0.2\n")
    engine = make_engine(catalogue_copy_url)
    try:
        result = import_stock(engine, path, "lab")
        assert [(p.row, p.column) for p in result.problems] == [(3, "Stock code")]
        assert "\x1b" not in str(result.problems[0]) and "\\x1b" in str(result.problems[0])
        with engine.begin() as conn:
            conn.execute(
                text("UPDATE parts SET code = :d WHERE code = (SELECT MIN(code) FROM parts "
                     "WHERE kind = 'x_capacitor')"),
                {"d": "xcap-\x1b]0;owned\x07"},
            )  # fmt: skip
    finally:
        engine.dispose()
    r = runner.invoke(app, ["parts", "find", "owned", "--db", catalogue_copy_url])
    assert r.exit_code == 0 and "\\x1b]0;owned" in r.stdout, r.stdout
    assert "\x1b" not in r.stdout + r.stderr and "\x07" not in r.stdout + r.stderr
