"""The closed-form solution of one linear segment of the two-state circuit: the algebra of a mode.

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

:class:`Mode` holds one such segment (state equations, output and guard rows, eigenvalues and
the particular solution of each tone); :func:`_phi_dd` and :func:`_phi_dd_arrays` give the
divided differences that make ``E(h)`` and ``F(h)``. The event-driven run over many segments
is :mod:`.pwl`.

Source for the method: superposition and the phasor particular solution (any circuits
textbook) [S]; the matrix exponential solution of linear ODEs with constant coefficients
and the Newton divided-difference form of functions of a matrix (N. J. Higham, *Functions of
Matrices*, SIAM 2008, ch. 1.2 and 10) [S].
"""

from __future__ import annotations

import math

import numpy as np

__all__ = ["Mode"]


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
