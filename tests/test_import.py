"""Stock-list import (selector.catalogue.importer) on SQLite.

The demo stock list tests/data/demo_stock.{csv,xlsx} is DEMO data, invented (codes, prices and
stock counts of no real supplier). Outside references used below are named at each check:
IEC 60384-14 (X2 impulse class), generic resistor makers' data as tabled in DOMAIN.md table 5
(1206 chip: 1/4 W, limiting element voltage 200 V; working voltage min(sqrt(P R), LEV)), and
IEC 60062 tolerance letters.
"""

from __future__ import annotations

import csv
import math
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
from catalogue_util import count_parts as _count
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import select

from selector.catalogue import parts_frame
from selector.catalogue.db import make_engine
from selector.catalogue.importer import (
    FIELDS,
    import_stock,
    map_columns,
    read_cells,
    recognise_family,
    stock_code,
)
from selector.catalogue.models import Part, PriceBreak, Supplier
from selector.errors import BadRowError, BadValueError

DATA = Path(__file__).parent / "data"
DEMO_XLSX = DATA / "demo_stock.xlsx"
DEMO_CSV = DATA / "demo_stock.csv"
DEMO_ROWS = 38


@pytest.fixture
def engine(catalogue_copy_url):
    """A private copy of the built catalogue (tests/conftest.py) for each test."""
    eng = make_engine(catalogue_copy_url)
    yield eng
    eng.dispose()


def _snapshot(engine) -> tuple:
    with engine.connect() as conn:
        parts = conn.execute(
            select(Part.code, Part.unit_price, Part.stock, Part.value).order_by(Part.code)
        ).all()
        breaks = conn.execute(
            select(PriceBreak.part_id, PriceBreak.min_qty, PriceBreak.unit_price).order_by(
                PriceBreak.part_id, PriceBreak.min_qty
            )
        ).all()
        sups = conn.execute(select(Supplier.name).order_by(Supplier.name)).all()
    return parts, breaks, sups


def _write_csv(path: Path, header: list[str], rows: list[list[object]]) -> Path:
    with path.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(header)
        w.writerows(rows)
    return path


