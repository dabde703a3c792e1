"""The surge's piecewise-linear simulation (one job: step a batch of circuits through the
pulse and measure them): :class:`SurgeCase` in (one circuit at one corner with its
pre-state), :class:`SurgeRun` out (the stresses of every case x phase x polarity), with the
generator of :mod:`.surge_generator` in series with the mains. The pre-states and the
worst case over the runs are :mod:`.surge_circuit`'s.

The simulation
--------------
The circuit is piecewise linear (diodes: drop + resistance; Zener: voltage + slope resistance,
forward like a diode). Its state ``x = (v_cc, i_L, v_x, v_r, s, c, 1)`` holds the generator
capacitor, the inductor current, the X capacitor, the reservoir's own capacitance (ESR in
series), the mains as an oscillator (``s = sin(w t + phi)``, ``c = cos(w t + phi)``) and a
constant; within a mode ``x' = A x`` and the step ``x(t + h) = exp(A h) x(t)`` is exact, also for
the mains. The matrix exponentials are computed once per (corner, mode, step size) by scaling
and squaring of a Taylor series. The time grid is fixed and fine where the pulse is fast
(160 ns on the front, growing to ~10 us on the tail: 84 steps over 300 us; the steps only
sample the outputs and place the switching instants, the segments themselves are exact;
integrals by composite Simpson on each piece of equal steps); after
each step every device is checked against its guard (a conducting diode's current >= 0, a
blocking diode's voltage below its drop, the Zener likewise) and a step whose end state breaks
a guard is redone in the switched mode (state iteration). Every device switches at zero
current, so the error of an event located to within one step is second order in the step;
quartering every step moves the reported stresses by < 0.3 % (measured: < 0.2 %,
tests/test_surge_circuit.py). All corners and phases run at once, vectorised over a batch, so
the worst case is found by enumeration, not by assumption. Why not a fixed-step trapezoidal
integration: it would need steps of a few ns through the 1.2 us front for the same accuracy
(our estimate: some 20,000 steps over the window); the exact segments need 84.

Why not the 2 x 2 segment solver of :mod:`.pwl`: it is built around two states and a
sinusoidal particular solution; this circuit has six dynamic states and a drive (the generator)
that is itself a state, and needs all corners at once. The method is the same (exact linear
segments), vectorised instead of event-located.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import OutOfRangeError
from .surge_generator import GENERATOR, OPEN_CIRCUIT_PEAK_PER_VOLT
from .varistor import VARISTOR_SEGMENTS, Varistor

__all__ = [
    "SURGE_WINDOW_S",
    "SurgeCase",
    "SurgeRun",
    "simulate",
]

#: length of the simulated pulse [s]: the 1.2/50 us wave has fallen to ~1 % of its peak and
#: < 0.05 % of its energy is left after it
SURGE_WINDOW_S = 300e-6


@dataclass(frozen=True)
class SurgeCase:
    """One circuit at one corner for the surge (SI). ``phases_deg`` and ``polarities`` are
    enumerated for it; ``v_x0``/``v_o0`` give the X-capacitor and bus voltage at each phase
    (same order as ``phases_deg``), from the periodic steady state."""

    topology: str
    mains_v: float
    freq_hz: float
    cap_f: float
    r_ohm: float
    bleeder_ohm: float
    vf_v: float
    rd_ohm: float
    vz_v: float
    zz_ohm: float
    reservoir_f: float
    esr_ohm: float
    load_a: float
    load_g: float
    phases_deg: tuple[float, ...]
    v_x0: tuple[float, ...]
    v_o0: tuple[float, ...]
    #: a varistor across the line ahead of the dropper (:class:`.varistor.Varistor`), or None
    varistor: Varistor | None = None


@dataclass
class SurgeRun:
    """Stresses of every (case, phase, polarity) run, arrays of shape (n_runs,) (SI), and the
    run's case index, phase [deg] and polarity (+1/-1). ``rectifier_i2t_a2s`` is per diode
    (bridge: the worse pair); ``fuse_i2t_a2s`` the line current's integral of i^2."""

    case: np.ndarray
    phase_deg: np.ndarray
    polarity: np.ndarray
    peak_current_a: np.ndarray
    series_r_energy_j: np.ndarray
    series_r_peak_voltage_v: np.ndarray
    x_cap_voltage_step_v: np.ndarray
    x_cap_peak_total_v: np.ndarray
    x_cap_dvdt_v_per_s: np.ndarray
    zener_peak_current_a: np.ndarray
    zener_pulse_energy_j: np.ndarray
    zener_peak_power_w: np.ndarray
    rectifier_peak_current_a: np.ndarray
    rectifier_i2t_a2s: np.ndarray
    fuse_i2t_a2s: np.ndarray
    bus_peak_v: np.ndarray
    steps: int
    #: the varistor's peak current [A] and energy [J] (zeros without one) and the line's peak
    #: voltage at its terminals [V]
    varistor_peak_current_a: np.ndarray | None = None
    varistor_energy_j: np.ndarray | None = None
    line_peak_v: np.ndarray | None = None


