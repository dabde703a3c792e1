"""BOM reading: header spellings, grouped references, encodings and every kind of bad input.

The BOM files under tests/data are demo data (invented). The checks here are of file handling,
not physics: the expectations are the file formats' own definitions (RFC 4180 CSV quoting, the
Unicode byte-order marks of UTF-8 and UTF-16) and common practice for BOM exports.
"""

from __future__ import annotations

import codecs
from pathlib import Path

import pytest
from openpyxl import Workbook

from selector.audit.bom import expand_refs, map_headers, read_bom
from selector.errors import BadRowError, BadValueError

DATA = Path(__file__).parent / "data"
SOUND = DATA / "audit_vent_sound.csv"


def _write(tmp_path: Path, name: str, text: str, encoding: str = "utf-8") -> Path:
    p = tmp_path / name
    p.write_bytes(text.encode(encoding))
    return p


SIMPLE = (
    "Reference,Value,Description,Qty\n"
    "C1,220n,X2 305VAC,1\n"
    '"R1, R2",47R,metal oxide 1W,2\n'
    "D1,12V,Zener 1W,1\n"
)


# ------------------------------------------------------------------------------- header mapping


@pytest.mark.parametrize(
    "headers, expected",
    [
        # KiCad-style export
        (["Reference", "Value", "Footprint", "Datasheet"], {"ref": 0, "value": 1, "package": 2}),
        # Altium-style: the value lives in "Comment"
        (
            ["Designator", "Comment", "Description", "Footprint", "Quantity"],
            {"ref": 0, "value": 1, "description": 2, "package": 3, "qty": 4},
        ),
        # distributor-style spellings
        (
            ["Ref Des", "Qty.", "Value", "Package / Case", "Mfr. Part #", "Voltage - Rated"],
            {"ref": 0, "qty": 1, "value": 2, "package": 3, "mpn": 4, "voltage": 5},
        ),
        (
            ["RefDes", "Val", "Quantity Per PCB", "Board"],
            {"ref": 0, "value": 1, "qty": 2, "board": 3},
        ),
    ],
)
def test_header_spellings_map(headers, expected):
    assert map_headers(headers) == expected


def test_value_wins_over_comment_when_both_present():
    m = map_headers(["Designator", "Comment", "Value"])
    assert m["value"] == 2


def test_two_equally_good_headers_are_an_error_naming_both():
    with pytest.raises(BadValueError, match="'Qty' and 'Quantity'.*--column qty="):
        map_headers(["Ref", "Value", "Qty", "Quantity"])


def test_column_override_resolves_the_tie():
    m = map_headers(["Ref", "Value", "Qty", "Quantity"], {"qty": "Quantity"})
    assert m["qty"] == 3


def test_column_override_with_unknown_header_lists_columns():
    with pytest.raises(BadValueError, match="no column 'Amount'.*Ref, Value"):
        map_headers(["Ref", "Value"], {"qty": "Amount"})


# ------------------------------------------------------------------------------- references


@pytest.mark.parametrize(
    "text, refs",
    [
        ("R2, R3", ["R2", "R3"]),
        ("R2-R4", ["R2", "R3", "R4"]),
        ("R2 - R4", ["R2", "R3", "R4"]),
        ("R2..R4", ["R2", "R3", "R4"]),
        ("R2-4", ["R2", "R3", "R4"]),
        ("C1;C2 C5", ["C1", "C2", "C5"]),
        ("R2–R3", ["R2", "R3"]),  # en dash, as spreadsheets autocorrect it
    ],
)
def test_grouped_references_expand(text, refs):
    assert expand_refs(text) == refs


@pytest.mark.parametrize(
    "text, message",
    [
        ("R2-C4", "mixes prefixes"),
        ("R4-R2", "runs backwards"),
        ("R1-R5000", "spans"),
        ("Total", "not a reference designator"),
    ],
)
def test_bad_references(text, message):
    with pytest.raises(BadValueError, match=message):
        expand_refs(text)


