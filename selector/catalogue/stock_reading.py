"""Reading a stock list: the file's non-blank rows as cells, and its headers mapped to fields.

CSV and TSV go through the standard ``csv`` module (delimiter sniffed among ``, ; TAB |``),
XLSX through openpyxl; row numbers are the file's own. Each header is compared with the
spellings in :data:`FIELD_SPELLINGS` by rapidfuzz; headers such as ``Price 10``, ``10+`` or
``@100`` are quantity price breaks.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

from ..errors import BadRowError, BadValueError

#: a header maps to a field when its score reaches this (0-100)
MATCH_THRESHOLD: Final[float] = 85.0

#: field -> header spellings (compared after lower-casing and dropping punctuation)
FIELD_SPELLINGS: Final[dict[str, tuple[str, ...]]] = {
    "supplier_code": (
        "supplier code",
        "supplier part",
        "supplier part number",
        "supplier sku",
        "order code",
        "order number",
        "ordering code",
        "stock code",
        "sku",
        "item",
        "item code",
        "item number",
        "article",
        "article number",
        "part number",
        "part no",
        "pn",
        "mpn",
        "catalogue number",
        "cat no",
    ),
    "family": ("family", "part family", "type", "part type", "category", "kind", "group"),
    "description": ("description", "desc", "details", "comment", "name", "title"),
    "value": (
        "value",
        "nominal value",
        "capacitance",
        "resistance",
        "zener voltage",
        "vz",
        "rated current",
        "current rating",
    ),
    "tolerance": ("tolerance", "tol"),
    "voltage": (
        "voltage",
        "rated voltage",
        "voltage rating",
        "max voltage",
        "working voltage",
        "vrrm",
        "ac voltage",
    ),
    "power": ("power", "power rating", "rated power", "wattage", "pd"),
    "package": ("package", "case", "size", "footprint", "case size", "package case"),
    "stock": ("stock", "qty in stock", "quantity in stock", "on hand", "available", "in stock"),
    "unit_price": ("unit price", "price", "price each", "cost", "unit cost", "each"),
    "price_breaks": ("price breaks", "breaks", "quantity prices", "price table"),
    "currency": ("currency", "curr"),
    "min_order_qty": (
        "moq",
        "min order qty",
        "minimum order quantity",
        "minimum order",
        "min order",
        "min qty",
    ),
    "order_multiple": (
        "order multiple",
        "order multiples",
        "multiple",
        "multiples",
        "reel qty",
        "reel quantity",
        "reel size",
        "pack qty",
        "pack quantity",
        "pack size",
        "spq",
        "standard pack qty",
        "standard pack quantity",
        "order increment",
    ),
    "safety_class": ("safety class", "class", "subclass", "x class"),
    "temp_max": ("max temperature", "temperature", "temp", "operating temperature max"),
    "ripple": ("ripple current", "ripple"),
}
FIELDS: Final[tuple[str, ...]] = tuple(FIELD_SPELLINGS)

# price-break headers: "price 10", "price @ 10", "price 10+", "10+", "@100", "qty 100 price"
_BREAK_RES = (
    re.compile(r"^(?:unit\s*)?(?:price|cost)\s*(?:@|at|for|x|qty)?\s*(\d+)\s*\+?\s*(?:pcs)?$"),
    re.compile(r"^@?\s*(\d+)\s*\+\s*(?:pcs)?$"),
    re.compile(r"^@\s*(\d+)$"),
    re.compile(r"^(?:qty|quantity)\s*(\d+)\s*\+?\s*(?:price)?$"),
)


@dataclass(frozen=True)
class ColumnMatch:
    """How one header of the file was mapped: ``field`` (None: ignored), ``score`` 0-100,
    ``how`` = ``"fuzzy"``, ``"given"`` (column_map) or ``"price break"``; ``min_qty`` for a
    price-break column."""

    header: str
    field: str | None
    score: float
    how: str
    min_qty: int | None = None


@dataclass(frozen=True)
class CellTable:
    """A stock list read: its non-blank rows, the CSV delimiter (None for XLSX), the text
    encoding used (``"xlsx"`` for a workbook) and what the decoder noted."""

    rows: list[tuple[int, list[Any]]]
    delimiter: str | None
    encoding: str
    notes: list[str]


def read_cells(
    path: str | Path, sheet: str | None = None, encoding: str | None = None
) -> list[tuple[int, list[Any]]]:
    """The non-blank rows of a CSV, TSV or XLSX file as ``(row number, cells)`` (see
    :func:`read_table`)."""
    return read_table(path, sheet, encoding).rows


def read_table(
    path: str | Path, sheet: str | None = None, encoding: str | None = None
) -> CellTable:
    """A CSV, TSV or XLSX file as a :class:`CellTable`.

    Row numbers are the file's own, counted from 1. XLSX cells keep their type (numbers stay
    numbers); CSV/TSV cells are text, decoded by the BOM reader's decoder
    (:func:`selector.audit.bom_cells.decode_text`: UTF-8, a UTF-8/UTF-16 byte-order mark, else
    Windows-1252, or ``encoding``). Raises :class:`BadRowError` when the file cannot be read.
    """
    from ..audit.bom_cells import decode_text

    file = Path(path)
    if not file.is_file():
        raise BadValueError(f"{file}: no such file")
    suffix = file.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        return CellTable(_read_xlsx(file, sheet), None, "xlsx", [])
    if suffix in (".xls", ".ods"):
        raise BadRowError(str(file), None, None, "save it as .xlsx, .csv or .tsv to import it")
    raw = file.read_bytes()
    text, used, notes = decode_text(file, raw, encoding)
    if suffix == ".tsv" or suffix == ".tab":
        delimiter = "\t"
    else:
        sample = text[:8192]
        try:
            delimiter = csv.Sniffer().sniff(sample, delimiters=",;\t|").delimiter
        except csv.Error:
            delimiter = ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    rows: list[tuple[int, list[Any]]] = []
    try:
        for cells in reader:
            if any(cell.strip() for cell in cells):
                rows.append((reader.line_num, cells))
    except csv.Error as exc:
        raise BadRowError(str(file), reader.line_num, None, f"cannot read as CSV: {exc}") from None
    return CellTable(rows, delimiter, used, notes)


def _read_xlsx(file: Path, sheet: str | None) -> list[tuple[int, list[Any]]]:
    """The non-blank rows of one sheet (the first unless named); cells keep their type."""
    import openpyxl

    try:
        workbook = openpyxl.load_workbook(file, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds for a bad file
        raise BadRowError(str(file), None, None, f"cannot read as XLSX: {exc}") from None
    try:
        if sheet is not None:
            if sheet not in workbook.sheetnames:
                raise BadRowError(
                    str(file),
                    None,
                    None,
                    f"no sheet {sheet!r}; sheets: {', '.join(workbook.sheetnames)}",
                )
            worksheet = workbook[sheet]
        else:
            worksheet = workbook.worksheets[0]
        # bounded by the cells the file holds, not by its declared dimension (a tiny file can
        # declare A1:XFD1048576 and have every row padded to 16,384 cells)
        worksheet.reset_dimensions()
        rows = []
        for number, cells in enumerate(worksheet.iter_rows(values_only=True), start=1):
            values = ["" if cell is None else cell for cell in cells]
            if any(str(cell).strip() for cell in values):
                rows.append((number, values))
        return rows
    finally:
        workbook.close()


def normalise_text(text: str) -> str:
    """Lower case, underscores and punctuation (but @ and +) to spaces: 'Price_10+' ->
    'price 10+'; used for headers and package names alike."""
    text = str(text).lower().replace("_", " ")
    text = re.sub(r"[^\w@+ ]+", " ", text)
    return re.sub(r"\s+", " ", text).strip()


def _break_qty(header: str) -> int | None:
    """The quantity a price-break header names ('price 10', '10+', '@100'), or None."""
    text = normalise_text(header)
    for pattern in _BREAK_RES:
        found = pattern.match(text)
        if found:
            return int(found.group(1))
    return None


def map_columns(
    headers: Sequence[str], column_map: Mapping[str, str] | None = None
) -> list[ColumnMatch]:
    """Map each header to a field (see module doc). ``column_map`` maps a header (matched
    exactly, or case-insensitively) to a field name, or to ``"ignore"``.

    Each field takes its best-scoring header; a header that does not reach
    :data:`MATCH_THRESHOLD` is ignored. Raises :class:`BadValueError` for an unknown field or
    header in ``column_map``, naming the valid ones.
    """
    from rapidfuzz import fuzz

    given: dict[int, str | None] = {}
    for header, field_name in (column_map or {}).items():
        index = next((i for i, h in enumerate(headers) if str(h) == header), None)
        if index is None:
            index = next(
                (i for i, h in enumerate(headers) if normalise_text(h) == normalise_text(header)),
                None,
            )
        if index is None:
            raise BadValueError(
                f"--map: no column {header!r} in the file; columns: "
                + ", ".join(repr(str(h)) for h in headers)
            )
        if field_name not in FIELDS and field_name != "ignore":
            raise BadValueError(
                f"--map: unknown field {field_name!r}; fields: {', '.join(FIELDS)}, ignore"
            )
        given[index] = None if field_name == "ignore" else field_name

    matches: list[ColumnMatch | None] = [None] * len(headers)
    taken: set[str] = set()
    for index, field_name in given.items():
        matches[index] = ColumnMatch(str(headers[index]), field_name, 100.0, "given")
        if field_name:
            taken.add(field_name)
    candidates: list[tuple[float, int, str]] = []
    for i, header in enumerate(headers):
        if i in given:
            continue
        qty = _break_qty(str(header))
        if qty is not None:
            matches[i] = ColumnMatch(str(header), "price_breaks", 100.0, "price break", qty)
            continue
        text = normalise_text(header)
        if not text:
            continue
        for field_name, spellings in FIELD_SPELLINGS.items():
            score = max(
                max(fuzz.ratio(text, spelling), fuzz.token_sort_ratio(text, spelling))
                for spelling in spellings
            )
            if score >= MATCH_THRESHOLD:
                candidates.append((score, i, field_name))
    # best pairs first; each field and each header used once
    for score, i, field_name in sorted(candidates, key=lambda c: (-c[0], c[1])):
        if matches[i] is not None or field_name in taken:
            continue
        matches[i] = ColumnMatch(str(headers[i]), field_name, float(score), "fuzzy")
        taken.add(field_name)
    return [
        match if match is not None else ColumnMatch(str(headers[i]), None, 0.0, "ignored")
        for i, match in enumerate(matches)
    ]


def cell_text(cell: Any) -> str:
    """A cell as stripped text; a whole float as an integer ('10.0' -> '10'), None as ''."""
    if cell is None:
        return ""
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    return str(cell).strip()