_MIN_R = 1e-3  # floor for zero resistances [ohm], as in the steady-state solver

# state indices
_VCC, _IL, _VX, _VR, _S, _C, _ONE = range(7)
_N = 7
# modes: bridge (sb, z) with sb in -1, 0, 1 (bridge conducting -/off/+), z in 0, 1 (breakdown);
# half-wave (z, d) with z in -1, 0, 1 (forward/off/breakdown), d in 0, 1 (diode on)
_MODES = [(a, b) for a in (-1, 0, 1) for b in (0, 1)]
_MODE_ID = {m: k for k, m in enumerate(_MODES)}
# outputs: line current, bus voltage, Zener current, Zener voltage, rectifier path current
# (bridge: signed line current; half-wave: diode), X-capacitor current, varistor current,
# line voltage (at the varistor, ahead of the series resistor)
_OUT = ("i", "v_o", "i_z", "v_z", "i_rect", "i_cx", "i_m", "v_line")
#: guard slots per mode: up to 3 of the dropper's devices and 2 of the varistor's chord
_GUARDS = 6


def _step_schedule(window_s: float, refine: int = 1) -> list[tuple[float, int]]:
    """(step [s], count) pieces of the fixed grid: 160 ns to 3.2 us, 640 ns to 16 us, 2.56 us to
    67 us, then ~10 us to the end of the window; ``refine`` divides every step. Every piece has
    an even count (composite Simpson weights, :func:`_simpson_weights`)."""
    pieces = [(160e-9 / refine, 20 * refine), (640e-9 / refine, 20 * refine)]
    pieces.append((2.56e-6 / refine, 20 * refine))
    rest = window_s - sum(h * n for h, n in pieces)
    if rest <= 0:
        raise OutOfRangeError(f"surge window {window_s} s is shorter than the front grid")
    n_last = 2 * math.ceil(rest / (2 * 10.24e-6 / refine))  # even: Simpson pieces
    pieces.append((rest / n_last, n_last))
    return pieces


def _expm_batch(a: np.ndarray) -> np.ndarray:
    """exp(a) of a stack of square matrices (..., n, n): scaling and squaring of the degree-18
    Taylor series (the norm is scaled below 1/2, where the truncation error is < 1e-17)."""
    norm = np.max(np.sum(np.abs(a), axis=-2), axis=-1)
    s = int(max(0, math.ceil(math.log2(max(float(np.max(norm)), 1e-300) / 0.5))))
    b = a / (2.0**s)
    n = a.shape[-1]
    eye = np.broadcast_to(np.eye(n), a.shape)
    term = eye.copy()
    out = eye.copy()
    for k in range(1, 19):
        term = term @ b / k
        out = out + term
    for _ in range(s):
        out = out @ out
    return out