# ------------------------------------------------------------------------------- the demo files


def test_sound_bom_reads_with_mapping_and_expansion():
    t = read_bom(SOUND)
    assert t.column_map == {
        "ref": "Reference",
        "qty": "Qty",
        "value": "Value",
        "description": "Description",
        "package": "Footprint",
        "mpn": "Manufacturer Part Number",
    }
    refs = [p.ref for p in t.parts]
    assert refs == ["F1", "R1", "R2", "C1", "R3", "R4", "R5", "BR1", "D1", "C2", "C3", "U1"]
    assert t.header_row == 2  # row 1 is the demo title
    r4 = next(p for p in t.parts if p.ref == "R4")
    assert (r4.value, r4.row) == ("470k", 6)


def test_tsv_and_xlsx_demo_files_read():
    tsv = read_bom(DATA / "audit_vent_fault_x2_250.tsv")
    assert tsv.column_map["value"] == "Comment"
    assert "LibRef" in tsv.ignored_columns
    xlsx = read_bom(DATA / "audit_vent_fault_no_bleeder.xlsx")
    assert xlsx.sheet == "BOM" and xlsx.column_map["package"] == "Package / Case"
    assert [p.ref for p in xlsx.parts][:3] == ["F1", "R1", "R2"]


def test_semicolon_csv_is_sniffed(tmp_path):
    p = _write(tmp_path, "semi.csv", SIMPLE.replace(",", ";").replace('"R1; R2"', '"R1, R2"'))
    t = read_bom(p)
    assert [x.ref for x in t.parts] == ["C1", "R1", "R2", "D1"]


def test_board_column_allows_same_ref_on_two_boards(tmp_path):
    p = _write(tmp_path, "b.csv", "Board,Ref,Value\nA,R1,47R\nB,R1,47R\n")
    t = read_bom(p)
    assert t.boards == ["A", "B"]


def test_not_fitted_rows_are_left_out_and_noted(tmp_path):
    p = _write(tmp_path, "dnp.csv", "Ref,Value,DNP\nR1,47R,\nR2,47R,yes\n")
    t = read_bom(p)
    assert [x.ref for x in t.parts] == ["R1"]
    assert any("R2" in n for n in t.notes)


# ------------------------------------------------------------------------------- encodings


