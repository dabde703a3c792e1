"""Bytes of a BOM file to rows of cell texts: decoding, CSV/TSV sniffing and XLSX cells.

Steps 1 and 2 of :mod:`.bom`: a byte-order mark is honoured, other text is UTF-8, else
Windows-1252 (said in the notes), or of the named encoding; CSV and TSV rows keep the file's
own line numbers; an XLSX sheet is read through openpyxl, which also reports merged cells.
"""

from __future__ import annotations

import codecs
import csv
import io
import math
from pathlib import Path
from typing import Any

from ..errors import BadRowError, BadValueError
from .bom_headers import _find_header, map_headers


def decode_text(path: Path, raw: bytes, encoding: str | None) -> tuple[str, str, list[str]]:
    """(text, encoding used, notes): the one decoder of BOMs, stock lists and snapped files.

    ``encoding`` forces one (an unknown name is a BadValueError). Otherwise a UTF-8 or UTF-16
    byte-order mark decides (UTF-16 as ``utf-16-le`` / ``utf-16-be``, so that a writer can keep
    the byte order), then UTF-8, then Windows-1252 (``cp1252``), the single-byte fallback, which
    is said in the notes. NUL bytes without a byte-order mark (UTF-16 saved without one) are
    refused. Codec behaviour as in Python's ``codecs`` documentation (standard encodings
    ``utf_8_sig``, ``utf_16``, ``cp1252``)."""
    notes: list[str] = []
    if encoding is not None:
        try:
            codecs.lookup(encoding)
        except LookupError:
            raise BadValueError(
                f"unknown encoding {encoding!r}; e.g. utf-8, latin-1, cp1252, utf-16"
            ) from None
        if codecs.lookup(encoding).name == "utf-16" and raw.startswith(
            (codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)
        ):
            encoding = "utf-16-le" if raw.startswith(codecs.BOM_UTF16_LE) else "utf-16-be"
        try:
            text = raw.decode(encoding)
        except UnicodeDecodeError as exc:
            _raise_decode(path, raw, exc, encoding)
        if codecs.lookup(encoding).name not in ("utf-8", "utf-8-sig"):
            notes.append(f"file read as {encoding} (--encoding)")
        return text.removeprefix("\ufeff"), encoding, notes
    if raw.startswith(codecs.BOM_UTF8):
        notes.append("file is UTF-8 with a byte-order mark (read as such)")
        enc = "utf-8-sig"
    elif raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        enc = "utf-16-le" if raw.startswith(codecs.BOM_UTF16_LE) else "utf-16-be"
        order = "little" if enc.endswith("le") else "big"
        notes.append(f"file is UTF-16 ({order}-endian) with a byte-order mark (read as such)")
    elif b"\x00" in raw:
        line = raw[: raw.index(b"\x00")].count(b"\n") + 1
        raise BadRowError(
            str(path),
            line,
            None,
            "holds NUL bytes: UTF-16 text without a byte-order mark? "
            "pass --encoding utf-16-le (or utf-16-be), or re-save it as UTF-8",
        )
    else:
        enc = "utf-8"
    try:
        text = raw.decode(enc)
    except UnicodeDecodeError as exc:
        if enc != "utf-8":
            _raise_decode(path, raw, exc, enc)
        try:
            text = raw.decode("cp1252")
        except UnicodeDecodeError as exc2:
            _raise_decode(path, raw, exc2, "cp1252")
        enc = "cp1252"
        row = raw.count(b"\n", 0, exc.start) + 1
        notes.append(
            f"file is not UTF-8 (byte 0x{raw[exc.start : exc.start + 1].hex()} on row {row}): "
            "read as Windows-1252 (cp1252); name another with --encoding"
        )
    return text.removeprefix("\ufeff"), enc, notes