def _mode_matrices(p: dict[str, np.ndarray], topology: str, n_seg: int = 0):
    """State matrix A (B, M, n, n), output rows (B, M, n_out, n), guard rows (B, M, G, n) and
    guard targets (M, G) for every batch element and mode (:data:`_GUARDS` slots; unused rows
    +1). A mode is a device mode of the dropper (:data:`_MODES`) and a chord of the varistor
    (``-n_seg..n_seg``, 0: open; ``n_seg`` = 0 when no case has a varistor): mode id
    ``dm (2 n_seg + 1) + (chord + n_seg)``.

    The varistor sits across the line (the generator's output in series with the mains); on
    chord ``j`` it is ``i_m = G_j (v_line - E_j)``, so the source seen by the dropper is the
    generator's Thevenin (``u + Rs2 i_L``, ``Rs2``) loaded by it: ``V_th = (u + Rs2 i_L + Rs2
    G E) / (1 + Rs2 G)``, ``R_th = Rs2 / (1 + Rs2 G)``, and the inductor sees ``v_line - u``."""
    bsz = p["r"].shape[0]
    n_chords = 2 * n_seg + 1
    nm = len(_MODES) * n_chords
    a_all = np.zeros((bsz, nm, _N, _N))
    out_all = np.zeros((bsz, nm, len(_OUT), _N))
    g_all = np.zeros((bsz, nm, _GUARDS, _N))
    g_all[..., _ONE] = 1.0
    target = np.tile(np.arange(nm)[:, None], (1, _GUARDS))
    gen = GENERATOR
    w = p["omega"]
    vpk = p["vpk"]

    def unit(k: int) -> np.ndarray:
        e = np.zeros((bsz, _N))
        e[:, k] = 1.0
        return e

    x_vx, x_vr, x_one = unit(_VX), unit(_VR), unit(_ONE)
    # the generator's open-circuit output in series with the mains: u + Rs2 i_L (forms, (B, n))
    v_open = vpk[:, None] * unit(_S) + gen.rs2_ohm * unit(_IL)
    u_form = vpk[:, None] * unit(_S)
    mov_v = p.get("mov_v")  # (B, n_seg + 1) chord ends [V]; currents p["mov_i"]
    for mid in range(nm):
        dm, chord = divmod(mid, n_chords)
        chord -= n_seg
        m0, m1 = _MODES[dm]
        if chord == 0:
            g_m = np.zeros(bsz)
            e_m = np.zeros(bsz)
        else:
            jj = abs(chord)
            v_lo, v_hi = mov_v[:, jj - 1], mov_v[:, jj]
            i_lo, i_hi = p["mov_i"][:, jj - 1], p["mov_i"][:, jj]
            g_m = (i_hi - i_lo) / (v_hi - v_lo)
            e_m = np.sign(chord) * (v_lo - i_lo / g_m)
        den_m = 1.0 + gen.rs2_ohm * g_m
        v_th = (v_open + (gen.rs2_ohm * g_m * e_m)[:, None] * x_one) / den_m[:, None]
        # open-circuit drive of the loop: V_th - v_x; loop resistance R_th + series R
        drive = v_th - x_vx
        rloop = gen.rs2_ohm / den_m + p["r"]
        if topology == "bridge":
            sb, z = m0, m1
            gz = (z / p["zz"]) if z else np.zeros(bsz)
            # bus: v_o = v_r + esr (sb i - gz (v_o - vz) - I_L - G_L v_o)
            # line (conducting): drive - (rloop + 2 rd) i - sb (v_o + 2 vf) = 0
            # solve the 2 x 2 system for (i, v_o) as forms over the state
            den_o = 1.0 + p["esr"] * (gz + p["load_g"])
            vo_const = (p["esr"] * (gz * p["vz"] - p["load_a"]))[:, None] * x_one
            if sb == 0:
                i = np.zeros((bsz, _N))
                v_o = (x_vr + vo_const) / den_o[:, None]
            else:
                # v_o = (v_r + vo_const + esr sb i) / den_o
                rt = rloop + 2 * p["rd"]
                k_io = p["esr"] * sb / den_o  # dv_o / di
                base_o = (x_vr + vo_const) / den_o[:, None]
                num = drive - sb * (base_o + (2 * p["vf"])[:, None] * x_one)
                i = num / (rt + sb * k_io)[:, None]
                v_o = base_o + k_io[:, None] * i
            i_z = gz[:, None] * (v_o - p["vz"][:, None] * x_one) if z else np.zeros((bsz, _N))
            i_load = p["load_a"][:, None] * x_one + p["load_g"][:, None] * v_o
            i_res = sb * i - i_z - i_load
            v_z = v_o
            i_rect = i
            guards = []
            if sb == 0:
                v_in = drive  # no current: the bridge input sees the open-circuit drive
                thr = v_o + (2 * p["vf"])[:, None] * x_one
                guards += [(thr - v_in, (1, z)), (v_in + thr, (-1, z))]
            else:
                guards.append((sb * i, (0, z)))
            if z:
                guards.append((v_o - p["vz"][:, None] * x_one, (sb, 0)))
            else:
                guards.append((p["vz"][:, None] * x_one - v_o, (sb, 1)))
        else:
            z, d = m0, m1
            # node A (the Zener node); diode A -> bus; unknowns i, v_a, v_o
            if z == 1:
                gz, ez = 1.0 / p["zz"], p["vz"]
            elif z == -1:
                gz, ez = 1.0 / p["rd"], -p["vf"]
            else:
                gz, ez = np.zeros(bsz), np.zeros(bsz)
            gd = 1.0 / p["rd"] if d else np.zeros(bsz)
            # bus with the diode current i_d = gd (v_a - v_o - vf):
            #   v_o = v_r + esr (i_d - I_L - G_L v_o)
            #   => v_o (1 + esr (gd + G_L)) = v_r + esr (gd (v_a - vf) - I_L)
            den_o = 1.0 + p["esr"] * (gd + p["load_g"])
            ko_a = p["esr"] * gd / den_o  # dv_o / dv_a
            base_o = (x_vr - (p["esr"] * (gd * p["vf"] + p["load_a"]))[:, None] * x_one) / den_o[
                :, None
            ]
            # KCL at A: (drive - v_a) / rloop = gz (v_a - ez) + gd (v_a - v_o - vf)
            g_line = 1.0 / rloop
            if z == 0 and not d:
                v_a = drive
                i = np.zeros((bsz, _N))
                v_o = base_o
            else:
                coef_a = g_line + gz + gd * (1.0 - ko_a)
                rhs = (
                    g_line[:, None] * drive
                    + (gz * ez)[:, None] * x_one
                    + gd[:, None] * (base_o + p["vf"][:, None] * x_one)
                )
                v_a = rhs / coef_a[:, None]
                v_o = base_o + ko_a[:, None] * v_a
                i = g_line[:, None] * (drive - v_a)
            i_z = gz[:, None] * (v_a - ez[:, None] * x_one)
            i_d = gd[:, None] * (v_a - v_o - p["vf"][:, None] * x_one)
            i_load = p["load_a"][:, None] * x_one + p["load_g"][:, None] * v_o
            i_res = i_d - i_load
            v_z = v_a
            i_rect = i_d
            guards = []
            if z == 1:
                guards.append((v_a - p["vz"][:, None] * x_one, (0, d)))
            elif z == -1:
                guards.append((-(v_a + p["vf"][:, None] * x_one), (0, d)))
            else:
                guards += [
                    (p["vz"][:, None] * x_one - v_a, (1, d)),
                    (v_a + p["vf"][:, None] * x_one, (-1, d)),
                ]
            if d:
                guards.append((i_d, (z, 0)))
            else:
                guards.append((v_o + p["vf"][:, None] * x_one - v_a, (z, 1)))
        v_line = v_th - (gen.rs2_ohm / den_m)[:, None] * i
        i_m = g_m[:, None] * (v_line - e_m[:, None] * x_one)
        mov_guards = []
        if chord >= 0 and chord < n_seg:
            mov_guards.append((mov_v[:, chord][:, None] * x_one - v_line, chord + 1))
        if chord <= 0 and chord > -n_seg:
            mov_guards.append((v_line + mov_v[:, -chord][:, None] * x_one, chord - 1))
        if chord > 0:
            mov_guards.append((v_line - mov_v[:, chord - 1][:, None] * x_one, chord - 1))
        if chord < 0:
            mov_guards.append((-mov_v[:, -chord - 1][:, None] * x_one - v_line, chord + 1))
        a = np.zeros((bsz, _N, _N))
        a[:, _VCC, _VCC] = -1.0 / (gen.rs1_ohm * gen.cc_f)
        a[:, _VCC, _IL] = -1.0 / gen.cc_f
        # L di/dt = v_cc - Rm i_L - (v_line - u)   (no varistor: v_line - u = Rs2 (i_L - i))
        a[:, _IL, :] = -(v_line - u_form) / gen.lr_h
        a[:, _IL, _VCC] += 1.0 / gen.lr_h
        a[:, _IL, _IL] += -gen.rm_ohm / gen.lr_h
        i_cx = i - x_vx / p["rb"][:, None]
        a[:, _VX, :] = i_cx / p["cap"][:, None]
        a[:, _VR, :] = i_res / p["cres"][:, None]
        a[:, _S, _C] = w
        a[:, _C, _S] = -w
        a_all[:, mid] = a
        out_all[:, mid] = np.stack([i, v_o, i_z, v_z, i_rect, i_cx, i_m, v_line], axis=1)
        slots = [(row, _MODE_ID[tgt] * n_chords + chord + n_seg) for row, tgt in guards]
        slots += [(row, dm * n_chords + c + n_seg) for row, c in mov_guards]
        for j, (row, tgt) in enumerate(slots):
            g_all[:, mid, j] = row
            target[mid, j] = tgt
    return a_all, out_all, g_all, target


