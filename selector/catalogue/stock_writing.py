"""Writing validated stock rows to the catalogue: one transaction of upserts.

Each row is compared with what is stored under its stable code (``S:<supplier>:<supplier
code>``); only new and changed rows are written, by ``INSERT .. ON CONFLICT`` so that two
imports at once on PostgreSQL do not lose rows. On SQLite the transaction holds the write lock
from its start (:func:`~selector.catalogue.locking.write_transaction`), so two imports at once
run one after the other. A dry run only reads: it sends no write statement at all.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any, Final

from sqlalchemy import Engine, select

from ..errors import CatalogueError
from .locking import write_transaction
from .models import Part, PriceBreak, Supplier
from .stock_rows import TEMPLATE_COLUMNS, StockRow

#: the columns an import compares to decide "unchanged"
COMPARED: Final[tuple[str, ...]] = (
    "kind",
    "family",
    "description",
    "value",
    "unit_price",
    "price_note",
    "stock",
    "withdrawn",
    "min_order_qty",
    "order_multiple",
    *TEMPLATE_COLUMNS,
)


@dataclass
class WriteCounts:
    """What a write did (or, in a dry run, would do): rows inserted, updated, left unchanged,
    and whether the transaction was committed."""

    inserted: int = 0
    updated: int = 0
    unchanged: int = 0
    withdrawn: int = 0
    written: bool = False


def write_stock_rows(
    engine: Engine,
    supplier: str,
    currency: str,
    rows: list[StockRow],
    dry_run: bool,
    progress: Callable[[int, int], None] | None,
    offset: int,
    total: int,
    keep_codes: set[str] | None = None,
) -> WriteCounts:
    """Compare with what is stored and upsert the new and changed rows, in one transaction.

    ``keep_codes``: None merges (rows of the supplier not in ``rows`` stay as they are);
    a set makes the list a snapshot: every other row of the supplier that is neither in
    ``rows`` nor in ``keep_codes`` (codes of refused rows, kept under ``--partial``) is
    withdrawn in the same transaction: stock 0, ``withdrawn`` true.

    ``progress`` is called after each batch, inside the transaction: an exception it raises
    (or the process dying there) rolls everything back. It reports ``offset`` + this write's
    share of ``total - offset``."""
    counts = WriteCounts()
    if dry_run:
        # a dry run reads only: no write statement is sent, not even one rolled back, so a
        # read-only catalogue can be checked and the file's bytes stay as they were
        with engine.connect() as conn:
            _compare_and_write(
                conn, supplier, rows, True, progress, offset, total, keep_codes, counts
            )
            conn.rollback()
        return counts
    with write_transaction(engine, f"the import of {supplier!r}") as conn:
        _ensure_supplier(conn, supplier, currency)
        _compare_and_write(conn, supplier, rows, False, progress, offset, total, keep_codes, counts)
    counts.written = True
    return counts


def _compare_and_write(
    conn: Any,
    supplier: str,
    rows: list[StockRow],
    dry_run: bool,
    progress: Callable[[int, int], None] | None,
    offset: int,
    total: int,
    keep_codes: set[str] | None,
    counts: WriteCounts,
) -> None:
    """Count new, changed, unchanged and withdrawn rows into ``counts``; unless ``dry_run``,
    upsert the new and changed rows and withdraw the stale ones."""
    chunk = 500
    for start in range(0, len(rows), chunk):
        batch = rows[start : start + chunk]
        codes = [row.values["code"] for row in batch]
        stored = {
            rec.code: rec
            for rec in conn.execute(select(Part.__table__).where(Part.code.in_(codes))).mappings()
        }
        stored_breaks: dict[int, list[tuple[int, float]]] = {}
        ids = [rec["id"] for rec in stored.values()]
        if ids:
            for part_id, min_qty, price in conn.execute(
                select(PriceBreak.part_id, PriceBreak.min_qty, PriceBreak.unit_price).where(
                    PriceBreak.part_id.in_(ids)
                )
            ):
                stored_breaks.setdefault(part_id, []).append((min_qty, price))
        changed: list[StockRow] = []
        for row in batch:
            rec = stored.get(row.values["code"])
            if rec is None:
                counts.inserted += 1
                changed.append(row)
                continue
            if rec["source"] != row.values["source"]:
                raise CatalogueError(
                    f"code {row.values['code']!r} already belongs to {rec['source']!r}"
                )
            same = all(
                _same(rec[column], row.values.get(column)) for column in COMPARED
            ) and sorted(stored_breaks.get(rec["id"], [])) == sorted(row.breaks)
            if same:
                counts.unchanged += 1
            else:
                counts.updated += 1
                changed.append(row)
        if changed and not dry_run:
            _upsert(conn, changed)
        done = min(start + chunk, len(rows))
        if progress is not None:
            # scaled so that the last batch reports total even when rows were refused
            progress(offset + (done * (total - offset)) // max(len(rows), 1), total)
    if keep_codes is not None:
        keep = keep_codes | {row.values["code"] for row in rows}
        counts.withdrawn = _withdraw(conn, supplier, keep, dry_run)


def _withdraw(conn: Any, supplier: str, keep: set[str], dry_run: bool) -> int:
    """Withdraw the supplier's rows whose code is not in ``keep``; returns how many."""
    table = Part.__table__
    stale = [
        part_id
        for part_id, code in conn.execute(
            select(table.c.id, table.c.code).where(
                table.c.source == f"import:{supplier}", table.c.withdrawn.is_(False)
            )
        )
        if code not in keep
    ]
    if not dry_run:
        for start in range(0, len(stale), 500):
            conn.execute(
                table.update()
                .where(table.c.id.in_(stale[start : start + 500]))
                .values(stock=0, withdrawn=True)
            )
    return len(stale)