def _raise_decode(path: Path, raw: bytes, exc: UnicodeDecodeError, enc: str) -> None:
    start = exc.start
    line_start = raw.rfind(b"\n", 0, start) + 1
    row = raw.count(b"\n", 0, start) + 1
    column = None
    try:  # which column: find the header in the text read leniently, count cells before the byte
        text = raw.decode(enc, errors="replace").removeprefix("\ufeff")
        delim = "\t" if path.suffix.lower() == ".tsv" else _sniff(text[:65536])
        rows = [
            (i, next(csv.reader([ln], delimiter=delim), []))
            for i, ln in enumerate(text.splitlines(), 1)
        ]
        _, _, mapping = _find_header(rows, None, "")
        header = next(cells for i, cells in rows if cells and map_headers(cells) == mapping)
        before = raw[line_start:start].decode(enc, errors="replace")
        index = len(next(csv.reader([before], delimiter=delim), [""])) - 1
        if 0 <= index < len(header):
            column = header[index].strip() or None
    except (csv.Error, StopIteration, BadRowError, BadValueError):
        pass
    byte = raw[start : start + 1].hex()
    raise BadRowError(
        str(path),
        row,
        column,
        (
            f"byte 0x{byte} is neither UTF-8 nor Windows-1252 (cp1252) text; re-save the "
            "file as UTF-8 or name its encoding with --encoding (e.g. latin-1, cp1250)"
            if enc == "cp1252"
            else f"byte 0x{byte} is not {enc} text (Latin-1 or Windows-1252?); "
            "re-save the file as UTF-8 or pass --encoding latin-1 (or cp1252)"
        ),
    )


def _sniff(sample: str) -> str:
    """The delimiter among , TAB ; | that splits the sample's lines most consistently: the most
    common non-zero count of it per line, times the share of lines that have that count."""
    from collections import Counter

    lines = [ln for ln in sample.splitlines() if ln.strip()][:30]
    best, best_score = ",", 0.0
    for delim in (",", "\t", ";", "|"):
        counts = Counter(ln.count(delim) for ln in lines)
        counts.pop(0, None)
        if not counts:
            continue
        n, hits = counts.most_common(1)[0]
        score = n * hits / len(lines)
        if score > best_score:
            best, best_score = delim, score
    return best


def _read_text_rows(path: Path, text: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) for each record of a CSV/TSV text."""
    delim = "\t" if path.suffix.lower() == ".tsv" else _sniff(text[:65536])
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim)
    rows: list[tuple[int, list[str]]] = []
    start = 1
    try:
        for cells in reader:
            rows.append((start, [c.strip() for c in cells]))
            start = reader.line_num + 1
    except csv.Error as exc:
        raise BadRowError(str(path), reader.line_num, None, f"cannot read as CSV: {exc}") from None
    return rows


def _cell_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, float):
        if math.isfinite(value) and abs(value) < 1e15 and value == int(value):
            return str(int(value))
        return f"{value:.12g}"
    return str(value).strip()


def _read_xlsx_rows(path: Path, sheet: str | None) -> tuple[str, list[tuple[int, list[str]]], list]:
    import zipfile

    from openpyxl import load_workbook

    try:
        book = load_workbook(path, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError) as exc:
        raise BadRowError(
            str(path), None, None, f"cannot read as an XLSX workbook: {exc}"
        ) from None
    names = book.sheetnames
    if sheet is None:
        if len(names) != 1:
            raise BadRowError(
                str(path),
                None,
                None,
                f"the workbook has {len(names)} sheets ({', '.join(names)}); "
                "say which one holds the BOM with --sheet NAME",
            )
        sheet = names[0]
    elif sheet not in names:
        from rapidfuzz import process

        match = process.extractOne(sheet, names)
        hint = f"; did you mean '{match[0]}'?" if match else ""
        raise BadRowError(
            str(path), None, None, f"no sheet '{sheet}' (sheets: {', '.join(names)}){hint}"
        )
    ws = book[sheet]
    rows = _used_rows(ws)
    merged = [(str(r), r.min_row, r.max_row) for r in ws.merged_cells.ranges]
    return sheet, rows, merged


def _used_rows(ws: Any) -> list[tuple[int, list[str]]]:
    """(row number, cell texts) of the rows that hold a value, bounded by the cells present,
    never by the sheet's declared dimension (a 5.6 kB file with one cell at XFD1048576 must
    not make 17 thousand million cells). Each row runs to its last non-empty cell; a run of
    blank rows between rows with values is kept as one empty row (a section break, as in a
    CSV)."""
    present: dict[int, dict[int, str]] = {}
    # openpyxl keeps only the cells the file holds in ``_cells`` ((row, column) -> Cell)
    for (row, column), cell in ws._cells.items():
        text = _cell_text(cell.value)
        if text:
            present.setdefault(row, {})[column] = text
    rows: list[tuple[int, list[str]]] = []
    previous = 0
    for number in sorted(present):
        if number > previous + 1 and rows:
            rows.append((previous + 1, []))
        cells = present[number]
        width = max(cells)
        rows.append((number, [cells.get(c, "") for c in range(1, width + 1)]))
        previous = number
    return rows