def simulate(
    cases: list[SurgeCase], level_v: float, window_s: float = SURGE_WINDOW_S, refine: int = 1
) -> SurgeRun:
    """Simulate the surge of ``level_v`` [V peak, open circuit] for every case x phase x
    polarity (one batch) and return the stresses of each run (see the module docstring).

    Validity: the piecewise-linear device models; a series R of at least 1 ohm; the generator
    in series with the mains (no coupling capacitor, no decoupling network: both are left out
    in the ngspice reference too).
    """
    if level_v <= 0:
        raise OutOfRangeError("surge level must be positive")
    if not cases:
        raise OutOfRangeError("no surge cases")
    top = cases[0].topology
    if any(c.topology != top for c in cases):
        raise OutOfRangeError("one topology per surge batch")
    rows = []
    for ci, c in enumerate(cases):
        for phi, vx0, vo0 in zip(c.phases_deg, c.v_x0, c.v_o0, strict=True):
            for pol in (1.0, -1.0):
                rows.append((ci, phi, pol, vx0, vo0))
    bsz = len(rows)
    case_idx = np.array([r[0] for r in rows])
    pick = np.array
    cs = cases

    def col(name: str, per_run: bool = True) -> np.ndarray:
        idx = case_idx if per_run else range(len(cs))
        return pick([getattr(cs[k], name) for k in idx], float)

    def params(per_run: bool) -> dict[str, np.ndarray]:
        def c(name: str) -> np.ndarray:
            return col(name, per_run)

        rb = c("bleeder_ohm")
        return {
            "vpk": math.sqrt(2.0) * c("mains_v"),
            "omega": 2 * math.pi * c("freq_hz"),
            "cap": c("cap_f"),
            "r": c("r_ohm"),
            "rb": np.where(np.isfinite(rb), rb, 1e15),
            "vf": c("vf_v"),
            "rd": np.maximum(c("rd_ohm"), _MIN_R),
            "vz": c("vz_v"),
            "zz": np.maximum(c("zz_ohm"), _MIN_R),
            "cres": c("reservoir_f"),
            "esr": c("esr_ohm"),
            "load_a": c("load_a"),
            "load_g": c("load_g"),
            **_varistor_params([cs[k] for k in (case_idx if per_run else range(len(cs)))], n_seg),
        }

    n_seg = VARISTOR_SEGMENTS if any(c.varistor is not None for c in cs) else 0
    # the mode matrices depend on the case only (not on the phase or polarity)
    a_all, out_all, g_all, target = _mode_matrices(params(False), top, n_seg)
    p = params(True)
    phase = np.radians(pick([r[1] for r in rows], float))
    pol = pick([r[2] for r in rows], float)
    x = np.zeros((bsz, _N))
    x[:, _VCC] = pol * level_v / OPEN_CIRCUIT_PEAK_PER_VOLT
    x[:, _VX] = [r[3] for r in rows]
    x[:, _VR] = [r[4] for r in rows]
    x[:, _S] = np.sin(phase)
    x[:, _C] = np.cos(phase)
    x[:, _ONE] = 1.0
    mode = np.full(bsz, _MODE_ID[(0, 0)] * (2 * n_seg + 1) + n_seg)
    ci = case_idx
    # a step may cross several varistor chords on the fast front: one switch per iteration
    n_iter = 4 + 2 * n_seg
    mode = _settle(mode, x, g_all, target, ci, 6 + 2 * n_seg)
    schedule = _step_schedule(window_s, refine)
    n_steps = sum(n for _, n in schedule)
    x_hist = np.empty((n_steps + 1, bsz, _N))
    m_hist = np.empty((n_steps + 1, bsz), dtype=np.intp)
    x_hist[0] = x
    m_hist[0] = mode
    k = 0
    n_g = g_all.shape[2]
    for h, n in schedule:
        phi_all = _expm_batch(a_all * h)
        # one product gives the next state and its guards: rows [exp(A h); G exp(A h)]
        step_all = np.concatenate([phi_all, g_all @ phi_all], axis=2)
        for _ in range(n):
            y = np.einsum("bij,bj->bi", step_all[ci, mode], x)
            x_new = y[:, :_N]
            g = y[:, _N:]
            for _it in range(n_iter):
                bad_any = (g < 0.0).any(axis=1)
                if not bad_any.any():
                    break
                rows_bad = np.flatnonzero(bad_any)
                j = np.argmin(g[rows_bad], axis=1)
                mode[rows_bad] = target[mode[rows_bad], j]
                yb = np.einsum("bij,bj->bi", step_all[ci[rows_bad], mode[rows_bad]], x[rows_bad])
                x_new[rows_bad] = yb[:, :_N]
                g = np.zeros((bsz, n_g))
                g[rows_bad] = yb[:, _N:]
            x = x_new
            k += 1
            x_hist[k] = x
            m_hist[k] = mode
    # outputs of every step at once, each in the mode valid at its end
    outs = np.empty((n_steps + 1, bsz, len(_OUT)))
    for m in range(a_all.shape[1]):
        sel = m_hist == m
        if sel.any():
            cols = np.broadcast_to(ci, m_hist.shape)[sel]
            outs[sel] = np.einsum("son,sn->so", out_all[cols, m], x_hist[sel])
    vx_hist = x_hist[:, :, _VX]
    weights = _simpson_weights(schedule)
    return _stresses(outs, vx_hist, weights, p, case_idx, np.degrees(phase), pol, top, n_steps)