def _demo_rows() -> tuple[list[str], list[list[str]]]:
    with DEMO_CSV.open(encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    return rows[0], rows[1:]


# --------------------------------------------------------------------------- columns


def test_demo_headers_map_to_the_expected_fields():
    header, _ = _demo_rows()
    mapping = {m.header: (m.field, m.min_qty) for m in map_columns(header)}
    assert mapping == {
        "Stock code": ("supplier_code", None),
        "Category": ("family", None),
        "Description": ("description", None),
        "Value": ("value", None),
        "Tol.": ("tolerance", None),
        "Voltage": ("voltage", None),
        "Power": ("power", None),
        "Package": ("package", None),
        "On hand": ("stock", None),
        "Price 1": ("price_breaks", 1),
        "Price 100": ("price_breaks", 100),
        "Price 1000": ("price_breaks", 1000),
        "Currency": ("currency", None),
        "Remark": (None, None),
    }


@pytest.mark.parametrize(
    ("header", "field"),
    [
        ("Order Code", "supplier_code"),
        ("SKU", "supplier_code"),
        ("Part Type", "family"),
        ("Qty in stock", "stock"),
        ("Unit Price", "unit_price"),
        ("Capacitance", "value"),
        ("Tolerance", "tolerance"),
        ("Voltage Rating", "voltage"),
        ("Case", "package"),
    ],
)
def test_distributor_spellings_are_recognised(header, field):
    (m,) = map_columns([header])
    assert m.field == field


@pytest.mark.parametrize(
    ("header", "qty"), [("Price 10", 10), ("price@100", 100), ("10+", 10), ("Qty 1000", 1000)]
)
def test_price_break_headers(header, qty):
    (m,) = map_columns([header])
    assert (m.field, m.min_qty) == ("price_breaks", qty)


def test_map_override_and_its_errors():
    ms = map_columns(["Ref", "Thing", "Cost"], {"Thing": "value", "Ref": "supplier_code"})
    assert [(m.field, m.how) for m in ms] == [
        ("supplier_code", "given"),
        ("value", "given"),
        ("unit_price", "fuzzy"),
    ]
    with pytest.raises(BadValueError, match="no column 'Nope'"):
        map_columns(["Ref"], {"Nope": "value"})
    with pytest.raises(BadValueError, match="unknown field 'valu'.*" + FIELDS[0]):
        map_columns(["Ref"], {"Ref": "valu"})


def test_xlsx_and_csv_read_to_the_same_cells():
    x = read_cells(DEMO_XLSX)
    c = read_cells(DEMO_CSV)
    assert [n for n, _ in x] == [n for n, _ in c] == list(range(1, DEMO_ROWS + 2))
    for (_, xr), (_, cr) in zip(x, c, strict=True):
        assert [str(v) for v in xr] == [str(v) for v in cr]


# --------------------------------------------------------------------------- families


def test_family_recognition_and_refusal(engine):
    from sqlalchemy.orm import Session

    from selector.catalogue.importer import catalogue_families

    with Session(engine) as s:
        fams = catalogue_families(s)
    assert recognise_family("X2 film capacitor", fams).name == "x2-film"
    assert recognise_family("Zener 0.5W", fams).name == "zener-0w5"
    assert recognise_family("Electrolytic capacitor 105C", fams).name == "alu-105c"
    # an unknown family names the nearest ones
    with pytest.raises(BadValueError, match=r"not recognised; nearest: .*film"):
        recognise_family("tantalum capacitor", fams)
    # never guess between a general-purpose and an X capacitor (IEC 60384-14 class matters)
    with pytest.raises(BadValueError, match="ambiguous: it fits .*x2-film.*pp-film"):
        recognise_family("film capacitor", fams)
    with pytest.raises(BadValueError, match="ambiguous"):
        recognise_family("Resistor", fams)


# --------------------------------------------------------------------------- importing


def test_demo_xlsx_imports_and_a_second_import_changes_nothing(engine):
    builtin = _count(engine, "builtin")
    first = import_stock(engine, DEMO_XLSX, supplier="demo-shelf")
    assert (first.inserted, first.updated, first.unchanged) == (DEMO_ROWS, 0, 0)
    assert first.written and not first.problems
    assert _count(engine, "import:demo-shelf") == DEMO_ROWS
    before = _snapshot(engine)
    second = import_stock(engine, DEMO_XLSX, supplier="demo-shelf")
    assert (second.inserted, second.updated, second.unchanged) == (0, 0, DEMO_ROWS)
    # the CSV holds the same rows: also unchanged
    third = import_stock(engine, DEMO_CSV, supplier="demo-shelf")
    assert (third.inserted, third.updated, third.unchanged) == (0, 0, DEMO_ROWS)
    assert _snapshot(engine) == before
    assert _count(engine, "builtin") == builtin
    assert _count(engine) == builtin + DEMO_ROWS


def test_imported_values_ratings_and_prices(engine):
    import_stock(engine, DEMO_XLSX, supplier="demo-shelf", qty=1000)
    with engine.connect() as conn:
        rows = {
            r.supplier_code: r
            for r in conn.execute(
                select(Part.__table__).where(Part.source == "import:demo-shelf")
            ).all()
        }
        breaks = conn.execute(
            select(PriceBreak.min_qty, PriceBreak.unit_price)
            .join(Part, Part.id == PriceBreak.part_id)
            .where(Part.code == stock_code("demo-shelf", "DX-C334-305"))
            .order_by(PriceBreak.min_qty)
        ).all()
    cap = rows["DX-C334-305"]
    assert cap.kind == "x_capacitor" and cap.family == "x2-film"
    assert math.isclose(cap.value, 330e-9)
    assert cap.rated_voltage_ac_v == 305.0
    assert cap.tolerance == 0.10  # IEC 60062 letter K = 10 %
    assert cap.safety_class == "X2"
    assert cap.impulse_v == 2500.0  # IEC 60384-14: X2 for peak impulses <= 2.5 kV in service
    assert cap.stock == 950
    assert [tuple(b) for b in breaks] == [(1, 0.24), (100, 0.18), (1000, 0.14)]
    assert cap.unit_price == 0.14  # the break that applies at 1000 pieces
    assert "demo-shelf" in cap.price_note and "1000 pcs" in cap.price_note
    # generic 1206 thick-film chip: 1/4 W, LEV 200 V (DOMAIN.md table 5, makers' generic data);
    # working voltage min(sqrt(P R), LEV): 1 Mohm -> min(500 V, 200 V) = 200 V
    bleeder = rows["DX-R105-1206"]
    assert (bleeder.power_w, bleeder.limiting_voltage_v) == (0.25, 200.0)
    assert bleeder.rated_voltage_v == 200.0
    # 470 kohm: sqrt(0.25 * 470e3) = 342.8 V -> 200 V as well; a 100 ohm 1 W fusible:
    # sqrt(1 * 100) = 10 V (power limits below the critical resistance LEV^2 / P)
    assert math.isclose(rows["DX-R101-FU1"].rated_voltage_v, 10.0)
    zener = rows["DX-Z12-1W"]
    assert (zener.kind, zener.value, zener.power_w, zener.tolerance) == ("zener", 12.0, 1.0, 0.05)
    assert rows["DX-BR-MB6"].vrrm_v == 600.0 and rows["DX-BR-MB6"].value == 0.5
    assert rows["DX-E471-10-85"].temp_max_c == 85.0
    assert rows["DX-F-T100"].value == 0.1


def test_price_at_a_smaller_quantity(engine):
    import_stock(engine, DEMO_CSV, supplier="demo-shelf", qty=50)
    with engine.connect() as conn:
        price = conn.execute(
            select(Part.unit_price).where(Part.code == stock_code("demo-shelf", "DX-C334-305"))
        ).scalar_one()
    assert price == 0.24  # 50 pieces: the 1-piece break applies


def test_changed_row_is_updated_in_place(engine, tmp_path):
    header, rows = _demo_rows()
    import_stock(engine, _write_csv(tmp_path / "a.csv", header, rows), supplier="shelf")
    with engine.connect() as conn:
        ids_before = dict(
            conn.execute(select(Part.code, Part.id).where(Part.source == "import:shelf")).all()
        )
    rows[1][header.index("Price 1000")] = "0.125"
    rows[1][header.index("On hand")] = "10"
    again = import_stock(engine, _write_csv(tmp_path / "b.csv", header, rows), supplier="shelf")
    assert (again.inserted, again.updated, again.unchanged) == (0, 1, DEMO_ROWS - 1)
    code = stock_code("shelf", rows[1][0])
    with engine.connect() as conn:
        part = conn.execute(select(Part.__table__).where(Part.code == code)).one()
        assert (part.unit_price, part.stock) == (0.125, 10)
        ids_after = dict(
            conn.execute(select(Part.code, Part.id).where(Part.source == "import:shelf")).all()
        )
    assert ids_after == ids_before  # same rows, not new ones


def test_two_suppliers_keep_separate_rows(engine):
    import_stock(engine, DEMO_CSV, supplier="shelf-a")
    import_stock(engine, DEMO_CSV, supplier="shelf-b")
    assert _count(engine, "import:shelf-a") == _count(engine, "import:shelf-b") == DEMO_ROWS


def test_bad_rows_are_listed_and_nothing_is_written(engine, tmp_path):
    header, rows = _demo_rows()
    bad = [list(r) for r in rows[:6]]
    bad[1][header.index("Value")] = "33x"  # file row 3
    bad[2][header.index("Category")] = "tantalum capacitor"  # file row 4
    bad[3][header.index("Price 100")] = "-1"  # file row 5
    bad[4][header.index("On hand")] = "12.5"  # file row 6
    path = _write_csv(tmp_path / "bad.csv", header, bad)
    before = _snapshot(engine)
    result = import_stock(engine, path, supplier="shelf")
    assert not result.written
    got = [(p.row, p.column) for p in result.problems]
    assert got == [(3, "Value"), (4, "Category"), (5, "Price 100"), (6, "On hand")]
    assert all(p.file == str(path) for p in result.problems)
    assert "nearest:" in result.problems[1].problem
    assert str(result.problems[0]).startswith(f"{path}, row 3, column 'Value': cannot read '33x'")
    assert _snapshot(engine) == before
    # --partial writes the good rows only
    part = import_stock(engine, path, supplier="shelf", partial=True)
    assert part.written and part.inserted == 2 and len(part.problems) == 4
    assert _count(engine, "import:shelf") == 2


def test_duplicate_supplier_code_is_a_bad_row(engine, tmp_path):
    header, rows = _demo_rows()
    path = _write_csv(tmp_path / "dup.csv", header, [rows[0], rows[1], rows[0]])
    result = import_stock(engine, path, supplier="shelf")
    assert [(p.row, p.column) for p in result.problems] == [(4, "Stock code")]
    assert "already on row 2" in result.problems[0].problem


def test_file_level_errors(engine, tmp_path):
    with pytest.raises(BadRowError, match="no column recognised as 'supplier_code'"):
        import_stock(engine, _write_csv(tmp_path / "x.csv", ["Value", "Price"], [["1k", "1"]]))
    with pytest.raises(BadRowError, match="no price column"):
        import_stock(
            engine,
            _write_csv(tmp_path / "y.csv", ["SKU", "Family", "Value"], [["a", "x2-film", "1u"]]),
        )
    with pytest.raises(BadValueError, match="no such file"):
        import_stock(engine, tmp_path / "missing.csv")


def test_dry_run_counts_but_writes_nothing(engine):
    before = _snapshot(engine)
    result = import_stock(engine, DEMO_XLSX, supplier="demo-shelf", dry_run=True)
    assert result.dry_run and not result.written and result.inserted == DEMO_ROWS
    assert _snapshot(engine) == before


def test_imported_parts_are_the_stock_only_frame(engine):
    import_stock(engine, DEMO_XLSX, supplier="demo-shelf")
    frame = parts_frame(engine, stock_only=True)
    assert len(frame) == DEMO_ROWS
    assert set(frame["source"]) == {"import:demo-shelf"}
    full = parts_frame(engine)
    assert set(frame["code"]) <= set(full["code"])


def _big_list(path: Path, n: int, start: int = 0) -> Path:
    header = ["SKU", "Family", "Value", "Tolerance", "Package", "Stock", "Price 1", "Price 1000"]
    rows = []
    for i in range(start, start + n):
        ohms = 10.0 * (1.0 + (i % 90) / 10.0) * 10 ** (i % 5)
        rows.append(
            [f"R{i:06d}", "chip-thick-film", f"{ohms:g}", "J", "0805", 100 + i, 0.01, 0.002]
        )
    return _write_csv(path, header, rows)


def test_progress_reaches_the_total(engine, tmp_path):
    calls: list[tuple[int, int]] = []
    path = _big_list(tmp_path / "big.csv", 1200)
    import_stock(engine, path, supplier="big", progress=lambda d, t: calls.append((d, t)))
    assert calls and calls[-1] == (2400, 2400)
    assert [d for d, _ in calls] == sorted(d for d, _ in calls)


def _fail_in_write_phase(done: int, total: int) -> None:
    """Progress callback that raises once the first batch is written (inside the
    transaction): the injected failure."""
    if done > total // 2:
        raise RuntimeError(f"injected failure at {done} of {total}")


def test_exception_mid_import_leaves_the_catalogue_as_it_was(engine, tmp_path):
    import_stock(engine, DEMO_CSV, supplier="demo-shelf")
    before = _snapshot(engine)
    path = _big_list(tmp_path / "big.csv", 1500)
    with pytest.raises(RuntimeError, match="injected failure"):
        import_stock(engine, path, supplier="big", progress=_fail_in_write_phase)
    assert _snapshot(engine) == before


def test_killed_import_leaves_the_catalogue_as_it_was(engine, tmp_path):
    """A separate process is killed (SIGKILL) while its import transaction is open."""
    import_stock(engine, DEMO_CSV, supplier="demo-shelf")
    before = _snapshot(engine)
    path = _big_list(tmp_path / "big.csv", 3000)
    url = str(engine.url)
    script = textwrap.dedent(
        f"""
        import sys, time
        from selector.catalogue.db import make_engine
        from selector.catalogue.importer import import_stock
        def progress(done, total):
            if done > total // 2 + 500:  # in the write phase, after the first batch
                print("HALF", flush=True)
                time.sleep(60)
        import_stock(make_engine({url!r}), {str(path)!r}, supplier="big", progress=progress)
        """
    )
    proc = subprocess.Popen([sys.executable, "-c", script], stdout=subprocess.PIPE, text=True)
    try:
        line = proc.stdout.readline()
        assert line.strip() == "HALF"
    finally:
        proc.kill()
        proc.wait(timeout=30)
    assert _snapshot(engine) == before


def test_tsv_and_semicolon_csv_with_decimal_commas(engine, tmp_path):
    header, rows = _demo_rows()
    tsv = tmp_path / "stock.tsv"
    tsv.write_text("\n".join("\t".join(r) for r in [header, *rows[:5]]) + "\n", encoding="utf-8")
    result = import_stock(engine, tsv, supplier="tab")
    assert (result.inserted, result.problems) == (5, [])
    # European spreadsheet export: ';' between cells, ',' as the decimal mark in prices
    euro = tmp_path / "euro.csv"
    euro.write_text(
        "Artikel;Family;Value;Stock;Unit price\nA-1;x2-film;330n;12;0,24\n", encoding="utf-8"
    )
    got = import_stock(engine, euro, supplier="euro", column_map={"Artikel": "supplier_code"})
    assert got.inserted == 1 and not got.problems
    with engine.connect() as conn:
        price = conn.execute(
            select(Part.unit_price).where(Part.code == stock_code("euro", "A-1"))
        ).scalar_one()
    assert price == 0.24


def test_ignored_column_by_map(engine, tmp_path):
    path = _write_csv(
        tmp_path / "x.csv",
        ["SKU", "Family", "Value", "Price", "Description"],
        [["A", "x2-film", "330n", "0.2", "tantalum capacitor"]],
    )
    result = import_stock(engine, path, supplier="m", column_map={"Description": "ignore"})
    assert result.inserted == 1
    assert [m.field for m in result.mapping][-1] is None


def test_text_that_is_not_utf8_is_read_as_windows_1252(engine, tmp_path):
    # Python codecs docs: cp1252 (Windows-1252) maps 0xB5 to MICRO SIGN U+00B5
    path = tmp_path / "latin1.csv"
    path.write_bytes(
        "SKU,Family,Value,Price\nA,x2-film,330n,0.2\nB,x2-film,1µ,0.3\n".encode("latin-1")
    )
    result = import_stock(engine, path)
    assert result.inserted == 2 and result.encoding == "cp1252"
    assert "Windows-1252" in result.encoding_note and "row 3" in result.encoding_note


@settings(
    max_examples=8, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(st.lists(st.integers(0, DEMO_ROWS - 1), min_size=1, max_size=12, unique=True))
def test_any_subset_in_any_order_imports_once(catalogue_copy_url, tmp_path_factory, picks):
    """Property: whatever rows of the demo list, in whatever order, the first import inserts
    each once and a second import of the same file changes nothing."""
    header, rows = _demo_rows()
    path = _write_csv(tmp_path_factory.mktemp("sub") / "s.csv", header, [rows[i] for i in picks])
    eng = make_engine(catalogue_copy_url)
    try:
        with eng.begin() as conn:  # each example starts without this supplier's rows
            conn.execute(Part.__table__.delete().where(Part.source == "import:prop"))
        first = import_stock(eng, path, supplier="prop")
        second = import_stock(eng, path, supplier="prop")
        assert first.inserted == len(picks) and not first.problems
        assert (second.inserted, second.updated, second.unchanged) == (0, 0, len(picks))
        assert _count(eng, "import:prop") == len(picks)
    finally:
        eng.dispose()
