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

__all__ = ["Trace", "pulse_window", "waveform_svg"]

_SCALES = ((1.0, ""), (1e-3, "m"), (1e-6, "µ"))
#: time axis: (seconds per unit, unit), the first whose span fits
_TIME_SCALES = ((1e-3, "ms"), (1e-6, "µs"))

#: a pulse is where |y| exceeds this share of its peak ...
PULSE_THRESHOLD = 0.01
#: ... and it is plotted alone when, outside the window, |y| stays below this share of the peak
PULSE_DOMINANCE = 0.1
#: ... and the window is at most this share of the whole record
PULSE_MAX_SHARE = 0.25
#: margin after the pulse's end, as a share of the pulse's length
PULSE_MARGIN = 0.3


def pulse_window(
    t_s: Sequence[float], y: Sequence[float], threshold: float = PULSE_THRESHOLD
) -> tuple[float, float] | None:
    """The time span [s] worth plotting of a record that holds one dominant pulse, else None.

    The pulse starts where ``|y|`` first exceeds ``threshold`` times its peak and ends where,
    after the peak, it first falls below that again; the window adds :data:`PULSE_MARGIN` of
    the pulse's length after the end (and a tenth before the start, within the record). For
    an exponential decay from the peak, exp(-t/tau), the 1 % end is 4.6 tau and the window
    ~6 tau (RC charging, any circuits textbook). The record counts as a pulse only when the
    window is at most :data:`PULSE_MAX_SHARE` of it and ``|y|`` outside the window stays below
    :data:`PULSE_DOMINANCE` of the peak: a switch-on current settling into a small steady
    current, or a surge current, is zoomed; a sine over two mains cycles (which returns to its
    peak every cycle) or a slowly charging voltage is not.
    """
    t = np.asarray(t_s, dtype=float)
    a = np.abs(np.asarray(y, dtype=float))
    if t.size < 3 or t.shape != a.shape or not np.all(np.isfinite(a)):
        return None
    peak = float(a.max())
    if peak <= 0.0:
        return None
    ip = int(a.argmax())
    above = np.flatnonzero(a > threshold * peak)
    start = float(t[above[0]])
    below = np.flatnonzero(a[ip:] < threshold * peak)
    if below.size == 0:
        return None
    end = float(t[ip + below[0]])
    length = max(end - start, float(t[ip + below[0]] - t[max(ip + below[0] - 1, 0)]))
    lo = max(float(t[0]), start - 0.1 * length)
    hi = min(float(t[-1]), end + PULSE_MARGIN * length)
    if hi - lo > PULSE_MAX_SHARE * float(t[-1] - t[0]):
        return None
    outside = a[(t < lo) | (t > hi)]
    if outside.size and float(outside.max()) >= PULSE_DOMINANCE * peak:
        return None
    return lo, hi


def _time_scale(span_s: float) -> tuple[float, str]:
    for factor, unit in _TIME_SCALES:
        if span_s >= 2.0 * factor:
            return factor, unit
    return _TIME_SCALES[-1]


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
    title: str,
    unit: str,
    traces: Sequence[Trace],
    width_in: float = 9.0,
    height_in: float = 3.0,
    window_s: tuple[float, float] | None | str = "pulse",
) -> str:
    """Plot ``traces`` against time and return the figure as SVG text (no XML declaration).

    ``unit`` is the SI unit of the y values (``"A"`` or ``"V"``); the axis uses ``mA``/``µA``
    when the data are small. ``window_s``: the time span shown, in seconds from the first
    sample; ``"pulse"`` (default) zooms to :func:`pulse_window` of the traces when they hold
    one dominant pulse (switch-on, surge) and shows the whole record otherwise; ``None`` shows
    the whole record. The time axis is in ms, or µs for spans under 2 ms. Raises
    :class:`BadValueError` when a trace is empty or its arrays differ in length.
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
    t0 = min(float(t[0]) for _, t, _ in arrays)
    window = _window(arrays, t0, window_s)
    if window is not None:  # keep the samples in view (and one either side, for the edges)
        lo, hi = window
        clipped = []
        for label, t, y in arrays:
            keep = (t - t0 >= lo) & (t - t0 <= hi)
            keep |= np.roll(keep, 1) | np.roll(keep, -1)
            clipped.append((label, t[keep], y[keep]))
        arrays = [a for a in clipped if a[1].size]
    else:
        lo, hi = 0.0, max(float(t[-1]) for _, t, _ in arrays) - t0
    peak = max(float(np.nanmax(np.abs(y))) for _, _, y in arrays) or 1.0
    factor, prefix = _scale(peak)
    t_factor, t_unit = _time_scale(hi - lo)
    legend = len(arrays) > 1 or bool(arrays[0][0])
    rows = (len(arrays) + 1) // 2 if legend else 0  # legend below the axes, two per row
    style = {"svg.fonttype": "none", "svg.hashsalt": "dropper", "font.size": 9}
    with plt.rc_context(style):
        fig, ax = plt.subplots(figsize=(width_in, height_in + 0.22 * rows), layout="constrained")
        try:
            for label, t, y in arrays:
                ax.plot((t - t0) / t_factor, y / factor, linewidth=1.2, label=label)
            if window is not None:
                ax.set_xlim(lo / t_factor, hi / t_factor)
            ax.set_title(title)
            ax.set_xlabel(f"time [{t_unit}]")
            ax.set_ylabel(f"[{prefix}{unit}]")
            ax.grid(True, linewidth=0.4, alpha=0.6)
            low = min(float(np.nanmin(y)) for _, _, y in arrays)
            high = max(float(np.nanmax(y)) for _, _, y in arrays)
            if low < 0.0 < high:  # a zero line where the curves cross zero; a bus voltage
                ax.axhline(0.0, color="0.3", linewidth=0.6)  # keeps its ripple in view
            if legend:  # outside the axes, so it never hides a curve
                fig.legend(loc="outside lower center", ncols=min(len(arrays), 2), fontsize=8,
                           frameon=False)  # fmt: skip
            buf = io.StringIO()
            fig.savefig(buf, format="svg", metadata={"Date": None})  # same data, same file
        finally:
            plt.close(fig)
    svg = buf.getvalue()
    svg = re.sub(r"^<\?xml[^>]*>\s*", "", svg)
    return re.sub(r"^<!DOCTYPE[^>]*>\s*", "", svg)


def _window(
    arrays: Sequence[tuple[str, np.ndarray, np.ndarray]],
    t0: float,
    window_s: tuple[float, float] | None | str,
) -> tuple[float, float] | None:
    """The shown span [s from ``t0``]: given, or the union of the traces' pulse windows when
    every trace is one dominant pulse (``"pulse"``), else None (the whole record)."""
    if window_s is None:
        return None
    if isinstance(window_s, str):
        if window_s != "pulse":
            raise BadValueError(f"plot window {window_s!r}: give (start, end) [s], 'pulse' or None")
        spans = [pulse_window(t - t0, y) for _, t, y in arrays]
        if any(s is None for s in spans):
            return None
        return min(s[0] for s in spans if s), max(s[1] for s in spans if s)
    lo, hi = (float(x) for x in window_s)
    if not hi > lo:
        raise BadValueError(f"plot window {window_s!r}: the end must come after the start")
    return lo, hi