def _varistor_params(cases: list[SurgeCase], n_seg: int) -> dict[str, np.ndarray]:
    """The chord ends (``mov_v`` [V], ``mov_i`` [A], (B, n_seg + 1)) of each case's varistor;
    a case without one gets chords far above any surge (it stays open)."""
    if n_seg == 0:
        return {}
    mv = np.empty((len(cases), n_seg + 1))
    mi = np.empty((len(cases), n_seg + 1))
    for k, c in enumerate(cases):
        if c.varistor is None:
            mv[k] = 1e12 * (1.0 + np.arange(n_seg + 1))
            mi[k] = 1e-3 * 2.0 ** np.arange(n_seg + 1)
        else:
            mv[k], mi[k] = c.varistor.breakpoints(n_seg)
    return {"mov_v": mv, "mov_i": mi}


def _settle(mode, x, g_all, target, ci, n_switch=6):
    """Switch devices at t = 0 until every guard holds (at most ``n_switch`` switches)."""
    for _ in range(n_switch):
        g = np.einsum("bgn,bn->bg", g_all[ci, mode], x)
        bad = g < 0.0
        rows_bad = np.flatnonzero(bad.any(axis=1))
        if rows_bad.size == 0:
            break
        j = np.argmin(g[rows_bad], axis=1)
        mode[rows_bad] = target[mode[rows_bad], j]
    return mode


