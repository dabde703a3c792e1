"""Distorted mains: the multi-tone source, its crest and its total harmonic distortion.

The mains voltage with harmonics (:class:`~selector.engine.circuit.Harmonic`) is

    u(t) = Vpk (sin(w t) + sum_h a_h sin(h w t + phi_h)),    Vpk = sqrt(2) V1,

a sum of sinusoids. The solver (:mod:`.pwl`) takes it as a list of tones
``(amplitude [V], angular frequency [rad/s], phase [rad])``: a linear mode's particular solution
under a sum of sinusoids is the sum of the particular solutions of each (superposition), so the
segment solution stays exact. Sources: superposition for linear ODEs with constant coefficients
and the phasor solution of each tone, any circuits textbook [S].
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from functools import lru_cache

import numpy as np

from .circuit import Harmonic

__all__ = [
    "Tone",
    "has_even",
    "mains_record",
    "max_order",
    "thd",
    "tones",
    "waveform",
    "waveform_peak",
]

#: one sinusoid of the source: (amplitude [V], angular frequency [rad/s], phase [rad])
Tone = tuple[float, float, float]

_PEAK_GRID = 4096  # samples per period for the crest search (then refined by Newton)


def tones(vpk: float, omega: float, harmonics: Sequence[Harmonic] = ()) -> tuple[Tone, ...]:
    """The source as tones: the fundamental ``(Vpk, w, 0)`` first, then ``(a_h Vpk, h w, phi_h)``
    for every harmonic with a non-zero amplitude. ``vpk`` [V] is the fundamental's crest."""
    out: list[Tone] = [(float(vpk), float(omega), 0.0)]
    for h in harmonics:
        if h.fraction > 0.0:
            out.append((vpk * h.fraction, h.order * omega, math.radians(h.phase_deg)))
    return tuple(out)


def has_even(harmonics: Sequence[Harmonic]) -> bool:
    """True when an even order with non-zero amplitude is present: the wave then loses its
    half-wave symmetry ``u(t + T/2) = -u(t)`` (which every odd harmonic keeps)."""
    return any(h.order % 2 == 0 and h.fraction > 0.0 for h in harmonics)


def max_order(harmonics: Sequence[Harmonic]) -> int:
    """Highest order with a non-zero amplitude (1 for a sine)."""
    return max((h.order for h in harmonics if h.fraction > 0.0), default=1)


def thd(harmonics: Sequence[Harmonic]) -> float:
    """Total harmonic distortion relative to the fundamental [-]:
    ``THD = sqrt(sum_h (V_h / V_1)^2)`` (the definition of IEC 61000-2-2 and EN 50160, which
    count the orders up to the 40th [M]).

    Example: 3rd 5 %, 5th 6 %, 7th 5 % -> sqrt(25 + 36 + 25) % = 9.27 %.
    """
    return math.sqrt(sum(h.fraction * h.fraction for h in harmonics))


def waveform(theta, harmonics: Sequence[Harmonic] = ()):
    """The per-unit wave ``sin(theta) + sum_h a_h sin(h theta + phi_h)`` at angles ``theta``
    [rad] (array or float)."""
    th = np.asarray(theta, dtype=float)
    y = np.sin(th)
    for h in harmonics:
        y = y + h.fraction * np.sin(h.order * th + math.radians(h.phase_deg))
    return y


@lru_cache(maxsize=256)
def _peak(harmonics: tuple[Harmonic, ...]) -> tuple[float, float]:
    th = np.linspace(0.0, 2.0 * math.pi, _PEAK_GRID, endpoint=False)
    y = waveform(th, harmonics)
    k = int(np.argmax(np.abs(y)))
    sign = 1.0 if y[k] >= 0 else -1.0
    t = float(th[k])
    # Newton on the derivative (the grid brackets the crest to 2 pi / 4096)
    for _ in range(8):
        d1 = math.cos(t) + sum(
            h.fraction * h.order * math.cos(h.order * t + math.radians(h.phase_deg))
            for h in harmonics
        )
        d2 = -math.sin(t) - sum(
            h.fraction * h.order**2 * math.sin(h.order * t + math.radians(h.phase_deg))
            for h in harmonics
        )
        if d2 * sign >= 0.0:  # not concave towards the crest: keep the grid value
            break
        step = d1 / d2
        if abs(step) > 2.0 * math.pi / _PEAK_GRID:
            break
        t -= step
        if abs(step) < 1e-13:
            break
    peak = abs(float(waveform(t, harmonics)))
    if peak < abs(float(y[k])):
        t, peak = float(th[k]), abs(float(y[k]))
    return peak, t % (2.0 * math.pi)


def waveform_peak(harmonics: Sequence[Harmonic]) -> tuple[float, float]:
    """Crest of the distorted wave: ``(max |u| / Vpk, angle of that crest [rad] in 0..2 pi)``.

    Found on a grid of 4096 points per period and refined by Newton's method on ``du/dt = 0``
    (the crest of a sum of sinusoids has no closed form). A sine gives ``(1, pi/2)``.
    Example: 5th 6 % at phase 0 adds at the fundamental's crest: ``(1.06, pi/2)``.
    """
    return _peak(tuple(harmonics))


def mains_record(mains) -> dict:
    """The supply as a JSON-ready dict (SI; keys with unit suffixes): the fundamental's nominal
    rms and tolerance, the frequencies, every harmonic (order, fraction and percent of the
    fundamental, phase in degrees), THD, crest factor, total rms at nominal, and the crest at
    nominal and at the highest mains (what switch-on, discharge and the rectifier's reverse
    voltage start from)."""
    cf, _ = waveform_peak(mains.harmonics) if mains.harmonics else (1.0, math.pi / 2)
    d = thd(mains.harmonics)
    return {
        "nominal_v": mains.nominal_v,
        "tolerance": mains.tolerance,
        "frequencies_hz": list(mains.frequencies_hz),
        "harmonics": [
            {
                "order": h.order,
                "fraction": h.fraction,
                "percent": 100.0 * h.fraction,
                "phase_deg": h.phase_deg,
            }
            for h in mains.harmonics
        ],
        "harmonics_source": mains.harmonics_source,
        "thd": d,
        "thd_percent": 100.0 * d,
        "crest_factor": cf,
        "rms_v": mains.nominal_v * math.sqrt(1.0 + d * d),
        "peak_v": math.sqrt(2.0) * mains.nominal_v * cf,
        "max_peak_v": math.sqrt(2.0) * mains.high_v * cf,
    }
