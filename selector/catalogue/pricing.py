"""Prices of imported parts at the build quantity: price breaks and minimum order quantities.

An import stores each part's price breaks (``price_breaks``: from ``min_qty`` pieces up, the
unit price, in the catalogue's currency) and the supplier's minimum order quantity
(``parts.min_order_qty``, migration 0007). :func:`price_at_build` sets the ``unit_price`` that
design compares for every imported row of a catalogue frame to the cost per board of building
``build_qty`` boards: buying ``n = max(build_qty, MOQ)`` pieces at the break for ``n`` pieces,
spread over ``build_qty`` boards. Below the MOQ the surplus is paid for, and the row's
``price_note`` says so.

Limit (stated, not hidden): one piece per board is assumed when comparing with the MOQ and
choosing the break; a part fitted q times per board is bought q x build_qty times, so its break
can be lower and its MOQ surplus smaller than counted here (the figure errs high).
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import Any

import pandas as pd

__all__ = ["build_price", "price_at_build"]


def build_price(
    breaks: Sequence[tuple[int, float]], build_qty: int, min_order_qty: int | None
) -> tuple[float, int]:
    """(cost per board, pieces bought) for ``build_qty`` boards with one piece each.

    ``breaks``: (min qty, unit price); the break with the largest min qty <= the pieces bought
    applies (the smallest when below all).

    >>> build_price([(1, 0.10), (100, 0.06), (1000, 0.04)], 1000, None)
    (0.04, 1000)
    >>> build_price([(1, 0.10), (100, 0.06), (1000, 0.04), (5000, 0.03)], 1000, 5000)
    (0.15, 5000)
    """
    bought = max(build_qty, min_order_qty or 1)
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
    for index in out.index[imported.to_numpy()]:
        code = out.at[index, "code"]
        moq = _whole(moq_column.at[index]) if moq_column is not None else None
        part_breaks = breaks.get(code) or [(1, float(out.at[index, "unit_price"]))]
        cost, bought = build_price(part_breaks, build_qty, moq)
        out.at[index, "unit_price"] = cost
        supplier = out.at[index, "supplier"]
        note = f"{supplier} stock list, EUR per board at a build of {build_qty}"
        if bought > build_qty:
            note += f"; MOQ {bought} pcs > {build_qty}: the cost counts all {bought}"
        out.at[index, "price_note"] = note
    return out


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
