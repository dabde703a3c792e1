"""Waveform plots for the HTML report: matplotlib (Agg, no display) rendered to inline SVG.

Inputs are SI arrays (seconds, amperes, volts); the axes show milliseconds and the engineering
unit chosen from the data's magnitude. Text stays text in the SVG (``svg.fonttype = none``), so
the page is small and searchable.
"""

from __future__ import annotations

import io
import re
from collections.abc import Sequence
from dataclasses import dataclass

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from ..errors import BadValueError  # noqa: E402

__all__ = ["Trace", "waveform_svg"]

_SCALES = ((1.0, ""), (1e-3, "m"), (1e-6, "µ"))


@dataclass(frozen=True)
class Trace:
    """One curve: ``label`` for the legend, ``t_s`` times [s], ``y`` values [SI unit]."""

    label: str
    t_s: Sequence[float]
    y: Sequence[float]


def _scale(peak: float) -> tuple[float, str]:
    for factor, prefix in _SCALES:
        if peak >= factor:
            return factor, prefix
    return _SCALES[-1]


def waveform_svg(
    title: str, unit: str, traces: Sequence[Trace], width_in: float = 7.5, height_in: float = 2.8
) -> str:
    """Plot ``traces`` against time and return the figure as SVG text (no XML declaration).

    ``unit`` is the SI unit of the y values (``"A"`` or ``"V"``); the axis uses ``mA``/``µA``
    when the data are small. Raises :class:`BadValueError` when a trace is empty or its arrays
    differ in length.
    """
    if not traces:
        raise BadValueError(f"plot '{title}': nothing to plot")
    arrays = []
    for tr in traces:
        t = np.asarray(tr.t_s, dtype=float)
        y = np.asarray(tr.y, dtype=float)
        if t.size == 0 or t.shape != y.shape:
            raise BadValueError(f"plot '{title}': trace '{tr.label}' is empty or ragged")
        arrays.append((tr.label, t, y))
    peak = max(float(np.nanmax(np.abs(y))) for _, _, y in arrays) or 1.0
    factor, prefix = _scale(peak)
    with plt.rc_context({"svg.fonttype": "none", "svg.hashsalt": "dropper", "font.size": 9}):
        fig, ax = plt.subplots(figsize=(width_in, height_in))
        try:
            t0 = min(float(t[0]) for _, t, _ in arrays)
            for label, t, y in arrays:
                ax.plot((t - t0) * 1e3, y / factor, linewidth=1.2, label=label)
            ax.set_title(title)
            ax.set_xlabel("time [ms]")
            ax.set_ylabel(f"[{prefix}{unit}]")
            ax.grid(True, linewidth=0.4, alpha=0.6)
            ax.axhline(0.0, color="0.3", linewidth=0.6)
            if len(arrays) > 1 or arrays[0][0]:
                ax.legend(loc="upper right", fontsize=8, framealpha=0.85)
            fig.tight_layout()
            buf = io.StringIO()
            fig.savefig(buf, format="svg", metadata={"Date": None})  # same data, same file
        finally:
            plt.close(fig)
    svg = buf.getvalue()
    svg = re.sub(r"^<\?xml[^>]*>\s*", "", svg)
    return re.sub(r"^<!DOCTYPE[^>]*>\s*", "", svg)
