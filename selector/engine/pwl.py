"""Exact piecewise-linear integration of a two-state circuit driven by a sum of sinusoids.

Between switching events the circuit is linear: ``x' = A x + b u(t) + c`` with
``u(t) = sum_k V_k sin(w_k t + phi_k)`` (the mains fundamental, plus its harmonics when the mains
is distorted) and ``x = (v_c, v_o)``. Each such segment is solved in closed form:

    x(t0 + h) = E(h) (x0 - xs(t0)) + F(h) c + xs(t0 + h)

where ``xs(t) = sum_k Im(Y_k exp(j (w_k t + phi_k)))``, ``Y_k = (j w_k I - A)^-1 b V_k``, is the
particular solution: for a linear mode the response to a sum of sinusoids is the sum of the
responses to each (superposition), so a multi-tone source keeps the solution exact.
``E(h) = exp(A h)`` and ``F(h) = integral_0^h exp(A s) ds``. Both matrix functions of
the 2 x 2 matrix ``A`` come from the Newton form of the Cayley-Hamilton interpolation
``f(A) = f(l2) I + f[l1, l2] (A - l2 I)`` (exact, also for repeated or zero eigenvalues). The
eigenvalues of a passive RC network are real and <= 0.

Events (a diode or Zener changing state) are guard rows ``k . x + k_u u + k_c`` that leave the
mode when they turn negative; they are bracketed on a coarse grid inside each segment and then
located by regula falsi (Illinois) on the exact solution, so no time step limits accuracy.

Because every device is continuous in its current at its switching point (a diode starts and
stops at zero current, a Zener at zero current), the vector field is continuous across events and
the sensitivity of the end state to the start state is the product of the segment matrices
``E(h)``: the shooting Newton iteration of :mod:`.steady_state` uses it as its Jacobian.

Source for the method: superposition and the phasor particular solution (any circuits
textbook) [S]; the matrix exponential solution of linear ODEs with constant coefficients
and the Newton divided-difference form of functions of a matrix (N. J. Higham, *Functions of
Matrices*, SIAM 2008, ch. 1.2 and 10) [S].
"""

from __future__ import annotations

import math
from collections.abc import Callable, Hashable
from dataclasses import dataclass

import numpy as np

__all__ = ["Mode", "PwlSystem", "Trace"]


def _phi_dd(l1: float, l2: float, h):
    """Values needed for E(h) and F(h): (e2, d_e, g2, d_f) for scalar or array ``h``."""
    e2 = np.exp(l2 * h) if isinstance(h, np.ndarray) else math.exp(l2 * h)
    exp = np.exp if isinstance(h, np.ndarray) else math.exp
    expm1 = np.expm1 if isinstance(h, np.ndarray) else math.expm1
    g2 = expm1(l2 * h) / l2 if l2 != 0.0 else h
    diff = l1 - l2
    scale = abs(l1) + abs(l2)
    if diff > 1e-7 * scale and diff > 0.0:
        e1 = exp(l1 * h)
        g1 = expm1(l1 * h) / l1 if l1 != 0.0 else h
        return e2, (e1 - e2) / diff, g2, (g1 - g2) / diff
    # (nearly) repeated eigenvalue: derivatives at l2
    d_e = h * e2
    lh = l2 * h
    if abs(l2) * (np.max(h) if isinstance(h, np.ndarray) else h) < 1e-4:
        d_f = h * h * (0.5 + lh / 6.0)
    else:
        d_f = (h * e2 * l2 - expm1(lh)) / (l2 * l2)
    return e2, d_e, g2, d_f


