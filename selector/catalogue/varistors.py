"""Varistors from the catalogue: the clamp model (:class:`selector.engine.varistor.Varistor`)
of a row, and the row a user names on the command line (a code, a varistor voltage, or a
continuous AC rating)."""

from __future__ import annotations

from typing import Any

import pandas as pd

from ..engine.varistor import Varistor
from ..errors import BadValueError
from ..units import parse_value

__all__ = ["find_varistor", "varistor_from_row"]


def varistor_from_row(row: Any) -> Varistor:
    """The clamp model and ratings of a catalogue row of kind ``varistor`` (``value`` V at
    1 mA, ``limiting_voltage_v`` at ``clamp_current_a``); BadValueError naming the code and
    the missing column when a figure is missing."""
    code = str(row["code"])
    for col in ("value", "limiting_voltage_v", "clamp_current_a"):
        v = row.get(col)
        if v is None or pd.isna(v):
            raise BadValueError(
                f"varistor {code}: column {col} is empty (the clamp model needs it)"
            )

    def opt(col: str) -> float | None:
        v = row.get(col)
        return None if v is None or pd.isna(v) else float(v)

    return Varistor(
        v_1ma_v=float(row["value"]),
        clamp_v=float(row["limiting_voltage_v"]),
        clamp_a=float(row["clamp_current_a"]),
        continuous_ac_v=opt("rated_voltage_ac_v"),
        energy_j=opt("pulse_energy_j"),
        peak_current_a=opt("ifsm_a"),
        code=code,
    )


def find_varistor(frame: pd.DataFrame, text: str) -> dict[str, Any]:
    """The catalogue row ``text`` names: an exact code (``mov.disc.14mm.275vac``), a varistor
    voltage at 1 mA (``430``, ``430V``) or a continuous AC rating (``275VAC``); among several
    matches the cheapest, then the smallest board area, then the code (a stated tie-break).
    BadValueError listing what the catalogue has when nothing matches."""
    movs = frame[frame["kind"] == "varistor"]
    if movs.empty:
        raise BadValueError("--varistor: the catalogue has no varistors (kind 'varistor')")
    key = text.strip()
    exact = movs[movs["code"] == key]
    if not exact.empty:
        return exact.iloc[0].to_dict()
    low = key.lower().replace(" ", "")
    try:
        if low.endswith("vac"):
            column, v = "rated_voltage_ac_v", parse_value(low[:-3], "V")
        else:
            column, v = "value", parse_value(low, "V")
    except BadValueError:
        codes = ", ".join(sorted(movs["code"])[:6])
        raise BadValueError(
            f"--varistor: {text!r} is neither a varistor code (e.g. {codes}, ...) nor a voltage"
        ) from None
    hits = movs[(movs[column] - v).abs() <= 1e-6 * v]
    if hits.empty:
        have = ", ".join(f"{x:g}" for x in sorted(set(movs[column].dropna())))
        what = "continuous AC ratings" if column == "rated_voltage_ac_v" else "1 mA voltages"
        raise BadValueError(f"--varistor: no varistor at {v:g} V; the catalogue's {what}: {have}")
    hits = hits.sort_values(["unit_price", "area_mm2", "code"], na_position="last")
    return hits.iloc[0].to_dict()
