"""Numbers and encodings of stock lists as spreadsheets write them: thousands separators,
decimal commas, Windows-1252 text, forced encodings, and the `--rate` option.

Outside sources named at each check:
* ISO 80000-1:2009 section 7.3.1: the decimal sign is a comma or a point; groups of three
  digits may be separated by a (small) space, never by a point or a comma;
* comma, point and apostrophe between groups of three (``1,200``, ``1.200``, ``1'200``) are
  trade practice in distributor exports: common practice, no source;
* Python's ``codecs`` documentation (standard encodings): cp1252 maps 0xB5 to U+00B5 MICRO
  SIGN; UTF-16 with a byte-order mark FE FF is big-endian, FF FE little-endian;
* IEC 60062: ``330R`` is 330 ohm (the letter R in place of the decimal point).

tests/data/description_stock.csv is DEMO data, invented; the European copy made here from it
(semicolons, decimal commas, micro and ohm signs, Windows-1252) is invented the same way.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from sqlalchemy import select
from typer.testing import CliRunner

from selector.catalogue.db import make_engine
from selector.catalogue.importer import import_stock
from selector.catalogue.models import Part
from selector.cli import app
from selector.errors import BadValueError
from selector.units import decimal_points, decimal_sign_of, parse_number, parse_value

DATA = Path(__file__).parent / "data"
DESCRIBED = DATA / "description_stock.csv"
runner = CliRunner()


@pytest.fixture
def engine(catalogue_copy_url):
    eng = make_engine(catalogue_copy_url)
    yield eng
    eng.dispose()


def _stored(engine, supplier: str) -> dict[str, dict]:
    with engine.connect() as conn:
        rows = conn.execute(
            select(Part.__table__).where(Part.source == f"import:{supplier}")
        ).mappings()
        return {row["supplier_code"]: dict(row) for row in rows}


# ------------------------------------------------------------------------ the units module


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("1200", 1200),
        ("1,200", 1200),  # trade practice (no source)
        ("1.200", 1200),  # European thousands point (no source)
        ("1 200", 1200),  # ISO 80000-1 7.3.1: a space between groups of three
        ("1\u202f200", 1200),  # ISO 80000-1 7.3.1: the small (narrow no-break) space
        ("1'200", 1200),  # Swiss apostrophe (no source)
        ("12,000", 12000),
        ("1.234.567", 1234567),
        ("12.0", 12),  # a decimal point with zero fraction is still a whole number
    ],
)
def test_whole_numbers_with_digit_groups(text, expected):
    assert parse_number(text, whole=True) == expected


@pytest.mark.parametrize("text", ["1,2", "1,20,0", "1.2", "12,34", "1 20", "1,,200", "1,200.5"])
def test_ambiguous_or_malformed_whole_numbers_are_refused(text):
    with pytest.raises(BadValueError, match="cannot read"):
        parse_number(text, whole=True, what="a stock count")


@pytest.mark.parametrize(
    ("text", "sign", "expected"),
    [
        # ISO 80000-1 7.3.1: the decimal sign is a comma or a point
        ("0,21", None, 0.21),
        ("0.21", None, 0.21),
        ("1.234,50", None, 1234.5),
        ("1,234.50", None, 1234.5),
        ("1 234,50", None, 1234.5),
        ("0,125", None, 0.125),  # a leading 0 cannot start a group of thousands
        # one mark before three digits: the file's decimal sign decides
        ("1,234", ",", 1.234),
        ("1,234", ".", 1234.0),
        ("1.234", ",", 1234.0),
        ("1.234", ".", 1.234),
    ],
)
def test_prices_with_either_decimal_sign(text, sign, expected):
    assert parse_number(text, sign) == pytest.approx(expected, rel=1e-12)


def test_an_ambiguous_price_without_a_file_sign_is_refused():
    with pytest.raises(BadValueError, match="ambiguous"):
        parse_number("1,234", None, what="a price")


def test_the_decimal_sign_is_decided_per_file():
    # the brief's rule: ';' between cells and decimal commas in the price column -> comma
    assert decimal_sign_of(["0,21", "1.234", "12"], ";") == ","
    assert decimal_sign_of(["0.21", "1,234"], ",") == "."
    assert decimal_sign_of(["1.234"], ";") == ","  # a ';' export of a decimal-comma sheet
    assert decimal_sign_of(["1.234"], ",") == "."
    assert decimal_sign_of(["0,21", "0.30"], ";") is None  # both seen: ambiguous cells refused


def test_descriptions_with_decimal_commas_micro_and_ohm_signs():
    # ISO 80000-1 7.3.1 (decimal comma); U+00B5 micro sign and U+03A9 / U+2126 ohm signs
    assert decimal_points("X2 0,47µF 310VAC pitch 22,5mm") == "X2 0.47µF 310VAC pitch 22.5mm"
    assert parse_value(decimal_points("0,47µF"), "F") == pytest.approx(0.47e-6)
    assert parse_value("330Ω", "ohm") == 330.0 and parse_value("330\u2126", "ohm") == 330.0
    assert decimal_points("C1,C2 1,2,3") == "C1,C2 1,2,3"  # lists are left alone
    with pytest.raises(BadValueError, match="ambiguous"):
        decimal_points("Elko 4,700µF")


# -------------------------------------------------------------------------- stock lists


def test_on_hand_with_a_thousands_comma_in_a_comma_csv(engine, tmp_path):
    path = tmp_path / "s.csv"
    path.write_text(
        'SKU,Family,Value,Unit price,On hand,MOQ\nA,x2-film,330n,0.2,"1,200","1.000"\n'
        'B,x2-film,470n,0.3,"12,000",10\n',
        encoding="utf-8",
    )
    result = import_stock(engine, path, supplier="t")
    assert result.problems == [] and result.inserted == 2
    stored = _stored(engine, "t")
    assert (stored["A"]["stock"], stored["A"]["min_order_qty"]) == (1200, 1000)
    assert stored["B"]["stock"] == 12000


def test_a_malformed_count_names_file_row_and_column(engine, tmp_path):
    path = tmp_path / "s.csv"
    path.write_text(
        'SKU,Family,Value,Unit price,On hand\nA,x2-film,330n,0.2,"1,2"\n'
        'B,x2-film,470n,0.3,"1,20,0"\n',
        encoding="utf-8",
    )
    result = import_stock(engine, path, supplier="t")
    assert [(p.row, p.column) for p in result.problems] == [(2, "On hand"), (3, "On hand")]
    assert not result.written


def test_european_prices_with_thousands_points(engine, tmp_path):
    path = tmp_path / "eu.csv"
    path.write_text(
        "Article;Family;Value;Unit price;Stock\nA;x2-film;330n;0,21;1.200\n"
        "B;x2-film;470n;1.234,50;5\nC;x2-film;680n;1.234;7\n",
        encoding="utf-8",
    )
    result = import_stock(engine, path, supplier="eu")
    assert result.problems == [] and result.decimal_sign == ","
    stored = _stored(engine, "eu")
    assert [stored[c]["unit_price"] for c in "ABC"] == [0.21, 1234.5, 1234.0]
    assert stored["A"]["stock"] == 1200


def _european_copy(path: Path) -> Path:
    """The demo list as a German spreadsheet would save it: ';', decimal commas, the micro
    sign, thousands points in the stock counts, Windows-1252 text. Windows-1252 has no ohm
    sign (Python codecs docs: U+03A9 and U+2126 are not in its table), so ohms are spelled."""
    lines = DESCRIBED.read_text(encoding="utf-8").splitlines()
    out = [lines[0].replace(",", ";")]
    for line in lines[1:]:
        sku, description, price, stock = line.split(",")
        description = re.sub(r"(\d)\.(\d)", r"\1,\2", description).replace("uF", "µF")
        description = re.sub(r"(\d)R\b", r"\1Ohm", description)
        stock = f"{int(stock):,}".replace(",", ".")
        out.append(";".join([sku, description, price.replace(".", ","), stock]))
    path.write_bytes(("\r\n".join(out) + "\r\n").encode("cp1252"))
    return path


def test_a_windows_1252_european_list_imports_like_the_utf8_one(engine, tmp_path):
    plain = import_stock(engine, DESCRIBED, supplier="plain")
    european = import_stock(engine, _european_copy(tmp_path / "eu.csv"), supplier="eu")
    assert plain.problems == [] and european.problems == []
    assert european.encoding == "cp1252" and "Windows-1252" in european.encoding_note
    a, b = _stored(engine, "plain"), _stored(engine, "eu")
    assert a.keys() == b.keys()
    compared = ("family", "value", "tolerance", "power_w", "rated_voltage_ac_v", "package")
    for code in a:
        assert {k: a[code][k] for k in compared} == {k: b[code][k] for k in compared}, code
        assert (a[code]["unit_price"], a[code]["stock"]) == (
            b[code]["unit_price"],
            b[code]["stock"],
        )
    assert "µF" in b["TD-0103"]["description"] and "330Ohm" in b["TD-0202"]["description"]


def test_cli_round_trip_of_a_windows_1252_list_through_design(catalogue_copy_url, tmp_path):
    path = _european_copy(tmp_path / "eu.csv")
    done = runner.invoke(
        app, ["parts", "import", str(path), "--supplier", "eu", "--db", catalogue_copy_url]
    )
    assert done.exit_code == 0, done.output
    said = [line for line in done.stdout.splitlines() if line.startswith("Encoding:")]
    assert len(said) == 1 and "Windows-1252 (cp1252)" in said[0]
    made = runner.invoke(
        app,
        ["design", "--load", "10m", "--vout", "5.1", "--stock-only", "--life", "1y",
         "--humidity", "40", "--json", "--db", catalogue_copy_url],
    )  # fmt: skip
    assert made.exit_code == 0, made.output
    parts = json.loads(made.stdout)["designs"][0]["parts"]
    assert parts and all(part["code"].startswith("S:eu:") for part in parts)


def test_encoding_option_forces_one_and_refuses_an_unknown_name(catalogue_copy_url, tmp_path):
    path = tmp_path / "s.csv"
    # Python codecs docs (cp1250, cp1252 tables): 0xB9 is U+0105 a-ogonek in cp1250 and
    # U+00B9 superscript one in cp1252, so only the forced encoding reads it as a letter
    path.write_bytes(b"SKU;Family;Value;Unit price;Description\nA;x2-film;330n;0,2;p\xb9\n")
    forced = runner.invoke(
        app,
        ["parts", "import", str(path), "--encoding", "cp1250", "--supplier", "f", "--json",
         "--db", catalogue_copy_url],
    )  # fmt: skip
    assert forced.exit_code == 0, forced.output
    doc = json.loads(forced.stdout)
    assert (
        doc["encoding"] == "cp1250" and doc["encoding_note"] == "file read as cp1250 (--encoding)"
    )
    engine = make_engine(catalogue_copy_url)
    try:
        assert _stored(engine, "f")["A"]["description"] == "p\u0105"  # cp1250 0xB9: a-ogonek
    finally:
        engine.dispose()
    bad = runner.invoke(
        app, ["parts", "import", str(path), "--encoding", "klingon-8", "--db", catalogue_copy_url]
    )
    assert bad.exit_code == 2 and "unknown encoding 'klingon-8'" in bad.output


def test_cli_rate_converts_a_foreign_currency_and_refuses_a_bad_rate(catalogue_copy_url, tmp_path):
    path = tmp_path / "usd.csv"
    path.write_text("SKU,Family,Value,Unit price\nA,x2-film,330n,$0.20\n", encoding="utf-8")
    base = ["parts", "import", str(path), "--supplier", "u", "--db", catalogue_copy_url]
    refused = runner.invoke(app, base)
    assert refused.exit_code == 2 and "--rate USD=" in refused.output
    done = runner.invoke(app, [*base, "--rate", "usd=0.9", "--json"])
    assert done.exit_code == 0, done.output
    engine = make_engine(catalogue_copy_url)
    try:
        # 0.20 USD at 0.9 EUR/USD = 0.18 EUR (plain arithmetic)
        assert _stored(engine, "u")["A"]["unit_price"] == pytest.approx(0.18)
    finally:
        engine.dispose()
    for bad in ("USD", "USD=0", "DOLLAR=1", "USD=abc"):
        result = runner.invoke(app, [*base, "--rate", bad])
        assert result.exit_code == 2 and "--rate" in result.output, (bad, result.output)
