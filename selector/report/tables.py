"""The rows of the HTML report's tables: computed figures with their corners, parts, findings.

Each function turns one section of the command's JSON document into rows of
:class:`~.cells._Cell` (see :mod:`.cells` for how a leaf is shown); :mod:`.html` puts the
rows into the page.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from typing import Any

from .cells import UNIT_SUFFIXES, _Cell, _flatten, _is_number, _quantity_name, _show

__all__ = ["PART_COLUMNS"]


_CORNER_NAMES = {"mains_v": "mains", "freq_hz": "", "cap_f": "C", "r_ohm": "R", "vz_v": "Vz",
                 "load_a": "load", "bleeder_ohm": "bleeder"}  # fmt: skip


def _corner_text(corner: Any) -> str:
    """A corner for people: ``mains 253 V, 60 Hz, C 363 nF, R 423 Ω, Vz 12.6 V, load 0 A``."""
    if corner is None:
        return ""
    if isinstance(corner, Mapping):
        bits = []
        for k, v in corner.items():
            name = _CORNER_NAMES.get(str(k), _quantity_name(str(k)))
            bits.append(f"{name} {_show(str(k), v)}".strip())
        return ", ".join(bits)
    return str(corner)


def _corner_for(key: str, data: Mapping[str, Any], corners: Mapping[str, Any]) -> Any:
    """The corner of figure ``key``: ``corners[key]``, a sibling ``<key>_corner`` or
    ``<key without unit suffix>_corner`` (``max_zener_power_w`` -> ``max_zener_power_corner``),
    a sibling corner named by a word of the key (``rectifier_corner`` for
    ``max_rectifier_peak_current_a``), else the section's own ``corner``."""
    if key in corners:
        return corners[key]
    base = key
    for suffix, _ in UNIT_SUFFIXES:
        if key.endswith(suffix):
            base = key[: -len(suffix)]
            break
    for cand in (f"{key}_corner", f"{base}_corner"):
        if cand in data:
            return data[cand]
    words = base.split("_")
    for ck in data:
        if ck.endswith("_corner") and ck[: -len("_corner")] in words:
            return data[ck]
    return data.get("corner")


def _figure_rows(section: str, data: Mapping[str, Any]) -> list[dict[str, Any]]:
    """Rows (quantity, value cell, corner) of one section of computed figures.

    A corner is found as ``corners[name]`` / ``corner_of[name]``, a sibling ``<name>_corner``
    or, for a nested ``{"value": ..., "corner": ...}``, inside the value."""
    corners: Mapping[str, Any] = {}
    for ck in ("corners", "corner_of"):
        if isinstance(data.get(ck), Mapping):
            corners = data[ck]
    rows = []
    for k, v in data.items():
        if k in ("corners", "corner_of", "corner") or k.endswith("_corner"):
            continue
        path = f"{section}.{k}"
        corner = _corner_for(k, data, corners)
        if isinstance(v, Mapping) and "corner" in v and any(_is_number(x) for x in v.values()):
            corner = v.get("corner")
            for vk, vv in v.items():
                if vk != "corner" and (_is_number(vv) or vv is None):
                    rows.append(
                        {
                            "quantity": f"{_quantity_name(k)} ({_quantity_name(vk)})"
                            if vk not in ("value",)
                            else _quantity_name(k),
                            "cell": _Cell.of(vk if vk != "value" else k, vv, f"{path}.{vk}"),
                            "corner": _corner_text(corner),
                        }
                    )
            continue
        if isinstance(v, Mapping):
            sub = []
            _flatten(path, v, sub)
            for p, leaf in sub:
                if isinstance(leaf, (list, tuple)) and len(leaf) > 8:
                    continue
                rows.append(
                    {
                        "quantity": _quantity_name(p.split(".", 1)[1].replace(".", " / ")),
                        "cell": _Cell.of(p.rsplit(".", 1)[1], leaf, p),
                        "corner": "",
                    }
                )
            continue
        if isinstance(v, (list, tuple)) and len(v) > 8:
            continue  # arrays (waveforms) are plotted, not tabled
        rows.append(
            {
                "quantity": _quantity_name(k),
                "cell": _Cell.of(k, v, path),
                "corner": _corner_text(corner),
            }
        )
    return rows


