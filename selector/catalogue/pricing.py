"""Prices of imported parts at the build quantity: price breaks, minimum order quantities and
order multiples.

An import stores each part's price breaks (``price_breaks``: from ``min_qty`` pieces up, the
unit price, in the catalogue's currency), the supplier's minimum order quantity
(``parts.min_order_qty``, migration 0007) and its order multiple, a reel or pack that is sold
whole (``parts.order_multiple``, migration 0008). :func:`price_at_build` sets the
``unit_price`` that design compares for every imported row of a catalogue frame to the cost per
board of building ``build_qty`` boards: buying ``n`` pieces, the smallest multiple of the order
multiple that is at least ``max(build_qty, MOQ)``, at the break for ``n`` pieces, spread over
``build_qty`` boards. When more is bought than the build needs, the surplus is paid for, and
the row's ``price_note`` says why. The rule (the break for the pieces bought; a minimum order
and whole reels are paid in full) is common practice, no source.

Limit (stated, not hidden): one piece per board is assumed when comparing with the MOQ and
choosing the break; a part fitted q times per board is bought q x build_qty times, so its break
can be lower and its MOQ surplus smaller than counted here (the figure errs high).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import pandas as pd

__all__ = ["build_price", "pieces_bought", "price_at_build"]


def pieces_bought(build_qty: int, min_order_qty: int | None, order_multiple: int | None) -> int:
    """The pieces bought for ``build_qty`` boards with one piece each: the smallest n >=
    max(build_qty, MOQ) that is a multiple of ``order_multiple`` (None or 1: any n).

    >>> pieces_bought(1000, None, 4000), pieces_bought(1000, 5000, 4000), pieces_bought(10, 3, 4)
    (4000, 8000, 12)
    """
    floor = max(build_qty, min_order_qty or 1)
    step = order_multiple if order_multiple and order_multiple > 1 else 1
    return -(-floor // step) * step


def build_price(
    breaks: Sequence[tuple[int, float]],
    build_qty: int,
    min_order_qty: int | None,
    order_multiple: int | None = None,
) -> tuple[float, int]:
    """(cost per board, pieces bought) for ``build_qty`` boards with one piece each.

    ``breaks``: (min qty, unit price); the break with the largest min qty <= the pieces bought
    applies (the smallest when below all). The pieces bought are :func:`pieces_bought`.

    Worked example (demo figures, invented; arithmetic by hand): breaks 1+ 0.10, 100+ 0.06,
    1000+ 0.04, 5000+ 0.03 and a build of 1000 boards. Without a minimum: 1000 pieces at 0.04.
    A minimum order of 5000: 5000 x 0.03 = 150 over 1000 boards = 0.15 each. Reels of 4000:
    4000 x 0.04 = 160, 0.16 each. Both (MOQ 5000, reels of 4000): two reels, 8000 x 0.03 = 240,
    0.24 each.

    >>> breaks = [(1, 0.10), (100, 0.06), (1000, 0.04), (5000, 0.03)]
    >>> build_price(breaks[:3], 1000, None)
    (0.04, 1000)
    >>> build_price(breaks, 1000, 5000)
    (0.15, 5000)
    >>> build_price(breaks, 1000, None, 4000)
    (0.16, 4000)
    >>> build_price(breaks, 1000, 5000, 4000)
    (0.24, 8000)
    """
    bought = pieces_bought(build_qty, min_order_qty, order_multiple)
    ordered = sorted(breaks)
    applicable = [price for min_qty, price in ordered if min_qty <= bought]
    unit = applicable[-1] if applicable else ordered[0][1]
    return float(f"{unit * bought / build_qty:.12g}"), bought


def price_at_build(frame: pd.DataFrame, url: str, build_qty: int) -> pd.DataFrame:
    """``frame`` (a catalogue frame) with imported rows priced per board at ``build_qty``
    boards (see the module doc); built-in rows are unchanged. Returns a new frame."""
    if frame.empty or "source" not in frame or build_qty < 1:
        return frame
    imported = frame["source"].astype(str).str.startswith("import:")
    if not imported.any():
        return frame
    breaks = _stored_breaks(url, list(frame.loc[imported, "code"]))
    out = frame.copy()
    moq_column = out["min_order_qty"] if "min_order_qty" in out else None
    multiple_column = out["order_multiple"] if "order_multiple" in out else None
    for index in out.index[imported.to_numpy()]:
        code = out.at[index, "code"]
        moq = _whole(moq_column.at[index]) if moq_column is not None else None
        multiple = _whole(multiple_column.at[index]) if multiple_column is not None else None
        part_breaks = breaks.get(code) or [(1, float(out.at[index, "unit_price"]))]
        cost, bought = build_price(part_breaks, build_qty, moq, multiple)
        out.at[index, "unit_price"] = cost
        supplier = out.at[index, "supplier"]
        out.at[index, "price_note"] = (
            f"{supplier} stock list, EUR per board at a build of {build_qty:,}"
            + _surplus_note(build_qty, moq, multiple, bought)
        )
    return out


def _surplus_note(build_qty: int, moq: int | None, multiple: int | None, bought: int) -> str:
    """Why more pieces are bought than the build needs ('' when they are not).

    >>> _surplus_note(1000, None, 4000, 4000)
    '; bought in multiples of 4,000: the cost counts all 4,000'
    >>> _surplus_note(1000, 5000, 4000, 8000)
    '; MOQ 5,000 pcs > 1,000, bought in multiples of 4,000: the cost counts all 8,000'
    """
    if bought <= build_qty:
        return ""
    reasons = []
    if moq is not None and moq > build_qty:
        reasons.append(f"MOQ {moq:,} pcs > {build_qty:,}")
    if bought > max(build_qty, moq or 1):
        reasons.append(f"bought in multiples of {multiple:,}")
    return f"; {', '.join(reasons)}: the cost counts all {bought:,}"


def _whole(figure: Any) -> int | None:
    if figure is None or pd.isna(figure):
        return None
    return int(figure)


def _stored_breaks(url: str, codes: list[str]) -> dict[str, list[tuple[int, float]]]:
    """Code -> its stored price breaks, for the imported codes given."""
    from sqlalchemy import select

    from .db import make_engine
    from .models import Part, PriceBreak

    engine = make_engine(url)
    out: dict[str, list[tuple[int, float]]] = {}
    try:
        with engine.connect() as conn:
            for start in range(0, len(codes), 500):
                stmt = (
                    select(Part.code, PriceBreak.min_qty, PriceBreak.unit_price)
                    .join(PriceBreak, PriceBreak.part_id == Part.id)
                    .where(Part.code.in_(codes[start : start + 500]))
                )
                for code, min_qty, price in conn.execute(stmt):
                    out.setdefault(code, []).append((int(min_qty), float(price)))
    finally:
        engine.dispose()
    return out
