"""Distributor-style prices: price breaks, currencies, minimum order quantities and order
multiples (reels, packs).

All lists here are DEMO data, invented (no real supplier's codes or prices). The pricing rule
(the break for the pieces bought applies; below a minimum order the whole minimum is paid; a
reel or pack is bought whole) is common practice, no source; the arithmetic is checked by hand
in each comment.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pytest
from sqlalchemy import select
from typer.testing import CliRunner

from selector.catalogue import parts_frame
from selector.catalogue.db import make_engine
from selector.catalogue.importer import import_stock
from selector.catalogue.models import Part
from selector.catalogue.pricing import build_price, pieces_bought, price_at_build
from selector.cli import app

DATA = Path(__file__).parent / "data"
DESCRIBED = DATA / "description_stock.csv"


@pytest.fixture
def engine(catalogue_copy_url):
    eng = make_engine(catalogue_copy_url)
    yield eng
    eng.dispose()


def _write(path: Path, header: list[str], rows: list[list[str]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(header)
        writer.writerows(rows)
    return path


def _usd_list(tmp_path: Path) -> Path:
    header = ["SKU", "Description", "1+", "100+", "1000+", "MOQ", "Currency"]
    rows = [
        ["U1", "Metal oxide resistor 330R 2W 5% axial", "$0.10", "$0.06", "$0.04", "5000", "USD"],
        ["U2", "Zener diode 12V 1W 5% DO-41", "$0.05", "$0.03", "$0.02", "", "USD"],
    ]
    return _write(tmp_path / "usd.csv", header, rows)


def test_build_price_worked_examples():
    breaks = [(1, 0.10), (100, 0.06), (1000, 0.04)]
    assert build_price(breaks, 50, None) == (0.10, 50)  # below 100: the 1+ break
    assert build_price(breaks, 100, None) == (0.06, 100)
    assert build_price(breaks, 2500, None) == (0.04, 2500)
    # MOQ 5000 for a build of 1000: 5000 x 0.04 = 200 spread over 1000 boards = 0.20 each
    assert build_price(breaks, 1000, 5000) == (pytest.approx(0.20), 5000)


def test_build_price_docstring_example_with_order_multiples():
    # build_price's worked example (demo figures, invented), by hand:
    breaks = [(1, 0.10), (100, 0.06), (1000, 0.04), (5000, 0.03)]
    # MOQ 5000 for 1000 boards: 5000 x 0.03 (the 5000+ break) = 150 / 1000 boards = 0.15
    assert build_price(breaks, 1000, 5000) == (pytest.approx(0.15), 5000)
    # reels of 4000: one reel, 4000 x 0.04 (the 1000+ break) = 160 / 1000 = 0.16
    assert build_price(breaks, 1000, None, 4000) == (pytest.approx(0.16), 4000)
    # MOQ 5000 and reels of 4000: two reels, 8000 x 0.03 = 240 / 1000 = 0.24
    assert build_price(breaks, 1000, 5000, 4000) == (pytest.approx(0.24), 8000)
    # a build already a whole number of packs buys no surplus: 2000 = 4 packs of 500
    assert build_price(breaks, 2000, None, 500) == (pytest.approx(0.04), 2000)


@pytest.mark.parametrize(
    ("build", "moq", "multiple", "bought"),
    [(1000, None, None, 1000), (1000, None, 1, 1000), (1000, None, 4000, 4000),
     (4000, None, 4000, 4000), (4001, None, 4000, 8000), (1000, 5000, 4000, 8000),
     (1000, 3000, 250, 3000), (10, 3, 4, 12), (1, None, 3, 3)],
)  # fmt: skip
def test_pieces_bought_is_the_smallest_multiple_at_or_above_the_floor(build, moq, multiple, bought):
    # the brief's rule: the smallest n >= max(build, MOQ) that is a multiple of the multiple
    # (hand-counted cases), and a brute-force search agrees
    assert pieces_bought(build, moq, multiple) == bought
    step = multiple or 1
    floor = max(build, moq or 1)
    assert bought == next(n for n in range(floor, floor + step) if n % step == 0)


def test_another_currency_is_refused_without_a_rate(engine, tmp_path):
    result = import_stock(engine, _usd_list(tmp_path), supplier="usd")
    assert not result.written
    assert [(p.row, p.column) for p in result.problems] == [(2, "Currency"), (3, "Currency")]
    assert "--rate USD=" in result.problems[0].problem


def test_mixed_currencies_on_a_row_are_refused(engine, tmp_path):
    header = ["SKU", "Description", "1+", "1000+"]
    rows = [["M1", "Zener diode 12V 1W 5% DO-41", "€0.05", "$0.02"]]
    result = import_stock(engine, _write(tmp_path / "mixed.csv", header, rows), rates={"USD": 1})
    assert len(result.problems) == 1
    assert "more than one currency" in result.problems[0].problem
    assert "EUR (1+)" in result.problems[0].problem and "USD (1000+)" in result.problems[0].problem


def test_a_rate_converts_every_break_and_the_moq_is_kept(engine, tmp_path):
    result = import_stock(engine, _usd_list(tmp_path), supplier="usd", rates={"USD": 0.9})
    assert result.problems == [] and result.written
    with engine.connect() as conn:
        rows = {
            code: (price, moq, note)
            for code, price, moq, note in conn.execute(
                select(Part.supplier_code, Part.unit_price, Part.min_order_qty, Part.price_note)
                .where(Part.source == "import:usd")
            )
        }  # fmt: skip
    # 0.04 USD x 0.9 EUR/USD = 0.036 EUR at the import's 1000 pieces
    assert rows["U1"][0] == pytest.approx(0.036) and rows["U1"][1] == 5000
    assert rows["U2"][1] is None
    assert "converted from USD at 0.9 EUR/USD" in rows["U1"][2]


def test_the_frame_is_priced_at_the_build_quantity(engine, tmp_path, catalogue_copy_url):
    import_stock(engine, _usd_list(tmp_path), supplier="usd", rates={"USD": 0.9})
    frame = parts_frame(engine, stock_only=True)
    at_100 = price_at_build(frame, catalogue_copy_url, 100).set_index("supplier_code")
    at_1000 = price_at_build(frame, catalogue_copy_url, 1000).set_index("supplier_code")
    # U2 (no MOQ): the 100+ break 0.03 x 0.9 = 0.027; the 1000+ break 0.02 x 0.9 = 0.018
    assert at_100.at["U2", "unit_price"] == pytest.approx(0.027)
    assert at_1000.at["U2", "unit_price"] == pytest.approx(0.018)
    # U1, MOQ 5000: 5000 x 0.036 / 1000 boards = 0.18; / 100 boards = 1.8
    assert at_1000.at["U1", "unit_price"] == pytest.approx(0.18)
    assert at_100.at["U1", "unit_price"] == pytest.approx(1.8)
    assert "MOQ 5,000 pcs > 1,000" in at_1000.at["U1", "price_note"]
    # the built-in rows keep their demo prices
    builtin = parts_frame(engine)
    builtin = builtin[builtin["source"] == "builtin"]
    repriced = price_at_build(builtin, catalogue_copy_url, 10)
    assert repriced["unit_price"].tolist() == builtin["unit_price"].tolist()


def test_design_bom_says_when_the_moq_is_paid(catalogue_copy_url, tmp_path):
    # the description-only demo list with price breaks; its X capacitors come by 5000 only
    with DESCRIBED.open(encoding="utf-8") as fh:
        header, *rows = list(csv.reader(fh))
    out_rows = []
    for sku, description, price, stock in rows:
        moq = "5000" if description.startswith("X2") else ""
        out_rows.append([sku, description, price, f"{float(price) / 2:g}", moq, stock])
    path = _write(
        tmp_path / "breaks.csv",
        ["Supplier SKU", "Description", "1+", "1000+", "MOQ", "On hand"],
        out_rows,
    )
    runner = CliRunner()
    done = runner.invoke(
        app, ["parts", "import", str(path), "--supplier", "trial", "--db", catalogue_copy_url]
    )
    assert done.exit_code == 0, done.output
    bom = tmp_path / "bom.csv"
    made = runner.invoke(
        app,
        ["design", "--load", "10m", "--vout", "5.1", "--stock-only", "--life", "1y",
         "--humidity", "40", "--build-qty", "1000", "--bom", str(bom), "--json",
         "--db", catalogue_copy_url],
    )  # fmt: skip
    assert made.exit_code == 0, made.output
    designed = json.loads(made.stdout)["designs"][0]
    x = next(p for p in designed["parts"] if p["role"] == "x_capacitor")
    listed = {sku: float(price) for sku, _, price, _ in rows}
    # 5000 pieces at the 1000+ break (half the 1+ price), over 1000 boards: 5 x that break
    assert x["unit_price"] == pytest.approx(5 * listed[x["code"].split(":")[-1]] / 2)
    with bom.open(encoding="utf-8") as fh:
        lines = list(csv.DictReader(fh))
    x_line = next(line for line in lines if line["Role"] == "x_capacitor")
    assert "MOQ 5,000 pcs > 1,000: the cost counts all 5,000" in x_line["Price note"]


@pytest.mark.parametrize("header", ["Order multiple", "Reel qty", "Pack qty", "Multiple", "SPQ"])
def test_an_order_multiple_column_is_read_and_prices_whole_reels(
    engine, tmp_path, catalogue_copy_url, header
):
    # reels of 4,000 (a thousands separator, read like any count): a build of 1000 buys one
    # reel at the 1000+ break, 4000 x 0.02 = 80 over 1000 boards = 0.08 each; a part without
    # a multiple buys 1000 at 0.02
    path = _write(
        tmp_path / "reels.csv",
        ["SKU", "Description", "1+", "1000+", header],
        [["R1", "Zener diode 12V 1W 5% DO-41", "0.05", "0.02", "4,000"],
         ["R2", "Zener diode 15V 1W 5% DO-41", "0.05", "0.02", ""]],
    )  # fmt: skip
    result = import_stock(engine, path, supplier="reels")
    assert result.problems == [] and result.written
    with engine.connect() as conn:
        stored = dict(
            conn.execute(
                select(Part.supplier_code, Part.order_multiple).where(Part.source == "import:reels")
            ).all()
        )
    assert stored == {"R1": 4000, "R2": None}
    frame = parts_frame(engine, stock_only=True)
    priced = price_at_build(frame, catalogue_copy_url, 1000).set_index("supplier_code")
    assert priced.at["R1", "unit_price"] == pytest.approx(0.08)
    assert priced.at["R2", "unit_price"] == pytest.approx(0.02)
    assert priced.at["R1", "price_note"].endswith(
        "; bought in multiples of 4,000: the cost counts all 4,000"
    )
    assert "bought" not in priced.at["R2", "price_note"]


@pytest.mark.parametrize(("cell", "problem"), [("0", "1 piece or more"), ("2.5", "whole")])
def test_an_order_multiple_below_one_or_not_whole_names_file_row_and_column(
    engine, tmp_path, cell, problem
):
    path = _write(
        tmp_path / "bad.csv",
        ["SKU", "Description", "Unit price", "Reel qty"],
        [["B1", "Zener diode 12V 1W 5% DO-41", "0.05", "100"],
         ["B2", "Zener diode 15V 1W 5% DO-41", "0.05", cell]],
    )  # fmt: skip
    result = import_stock(engine, path, supplier="bad")
    assert not result.written
    assert [(p.row, p.column) for p in result.problems] == [(3, "Reel qty")]
    assert problem in result.problems[0].problem
    assert "bad.csv" in str(result.problems[0])
