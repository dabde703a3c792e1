"""Importing a stock list or a distributor export (CSV, TSV, XLSX) into the catalogue.

What happens, in order:

1. **Cells.** CSV and TSV through the standard ``csv`` module (delimiter sniffed among
   ``, ; TAB |``), XLSX through openpyxl (first sheet unless ``sheet=``). Row numbers in every
   message are the file's own (1 = first line / first spreadsheet row). The header is the first
   non-blank row.
2. **Columns.** Each header is lower-cased, stripped of punctuation and compared with the
   spellings in :data:`FIELD_SPELLINGS` by rapidfuzz (``max(ratio, token_sort_ratio)``); a
   score of at least :data:`MATCH_THRESHOLD` maps it. Headers such as ``Price 10``, ``10+`` or
   ``@100`` are quantity price breaks. ``column_map={"My header": "field"}`` overrides. The
   mapping (with scores) is part of the result, so the CLI can show it.
3. **Rows.** Each row is validated on its own: the family text must name one catalogue family
   (:func:`recognise_family`; refused with the nearest families otherwise), the value and
   ratings are read by :func:`selector.units.parse_value` in the unit of the family's kind,
   prices and stock must be non-negative numbers. A row's ratings not given in the file are
   taken from the built-in part of the same family nearest in value (same package / voltage
   when given): the *template*. Every failure is a :class:`RowProblem` (file, row, column,
   problem).
4. **Writing.** Nothing is written if any row failed, unless ``partial=True`` (then the good
   rows are). All rows go in ONE transaction: an error or a killed process leaves the
   catalogue as it was. Each part's key is stable: ``code`` is derived from the supplier and
   the supplier's part code, so importing the same list again updates rows in place; rows that
   did not change are not written at all. A supplier's list is a **snapshot**: the supplier's
   rows that the file no longer holds are withdrawn in the same transaction (stock 0,
   ``withdrawn`` true; design never uses them), unless ``merge=True``. Supplier names compare
   case-insensitively (the first spelling imported is kept). Writes are upserts
   (``INSERT .. ON CONFLICT``), so two imports running at once on PostgreSQL do not lose rows.

Steps 1-2 live in :mod:`.stock_reading`, family recognition in :mod:`.stock_families`, step 3
in :mod:`.stock_rows`, step 4 in :mod:`.stock_writing`; this module runs them in order.

Imported parts carry ``source = "import:<supplier>"`` and take part in design like any other.
The library never prints; ``progress(done, total)`` is called as rows are validated and
written (total = 2 x rows).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Final

from sqlalchemy import Engine
from sqlalchemy.orm import Session

from ..errors import BadRowError, BadValueError, CatalogueError
from ..units import decimal_sign_of
from .stock_described import SOURCES
from .stock_families import FamilyInfo, catalogue_families, recognise_family
from .stock_prices import price_text
from .stock_reading import (
    FIELD_SPELLINGS,
    FIELDS,
    MATCH_THRESHOLD,
    ColumnMatch,
    cell_text,
    map_columns,
    read_cells,
    read_table,
)
from .stock_rows import Lookup, StockRow, set_working_voltages, stock_code, validate_row
from .stock_writing import write_stock_rows

__all__ = [
    "FIELDS",
    "FIELD_SPELLINGS",
    "MATCH_THRESHOLD",
    "ColumnMatch",
    "FamilyInfo",
    "ImportResult",
    "RowProblem",
    "StockRow",
    "catalogue_families",
    "import_stock",
    "map_columns",
    "read_cells",
    "read_table",
    "recognise_family",
    "stock_code",
]

Progress = Callable[[int, int], None]

#: the fields a stock list must have a column for ("value" may be read from a description)
_REQUIRED: Final[tuple[str, ...]] = ("supplier_code", "value")


@dataclass(frozen=True)
class RowProblem:
    """One refused row: the file, its row number (the file's own), the column and why."""

    file: str
    row: int | None
    column: str | None
    problem: str

    def __str__(self) -> str:
        return str(BadRowError(self.file, self.row, self.column, self.problem))


@dataclass
class ImportResult:
    """What an import did (or, with ``dry_run``, would do)."""

    file: str
    supplier: str
    rows: int
    mapping: list[ColumnMatch]
    problems: list[RowProblem] = field(default_factory=list)
    inserted: int = 0
    updated: int = 0
    unchanged: int = 0
    withdrawn: int = 0
    merge: bool = False
    written: bool = False
    dry_run: bool = False
    families: dict[str, int] = field(default_factory=dict)
    #: the accepted rows themselves (only with ``keep_rows``; never in the JSON document)
    accepted_rows: list[StockRow] = field(default_factory=list)
    #: parts column -> source (column, description, family, none) -> accepted rows
    provenance: dict[str, dict[str, int]] = field(default_factory=dict)
    #: the text encoding the file was read in ("xlsx" for a workbook) and what the decoder said
    encoding: str = "utf-8"
    encoding_notes: list[str] = field(default_factory=list)
    #: the decimal sign its prices were read with (None: ambiguous cells refused)
    decimal_sign: str | None = "."

    @property
    def encoding_note(self) -> str | None:
        """One line when the file was not read as UTF-8 (or a workbook), else None."""
        if self.encoding in ("utf-8", "utf-8-sig", "xlsx"):
            return None
        return "; ".join(self.encoding_notes) or f"file read as {self.encoding}"

    def count_sources(self, row: StockRow) -> None:
        """Add one accepted row's figure sources to :attr:`provenance`."""
        for column, source in row.sources.items():
            counts = self.provenance.setdefault(column, dict.fromkeys(SOURCES, 0))
            counts[source] += 1

    def refused_by_column(self) -> dict[str, int]:
        """Refused rows per column of the file that refused them ('(row)' for no column)."""
        out: dict[str, int] = {}
        for problem in self.problems:
            key = problem.column or "(row)"
            out[key] = out.get(key, 0) + 1
        return dict(sorted(out.items()))

    @property
    def accepted(self) -> int:
        return self.inserted + self.updated + self.unchanged

    def to_dict(self) -> dict[str, Any]:
        """The JSON document of ``dropper parts import --json``."""
        return {
            "file": self.file,
            "supplier": self.supplier,
            "source": f"import:{self.supplier}",
            "rows": self.rows,
            "accepted": self.accepted,
            "inserted": self.inserted,
            "updated": self.updated,
            "unchanged": self.unchanged,
            "new": self.inserted,
            "changed": self.updated,
            "withdrawn": self.withdrawn,
            "merge": self.merge,
            "refused": len(self.problems),
            "written": self.written,
            "dry_run": self.dry_run,
            "encoding": self.encoding,
            "encoding_note": self.encoding_note,
            "decimal_sign": self.decimal_sign,
            "families": dict(sorted(self.families.items())),
            "provenance": {
                column: dict(counts) for column, counts in sorted(self.provenance.items())
            },
            "refused_by_column": self.refused_by_column(),
            "mapping": [
                {
                    "header": match.header,
                    "field": match.field,
                    "score": round(match.score, 1),
                    "how": match.how,
                    "min_qty": match.min_qty,
                }
                for match in self.mapping
            ],
            "problems": [
                {
                    "file": problem.file,
                    "row": problem.row,
                    "column": problem.column,
                    "problem": problem.problem,
                }
                for problem in self.problems
            ],
        }


def _supplier_name(path: Path, supplier: str | None) -> str:
    """The name rows are filed under: ``supplier`` or the file's stem, 1-60 characters."""
    name = (supplier or path.stem).strip()
    if not name or len(name) > 60:
        raise BadValueError(f"supplier name must be 1-60 characters, got {name!r}")
    return name


def _stored_supplier(engine: Engine, name: str) -> str:
    """The spelling already stored for ``name`` (compared case-insensitively), else ``name``."""
    from sqlalchemy import func, select

    from .models import Part, Supplier

    wanted = name.casefold()
    with engine.connect() as conn:
        for table_name in (Supplier.name, Part.supplier):
            stmt = select(table_name).where(func.lower(table_name) == name.lower()).distinct()
            if table_name is Part.supplier:
                stmt = stmt.where(Part.source.like("import:%"))
            for stored in conn.execute(stmt).scalars():
                if stored is not None and stored.casefold() == wanted:
                    return str(stored)
    return name


def import_stock(
    engine: Engine,
    path: str | Path,
    supplier: str | None = None,
    *,
    dry_run: bool = False,
    partial: bool = False,
    column_map: Mapping[str, str] | None = None,
    qty: int = 1000,
    currency: str = "EUR",
    sheet: str | None = None,
    progress: Progress | None = None,
    merge: bool = False,
    rates: Mapping[str, float] | None = None,
    keep_rows: bool = False,
    encoding: str | None = None,
) -> ImportResult:
    """Import a stock list into the catalogue behind ``engine`` (see the module doc).

    ``supplier``: the name the rows are filed under (default: the file's stem); ``qty``: the
    order quantity whose price-break price becomes the part's ``unit_price`` (the built-in
    demo prices are per piece at 1000); ``column_map``: header -> field overrides;
    ``merge``: keep the supplier's rows the file does not hold (default: withdraw them);
    ``rates``: currency code -> catalogue-currency units per unit of it; a row priced in a
    currency other than the catalogue's (EUR) without a rate, or in two currencies, is refused;
    ``keep_rows``: keep the accepted rows in ``result.accepted_rows`` (for a preview);
    ``encoding``: the text file's encoding (default: UTF-8, a byte-order mark, else
    Windows-1252). Prices are read with one decimal sign for the whole file
    (:func:`selector.units.decimal_sign_of` over the price cells).
    Returns an :class:`ImportResult`; when rows failed and ``partial`` is false, nothing is
    written and ``result.problems`` lists every failure (file, row, column).
    Raises :class:`BadRowError` when the file itself cannot be used (no header, no supplier
    code or value column).
    """
    file = Path(path)
    name = _stored_supplier(engine, _supplier_name(file, supplier))
    if qty < 1:
        raise BadValueError(f"the order quantity must be >= 1, got {qty}")
    for code, rate in (rates or {}).items():
        if not (isinstance(rate, (int, float)) and math.isfinite(rate) and rate > 0):
            raise BadValueError(f"--rate {code}: the rate must be a number > 0, got {rate!r}")
    table = read_table(file, sheet, encoding)
    rows = table.rows
    if not rows:
        raise BadRowError(str(file), None, None, "the file is empty")
    header_no, header = rows[0]
    headers = [cell_text(cell) for cell in header]
    mapping = map_columns(headers, column_map)
    columns = {
        match.field: i
        for i, match in enumerate(mapping)
        if match.field and match.how != "price break"
    }
    break_columns = [
        (i, match.min_qty or 1, match.header) for i, match in enumerate(mapping) if match.min_qty
    ]
    for required in _REQUIRED:
        if required == "value" and "description" in columns:
            continue  # each row's value is read from its description where the column lacks
        if required not in columns:
            raise BadRowError(
                str(file),
                header_no,
                None,
                f"no column recognised as {required!r} among "
                f"{', '.join(repr(h) for h in headers)}; name one with --map COLUMN={required}",
            )
    if "family" not in columns and "description" not in columns:
        raise BadRowError(
            str(file), header_no, None, "no 'family' (or 'description') column; add one or --map it"
        )
    if not ({"unit_price", "price_breaks"} & set(columns)) and not break_columns:
        raise BadRowError(
            str(file), header_no, None, "no price column ('unit price' or 'price 10')"
        )
    body = rows[1:]
    result = ImportResult(str(file), name, len(body), mapping, dry_run=dry_run, merge=merge)
    result.encoding, result.encoding_notes = table.encoding, list(table.notes)
    price_columns = [columns[f] for f in ("unit_price",) if f in columns]
    price_columns += [index for index, _, _ in break_columns]
    result.decimal_sign = decimal_sign_of(
        (
            price_text(cells[i])
            for _, cells in body
            for i in price_columns
            if i < len(cells) and isinstance(cells[i], str)
        ),
        table.delimiter,
    )
    refused_codes: set[str] = set()
    total = 2 * len(body)
    good: list[StockRow] = []
    seen_codes: dict[str, int] = {}
    with Session(engine) as session:
        families = catalogue_families(session)
        if not families:
            raise CatalogueError("the catalogue holds no built-in families; run `parts build`")
        lookup = Lookup(session, families)
        for done, (number, cells) in enumerate(body, start=1):
            try:
                row = validate_row(
                    str(file), number, cells, columns, break_columns, lookup, name, qty, currency,
                    headers, rates, result.decimal_sign,
                )  # fmt: skip
                first = seen_codes.get(row.values["code"])
                if first is not None:
                    raise BadRowError(
                        str(file),
                        number,
                        headers[columns["supplier_code"]],
                        f"supplier code {row.values['supplier_code']!r} already on row {first}",
                    )
                seen_codes[row.values["code"]] = number
                good.append(row)
                family = row.values["family"]
                result.families[family] = result.families.get(family, 0) + 1
                result.count_sources(row)
            except BadRowError as exc:
                code_cell = (
                    cells[columns["supplier_code"]] if columns["supplier_code"] < len(cells) else ""
                )
                if cell_text(code_cell):
                    refused_codes.add(stock_code(name, cell_text(code_cell)))
                result.problems.append(RowProblem(exc.file, exc.row, exc.column, exc.problem))
            if progress is not None and (done % 200 == 0 or done == len(body)):
                progress(done, total)
    if keep_rows:
        result.accepted_rows = list(good)
    if result.problems and not partial:
        result.families = {}
        result.provenance = {}
        return result
    set_working_voltages(good)
    counts = write_stock_rows(
        engine, name, currency, good, dry_run, progress, len(body), total,
        keep_codes=None if merge else refused_codes,
    )  # fmt: skip
    result.withdrawn = counts.withdrawn
    result.inserted = counts.inserted
    result.updated = counts.updated
    result.unchanged = counts.unchanged
    result.written = counts.written
    return result