def _same(a: Any, b: Any) -> bool:
    """Stored and new column values equal (floats to 1e-12 relative, booleans as truth)."""
    if isinstance(a, float) or isinstance(b, float):
        if a is None or b is None:
            return a is None and b is None
        return math.isclose(float(a), float(b), rel_tol=1e-12, abs_tol=0.0)
    if isinstance(a, bool) or isinstance(b, bool):
        return bool(a) == bool(b)
    return a == b


def _dialect_insert(conn: Any, table: Any) -> Any:
    """The dialect's INSERT, which has ``on_conflict_do_*`` (SQLite and PostgreSQL only)."""
    name = conn.dialect.name
    if name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    elif name == "sqlite":
        from sqlalchemy.dialects.sqlite import insert
    else:
        raise CatalogueError(f"stock import supports SQLite and PostgreSQL, not {name}")
    return insert(table)


def _ensure_supplier(conn: Any, supplier: str, currency: str) -> None:
    stmt = _dialect_insert(conn, Supplier.__table__).values(
        name=supplier, currency=currency, note="imported stock list"
    )
    conn.execute(stmt.on_conflict_do_nothing(index_elements=["name"]))


def _upsert(conn: Any, rows: list[StockRow]) -> None:
    """Insert or update the rows' parts, then replace their price breaks."""
    table = Part.__table__
    columns = ["code", "source", "supplier", "supplier_code", *COMPARED]
    payload = [{column: row.values.get(column) for column in columns} for row in rows]
    insert = _dialect_insert(conn, table)
    stmt = insert.on_conflict_do_update(
        index_elements=["code"],
        set_={column: insert.excluded[column] for column in columns if column != "code"},
    )
    conn.execute(stmt, payload)
    codes = [row.values["code"] for row in rows]
    ids = dict(conn.execute(select(Part.code, Part.id).where(Part.code.in_(codes))).all())
    price_breaks = PriceBreak.__table__
    conn.execute(price_breaks.delete().where(price_breaks.c.part_id.in_(list(ids.values()))))
    breaks = [
        {"part_id": ids[row.values["code"]], "min_qty": min_qty, "unit_price": price}
        for row in rows
        for min_qty, price in row.breaks
    ]
    if breaks:
        conn.execute(price_breaks.insert(), breaks)
