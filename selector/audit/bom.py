"""Reading a bill of materials: CSV, TSV or XLSX, any common header spelling, one part per ref.

What this module does, in order:

1. **Bytes to text** (:func:`.bom_cells.decode_text`, shared with the stock importer and
   ``snap``). A UTF-8 or UTF-16 byte-order mark is honoured (and said so in the notes); other
   text is UTF-8, or else Windows-1252 (the single-byte fallback, said in one note), or of the
   named encoding. A byte that Windows-1252 leaves undefined is an error naming the row and
   column. NUL bytes without a byte-order mark (UTF-16 saved without one) are refused.
2. **Cells.** CSV and TSV through the standard ``csv`` module (the delimiter is sniffed among
   ``, ; TAB |``), so every row number in an error is the file's own line number; XLSX through
   openpyxl, which also tells which cells are merged. A workbook with several sheets needs
   ``sheet=``. Merged cells in or below the header are refused with their range.
3. **Header.** The first row (among the first 20 non-blank rows) in which a reference column and
   a value or description column are recognised. Each header is compared, after lower-casing and
   dropping punctuation, with the spellings in :data:`HEADER_SPELLINGS` by rapidfuzz
   (``max(ratio, token_sort_ratio)``, weighted; >= 85 counts). Each field takes its best header;
   two headers equally good for one field are an error unless ``columns=`` says which.
4. **Lines.** Grouped references (``R2, R3``, ``R2 R3``, ``R2-R4``, ``R2..R4``, ``R2-4``) are
   expanded; a quantity column must agree with the count. Blank rows are skipped (noted); a row
   with cells but no reference, a duplicate reference on one board, a bad range or quantity is
   an error naming file, row and column. Rows marked not fitted are dropped (noted).

A ``Role`` column (as ``dropper design --bom`` writes it) names each part's role; ``--role`` and
a roles file still win over it.

Several boards in one file are told apart by a column recognised as ``board`` (``Board``,
``Assembly``, ``PCB``, ``Project``); references need only be unique within a board.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Final

from ..errors import BadRowError, BadValueError
from ..ranges import check_count
from ..units import parse_number
from .bom_cells import _read_text_rows, _read_xlsx_rows, decode_text
from .bom_headers import FIELDS, HEADER_SPELLINGS, _find_header, map_headers
from .bom_refs import expand_refs

__all__ = [
    "FIELDS",
    "HEADER_SPELLINGS",
    "BomPart",
    "BomTable",
    "expand_refs",
    "map_headers",
    "read_bom",
]

_TRUE_WORDS: Final[frozenset[str]] = frozenset({"1", "y", "yes", "true", "x", "dnp", "dnf"})
_FALSE_WORDS: Final[frozenset[str]] = frozenset({"", "0", "n", "no", "false"})


@dataclass(frozen=True)
class BomPart:
    """One fitted part (one reference designator) as the BOM states it; texts untouched."""

    board: str
    ref: str
    row: int
    value: str
    description: str = ""
    package: str = ""
    mpn: str = ""
    manufacturer: str = ""
    voltage: str = ""
    power: str = ""
    tolerance: str = ""
    role: str = ""
    code: str = ""
    supplier: str = ""
    ratings: str = ""


@dataclass
class BomTable:
    """A BOM read and expanded: parts in file order, with what the reader decided on the way."""

    path: str
    sheet: str | None
    encoding: str
    header_row: int
    column_map: dict[str, str]
    ignored_columns: list[str]
    parts: list[BomPart]
    notes: list[str] = field(default_factory=list)

    @property
    def boards(self) -> list[str]:
        """Board names in order of first appearance ('' when the BOM has no board column)."""
        seen: dict[str, None] = {}
        for p in self.parts:
            seen.setdefault(p.board, None)
        return list(seen)


# --------------------------------------------------------------------------------------------
# the reader


def read_bom(
    path: str | Path,
    sheet: str | None = None,
    encoding: str | None = None,
    columns: Mapping[str, str] | None = None,
) -> BomTable:
    """Read a BOM file (``.csv``, ``.tsv``, ``.txt``, ``.xlsx``, ``.xlsm``) into one
    :class:`BomPart` per fitted reference designator.

    Raises :class:`BadRowError` (file, row, column, problem) for anything it would otherwise
    have to guess, :class:`BadValueError` for bad arguments.
    """
    path = Path(path)
    name = str(path)
    if not path.exists():
        raise BadRowError(name, None, None, "no such file")
    if not path.is_file():
        raise BadRowError(name, None, None, "not a file")
    suffix = path.suffix.lower()
    notes: list[str] = []
    merged: list = []
    if suffix in (".xlsx", ".xlsm"):
        if path.stat().st_size == 0:
            raise BadRowError(name, None, None, "the file is empty")
        if encoding is not None:
            notes.append("--encoding ignored: an XLSX workbook carries its own encoding")
        sheet, rows, merged = _read_xlsx_rows(path, sheet)
        enc = "xlsx"
    elif suffix in (".csv", ".tsv", ".txt", ""):
        if sheet is not None:
            raise BadValueError("--sheet applies to XLSX workbooks only")
        raw = path.read_bytes()
        text, enc, notes = decode_text(path, raw, encoding)
        if not text.strip():
            raise BadRowError(name, None, None, "the file is empty")
        rows = _read_text_rows(path, text)
    elif suffix == ".xls":
        raise BadRowError(name, None, None, "old .xls workbooks are not read; save it as .xlsx")
    else:
        raise BadRowError(
            name, None, None, f"unknown file type {suffix!r}; give a .csv, .tsv or .xlsx file"
        )
    if not any(any(c for c in cells) for _, cells in rows):
        raise BadRowError(name, None, None, "the file holds no data (only blank rows)")
    k, header_line, mapping = _find_header(rows, columns, f"{name}: ")
    headers = rows[k][1]
    if header_line != rows[0][0]:
        notes.append(f"header found on row {header_line}")
    for rng, r0, r1 in merged:
        if r1 >= header_line:
            raise BadRowError(
                name,
                r0,
                None,
                f"cells {rng} are merged; unmerge them and give each part its own complete row",
            )
    column_map = {f: headers[i] for f, i in mapping.items()}
    ignored = [h for i, h in enumerate(headers) if h and i not in mapping.values()]

    parts: list[BomPart] = []
    first_row: dict[tuple[str, str], int] = {}
    blank: list[int] = []
    skipped: list[str] = []
    width = len(headers)

    def cell(cells: list[str], fld: str) -> str:
        i = mapping.get(fld)
        return cells[i] if i is not None and i < len(cells) else ""

    for line, cells in rows[k + 1 :]:
        if not any(cells):
            blank.append(line)
            continue
        extra = [c for c in cells[width:] if c]
        if extra:
            raise BadRowError(
                name,
                line,
                None,
                f"has {len(cells)} cells where the header has {width} (an unquoted "
                f"separator inside a value? extra text {extra[0]!r})",
            )
        ref_text = cell(cells, "ref")
        ref_col = column_map["ref"]
        if not ref_text:
            raise BadRowError(
                name,
                line,
                ref_col,
                "no reference designator (a merged cell or a continuation line?); "
                "give each part its own complete row",
            )
        try:
            refs = expand_refs(ref_text)
        except BadValueError as exc:
            raise BadRowError(name, line, ref_col, str(exc)) from None
        if _not_fitted(cell(cells, "dnp"), cell(cells, "fitted"), name, line, column_map):
            skipped.extend(refs)
            continue
        qty_text = cell(cells, "qty")
        if qty_text:
            shown = qty_text if len(qty_text) <= 40 else qty_text[:40] + "..."
            try:
                qty_n = check_count(parse_number(qty_text, whole=True), "quantity")
            except (ValueError, OverflowError) as exc:  # BadValueError is a ValueError
                raise BadRowError(
                    name,
                    line,
                    column_map["qty"],
                    f"quantity {shown!r} is not a whole number from 0 to 1e9 ({exc})",
                ) from None
            qty_f = float(qty_n)
            if int(qty_f) == 0:
                skipped.extend(refs)
                continue
            if int(qty_f) != len(refs):
                raise BadRowError(
                    name,
                    line,
                    column_map["qty"],
                    f"quantity {int(qty_f)} but {len(refs)} designator(s) "
                    f"({', '.join(refs)}) in column '{ref_col}'",
                )
        board = cell(cells, "board")
        for ref in refs:
            key = (board, ref.upper())
            if key in first_row:
                on = f" on board '{board}'" if board else ""
                raise BadRowError(
                    name,
                    line,
                    ref_col,
                    f"designator {ref} appears twice{on} (rows {first_row[key]} and {line})",
                )
            first_row[key] = line
            parts.append(
                BomPart(
                    board=board,
                    ref=ref,
                    row=line,
                    value=cell(cells, "value"),
                    description=cell(cells, "description"),
                    package=cell(cells, "package"),
                    mpn=cell(cells, "mpn"),
                    manufacturer=cell(cells, "manufacturer"),
                    voltage=cell(cells, "voltage"),
                    power=cell(cells, "power"),
                    tolerance=cell(cells, "tolerance"),
                    role=cell(cells, "role"),
                    code=cell(cells, "code"),
                    supplier=cell(cells, "supplier"),
                    ratings=cell(cells, "ratings"),
                )
            )
    if blank:
        notes.append(f"{len(blank)} blank row(s) skipped: {_rows_text(blank)}")
    if skipped:
        notes.append(f"not fitted, left out: {', '.join(skipped)}")
    if not parts:
        raise BadRowError(name, None, None, "no fitted parts below the header")
    return BomTable(
        path=name,
        sheet=sheet,
        encoding=enc,
        header_row=header_line,
        column_map=column_map,
        ignored_columns=ignored,
        parts=parts,
        notes=notes,
    )


def _not_fitted(dnp: str, fitted: str, name: str, line: int, column_map) -> bool:
    for text, fld, fitted_when_true in ((dnp, "dnp", False), (fitted, "fitted", True)):
        t = text.strip().lower()
        if fld not in column_map or not t:
            continue
        if t in _TRUE_WORDS or t in ("fitted", "populated"):
            return not fitted_when_true
        if t in _FALSE_WORDS or t in ("not fitted", "unpopulated"):
            return fitted_when_true
        raise BadRowError(
            name, line, column_map[fld], f"cannot tell yes or no from {text!r} (write yes or no)"
        )
    return False


def _rows_text(rows: list[int]) -> str:
    if len(rows) > 10:
        return ", ".join(map(str, rows[:10])) + f", ... ({len(rows)} in all)"
    return ", ".join(map(str, rows))