def _simpson_weights(schedule: list[tuple[float, int]]) -> np.ndarray:
    """Quadrature weights on the grid of ``schedule``: composite Simpson on each piece of equal
    steps (even counts), so an integral of a smooth output is exact to O(h^4)."""
    n_steps = sum(n for _, n in schedule)
    w = np.zeros(n_steps + 1)
    k = 0
    for h, n in schedule:
        piece = np.ones(n + 1)
        piece[1:-1:2] = 4.0
        piece[2:-1:2] = 2.0
        w[k : k + n + 1] += piece * h / 3.0
        k += n
    return w


def _trap(y: np.ndarray, w: np.ndarray) -> np.ndarray:
    """Integral along axis 0 with the grid's quadrature weights ``w``."""
    return np.einsum("k,k...->...", w, y)


def _stresses(outs, vx, w, p, case_idx, phase_deg, pol, top, n_steps) -> SurgeRun:
    i = outs[:, :, 0]
    v_o = outs[:, :, 1]
    i_z = outs[:, :, 2]
    v_z = outs[:, :, 3]
    i_rect = outs[:, :, 4]
    i_cx = outs[:, :, 5]
    i2 = _trap(i * i, w)
    peak = np.max(np.abs(i), axis=0)
    if top == "bridge":
        pos = np.maximum(i_rect, 0.0)
        neg = np.maximum(-i_rect, 0.0)
        rect_pk = np.maximum(np.max(pos, axis=0), np.max(neg, axis=0))
        rect_i2t = np.maximum(_trap(pos * pos, w), _trap(neg * neg, w))
    else:
        # the series diode, and the Zener's forward conduction (a rectifier too)
        fwd = np.maximum(-i_z, 0.0)
        ird = np.maximum(i_rect, 0.0)
        rect_pk = np.maximum(np.max(ird, axis=0), np.max(fwd, axis=0))
        rect_i2t = np.maximum(_trap(ird * ird, w), _trap(fwd * fwd, w))
    iz_b = np.maximum(i_z, 0.0)
    i_m = outs[:, :, 6]
    v_line = outs[:, :, 7]
    return SurgeRun(
        case=case_idx,
        phase_deg=phase_deg,
        polarity=pol,
        peak_current_a=peak,
        series_r_energy_j=p["r"] * i2,
        series_r_peak_voltage_v=p["r"] * peak,
        x_cap_voltage_step_v=np.max(np.abs(vx - vx[0]), axis=0),
        x_cap_peak_total_v=np.max(np.abs(vx), axis=0),
        x_cap_dvdt_v_per_s=np.max(np.abs(i_cx), axis=0) / p["cap"],
        zener_peak_current_a=np.max(iz_b, axis=0),
        zener_pulse_energy_j=_trap(np.abs(i_z * v_z), w),
        zener_peak_power_w=np.max(np.abs(i_z * v_z), axis=0),
        rectifier_peak_current_a=rect_pk,
        rectifier_i2t_a2s=rect_i2t,
        fuse_i2t_a2s=i2,
        bus_peak_v=np.max(v_o, axis=0),
        steps=n_steps,
        varistor_peak_current_a=np.max(np.abs(i_m), axis=0),
        varistor_energy_j=_trap(v_line * i_m, w),
        line_peak_v=np.max(np.abs(v_line), axis=0),
    )
