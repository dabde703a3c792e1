"""The corner behind each stress, as short text for the audit's findings.

``corners_of`` matches the engine's corner fields to the rule engine's stress keys;
``corner_text`` writes one corner record as text.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from typing import Any, Final

_SECTION_PREFIX: Final[tuple[tuple[str, str], ...]] = (
    ("inrush", "inrush_"),
    ("surge", "surge_"),
    ("discharge", "discharge_"),
    ("startup", "startup_"),
)


def corner_text(corner: Mapping[str, Any] | None) -> str:
    """A corner record as short text: '253 V 60 Hz, C 242 nF, R 89.3 Ω, Vz 12.6 V, no load'."""
    if not corner:
        return ""
    from ..units import format_value

    parts = []
    if "mains_v" in corner:
        parts.append(f"{corner['mains_v']:.4g} V {corner.get('freq_hz', 0):g} Hz")
    for key, label, unit in (
        ("cap_f", "C", "F"),
        ("r_ohm", "R", "ohm"),
        ("bleeder_ohm", "Rb", "ohm"),
        ("vz_v", "Vz", "V"),
    ):
        if corner.get(key) is not None:
            parts.append(f"{label} {format_value(float(corner[key]), unit)}")
    if "load_a" in corner:
        parts.append(
            "no load" if not corner["load_a"] else f"load {format_value(corner['load_a'], 'A')}"
        )
    return ", ".join(parts)


def corners_of(analysis: Any) -> dict[str, str]:
    """Stress key -> corner text, matching the engine's corner fields to the rule engine's
    stress keys: ``worst_case.max_zener_power_corner`` belongs to ``max_zener_power_w``,
    ``worst_case.rectifier_corner`` to every ``max_rectifier_*`` stress, a transient section's
    ``corner`` to each of its figures (``inrush_series_r_energy_j``, ...)."""
    corners: dict[str, str] = {}
    worst_case = getattr(analysis, "worst_case", None)
    if worst_case is not None and dataclasses.is_dataclass(worst_case):
        fields = [f.name for f in dataclasses.fields(worst_case)]
        for name in fields:
            if not name.endswith("_corner"):
                continue
            base = name[: -len("_corner")]
            stem = "max_rectifier_" if base == "rectifier" else base + "_"
            text = corner_text(getattr(worst_case, name))
            for other in fields:
                if other.startswith(stem) and not other.endswith("_corner"):
                    corners.setdefault(other, text)
    for section_name, prefix in _SECTION_PREFIX:
        section = getattr(analysis, section_name, None)
        if section is None or not dataclasses.is_dataclass(section):
            continue
        text = corner_text(getattr(section, "corner", None))
        if text:
            for f in dataclasses.fields(section):
                if f.name != "corner":
                    corners[prefix + f.name] = text
    return corners
