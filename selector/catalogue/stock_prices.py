"""Prices in a stock row: numbers with currency signs, price breaks, the row's currency, its
minimum order quantity and its order multiple (reel or pack).

One catalogue compares prices in one currency, :data:`CATALOGUE_CURRENCY` (the built-in demo
prices are in it): a row priced in another currency is converted at a rate the user gives
(``--rate USD=0.92``) or refused, and a row whose cells name two currencies is refused. The
price-break rule (the break with the largest minimum quantity at or below the pieces bought)
is common practice, no source.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from typing import Any, Final

from ..errors import BadValueError
from ..ranges import check_count
from ..units import GROUP_SPACES, parse_number
from .stock_reading import cell_text

#: the catalogue's currency: the built-in demo prices are in it (catalogue/price_model.toml)
CATALOGUE_CURRENCY: Final[str] = "EUR"
#: currency signs a price cell may carry, and the ISO 4217 code each stands for
CURRENCY_SIGNS: Final[dict[str, str]] = {"€": "EUR", "$": "USD", "£": "GBP"}


def cell_currency(cell: Any) -> str | None:
    """The currency a price cell names by a sign or a trailing/leading ISO code
    (``'$0.12'`` -> USD, ``'0.12 EUR'`` -> EUR), None when it names none."""
    text = cell_text(cell)
    for sign, code in CURRENCY_SIGNS.items():
        if sign in text:
            return code
    found = re.fullmatch(
        rf"\s*([A-Za-z]{{3}})?\s*[\d.,{GROUP_SPACES}]+\s*([A-Za-z]{{3}})?\s*", text
    )
    if found and (found.group(1) or found.group(2)):
        return (found.group(1) or found.group(2)).upper()
    return None


def price_text(cell: Any) -> str:
    """A price cell's text without its currency sign or ISO code (``'$0.12'`` -> ``'0.12'``)."""
    text = cell_text(cell).replace("€", "").replace("$", "").replace("£", "").strip()
    return re.sub(r"^[A-Za-z]{3}\s*|\s*[A-Za-z]{3}$", "", text)


def number(cell: Any, what: str, decimal_sign: str | None = ".") -> float:
    """A cell as a number >= 0 (currency signs and codes dropped), read by
    :func:`selector.units.parse_number` with the file's ``decimal_sign`` (``1.234,50`` with a
    decimal comma; an ambiguous ``1,234`` is refused when the file's sign is None)."""
    if isinstance(cell, (int, float)) and not isinstance(cell, bool):
        value = float(cell)
    else:
        value = parse_number(price_text(cell), decimal_sign, what=what)
    if not math.isfinite(value) or value < 0:
        raise BadValueError(f"{what} must be a number >= 0, got {cell_text(cell)!r}")
    return value


def count(cell: Any, what: str) -> int:
    """A cell as a whole number of pieces (stock, minimum order): ``1,200``, ``1.200``,
    ``1 200`` and ``1'200`` are 1200 (:func:`selector.units.parse_number` with ``whole``)."""
    if isinstance(cell, (int, float)) and not isinstance(cell, bool):
        return check_count(cell, what)
    return check_count(parse_number(cell_text(cell), whole=True, what=what), what)


def parse_breaks(cell: Any, decimal_sign: str | None = ".") -> list[tuple[int, float]]:
    """``"1:0.12; 10:0.10; 100:0.08"`` (also ``1=0.12``, ``1+ 0.12``) -> [(1, 0.12), ...]."""
    breaks = []
    for chunk in re.split(r"[;|]", cell_text(cell)):
        chunk = chunk.strip()
        if not chunk:
            continue
        found = re.match(r"^(\d{1,10})\s*\+?\s*[:=@ ]\s*(.+)$", chunk)
        if not found:
            raise BadValueError(
                f"cannot read price break {chunk!r}; write them like '1:0.12; 10:0.10'"
            )
        breaks.append((int(found.group(1)), number(found.group(2), "a price", decimal_sign)))
    return breaks


def price_at(breaks: Sequence[tuple[int, float]], qty: int) -> float:
    """Unit price when buying ``qty`` pieces: the break with the largest min_qty <= qty (or
    the smallest break when qty is below all)."""
    ordered = sorted(breaks)
    applicable = [price for min_qty, price in ordered if min_qty <= qty]
    return applicable[-1] if applicable else ordered[0][1]


def row_min_order(row: Any) -> int | None:
    """The minimum order quantity (a whole number >= 1), None when not given."""
    return _row_pieces(row, "min_order_qty", "a minimum order")


def row_order_multiple(row: Any) -> int | None:
    """The order multiple, a reel or pack quantity (a whole number >= 1), None when not given."""
    return _row_pieces(row, "order_multiple", "an order multiple")


def _row_pieces(row: Any, field_name: str, what: str) -> int | None:
    """The row's ``field_name`` as a whole number of pieces >= 1 (:func:`count`), None when
    the cell is empty; anything else is refused naming the file, row and column."""
    if not row.text(field_name):
        return None
    try:
        pieces = count(row.cell(field_name), what)
    except BadValueError as exc:
        raise row.fail(field_name, str(exc)) from None
    if pieces < 1:
        raise row.fail(field_name, f"{what} is 1 piece or more, got {pieces}")
    return pieces


def row_currency(
    row: Any,
    break_columns: Sequence[tuple[int, int, str]],
    currency: str,
    rates: Mapping[str, float],
) -> tuple[str, float]:
    """The row's currency and the rate (catalogue currency per unit of it) that converts its
    prices. The currency is the currency column's, else the one a price cell names by sign or
    code, else ``currency`` (the --currency option). Prices in two currencies on one row, or a
    currency other than the catalogue's without a rate, are refused: one catalogue compares
    prices in one currency only."""
    named: dict[str, str] = {}
    price_cells = [("unit_price", row.cell("unit_price"))] + [
        (header, row.cells[index] if index < len(row.cells) else "")
        for index, _, header in break_columns
    ]
    for where, cell in price_cells:
        code = cell_currency(cell)
        if code:
            named.setdefault(code, where)
    column = row.text("currency").upper()
    if column:
        named.setdefault(column, "currency")
    if len(named) > 1:
        raise row.fail(
            "currency",
            "prices in more than one currency on one row: "
            + ", ".join(f"{code} ({where})" for code, where in named.items()),
        )
    code = next(iter(named), currency.upper())
    if code == CATALOGUE_CURRENCY:
        return code, 1.0
    if code not in rates:
        raise row.fail(
            "currency" if "currency" in row.columns else "unit_price",
            f"prices in {code}, but the catalogue compares prices in {CATALOGUE_CURRENCY}; "
            f"give the rate with --rate {code}=<{CATALOGUE_CURRENCY} per {code}>",
        )
    return code, rates[code]