def test_utf8_with_bom_reads_clean_header(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes(codecs.BOM_UTF8 + SIMPLE.encode("utf-8"))
    t = read_bom(p)
    assert t.column_map["ref"] == "Reference"  # not '\ufeffReference'
    assert any("byte-order mark" in n for n in t.notes)


@pytest.mark.parametrize("enc", ["utf-16", "utf-16-le", "utf-16-be"])
def test_utf16_with_bom_reads(tmp_path, enc):
    p = tmp_path / "bom.csv"
    raw = SIMPLE.encode(enc)
    if enc != "utf-16":  # the -le/-be codecs write no BOM: add the right one
        raw = (codecs.BOM_UTF16_LE if enc.endswith("le") else codecs.BOM_UTF16_BE) + raw
    p.write_bytes(raw)
    t = read_bom(p)
    assert [x.ref for x in t.parts] == ["C1", "R1", "R2", "D1"]


def test_utf16_without_bom_is_refused(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes(SIMPLE.encode("utf-16-le"))
    with pytest.raises(BadRowError, match="NUL bytes.*--encoding utf-16-le"):
        read_bom(p)


def test_text_that_is_not_utf8_is_read_as_windows_1252_and_said(tmp_path):
    # Python codecs docs, standard encodings: cp1252 maps 0xB5 to U+00B5 MICRO SIGN and
    # 0xA0 to NO-BREAK SPACE; 0xB5 alone is not valid UTF-8 (RFC 3629: a lone continuation byte)
    text = "Ref,Value,Description\nC1,0.22µF,X2 305VAC\nR1,470 kR,\n"
    p = tmp_path / "bom.csv"
    p.write_bytes(text.encode("cp1252"))
    t = read_bom(p)
    assert t.encoding == "cp1252" and t.parts[0].value == "0.22µF"
    assert any("Windows-1252" in n and "0xb5 on row 2" in n for n in t.notes)


def test_a_byte_undefined_in_windows_1252_is_refused_naming_row_and_column(tmp_path):
    # Python codecs docs: cp1252 leaves 0x81, 0x8D, 0x8F, 0x90 and 0x9D undefined
    p = tmp_path / "bom.csv"
    p.write_bytes(b"Ref,Value,Description\nC1,0.22\xb5F,X2\nR1,470\x81,\n")
    with pytest.raises(BadRowError) as info:
        read_bom(p)
    e = info.value
    assert (e.row, e.column) == (3, "Value")
    assert "0x81" in str(e) and "--encoding" in str(e)


def test_utf16_big_endian_keeps_its_byte_order(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes(codecs.BOM_UTF16_BE + SIMPLE.encode("utf-16-be"))
    t = read_bom(p)
    assert t.encoding == "utf-16-be" and any("big-endian" in n for n in t.notes)


def test_quantity_with_a_thousands_separator(tmp_path):
    # ISO 80000-1:2009 7.3.1: digits may be grouped in threes; a comma between groups is
    # common practice in trade exports (no source); '1,2' is not a whole number
    refs = ",".join(f"R{i}" for i in range(1, 1201))
    p = _write(tmp_path, "q.csv", f'Ref,Qty,Value\n"{refs}","1,200",47R\n')
    assert len(read_bom(p).parts) == 1200
    p = _write(tmp_path, "q2.csv", 'Ref,Qty,Value\n"R1,R2","1,2",47R\n')
    with pytest.raises(BadRowError, match="row 2, column 'Qty'.*whole number"):
        read_bom(p)


def test_latin1_reads_when_named(tmp_path):
    p = tmp_path / "bom.csv"
    p.write_bytes("Ref,Value,Description\nC1,0.22µF,X2 305VAC\n".encode("latin-1"))
    t = read_bom(p, encoding="latin-1")
    assert t.parts[0].value == "0.22µF"


def test_unknown_encoding_name():
    with pytest.raises(BadValueError, match="unknown encoding"):
        read_bom(SOUND, encoding="klingon-8")


# ------------------------------------------------------------------------------- bad input


def test_missing_file(tmp_path):
    with pytest.raises(BadRowError, match="no such file"):
        read_bom(tmp_path / "nope.csv")


def test_empty_file(tmp_path):
    p = _write(tmp_path, "empty.csv", "")
    with pytest.raises(BadRowError, match="empty"):
        read_bom(p)


def test_only_blank_rows(tmp_path):
    p = _write(tmp_path, "blank.csv", "\n,,,\n\n")
    with pytest.raises(BadRowError, match="no data"):
        read_bom(p)


def test_header_only(tmp_path):
    p = _write(tmp_path, "head.csv", "Ref,Value\n")
    with pytest.raises(BadRowError, match="no fitted parts"):
        read_bom(p)


def test_no_header_row(tmp_path):
    p = _write(tmp_path, "nohead.csv", "a,b,c\n1,2,3\n")
    with pytest.raises(BadRowError, match="no header row"):
        read_bom(p)


def test_blank_rows_are_skipped_and_noted(tmp_path):
    p = _write(tmp_path, "b.csv", "Ref,Value\nR1,47R\n,\n\nR2,47R\n")
    t = read_bom(p)
    assert [x.ref for x in t.parts] == ["R1", "R2"]
    assert any("blank row(s) skipped: 3, 4" in n for n in t.notes)


def test_continuation_row_without_ref_names_row_and_column(tmp_path):
    # what a merged designator cell becomes in a CSV export: the second row has no designator
    p = _write(tmp_path, "m.csv", "Designator,Value,Description\nR1,47R,metal oxide\n,,1W 350V\n")
    with pytest.raises(BadRowError) as info:
        read_bom(p)
    assert (info.value.row, info.value.column) == (3, "Designator")
    assert "merged cell" in str(info.value)


def test_merged_cells_in_xlsx_are_refused_with_their_range(tmp_path):
    wb = Workbook()
    ws = wb.active
    ws.append(["Ref", "Value", "Description"])
    ws.append(["R1", "47R", "metal oxide 1W"])
    ws.append(["R2", "", "metal oxide 1W"])
    ws.merge_cells("B2:B3")
    p = tmp_path / "merged.xlsx"
    wb.save(p)
    with pytest.raises(BadRowError, match=r"row 2.*cells B2:B3 are merged"):
        read_bom(p)


def test_duplicate_designator_names_both_rows(tmp_path):
    p = _write(tmp_path, "d.csv", "Ref,Value\nR1,47R\nC1,220n\nR1,470k\n")
    with pytest.raises(
        BadRowError, match=r"row 4, column 'Ref': designator R1 appears twice \(rows 2 and 4\)"
    ):
        read_bom(p)


def test_duplicate_inside_a_range(tmp_path):
    p = _write(tmp_path, "d.csv", "Ref,Value\nR1-R3,47R\nR2,470k\n")
    with pytest.raises(BadRowError, match="R2 appears twice"):
        read_bom(p)


def test_quantity_disagreeing_with_refs(tmp_path):
    p = _write(tmp_path, "q.csv", 'Ref,Value,Qty\n"R1, R2",47R,3\n')
    with pytest.raises(BadRowError, match=r"row 2, column 'Qty': quantity 3 but 2 designator"):
        read_bom(p)


def test_quantity_not_a_number(tmp_path):
    p = _write(tmp_path, "q.csv", "Ref,Value,Qty\nR1,47R,two\n")
    with pytest.raises(BadRowError, match="not a whole number"):
        read_bom(p)


def test_bad_range_names_row_and_column(tmp_path):
    p = _write(tmp_path, "r.csv", "Ref,Value\nR4-R2,47R\n")
    with pytest.raises(BadRowError, match=r"row 2, column 'Ref': range 'R4-R2' runs backwards"):
        read_bom(p)


def test_row_with_extra_cells(tmp_path):
    p = _write(tmp_path, "x.csv", "Ref,Value\nR1,47R,1W,oops\n")
    with pytest.raises(BadRowError, match="row 2.*3 cells|row 2.*4 cells"):
        read_bom(p)


def test_xlsx_with_several_sheets_needs_sheet(tmp_path):
    wb = Workbook()
    wb.active.title = "Notes"
    ws = wb.create_sheet("Power BOM")
    ws.append(["Ref", "Value"])
    ws.append(["R1", "47R"])
    p = tmp_path / "two.xlsx"
    wb.save(p)
    with pytest.raises(BadRowError, match=r"2 sheets \(Notes, Power BOM\).*--sheet"):
        read_bom(p)
    assert read_bom(p, sheet="Power BOM").parts[0].ref == "R1"
    with pytest.raises(BadRowError, match="did you mean 'Power BOM'"):
        read_bom(p, sheet="Power bom2")


def test_not_an_xlsx(tmp_path):
    p = _write(tmp_path, "fake.xlsx", "Ref,Value\nR1,47R\n")
    with pytest.raises(BadRowError, match="cannot read as an XLSX"):
        read_bom(p)


def test_unknown_extension(tmp_path):
    p = _write(tmp_path, "bom.pdf", "x")
    with pytest.raises(BadRowError, match="unknown file type"):
        read_bom(p)


def test_sheet_option_on_csv_is_refused():
    with pytest.raises(BadValueError, match="XLSX workbooks only"):
        read_bom(SOUND, sheet="BOM")
