"""Numbers of a ``parts`` row against the physical ranges of selector.ranges.

Two uses, one rule: an import refuses a row with a number no part can have
(:func:`out_of_range_columns`), and the rows already stored are read back without such rows
(:func:`drop_unusable_rows`, naming them), so that one poisoned row cannot break every design.
No SQLAlchemy here: the warm, cached read of the catalogue uses it.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import TYPE_CHECKING, Any, Final

from ..errors import BadValueError
from ..ranges import RANGES, check_range

if TYPE_CHECKING:
    import pandas as pd

__all__ = [
    "COLUMN_QUANTITIES",
    "TEXT_COLUMNS",
    "VALUE_UNITS",
    "drop_unusable_rows",
    "escape_controls",
    "has_controls",
    "out_of_range_columns",
]

#: text columns of ``parts`` that reach a terminal (read back escaped, see escape_controls)
TEXT_COLUMNS: Final[tuple[str, ...]] = (
    "code", "family", "description", "package", "price_note", "supplier", "supplier_code",
    "safety_class", "humidity_grade", "body_mm", "dielectric", "mount", "source",
)  # fmt: skip


def has_controls(text: str) -> bool:
    """Whether ``text`` holds a control character (ESC, BEL, CR, NUL, ...; tab included)."""
    return any(not ch.isprintable() and ch != " " for ch in text)


def escape_controls(text: object) -> str:
    """``text`` with every control character shown escaped (ESC -> ``\\x1b``), so that text
    from a file cannot retitle or rewrite a terminal. Printable text (any script) is kept.

    >>> escape_controls("DX-\x1b]0;t\x07")
    'DX-\\x1b]0;t\\x07'
    """
    s = str(text)
    if not has_controls(s):
        return s
    return "".join(
        ch if ch.isprintable() or ch == " " else ch.encode("unicode_escape").decode("ascii")
        for ch in s
    )


#: canonical unit (selector.units) of ``parts.value`` per kind
VALUE_UNITS: Final[dict[str, str]] = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "resistor": "ohm",
    "diode": "A",
    "bridge": "A",
    "zener": "V",
    "electrolytic": "F",
    "fuse": "A",
    "varistor": "V",
}


#: the physical quantity (a key of ``selector.ranges.RANGES``) of each numeric column of
#: ``parts``; ``value`` takes its quantity from VALUE_UNITS by kind
COLUMN_QUANTITIES: Final[dict[str, str]] = {
    "tolerance": "tolerance",
    "area_mm2": "mm2",
    "unit_price": "price",
    "stock": "count",
    "min_order_qty": "count",
    "order_multiple": "count",
    "rated_voltage_v": "V",
    "rated_voltage_ac_v": "V",
    "limiting_voltage_v": "V",
    "power_w": "W",
    "derate_start_c": "temperature_c",
    "derate_end_c": "temperature_c",
    "pulse_energy_j": "J",
    "impulse_v": "V",
    "impulse_test_v": "V",
    "dvdt_v_per_s": "V/s",
    "vrrm_v": "V",
    "if_av_a": "A",
    "ifsm_a": "A",
    "vf_v": "V",
    "rs_ohm": "ohm",
    "zz_ohm": "ohm",
    "tj_max_c": "temperature_c",
    "ripple_a": "A",
    "temp_max_c": "temperature_c",
    "i2t_a2s": "A2s",
    "pitch_mm": "mm",
}


def out_of_range_columns(row: Mapping[str, Any]) -> list[tuple[str, str]]:
    """(column, problem) for each numeric column of a parts row that is not finite or lies
    outside its quantity's physical range (selector.ranges); empty when the row is sound.
    None (unknown) is fine; ``value`` must be > 0."""
    problems: list[tuple[str, str]] = []
    checks = dict(COLUMN_QUANTITIES)
    unit = VALUE_UNITS.get(str(row.get("kind")))
    if unit is not None:
        checks["value"] = unit
    for column, quantity in checks.items():
        raw = row.get(column)
        if raw is None or isinstance(raw, bool):
            continue
        try:
            number = float(raw)
        except (TypeError, ValueError, OverflowError):
            problems.append((column, f"{str(raw)[:40]!r} is not a number"))
            continue
        if column == "value" and math.isfinite(number) and number <= 0:
            problems.append((column, f"the value must be > 0, got {number:g}"))
            continue
        try:
            check_range(number, quantity, column)
        except BadValueError as exc:
            problems.append((column, str(exc)))
    return problems


def _as_int64(frame: pd.DataFrame) -> pd.DataFrame:
    """The integer columns (``stock``) as nullable Int64, once their range is checked."""
    frame["stock"] = frame["stock"].astype("Int64")
    return frame


def drop_unusable_rows(frame: pd.DataFrame) -> pd.DataFrame:
    """``frame`` without the rows whose numbers no part can have (infinite, or outside the
    physical range of their quantity, selector.ranges): one poisoned row stored before the
    import refused such rows must not break every design. The skipped rows are named in
    ``frame.attrs["skipped_parts"]`` ('code: column problem'), for the CLI to warn about."""
    import numpy as np
    import pandas as pd

    bad = np.zeros(len(frame), dtype=bool)
    why = [""] * len(frame)
    kinds = frame["kind"].to_numpy(dtype=object)
    checks = [(column, np.full(len(frame), quantity, dtype=object)) for column, quantity in
              COLUMN_QUANTITIES.items() if column in frame.columns]  # fmt: skip
    checks.append(("value", np.array([VALUE_UNITS.get(k) for k in kinds], dtype=object)))
    for column, quantities in checks:
        values = pd.to_numeric(frame[column], errors="coerce").to_numpy(
            dtype=float, na_value=np.nan
        )
        for quantity in set(quantities.tolist()) - {None}:
            bounds = RANGES[quantity]
            rows = quantities == quantity
            magnitude = np.abs(values)
            wrong = rows & (
                np.isinf(values)
                | (magnitude > bounds.high)
                | ((magnitude > 0) & (magnitude < bounds.low))
                | ((values < 0) & (bounds.lowest is None))
                | (values < (bounds.lowest if bounds.lowest is not None else 0.0))
                | ((values <= 0) if column == "value" else False)
            )
            for i in np.flatnonzero(wrong & ~bad):
                why[i] = (
                    f"{escape_controls(frame['code'].iat[i])}: {column} {values[i]:g} out of range"
                )
            bad |= wrong
    kept = frame[~bad].reset_index(drop=True) if bad.any() else frame.copy()
    kept = _as_int64(kept)
    for column in TEXT_COLUMNS:
        if column in kept.columns and kept[column].dtype == object:
            kept[column] = [escape_controls(v) if isinstance(v, str) else v for v in kept[column]]
    kept.attrs["skipped_parts"] = [why[i] for i in np.flatnonzero(bad)]
    return kept
