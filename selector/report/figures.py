"""The report's waveforms, computed by the engine at the corners the analysis found worst.

* line current over two mains cycles at the corner of the highest rms line current and at the
  corner of the lowest DC current;
* output voltage over two mains cycles at the corners of the lowest and the highest output
  voltage;
* the switch-on current at the crest of the highest mains, everything discharged, at the
  inrush corner.

Corners come from the command's JSON document (``worst_case.<name>_corner`` and
``inrush.corner``: dicts with ``mains_v``, ``freq_hz``, ``cap_f``, ``r_ohm``, ``vz_v``,
``load_a``; on a distorted mains also ``thd``, with the harmonics in the document's ``mains``
section), so the plots show exactly the corners the tables name, on the wave each was found on.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..units import format_value
from .plots import Trace

__all__ = ["corner_label", "engine_waveforms"]

_LINE = (("max_line_current_rms_corner", "highest line current"),
         ("min_dc_current_corner", "lowest DC current"))  # fmt: skip
_OUTPUT = (("min_output_voltage_corner", "lowest output"),
           ("max_output_voltage_corner", "highest output"))  # fmt: skip


def corner_label(corner: Mapping[str, Any]) -> str:
    """Short legend text of a corner: ``253 V 60 Hz, C 363 nF, no load``."""
    bits = [
        f"{format_value(float(corner['mains_v']), 'V', 3)} {float(corner['freq_hz']):g} Hz",
        f"C {format_value(float(corner['cap_f']), 'F', 3)}",
    ]
    if "thd" in corner:
        bits.append(f"THD {float(corner['thd']) * 100:.3g} %" if corner["thd"] else "sine")
    if "load_a" in corner:
        bits.append("no load" if not corner["load_a"] else "loaded")
    return ", ".join(bits)


def _corner_circuit(circuit: Any, corner: Mapping[str, Any]) -> Any:
    r0 = circuit.series_resistance_ohm
    r = float(corner.get("r_ohm", r0))
    changes: dict[str, Any] = {
        "x_capacitors_f": (float(corner["cap_f"]),),
        "series_resistance_ohm": r,
        "zener_voltage_v": float(corner.get("vz_v", circuit.zener_voltage_v)),
    }
    rb = circuit.bleeder_resistance_ohm
    if rb is not None and r0:
        changes["bleeder_resistance_ohm"] = rb * (r / r0)
    return circuit.with_values(**changes)


def _records(analysis: Any) -> tuple[Mapping[str, Any], Mapping[str, Any] | None]:
    """(worst_case as a dict, inrush corner) of an engine Analysis."""
    import dataclasses

    wc = getattr(analysis, "worst_case", None)
    worst = dataclasses.asdict(wc) if dataclasses.is_dataclass(wc) else dict(wc or {})
    inrush = getattr(analysis, "inrush", None)
    return worst, getattr(inrush, "corner", None)


def engine_waveforms(
    circuit: Any, doc: Mapping[str, Any], analysis: Any = None
) -> dict[str, tuple[str, list[Trace]]]:
    """Plot title -> (unit, traces) for :func:`selector.report.write_report`, computed with
    :func:`selector.engine.waveforms` / :func:`selector.engine.switch_on_waveform` at the
    corners named in ``doc`` (the command's JSON document), else in ``analysis`` (an engine
    Analysis). The switch-on corner is ``inrush.corner``, else the corner of the highest line
    current (highest mains and capacitance, lowest resistance: where the inrush is worst).
    Corners missing everywhere are left out; an empty dict when there are none."""
    from ..engine import switch_on_waveform, waveforms
    from ..engine.circuit import Harmonic

    given = tuple(
        Harmonic(int(h["order"]), float(h["fraction"]), float(h.get("phase_deg", 0.0)))
        for h in ((doc.get("mains") or {}).get("harmonics") or [])
    )

    def harmonics_of(corner: Mapping[str, Any]) -> tuple:
        """The wave a corner was found on: the document's harmonics when its ``thd`` > 0."""
        return given if float(corner.get("thd", 0.0) or 0.0) > 0 else ()

    worst = doc.get("worst_case") or {}
    inrush_corner = (doc.get("inrush") or {}).get("corner")
    if analysis is not None and not worst:
        worst, inrush_corner = _records(analysis)
    if inrush_corner is None:
        inrush_corner = worst.get("max_line_current_rms_corner")
    out: dict[str, tuple[str, list[Trace]]] = {}
    cache: dict[tuple, dict] = {}

    def wave(corner: Mapping[str, Any]) -> dict:
        loaded = bool(corner.get("load_a", 1.0))
        key = (*(float(corner[k]) for k in ("mains_v", "freq_hz", "cap_f")), loaded,
               float(corner.get("r_ohm", 0)), float(corner.get("vz_v", 0)),
               harmonics_of(corner))  # fmt: skip
        if key not in cache:
            cache[key] = waveforms(
                _corner_circuit(circuit, corner),
                float(corner["mains_v"]),
                float(corner["freq_hz"]),
                loaded=loaded,
                harmonics=harmonics_of(corner),
            )
        return cache[key]

    for title, unit, picks, signal in (
        ("Line current over two mains cycles", "A", _LINE, "line_current_a"),
        ("Output voltage over two mains cycles", "V", _OUTPUT, "output_voltage_v"),
    ):
        traces = []
        for key, what in picks:
            corner = worst.get(key)
            if isinstance(corner, Mapping) and {"mains_v", "freq_hz", "cap_f"} <= set(corner):
                w = wave(corner)
                traces.append(Trace(f"{what}: {corner_label(corner)}", w["t_s"], w[signal]))
        if traces:
            out[title] = (unit, traces)
    corner = inrush_corner
    if isinstance(corner, Mapping) and {"mains_v", "freq_hz", "cap_f"} <= set(corner):
        w = switch_on_waveform(
            _corner_circuit(circuit, corner),
            float(corner["mains_v"]),
            float(corner["freq_hz"]),
            harmonics=harmonics_of(corner),
        )
        out["Switch-on current at the crest, everything discharged"] = (
            "A",
            [Trace(corner_label(corner), w["t_s"], w["line_current_a"])],
        )
    return out
