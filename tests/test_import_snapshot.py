"""A supplier's stock list is a snapshot (issue 12 item 3).

Re-importing a supplier replaces its list: rows the new file no longer holds are withdrawn
(stock 0, flagged, never used by design); ``merge=True`` keeps them; supplier names compare
case-insensitively; ``--stock-only`` means "rows of imported lists", ``--in-stock`` also needs a
given stock count >= the build quantity. The stock list used is tests/data/demo_stock.csv,
DEMO data, invented. These are behaviour checks of the catalogue (no outside figure applies).
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
from selector.catalogue.importer import import_stock, stock_code
from selector.catalogue.models import Part, Supplier
from selector.cli import app

DEMO_CSV = Path(__file__).parent / "data" / "demo_stock.csv"


@pytest.fixture
def engine(catalogue_copy_url):
    eng = make_engine(catalogue_copy_url)
    yield eng
    eng.dispose()


def _demo() -> tuple[list[str], list[list[str]]]:
    with DEMO_CSV.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


def _write(path: Path, header: list[str], rows: list[list[str]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.writer(fh)
        writer.writerow(header)
        writer.writerows(rows)
    return path


def _part(engine, code: str):
    with engine.connect() as conn:
        return conn.execute(select(Part.__table__).where(Part.code == code)).one()


def test_reimport_without_a_row_withdraws_it(engine, tmp_path):
    header, rows = _demo()
    first = import_stock(engine, _write(tmp_path / "a.csv", header, rows), supplier="shelf")
    assert (first.inserted, first.withdrawn) == (len(rows), 0)
    dropped = rows.pop(2)
    again = import_stock(engine, _write(tmp_path / "b.csv", header, rows), supplier="shelf")
    assert (again.inserted, again.updated, again.unchanged, again.withdrawn) == (
        0,
        0,
        len(rows),
        1,
    )
    code = stock_code("shelf", dropped[0])
    part = _part(engine, code)
    assert part.withdrawn and part.stock == 0
    assert code not in set(parts_frame(engine)["code"])
    assert code not in set(parts_frame(engine, stock_only=True)["code"])
    # the same list once more: nothing left to withdraw
    third = import_stock(engine, tmp_path / "b.csv", supplier="shelf")
    assert third.withdrawn == 0 and third.unchanged == len(rows)
    # the row comes back when a later list holds it again (counted as changed)
    back = import_stock(engine, DEMO_CSV, supplier="shelf")
    assert (back.updated, back.withdrawn) == (1, 0)
    assert not _part(engine, code).withdrawn
    assert _part(engine, code).stock == int(dropped[header.index("On hand")])


def test_merge_keeps_rows_the_file_does_not_hold(engine, tmp_path):
    header, rows = _demo()
    import_stock(engine, DEMO_CSV, supplier="shelf")
    kept = rows.pop(0)
    result = import_stock(engine, _write(tmp_path / "b.csv", header, rows), "shelf", merge=True)
    assert result.withdrawn == 0
    part = _part(engine, stock_code("shelf", kept[0]))
    assert not part.withdrawn and part.stock == int(kept[header.index("On hand")])


def test_dry_run_counts_withdrawals_and_writes_nothing(engine, tmp_path):
    header, rows = _demo()
    import_stock(engine, DEMO_CSV, supplier="shelf")
    dropped = rows.pop(0)
    result = import_stock(engine, _write(tmp_path / "b.csv", header, rows), "shelf", dry_run=True)
    assert result.withdrawn == 1 and not result.written
    assert not _part(engine, stock_code("shelf", dropped[0])).withdrawn


def test_other_suppliers_are_left_alone(engine, tmp_path):
    header, rows = _demo()
    import_stock(engine, DEMO_CSV, supplier="shelf-a")
    import_stock(engine, DEMO_CSV, supplier="shelf-b")
    result = import_stock(engine, _write(tmp_path / "b.csv", header, rows[:3]), "shelf-b")
    assert result.withdrawn == len(rows) - 3
    with engine.connect() as conn:
        live_a = conn.execute(
            select(Part.code).where(Part.source == "import:shelf-a", Part.withdrawn.is_(False))
        ).all()
    assert len(live_a) == len(rows)


def test_supplier_names_compare_case_insensitively(engine):
    import_stock(engine, DEMO_CSV, supplier="Shelf")
    again = import_stock(engine, DEMO_CSV, supplier="SHELF")
    assert again.supplier == "Shelf"  # the first spelling is kept
    assert (again.inserted, again.unchanged) == (0, again.rows)
    with engine.connect() as conn:
        names = conn.execute(select(Supplier.name)).scalars().all()
        sources = set(
            conn.execute(select(Part.source).where(Part.source.like("import:%"))).scalars()
        )
    assert [n for n in names if n.lower() == "shelf"] == ["Shelf"]
    assert sources == {"import:Shelf"}


def test_stock_only_takes_lists_without_a_stock_column(engine, tmp_path):
    header, rows = _demo()
    stock_col = header.index("On hand")
    no_stock = [[cell for i, cell in enumerate(row) if i != stock_col] for row in rows]
    no_stock_header = [h for i, h in enumerate(header) if i != stock_col]
    import_stock(engine, _write(tmp_path / "s.csv", no_stock_header, no_stock), "nostock")
    frame = parts_frame(engine, stock_only=True)
    assert len(frame) == len(rows)
    assert set(frame["source"]) == {"import:nostock"}
    # no count given: --in-stock cannot rule the rows out
    assert len(parts_frame(engine, stock_only=True, min_stock=10**6)) == len(rows)


def test_in_stock_needs_the_build_quantity(engine):
    header, rows = _demo()
    import_stock(engine, DEMO_CSV, supplier="shelf")
    stock = [int(row[header.index("On hand")]) for row in rows]
    for build_qty in (1, 500, 1000, 5000):
        frame = parts_frame(engine, stock_only=True, min_stock=build_qty)
        assert len(frame) == sum(count >= build_qty for count in stock)


def test_cli_prints_the_four_counts(catalogue_copy_url, tmp_path):
    header, rows = _demo()
    runner = CliRunner()
    args = ["parts", "import", "--db", catalogue_copy_url, "--supplier", "shelf"]
    done = runner.invoke(app, [*args, str(DEMO_CSV)])
    assert done.exit_code == 0, done.output
    short = _write(tmp_path / "short.csv", header, rows[1:])
    done = runner.invoke(app, [*args, str(short)])
    assert done.exit_code == 0, done.output
    assert f"{len(rows) - 1} rows: 0 new, 0 changed, {len(rows) - 1} unchanged, 0 refused; " in (
        done.output
    )
    assert "1 withdrawn" in done.output
    done = runner.invoke(app, [*args, "--json", str(DEMO_CSV)])
    doc = json.loads(done.output)
    assert (doc["new"], doc["changed"], doc["unchanged"], doc["withdrawn"]) == (
        0,
        1,
        len(rows) - 1,
        0,
    )
