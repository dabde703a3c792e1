"""Snapping user text and CSV columns to preferred values: the library side of `dropper snap`."""

from __future__ import annotations

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


def _line_end(text: str) -> str:
    """The first line end of ``text`` (CRLF, LF or CR; LF for a one-line file)."""
    for i, ch in enumerate(text):
        if ch == "\r":
            return "\r\n" if text[i + 1 : i + 2] == "\n" else "\r"
        if ch == "\n":
            return "\n"
    return "\n"


def _delimiter(first_line: str) -> str:
    """The field delimiter of the header line: the most frequent of , ; tab (comma if none)."""
    counts = {d: first_line.count(d) for d in (",", ";", "\t")}
    best = max(counts, key=lambda d: counts[d])
    return best if counts[best] else ","


def default_output(path: Path) -> Path:
    """Where ``snap FILE --column`` writes without --output or --in-place: ``calc.csv`` ->
    ``calc.snapped.csv`` beside it."""
    return path.with_name(f"{path.stem}.snapped{path.suffix or '.csv'}")


def snap_csv_column(
    path: Path,
    column: str,
    series: str = "E12",
    mode: str = "nearest",
    quantity: str | None = None,
    output: Path | None = None,
    in_place: bool = False,
    encoding: str | None = None,
) -> dict[str, Any]:
    """Snap one column of a CSV file and write the file with the snapped column added.

    The new column is named ``<column>_<series>_<mode>`` and holds SI floats (a column of that
    name already there is overwritten). Written to ``output``, or back over ``path`` with
    ``in_place``, else to :func:`default_output`. The file keeps what the user's program
    wrote: its encoding (read as :mod:`selector.audit` reads a BOM: UTF-8, a UTF-8 or UTF-16
    byte-order mark, Windows-1252, or ``encoding``), the byte-order mark and a UTF-16 file's
    byte order (big-endian stays big-endian), the line ends (CRLF, LF or CR), the
    delimiter, and every header as it was (duplicates included; the snapped column must be
    unique). Cells a spreadsheet would run as formulas are escaped
    (:func:`selector.outputs.spreadsheet_cell`). Written through a temporary file and a
    rename, so a failure leaves every file as it was. Raises BadRowError naming file, row and
    column; BadValueError for bad paths.
    """
    import codecs
    import csv
    import io

    from rapidfuzz import process

    from .audit.bom_cells import decode_text
    from .outputs import check_outputs, spreadsheet_cell, write_atomic

    if not path.is_file():
        raise BadValueError(f"{path}: no such file")
    if in_place and output is not None:
        raise BadValueError("give either --output FILE or --in-place, not both")
    target = path if in_place else (output or default_output(path))
    if not in_place:
        check_outputs([("--output", target)], [("CSV file", path)])
    raw = path.read_bytes()
    text, enc, _notes = decode_text(path, raw, encoding)
    bom = raw.startswith((codecs.BOM_UTF8, codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE))
    line_end = _line_end(text)
    delimiter = _delimiter(text.split(line_end, 1)[0] if text else "")
    try:
        rows = list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter))
    except csv.Error as exc:
        raise BadRowError(str(path), None, None, f"cannot read as CSV: {exc}") from None
    if not rows or not rows[0]:
        raise BadRowError(str(path), 1, None, "no header row")
    header = rows[0]
    positions = [i for i, name in enumerate(header) if name == column]
    if not positions:
        match = process.extractOne(column, header)
        hint = f"; did you mean '{match[0]}'?" if match else ""
        raise BadRowError(str(path), None, column, f"no such column{hint}")
    if len(positions) > 1:
        where = ", ".join(str(i + 1) for i in positions)
        raise BadRowError(
            str(path), 1, column, f"the header appears {len(positions)} times (columns {where})"
        )
    col = positions[0]
    data = [(row_no, row) for row_no, row in enumerate(rows[1:], start=2) if row]
    parsed = []
    for row_no, row in data:
        cell = row[col] if col < len(row) else ""
        try:
            parsed.append(parse_value(cell, quantity))
        except BadValueError as exc:
            raise BadRowError(str(path), row_no, column, str(exc)) from None
    snapped = np.atleast_1d(eseries.snap(np.array(parsed, dtype=float), series, mode))  # type: ignore[arg-type]
    new_column = f"{column}_{series.strip().upper()}_{mode}"
    existing = [i for i, name in enumerate(header) if name == new_column]
    if len(existing) > 1:
        raise BadRowError(str(path), 1, new_column, "the header appears more than once")
    new_col = existing[0] if existing else len(header)
    if not existing:
        header.append(new_column)
    for (_, row), value in zip(data, snapped, strict=True):
        row.extend([""] * (new_col + 1 - len(row)))
        row[new_col] = f"{value:.6g}"
    buf = io.StringIO(newline="")
    writer = csv.writer(buf, delimiter=delimiter, lineterminator=line_end)
    for row in rows:
        writer.writerow([spreadsheet_cell(c) for c in row])
    out = buf.getvalue()
    if not text.endswith(("\n", "\r")):
        out = out.removesuffix(line_end)
    # utf-8-sig / utf-16 write their byte-order mark themselves; a plain codec gets none
    out_encoding = {"utf-8-sig": "utf-8-sig", "utf-16": "utf-16"}.get(enc, enc)
    if bom and out_encoding not in ("utf-8-sig", "utf-16"):
        out = "\ufeff" + out
    write_atomic(target, out.encode(out_encoding))
    return {
        "path": str(target),
        "rows": len(data),
        "new_column": new_column,
        "encoding": enc,
        "line_end": {"\r\n": "crlf", "\n": "lf", "\r": "cr"}[line_end],
    }