#: columns of a findings/parts row whose unit is named by the row's own ``unit`` field
_UNIT_FIELD_COLUMNS = frozenset({"stress", "rating", "limit", "value"})
_UNIT_FIELD_NAMES = {
    "V": "_v",
    "A": "_a",
    "W": "_w",
    "J": "_j",
    "s": "_s",
    "F": "_f",
    "ohm": "_ohm",
    "Hz": "_hz",
    "A2s": "_a2s",
    "C": "_c",
    "V/s": "_v_per_s",
}


#: unit of a part's ``value`` by its kind or role (as in the catalogue's VALUE_UNITS)
_ROLE_UNITS = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "electrolytic": "F",
    "reservoir": "F",
    "resistor": "ohm",
    "series_resistor": "ohm",
    "bleeder": "ohm",
    "zener": "V",
    "fuse": "A",
    "diode": "A",
    "bridge": "A",
    "rectifier": "A",
}


def _ok_of(item: Mapping[str, Any]) -> bool | None:
    """Pass/fail of a row: its ``ok`` field, else ``severity`` (fail = not ok)."""
    if isinstance(item.get("ok"), bool):
        return item["ok"]
    severity = item.get("severity")
    if isinstance(severity, str):
        return severity.lower() != "fail"
    return None


def _row_cell(item: Mapping[str, Any], column: str, path: str) -> _Cell:
    """One cell of a parts/findings row; the row's ``unit`` field gives the unit of its
    stress/rating/limit/value, else a part's ``value_unit``, kind or role gives its value's."""
    suffix = _UNIT_FIELD_NAMES.get(str(item.get("unit")), "")
    role_unit = item.get("value_unit") if item.get("value_unit") in _UNIT_FIELD_NAMES else None
    role_unit = role_unit or _ROLE_UNITS.get(str(item.get("kind") or item.get("role") or ""))
    unit_key = column + suffix if column in _UNIT_FIELD_COLUMNS else column
    if column == "value" and not suffix and role_unit:
        unit_key = "value" + _UNIT_FIELD_NAMES[role_unit]
    return _Cell.of(unit_key, item.get(column), f"{path}.{column}")


#: columns of the parts table; every other field of a part (family, package, area and the
#: ratings of its kind: ``rated_voltage_ac_v`` of a capacitor, ``vrrm_v`` of a rectifier, ...)
#: is a line of the row's details cell, so a table of mixed parts fits the page width
PART_COLUMNS = ("ref", "role", "code", "mpn", "description", "text", "value", "qty",
                "arrangement", "unit_price", "line_price")  # fmt: skip


def _table(
    items: Sequence[Any], prefix: str, columns_kept: Sequence[str] | None = None
) -> dict[str, Any]:
    """Column headers and cells of a list of flat dicts (parts, findings). A row's ``unit``
    field (``"V"``, ``"W"``, ...) gives the unit of its stress/rating/limit/value columns.

    ``columns_kept``: when given, only these fields are columns; the others are lines of one
    details cell per row (see :data:`PART_COLUMNS`)."""
    columns: list[str] = []
    for item in items:
        if isinstance(item, Mapping):
            for k, v in item.items():
                if k not in columns and not isinstance(v, (Mapping,)):
                    columns.append(k)
    # a column empty in every row says nothing; the unit column is folded into the numbers
    columns = [
        c
        for c in columns
        if c not in ("unit", "value_unit")
        and any(isinstance(it, Mapping) and it.get(c) not in (None, "", [], ()) for it in items)
    ]
    folded: list[str] = []
    if columns_kept is not None:
        folded = [c for c in columns if c not in columns_kept]
        columns = [c for c in columns if c in columns_kept]
    body = []
    for i, item in enumerate(items):
        item = item if isinstance(item, Mapping) else {"item": item}
        path = f"{prefix}[{i}]"
        details = [
            {"name": _quantity_name(c), "cell": _row_cell(item, c, path)}
            for c in folded
            if item.get(c) not in (None, "", [], ())
        ]
        body.append(
            {
                "ok": _ok_of(item),
                "severity": item.get("severity"),
                "cells": [_row_cell(item, c, path) for c in columns],
                "details": details,
            }
        )
    return {"columns": [_quantity_name(c) for c in columns], "rows": body, "folded": bool(folded)}
