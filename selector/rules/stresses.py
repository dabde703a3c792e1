"""From an engine Analysis to the flat stress values the rules read, with their corners.

``stresses_from_analysis`` flattens the analysis sections into one mapping (worst_case fields
keep their names, transient sections get a prefix) and pairs each stress with the text of the
corner that produced it.
"""

from __future__ import annotations

import dataclasses
import functools
import math
from collections.abc import Mapping
from typing import Any, Final

#: analysis sections flattened with a prefix (worst_case fields keep their own names)
_SECTIONS: Final[tuple[tuple[str, str], ...]] = (
    ("worst_case", ""),
    ("inrush", "inrush_"),
    ("surge", "surge_"),
    ("discharge", "discharge_"),
    ("startup", "startup_"),
)


def _as_mapping(obj: Any) -> dict[str, Any]:
    """An analysis section (mapping, dataclass or plain object) as a dict of its fields."""
    if obj is None:
        return {}
    if isinstance(obj, Mapping):
        return dict(obj)
    if dataclasses.is_dataclass(obj):
        return {f.name: getattr(obj, f.name) for f in dataclasses.fields(obj)}
    return {k: v for k, v in vars(obj).items() if not k.startswith("_")}


def stresses_from_analysis(
    analysis: Any, extra: Mapping[str, Any] | None = None
) -> tuple[dict[str, Any], dict[str, str]]:
    """Flat stress values and their corners from an engine Analysis.

    worst_case fields keep their names (``max_zener_power_w``); the transient sections get a
    prefix (``inrush_i2t_a2s``, ``surge_level_v``, ``discharge_time_s``). A field
    ``<name>_corner`` (or a ``corners`` mapping) gives the corner of ``<name>``. ``extra`` adds
    context: ``ambient_c``, ``mains_max_v``, ``mains_min_v`` (rms), ``load_a``,
    ``series_resistance_ohm``, ``burst_current_a``, ``burst_duration_s``, ``reservoir_min_f``,
    ``zener_voltage_v``.
    """
    stresses: dict[str, Any] = {}
    corners: dict[str, str] = {}
    for section, prefix in _SECTIONS:
        data = _as_mapping(getattr(analysis, section, None))
        own: dict[str, str] = {}
        section_corner = ""
        for key, value in data.items():
            if key == "corners" and isinstance(value, Mapping):
                for corner_key, corner in value.items():
                    own[prefix + corner_key] = _corner_text(corner)
            elif key == "corner":
                section_corner = _corner_text(value)
            elif key.endswith("_corner"):
                own[prefix + key[: -len("_corner")]] = _corner_text(value)
            else:
                stresses[prefix + key] = value
        keys = [prefix + k for k in data if not k.endswith("corner") and k != "corners"]
        for key in keys:
            # the corner of a field: its own record, else the one named by its stem
            # (max_zener_power_corner -> max_zener_power_w; rectifier_corner -> *rectifier*),
            # else the section's corner
            text = own.get(key)
            if text is None:
                for base, base_text in own.items():
                    stem = base[len(prefix) :]
                    if key.startswith(base + "_") or (stem == "rectifier" and "rectifier" in key):
                        text = base_text
                        break
            if text is None and section_corner:
                text = section_corner
            if text:
                corners[key] = text
    if extra:
        stresses.update(extra)
    return stresses, corners


_CORNER_FIELDS: Final[tuple[tuple[str, str, str], ...]] = (
    ("mains_v", "", "V"),
    ("freq_hz", "", "Hz"),
    ("cap_f", "C=", "F"),
    ("r_ohm", "R=", "ohm"),
    ("bleeder_ohm", "Rb=", "ohm"),
    ("vz_v", "Vz=", "V"),
)


def _corner_text(corner: Any) -> str:
    """A corner (text, mapping of corner fields, or dataclass) as one line of text."""
    if corner is None:
        return ""
    if isinstance(corner, str):
        return corner
    if isinstance(corner, Mapping):
        # a search evaluates many analyses whose corners repeat: format each distinct one once
        try:
            return _mapping_corner_text(tuple(corner.items()))
        except TypeError:  # an unhashable field value
            return _mapping_corner_text.__wrapped__(tuple(corner.items()))
    if dataclasses.is_dataclass(corner):
        return ", ".join(f"{f.name}={getattr(corner, f.name)}" for f in dataclasses.fields(corner))
    return str(corner)


@functools.lru_cache(maxsize=4096)
def _mapping_corner_text(items: tuple[tuple[str, Any], ...]) -> str:
    """``_corner_text`` of a mapping, given as its items (hashable, so that it is cached)."""
    corner = dict(items)
    from ..units import format_value

    parts = []
    for key, label, unit in _CORNER_FIELDS:
        value = corner.get(key)
        if isinstance(value, (int, float)) and math.isfinite(value):
            parts.append(label + format_value(float(value), unit, digits=3))
    if "loaded" in corner:
        parts.append("loaded" if corner["loaded"] else "no load")
    load = corner.get("load_a")
    if isinstance(load, (int, float)) and "loaded" not in corner:
        parts.append(f"load {format_value(float(load), 'A')}" if load > 0 else "no load")
    rest = [
        f"{key}={value}"
        for key, value in corner.items()
        if key not in {f[0] for f in _CORNER_FIELDS} and key not in {"loaded", "load_a"}
    ]
    return " ".join(parts + rest)