class Mode:
    """One linear piece: state equations, output rows and guard rows.

    ``rows`` is an (n, 4) array of linear forms ``[k_vc, k_vo, k_u, k_const]``; the first rows are
    the named outputs, then the guards. ``guards`` holds ``(row index, next key)`` pairs.
    """

    __slots__ = (
        "_abc",
        "rows",
        "guards",
        "guard_rows",
        "l1",
        "l2",
        "Y",
        "omega",
        "key",
        "_m",
        "_cc",
        "_tn",
        "basis",
        "gpy",
    )

    def __init__(self, key, dvc, dvo, rows, guards, tones):
        """``tones``: the source as ``((amplitude [V], w [rad/s], phase [rad]), ...)``, the
        fundamental first (see :func:`selector.engine.distortion.tones`)."""
        self.key = key
        a11, a12, b0, c0 = (float(v) for v in dvc)
        a21, a22, b1, c1 = (float(v) for v in dvo)
        self._abc = (a11, a12, a21, a22, b0, b1, c0, c1)
        self.rows = np.asarray(rows, dtype=float)
        self.guards = guards
        self.guard_rows = self.rows[[g[0] for g in guards]] if guards else np.zeros((0, 4))
        self.gpy = self.guard_rows.tolist()
        tr = a11 + a22
        det = a11 * a22 - a12 * a21
        disc = max(0.25 * tr * tr - det, 0.0)
        l2 = 0.5 * tr - math.sqrt(disc)  # the more negative one
        l1 = det / l2 if l2 != 0.0 else 0.5 * tr + math.sqrt(disc)
        if l1 < l2:
            l1, l2 = l2, l1
        self.l1, self.l2 = l1, l2
        m = (a11 - l2, a12, a21, a22 - l2)
        mc0, mc1 = m[0] * c0 + m[1] * c1, m[2] * c0 + m[3] * c1
        # particular solution of each tone: Y = (j w I - A)^-1 b amplitude (superposition)
        tn = []
        ys = []
        for amp, omega, phase in tones:
            jw = 1j * omega
            m00, m01, m10, m11 = jw - a11, -a12, -a21, jw - a22
            d = m00 * m11 - m01 * m10
            bb0, bb1 = b0 * amp, b1 * amp
            y0 = complex((m11 * bb0 - m01 * bb1) / d)
            y1 = complex((-m10 * bb0 + m00 * bb1) / d)
            ys.append((y0, y1))
            tn.append((float(omega), float(phase), y0.real, y0.imag, y1.real, y1.imag, float(amp)))
        self._tn = tuple(tn)
        self.Y = ys[0]
        self.omega = tn[0][0]
        self._m = m
        self._cc = (c0, c1, mc0, mc1)
        self.basis: np.ndarray | None = None

    def make_basis(self, hs: np.ndarray, trig: np.ndarray) -> np.ndarray:
        """Rows ``[e2, d_e, g2, d_f, cos(w_1 h), sin(w_1 h), ..., cos(w_n h), sin(w_n h), 1]`` on a
        fixed grid of steps ``hs``: every state and guard value at ``t0 + hs`` is a combination of
        them. ``trig`` holds the rows after the fourth (the same for every mode of a system)."""
        basis = np.empty((4 + trig.shape[0], hs.size))
        basis[0], basis[1], basis[2], basis[3] = _phi_dd(self.l1, self.l2, hs)
        basis[4:] = trig
        self.basis = basis
        return basis

    def grid_coefficients(self, x0, t0: float) -> np.ndarray:
        """(4, 5 + 2 n) matrix W with ``[vc, vo, u, 1](t0 + h) = W @ basis(h)`` (n tones)."""
        c = self._cc
        M = self._m
        tn = self._tn
        if len(tn) == 1:  # one tone: the common case, written out
            w, ph, y0r, y0i, y1r, y1i, amp = tn[0]
            sn, cs = math.sin(w * t0 + ph), math.cos(w * t0 + ph)
            z0 = x0[0] - (y0r * sn + y0i * cs)
            z1 = x0[1] - (y1r * sn + y1i * cs)
            return np.array(
                [
                    [z0, M[0] * z0 + M[1] * z1, c[0], c[2],
                     y0r * sn + y0i * cs, y0r * cs - y0i * sn, 0.0],
                    [z1, M[2] * z0 + M[3] * z1, c[1], c[3],
                     y1r * sn + y1i * cs, y1r * cs - y1i * sn, 0.0],
                    [0.0, 0.0, 0.0, 0.0, amp * sn, amp * cs, 0.0],
                    [0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 1.0],
                ]
            )  # fmt: skip
        z0, z1 = x0[0], x0[1]
        r0: list[float] = []
        r1: list[float] = []
        r2: list[float] = []
        for w, ph, y0r, y0i, y1r, y1i, amp in tn:
            a = w * t0 + ph
            sn, cs = math.sin(a), math.cos(a)
            z0 -= y0r * sn + y0i * cs
            z1 -= y1r * sn + y1i * cs
            r0 += (y0r * sn + y0i * cs, y0r * cs - y0i * sn)
            r1 += (y1r * sn + y1i * cs, y1r * cs - y1i * sn)
            r2 += (amp * sn, amp * cs)
        zeros = [0.0] * len(r0)
        return np.array(
            [
                [z0, M[0] * z0 + M[1] * z1, c[0], c[2], *r0, 0.0],
                [z1, M[2] * z0 + M[3] * z1, c[1], c[3], *r1, 0.0],
                [0.0, 0.0, 0.0, 0.0, *r2, 0.0],
                [0.0, 0.0, 0.0, 0.0, *zeros, 1.0],
            ]
        )

    def transition_scalar(self, h: float) -> tuple[float, float, float, float]:
        """E(h) as a flat (a, b, c, d) tuple of floats."""
        e2, d_e, _, _ = _phi_dd(self.l1, self.l2, h)
        M = self._m
        return (e2 + d_e * M[0], d_e * M[1], d_e * M[2], e2 + d_e * M[3])

    @property
    def A(self) -> np.ndarray:
        a = self._abc
        return np.array([[a[0], a[1]], [a[2], a[3]]])

    @property
    def b(self) -> np.ndarray:
        return np.array(self._abc[4:6])

    @property
    def c(self) -> np.ndarray:
        return np.array(self._abc[6:8])

    @property
    def M(self) -> np.ndarray:
        m = self._m
        return np.array([[m[0], m[1]], [m[2], m[3]]])

    @property
    def Mc(self) -> np.ndarray:
        return np.array(self._cc[2:4])

    # --- exact solution -------------------------------------------------------------------
    def xs(self, t):
        """Particular solution (sum over the tones) at time(s) t: (vc, vo)."""
        sin = np.sin if isinstance(t, np.ndarray) else math.sin
        cos = np.cos if isinstance(t, np.ndarray) else math.cos
        p0 = p1 = 0.0
        for w, ph, y0r, y0i, y1r, y1i, _ in self._tn:
            a = w * t + ph
            s, c = sin(a), cos(a)
            p0 = p0 + y0r * s + y0i * c
            p1 = p1 + y1r * s + y1i * c
        return p0, p1

    def advance(self, x0: np.ndarray, t0: float, h):
        """State at t0 + h (h scalar or array); returns (vc, vo)."""
        s0 = self.xs(t0)
        z0 = (x0[0] - s0[0], x0[1] - s0[1])
        M = self.M
        mz = (M[0, 0] * z0[0] + M[0, 1] * z0[1], M[1, 0] * z0[0] + M[1, 1] * z0[1])
        e2, d_e, g2, d_f = _phi_dd(self.l1, self.l2, h)
        s1 = self.xs(t0 + h)
        c = self.c
        mc = self.Mc
        vc = e2 * z0[0] + d_e * mz[0] + g2 * c[0] + d_f * mc[0] + s1[0]
        vo = e2 * z0[1] + d_e * mz[1] + g2 * c[1] + d_f * mc[1] + s1[1]
        return vc, vo

    def advance_scalar(self, x0, t0: float, h: float) -> tuple[float, float]:
        """:meth:`advance` for one scalar ``h`` with plain floats (the event-location hot path)."""
        tn = self._tn
        if len(tn) == 1:  # a pure sine (phase 0): the common case, unrolled
            w, _, y0r, y0i, y1r, y1i, _ = tn[0]
            c0, s0 = math.cos(w * t0), math.sin(w * t0)
            c1, s1 = math.cos(w * (t0 + h)), math.sin(w * (t0 + h))
            z0 = x0[0] - (y0r * s0 + y0i * c0)
            z1 = x0[1] - (y1r * s0 + y1i * c0)
            p0 = y0r * s1 + y0i * c1
            p1 = y1r * s1 + y1i * c1
        else:
            z0, z1 = x0[0], x0[1]
            p0 = p1 = 0.0
            t1 = t0 + h
            for w, ph, y0r, y0i, y1r, y1i, _ in tn:
                a0 = w * t0 + ph
                a1 = w * t1 + ph
                s0, c0 = math.sin(a0), math.cos(a0)
                s1, c1 = math.sin(a1), math.cos(a1)
                z0 -= y0r * s0 + y0i * c0
                z1 -= y1r * s0 + y1i * c0
                p0 += y0r * s1 + y0i * c1
                p1 += y1r * s1 + y1i * c1
        l1, l2 = self.l1, self.l2
        e2 = math.exp(l2 * h)
        g2 = math.expm1(l2 * h) / l2 if l2 != 0.0 else h
        diff = l1 - l2
        if diff > 1e-7 * (abs(l1) + abs(l2)) and diff > 0.0:
            e1 = math.exp(l1 * h)
            g1 = math.expm1(l1 * h) / l1 if l1 != 0.0 else h
            d_e = (e1 - e2) / diff
            d_f = (g1 - g2) / diff
        else:
            _, d_e, _, d_f = _phi_dd(l1, l2, h)
        M = self._m
        mz0 = M[0] * z0 + M[1] * z1
        mz1 = M[2] * z0 + M[3] * z1
        c = self._cc
        return (
            e2 * z0 + d_e * mz0 + g2 * c[0] + d_f * c[2] + p0,
            e2 * z1 + d_e * mz1 + g2 * c[1] + d_f * c[3] + p1,
        )

    def transition(self, h: float) -> np.ndarray:
        """E(h) = exp(A h): the sensitivity of the end state to the start state."""
        e2, d_e, _, _ = _phi_dd(self.l1, self.l2, h)
        return e2 * np.eye(2) + d_e * self.M

    def derivative(self, x, u: float) -> np.ndarray:
        return self.A @ np.asarray(x) + self.b * u + self.c


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


def _phi_dd_arrays(l1: np.ndarray, l2: np.ndarray, h: np.ndarray):
    """:func:`_phi_dd` with per-sample eigenvalues (all arrays of one shape)."""
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        l2h = l2 * h
        l1h = l1 * h
        e2 = np.exp(l2h)
        e1 = np.exp(l1h)
        g2 = np.where(l2 != 0.0, np.expm1(l2h) / l2, h)
        g1 = np.where(l1 != 0.0, np.expm1(l1h) / l1, h)
        diff = l1 - l2
        big = (diff > 1e-7 * (np.abs(l1) + np.abs(l2))) & (diff > 0.0)
        safe = np.where(big, diff, 1.0)
        d_e = np.where(big, (e1 - e2) / safe, h * e2)
        small = np.abs(l2h) < 1e-4
        l2s = np.where(l2 != 0.0, l2, 1.0)
        d_f_rep = np.where(
            small, h * h * (0.5 + l2h / 6.0), (h * e2 * l2 - np.expm1(l2h)) / (l2s * l2s)
        )
        d_f = np.where(big, (g1 - g2) / safe, d_f_rep)
    return e2, d_e, g2, d_f


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
