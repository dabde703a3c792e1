"""Snapping user text and CSV columns to preferred values: the library side of `dropper snap`."""

from __future__ import annotations

import os
import tempfile
from collections.abc import Sequence
from pathlib import Path
from typing import Any

import numpy as np

from . import eseries
from .errors import BadRowError, BadValueError
from .units import parse_value

__all__ = ["snap_csv_column", "snap_texts"]


def snap_texts(
    texts: Sequence[str], series: str = "E12", mode: str = "nearest", quantity: str | None = None
) -> list[dict[str, Any]]:
    """Parse each text and snap it. One dict per input: ``text``, ``input`` (SI), ``series``,
    ``mode``, ``value`` (SI), ``error`` (value / input - 1)."""
    inputs = np.array([parse_value(t, quantity) for t in texts], dtype=float)
    values = np.atleast_1d(eseries.snap(inputs, series, mode))  # type: ignore[arg-type]
    key = series.strip().upper()
    return [
        {
            "text": t,
            "input": float(i),
            "series": key,
            "mode": mode,
            "value": float(v),
            "error": float(v / i - 1.0),
        }
        for t, i, v in zip(texts, inputs, values, strict=True)
    ]


def snap_csv_column(
    path: Path,
    column: str,
    series: str = "E12",
    mode: str = "nearest",
    quantity: str | None = None,
    output: Path | None = None,
) -> dict[str, Any]:
    """Snap one column of a CSV file and write the file back with the snapped column added.

    The new column is named ``<column>_<series>_<mode>`` and holds SI floats. The file is written
    to a temporary file first and renamed over the target, so a failure leaves it untouched.
    """
    import pandas as pd
    from rapidfuzz import process

    if not path.is_file():
        raise BadValueError(f"{path}: no such file")
    try:
        frame = pd.read_csv(path, dtype=str, keep_default_na=False, encoding="utf-8-sig")
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise BadRowError(str(path), None, None, f"cannot read as CSV: {exc}") from None
    if column not in frame.columns:
        match = process.extractOne(column, list(frame.columns))
        hint = f"; did you mean '{match[0]}'?" if match else ""
        raise BadRowError(str(path), None, column, f"no such column{hint}")
    parsed = []
    for row_no, text in enumerate(frame[column].tolist(), start=2):  # row 1 is the header
        try:
            parsed.append(parse_value(text, quantity))
        except BadValueError as exc:
            raise BadRowError(str(path), row_no, column, str(exc)) from None
    snapped = np.atleast_1d(eseries.snap(np.array(parsed), series, mode))  # type: ignore[arg-type]
    new_column = f"{column}_{series.strip().upper()}_{mode}"
    frame[new_column] = [f"{v:.6g}" for v in snapped]
    target = output or path
    fd, tmp = tempfile.mkstemp(dir=target.parent, prefix=".dropper-", suffix=".csv")
    os.close(fd)
    try:
        frame.to_csv(tmp, index=False)
        os.replace(tmp, target)
    finally:
        if os.path.exists(tmp):
            os.unlink(tmp)
    return {"path": str(target), "rows": len(frame), "new_column": new_column}
