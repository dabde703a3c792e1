"""Exact piecewise-linear integration of a two-state circuit driven by a sum of sinusoids.

The circuit is a sequence of linear segments (modes), each solved in closed form by
:mod:`.pwl_segment` (matrix exponential by Cayley-Hamilton interpolation, phasor particular
solution of each tone of the source). This module runs it: :class:`PwlSystem` builds and caches
the modes, settles the mode at a point, runs from event to event and samples the outputs with
composite Simpson weights into a :class:`Trace`.

Events (a diode or Zener changing state) are guard rows ``k . x + k_u u + k_c`` that leave the
mode when they turn negative; they are bracketed on a coarse grid inside each segment and then
located by regula falsi (Illinois) on the exact solution, so no time step limits accuracy.

Because every device is continuous in its current at its switching point (a diode starts and
stops at zero current, a Zener at zero current), the vector field is continuous across events and
the sensitivity of the end state to the start state is the product of the segment matrices
``E(h)``: the shooting Newton iteration of :mod:`.steady_state` uses it as its Jacobian.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Hashable
from dataclasses import dataclass

import numpy as np

from .pwl_segment import Mode, _phi_dd_arrays

__all__ = ["Mode", "PwlSystem", "Trace"]


@dataclass
class Trace:
    """Sampled solution over an interval with quadrature weights (composite Simpson)."""

    t: np.ndarray
    w: np.ndarray
    out: dict[str, np.ndarray]
    switches: int

    def mean(self, values: np.ndarray) -> float:
        return float(np.dot(self.w, values) / self.w.sum())

    def integral(self, values: np.ndarray) -> float:
        return float(np.dot(self.w, values))


class PwlSystem:
    """A switched two-state circuit: ``build(key) -> Mode`` plus the source.

    ``names`` are the output row names every mode provides first (same order in every mode).
    The source is ``tones`` (amplitude [V], w [rad/s], phase [rad]), the fundamental at
    ``freq_hz`` first; by default the single sine ``vpk sin(w t)``. The event grid has 96 points
    per period, or 16 per period of the highest harmonic when that is finer (a guard cannot turn
    negative and back between two grid points unless it touches zero within a sixteenth of the
    fastest tone's period).
    """

    max_switches_at_once = 8

    def __init__(
        self,
        build: Callable[[Hashable], Mode],
        names: tuple[str, ...],
        vpk: float,
        freq_hz: float,
        volt_scale: float,
        tones: tuple[tuple[float, float, float], ...] | None = None,
    ):
        self._build = build
        self._cache: dict[Hashable, Mode] = {}
        self.names = names
        self.vpk = vpk
        self.omega = 2 * math.pi * freq_hz
        self.period = 1.0 / freq_hz
        self.tones = tones if tones is not None else ((vpk, self.omega, 0.0),)
        self._sine = self.tones == ((vpk, self.omega, 0.0),)
        self.tol = 1e-9 * volt_scale
        top = max(round(w / self.omega) for _, w, _ in self.tones)
        self._grid_n = max(96, 16 * top)
        #: default quadrature spacing: 100 samples per period, at least 16 per fastest tone
        self.quad_dt = self.period / max(100, 16 * top)
        self.grid_dt = self.period / self._grid_n
        self._grid = self.grid_dt * np.arange(1, self._grid_n + 1)
        trig = []
        for _, w, _ in self.tones:
            wh = w * self._grid
            trig += [np.cos(wh), np.sin(wh)]
        self._trig = np.vstack([*trig, np.ones_like(self._grid)])

    def mode(self, key) -> Mode:
        m = self._cache.get(key)
        if m is None:
            m = self._build(key)
            self._cache[key] = m
        return m

    def u(self, t: float) -> float:
        """Source voltage [V] at time t (sum of the tones)."""
        if self._sine:  # the common case, on the event-location hot path
            return self.vpk * math.sin(self.omega * t)
        v = 0.0
        for amp, w, ph in self.tones:
            v += amp * math.sin(w * t + ph)
        return v

    # --- mode validity at a point ----------------------------------------------------------
    def settle(self, key, x, t: float):
        """Switch devices until every guard of the mode holds at (x, t).

        A guard within the tolerance of zero is judged by its trend over a short look-ahead
        (``1e-5`` of a period) along the exact solution of that mode, which resolves starts at
        zero slope (a diode that begins to conduct at zero current) without chattering.
        """
        u = self.u(t)
        delta = 1e-5 * self.period
        tol = self.tol
        x0, x1 = x[0], x[1]
        for _ in range(self.max_switches_at_once):
            mode = self.mode(key)
            if not mode.guards:
                return key
            bad = None
            ahead = None
            for j, r in enumerate(mode.gpy):
                gv = r[0] * x0 + r[1] * x1 + r[2] * u + r[3]
                if gv < -tol:
                    bad = j
                    break
                if gv <= tol:
                    if ahead is None:
                        ahead = mode.advance_scalar(x, t, delta) + (self.u(t + delta),)
                    ga = r[0] * ahead[0] + r[1] * ahead[1] + r[2] * ahead[2] + r[3]
                    if ga < gv and ga < 0.0:
                        bad = j
                        break
            if bad is None:
                return key
            key = mode.guards[bad][1]
        return key

    # --- integration ------------------------------------------------------------------------
    def run(
        self,
        key,
        x0,
        t0: float,
        t1: float,
        collect: bool = False,
        quad_dt: float | None = None,
        stop: Callable[[Mode, np.ndarray, float], bool] | None = None,
    ):
        """Integrate from t0 to t1. Returns (x1, key, J, trace or None).

        ``J`` is d x1 / d x0. With ``collect`` the outputs are sampled for quadrature.
        """
        x = (float(x0[0]), float(x0[1]))
        t = t0
        key = self.settle(key, x, t)
        j00, j01, j10, j11 = 1.0, 0.0, 0.0, 1.0
        segs = []
        switches = 0
        stuck = 0
        qdt = quad_dt or self.quad_dt
        dt = self.grid_dt
        K = self._grid_n
        while t1 - t > 1e-15 * self.period:
            mode = self.mode(key)
            span = t1 - t
            h_end = span
            next_key = None
            vc1 = vo1 = None
            if mode.guards:
                gr = mode.guard_rows
                n = min(K, int(span / dt))
                basis = (
                    mode.basis
                    if mode.basis is not None
                    else mode.make_basis(self._grid, self._trig)
                )
                coef = gr @ mode.grid_coefficients(x, t)
                G = coef @ basis[:, :n] if n > 0 else np.zeros((len(gr), 0))
                neg = G < -self.tol
                anyneg = neg.any(axis=0)
                k = int(anyneg.argmax()) if n > 0 else 0
                found = n > 0 and bool(anyneg[k])
                fb_col = None
                if not found:
                    vc1, vo1 = mode.advance_scalar(x, t, span)
                    u1 = self.u(t1)
                    g_end = [r[0] * vc1 + r[1] * vo1 + r[2] * u1 + r[3] for r in mode.gpy]
                    if min(g_end) < -self.tol:
                        found = True
                        k = n
                        fb_col = g_end
                if found:
                    h_lo = k * dt if k > 0 else 0.0
                    h_hi = (k + 1) * dt if k < n else span
                    best = h_hi
                    fbs = fb_col if fb_col is not None else G[:, k].tolist()
                    fas = G[:, k - 1].tolist() if k > 0 else None
                    for j, fb in enumerate(fbs):
                        if fb >= -self.tol:
                            continue
                        fa = fas[j] if fas is not None else None
                        hj = self._locate(mode, mode.gpy[j], x, t, h_lo, h_hi, fa, fb)
                        if hj <= best:
                            best = hj
                            next_key = mode.guards[j][1]
                    h_end = best
                    if h_end <= 0.0:
                        stuck += 1
                        if stuck > 4:  # guard against chattering at a tangency: creep on
                            h_end = min(span, 1e-7 * self.period)
                            next_key = None
                    else:
                        stuck = 0
                    vc1, vo1 = mode.advance_scalar(x, t, h_end)
            if vc1 is None:
                vc1, vo1 = mode.advance_scalar(x, t, h_end)
            if collect:
                segs.append((mode, x, t, h_end))
            a, b, c, d = mode.transition_scalar(h_end)
            j00, j01, j10, j11 = (
                a * j00 + b * j10,
                a * j01 + b * j11,
                c * j00 + d * j10,
                c * j01 + d * j11,
            )
            x = (vc1, vo1)
            t = t + h_end
            if next_key is not None:
                switches += 1
                key = self.settle(next_key, x, t)
            if stop is not None and stop(self.mode(key), np.array(x), t):
                break
        J = np.array([[j00, j01], [j10, j11]])
        x = np.array(x)
        trace = None
        if collect:
            tt, ww, out = self._sample_all(segs, qdt)
            trace = Trace(
                t=tt,
                w=ww,
                out={name: out[i] for i, name in enumerate(self.names)},
                switches=switches,
            )
        return x, key, J, trace

    def _guard_at(self, mode: Mode, row, x, t: float, h: float) -> float:
        vc, vo = mode.advance_scalar(x, t, h)
        return row[0] * vc + row[1] * vo + row[2] * self.u(t + h) + row[3]

    def _locate(self, mode: Mode, row, x, t: float, a: float, b: float, fa=None, fb=None) -> float:
        """First zero of a guard row in (a, b], where g(a) >= 0 > g(b): Illinois regula falsi."""
        if fa is None:
            fa = self._guard_at(mode, row, x, t, a)
        if fb is None:
            fb = self._guard_at(mode, row, x, t, b)
        if fa <= 0.0:
            return a
        side = 0
        for _ in range(60):
            if b - a <= 1e-13 * self.period:
                break
            m = (a * fb - b * fa) / (fb - fa)
            if not (a < m < b):
                m = 0.5 * (a + b)
            fm = self._guard_at(mode, row, x, t, m)
            if abs(fm) <= self.tol:
                return m
            if fm < 0:
                b, fb = m, fm
                if side == -1:
                    fa *= 0.5
                side = -1
            else:
                a, fa = m, fm
                if side == 1:
                    fb *= 0.5
                side = 1
        return b

    def _pieces(self, mode: Mode, h: float, qdt: float) -> list[tuple[float, float, int]]:
        """Composite Simpson pieces of one segment. A fast mode (time constant below the sample
        spacing, e.g. R C of the series loop at the start of conduction) gets its own finely
        sampled stretch of ten time constants at the start."""
        pieces = []
        start = 0.0
        for lam in (mode.l2, mode.l1):  # fastest first
            tau = -1.0 / lam if lam < 0 else math.inf
            if tau < 2 * qdt and 10.0 * tau > start and start < h:
                end = min(h, 10.0 * tau)
                pieces.append((start, end, 12))
                start = end
        if start < h:
            pieces.append((start, h, max(1, math.ceil((h - start) / (2 * qdt)))))
        return pieces

    def _sample_all(self, segs, qdt: float):
        """Sample every output on all segments at once: (t, weights, outputs (nout, N))."""
        nout = len(self.names)
        starts, widths, sizes, units, wunits = [], [], [], [], []
        t_parts, l1s, l2s, rws, counts = [], [], [], [], []
        for mode, x, t, h in segs:
            if h <= 0:
                continue
            n_seg = 0
            for a, b, m in self._pieces(mode, h, qdt):
                n = 2 * m + 1
                starts.append(a)
                widths.append(b - a)
                sizes.append(n)
                units.append(_unit_grid(n))
                wunits.append(_simpson_weights(n) / (3.0 * (n - 1)))
                n_seg += n
            t_parts.append(t)
            l1s.append(mode.l1)
            l2s.append(mode.l2)
            rws.append(mode.rows[:nout] @ mode.grid_coefficients(x, t))
            counts.append(n_seg)
        if not counts:
            return np.zeros(0), np.zeros(0), np.zeros((nout, 0))
        width = np.repeat(widths, sizes)
        h = np.repeat(starts, sizes) + width * np.concatenate(units)
        w = width * np.concatenate(wunits)
        idx = np.repeat(np.arange(len(counts)), counts)
        l1 = np.asarray(l1s)[idx]
        l2 = np.asarray(l2s)[idx]
        t = np.asarray(t_parts)[idx] + h
        basis = np.empty((5 + 2 * len(self.tones), h.size))
        basis[0], basis[1], basis[2], basis[3] = _phi_dd_arrays(l1, l2, h)
        for k, (_, w_k, _) in enumerate(self.tones):
            wh = w_k * h
            np.cos(wh, out=basis[4 + 2 * k])
            np.sin(wh, out=basis[5 + 2 * k])
        basis[-1] = 1.0
        rw = np.asarray(rws)[idx]  # (N, nout, 7)
        out = np.einsum("snk,ks->ns", rw, basis)
        return t, w, out


_SIMPSON: dict[int, np.ndarray] = {}
_UNIT: dict[int, np.ndarray] = {}


def _unit_grid(n: int) -> np.ndarray:
    """``n`` equally spaced points on [0, 1] (cached)."""
    g = _UNIT.get(n)
    if g is None:
        g = np.linspace(0.0, 1.0, n)
        _UNIT[n] = g
    return g


def _simpson_weights(n: int) -> np.ndarray:
    """Composite Simpson weights 1 4 2 4 ... 4 1 for ``n`` (odd) points (unscaled)."""
    w = _SIMPSON.get(n)
    if w is None:
        w = np.ones(n)
        w[1:-1:2] = 4.0
        w[2:-1:2] = 2.0
        _SIMPSON[n] = w
    return w
