"""Screen bounds: the engine's closed forms (DOMAIN.md section 2) as bounds of the exact worst-case
figures, vectorised over grid points.

Proof obligation: every figure returned here is a LOWER bound of the stress the exact engine
reports at its worst corner (an UPPER bound for the minimum DC current), so a point whose bound
already fails a rule fails it exactly. The closed forms are within 0.83 % of the exact solution
(tests/test_closed_form.py); they are widened by ``SCREEN_SLACK`` (5 %) and ``CURRENT_SLACK`` (2 %
for the current) so that this holds with room. The surge figures come from the engine's own
surge model solved in closed form, sampled at times never above the true peak.
"""

from __future__ import annotations

import math
from typing import Any, Final

import numpy as np

from .candidates import OptionTable
from .lookups import distinct_pairs
from .requirement import DISCHARGE_EXEMPT_F, PROFILE_LIMITS, SQRT2, Requirement

#: relative widening of the closed-form screen (their error against the exact periodic solution
#: is documented by the engine, <= 0.83 %; 5 % covers it with room) -- a larger value only
#: costs time, a smaller one could drop a feasible set
SCREEN_SLACK: Final[float] = 0.05


#: the same for the minimum DC current, the quantity most candidates sit close to: the engine's
#: R-corrected closed forms are within 0.83 % of the exact solution at zero load and within
#: 0.3 % at full load (measured against analyse(), both topologies); 2 % covers that
CURRENT_SLACK: Final[float] = 0.02


def screen_bounds(
    req: Requirement,
    topology: str,
    vz: float,
    c_nom: np.ndarray,
    c_tol: np.ndarray,
    r_nom: np.ndarray,
    r_tol: np.ndarray,
    vf_lo: float,
    vf_hi: float,
    ztol_min: float = 0.0,
    zz_min: float = 0.0,
    surge: bool = True,
    rd_max: float = 0.0,
) -> dict[str, np.ndarray]:
    """Bounds of the exact worst-case figures, widened by SCREEN_SLACK.

    Upper bound of the minimum DC current; lower bounds of every stress. Closed forms:
    bridge I_dc = 4 f C (Vpk - Vo') / sqrt(1 + (w R C)^2); half-wave I = f C (2 Vpk - Vz - 2 Vf)
    / sqrt(1 + (w R C)^2); switch-on peak Vpk / R, energy 0.5 C V^2, I^2t = V^2 C / (2 R);
    RC discharge. Sources: DOMAIN.md section 2 (textbook RC circuits [S]).
    """
    m = req.mains
    r_nom = np.maximum(r_nom, 1e-9)
    lo = SCREEN_SLACK
    f_lo, f_hi = min(m.frequencies_hz), max(m.frequencies_hz)
    vpk_hi = SQRT2 * m.high_v
    c_min = c_nom * (1 - c_tol) * (1 - req.cap_loss)
    c_max = c_nom * (1 + c_tol)
    r_min = r_nom * (1 - r_tol)
    r_max = r_nom * (1 + r_tol)
    w_hi = 2 * math.pi * f_hi
    from ..engine import closed_form as cf

    # engine closed forms (documented error <= 0.83 % against the exact solution for
    # w R C <= 0.4): the minimum current at low line / low f / -C / +R / nominal Vz (the exact
    # corner has Vz at its upper tolerance: less current), the Zener power at high line / high f
    # / +C / -R / Vz raised by the smallest Zener tolerance in the group, zero load
    vz_hi = vz * (1 + ztol_min)
    i_ub = cf.dc_current(topology, m.low_v, c_min, f_lo, vz, vf_lo, r_max)
    i_hi = cf.dc_current(topology, m.high_v, c_max, f_hi, vz_hi, vf_hi, r_min)
    pz = cf.zener_power_no_load(topology, m.high_v, c_max, f_hi, vz_hi, vf_hi, r_min)
    # the Zener's dynamic impedance raises its voltage by Zz I at that current
    pz = pz + zz_min * i_hi**2
    vo_hi = vz_hi + 2 * vf_hi if topology == "bridge" else vz_hi
    i_ub = np.maximum(i_ub, 0.0) * (1 + CURRENT_SLACK)
    lb = 1 - lo
    fac = max(0.0, 1 - vo_hi / vpk_hi)
    i_rms = m.high_v * w_hi * c_max / np.sqrt(1 + (w_hi * r_max * c_max) ** 2) * fac
    # switch-on and surge: the engine takes both at the +C / -R corner of the highest mains
    # (selector.engine.analysis, "transients at their own worst corners"), everything
    # discharged, so only the diode drops stand against the crest
    # ... after a re-plug at the opposite crest. The peak current (at the instant of the step)
    # adds the residual charge that the discharge profile allows (the engine's own formula;
    # an exempt capacitor's depends on the bleeder, not chosen yet: 0). The pulse integrals
    # (energy, I^2t, k0) keep the step of an empty capacitor: 0.5 C (V + V_res)^2 came out up
    # to 9 % above the engine's exact energy at w R C ~ 0.3 (the mains falls, the clamp and the
    # reservoir take part during a long pulse), so it is not a lower bound there.
    v_on = max(vpk_hi - 2 * vf_hi, 0.0)
    i_on = (v_on + replug_residual_lower_bound(req, vpk_hi, c_nom)) / r_min
    out = {
        "min_dc_current_a": i_ub,
        "max_zener_power_w": np.maximum(pz, 0) * lb,
        # no-load loss in the rectifier: the whole current crosses two diodes of a bridge
        "rectifier_loss_w": (2 * vf_lo * i_hi * lb) if topology == "bridge" else 0.0 * i_hi,
        # the engine takes the largest power over the corners, so the +R corner bounds it
        "max_series_r_power_w": i_rms**2 * r_max * lb,
        "max_line_current_rms_a": i_rms * lb,
        "max_rectifier_avg_current_a": np.zeros_like(i_ub),
        "max_reservoir_ripple_current_a": np.zeros_like(i_ub),
        "inrush_peak_current_a": i_on * lb,
        "inrush_rectifier_peak_current_a": i_on * lb,
        "inrush_series_r_energy_j": 0.5 * c_max * v_on**2 * lb,
        "inrush_i2t_a2s": v_on**2 * c_max / (2 * r_min) * lb,
        "inrush_x_cap_dvdt_v_per_s": i_on / c_max * lb,
        # k0 = 2 I^2t / C^2 of the same pulse (the engine's definition, at C max)
        "inrush_x_cap_k0_v2_per_s": v_on**2 / (r_min * c_max) * lb,
        **(surge_bounds(req.conditions.surge_v, r_min, c_max, lb, rd_max) if surge else {}),
        "series_resistance_ohm": r_min,
        "c_max": c_max,
        "c_min_nom": c_nom * (1 - c_tol),
        "v_on": np.full_like(i_ub, v_on),
        "i_hi": i_hi,
    }
    return out


def replug_residual_lower_bound(req: Requirement, crest_v: float, c_nom: Any) -> Any:
    """A lower bound of the engine's re-plug residual [V] (``replug_residual_v`` at the sine's
    crest; the engine takes the distorted crest, which is not lower): the profile's figure for a
    capacitor the profile does not exempt, 0 for an exempt one (its bleeder decides). With a
    delay longer than the profile's time the figure falls with the crest: 0 then, too."""
    from ..engine.transients import DISCHARGE_RULES, replug_residual_v

    cond = req.conditions
    _, allowed, _ = DISCHARGE_RULES[cond.profile]
    c = np.asarray(c_nom, dtype=float)
    if cond.replug_delay_s > allowed:
        return np.zeros_like(c)
    # the profile's figure does not depend on C (any C above 0.1 uF; tau is not read)
    v = replug_residual_v(cond.profile, crest_v, 1.0, math.inf, cond.replug_delay_s)
    exempt = (c <= DISCHARGE_EXEMPT_F * (1 + 1e-9)) & (cond.profile in ("iec60335", "iec60950"))
    return np.where(exempt, 0.0, v)


SURGE_SAMPLE_TIMES_S: Final[np.ndarray] = np.geomspace(5e-9, 300e-6, 40)
#: samples between the neighbours of the best coarse sample (refines the peak of i(t))
_SURGE_REFINE: Final[int] = 12
#: widening of the surge bounds. They evaluate the narrow loop model (2 ohm + R + C, bus shorted,
#: ``surge_bounds``) in closed form, while the engine reports the surge through the whole circuit
#: (selector.engine.surge_circuit: the combination-wave generator, the clamp, the reservoir and
#: its ESR, every corner and phase). Over random circuits the whole-circuit figures came out at
#: 0.76 to 1.4 times the loop model's, the low end only below 10 ohm, where the generator's own
#: impedance limits the current; at 10 ohm and more never below 0.83. The screen scales the loop
#: bounds by these factors (measured, not proven: tests/test_design_bounds.py asserts them on
#: random circuits against the engine).
SURGE_FACTOR_LOW_R: Final[float] = 0.7
SURGE_FACTOR: Final[float] = 0.8
SURGE_LOW_R_OHM: Final[float] = 10.0
SURGE_SLACK: Final[float] = 0.0  # kept for callers: the factors above do the widening


def max_rectifier_resistance(rect: OptionTable, topology: str) -> float:
    """Largest rectifier resistance in the surge loop [ohm]: two diodes of a bridge, one in
    a half-wave (as the engine's surge model counts them)."""
    rs = rect.attrs["rs_ohm"] if len(rect) else np.zeros(0)
    if len(rs) == 0 or np.all(np.isnan(rs)):
        return 0.0
    return float(np.nanmax(rs)) * (2 if topology == "bridge" else 1)


def surge_bounds(vs: float, r: Any, c: Any, lb: float, rd: float = 0.0) -> dict[str, Any]:
    """Lower bounds of the surge stresses, vectorised, from the engine's own surge model.

    The loop (2 ohm generator + R) and C driven by the open-circuit 1.2/50 us double
    exponential ``v = A V (exp(-t/t2) - exp(-t/t1 - t/t2))`` (selector.engine.transients, whose
    constants are marked [M] there): i(t) = sum of four exponentials, solved exactly; the peak
    is taken over 40 log-spaced times and refined between the neighbours of the best one (a
    sampled value is never above the true peak), the energy R integral(i^2) in closed form.
    Evaluated at the engine's transient corner (lowest R, highest C) with the
    largest rectifier resistance ``rd`` in the loop (it only lowers the current), scaled by
    ``lb`` (the slack).
    """
    from ..engine import transients as T

    r = np.asarray(r, dtype=float)
    c = np.asarray(c, dtype=float)
    shape = np.broadcast(r, c).shape
    if vs > 0 and len(shape) == 1 and shape[0] > 64:
        # many points share (R, C): solve each distinct loop once
        r_u, c_u, inv = distinct_pairs(*np.broadcast_arrays(r, c))
        if len(r_u) < 0.8 * shape[0]:
            out = surge_bounds(vs, r_u, c_u, lb, rd)
            return {k: v[inv] for k, v in out.items()}
    if vs <= 0:
        z = np.zeros(shape)
        return {
            "surge_series_r_energy_j": z,
            "surge_series_r_peak_voltage_v": z,
            "surge_x_cap_dvdt_v_per_s": z,
        }
    rl = T.SURGE_SOURCE_OHM + r + rd
    kappa = 1.0 / (rl * c)
    av = T.SURGE_A * vs
    rates = (1.0 / T.SURGE_TAU2_S, 1.0 / T.SURGE_TAU1_S + 1.0 / T.SURGE_TAU2_S)
    amps = (av, -av)
    coef, pole = [], []
    for a, rk in zip(amps, rates, strict=True):
        d = kappa - rk
        d = np.where(np.abs(d) < 1e-9 * rk, 1e-9 * rk, d)  # a coincident pole: nudge it
        coef += [a * kappa / (rl * d), -a * rk / (rl * d)]
        pole += [kappa, np.full(shape, rk)]
    cf = np.stack(np.broadcast_arrays(*coef), axis=-1)
    pl = np.stack(np.broadcast_arrays(*pole), axis=-1)
    i2t = np.sum(
        cf[..., :, None] * cf[..., None, :] / (pl[..., :, None] + pl[..., None, :]), axis=(-1, -2)
    )
    ts = SURGE_SAMPLE_TIMES_S
    coarse = np.abs(np.einsum("...k,...tk->...t", cf, np.exp(-pl[..., None, :] * ts[:, None])))
    best = np.argmax(coarse, axis=-1)
    peak = np.take_along_axis(coarse, best[..., None], axis=-1)[..., 0]
    t_lo = ts[np.maximum(best - 1, 0)]
    t_hi = ts[np.minimum(best + 1, len(ts) - 1)]
    frac = np.linspace(0.0, 1.0, _SURGE_REFINE)
    tf = t_lo[..., None] + (t_hi - t_lo)[..., None] * frac
    fine = np.abs(np.einsum("...k,...tk->...t", cf, np.exp(-pl[..., None, :] * tf[..., None])))
    peak = np.maximum(peak, np.max(fine, axis=-1))
    lb = lb * np.where(r < SURGE_LOW_R_OHM, SURGE_FACTOR_LOW_R, SURGE_FACTOR)
    return {
        "surge_series_r_energy_j": np.maximum(r * i2t, 0.0) * lb,
        "surge_series_r_peak_voltage_v": r * peak * lb,
        "surge_x_cap_dvdt_v_per_s": peak / c * lb,
    }


def max_series_resistance_for_current(req, topology, vz, vf_lo, c_min, need):
    """Largest total series resistance that can still meet ``need`` [ohm] (necessary).

    Inverts the screen's upper bound of the minimum current, (1 + slack) times the engine's
    closed form 4 f C (Vpk / k - Vz - 2 Vf) (bridge) or f C (2 Vpk / k - Vz - Vf) (half-wave),
    k = sqrt(1 + (w R C)^2), for k, then R = sqrt(k^2 - 1) / (w C). -1 where even R = 0 fails.
    """
    f = min(req.mains.frequencies_hz)
    w = 2 * math.pi * f
    vpk = SQRT2 * req.mains.low_v
    g = 1 + CURRENT_SLACK
    with np.errstate(divide="ignore", invalid="ignore"):
        if topology == "bridge":
            k = vpk / (need / (g * 4 * f * c_min) + vz + 2 * vf_lo)
        else:
            k = 2 * vpk / (need / (g * f * c_min) + vz + vf_lo)
        r = np.sqrt(np.maximum(k * k - 1, 0.0)) / (w * c_min)
    return np.where(k >= 1, r, -1.0)


def ripple_discharge_time(
    topology: str,
    vpk_v: Any,
    freq_hz: float,
    swing_v: Any,
    r_ohm: Any,
    c_f: Any,
) -> Any:
    """Lower bound of the time the reservoir alone feeds the bus in each cycle [s].

    Bridge: the line current (nearly sinusoidal, leading the mains by pi/2 - phi with
    phi = atan(w R C)) stops no earlier than phase pi/2 + phi of the mains; the rectifier then
    blocks until the mains has fallen by ``swing_v`` (the X capacitor must reverse across the bus
    and four diode drops): ``sin(pi/2 + phi + d) = cos(phi) - swing / Vpk``, so
    ``t >= d / w = (acos(cos phi - swing / Vpk) - phi) / w``. Half-wave: the reservoir is fed on
    the positive half cycle only; the negative half cycle flows through the Zener, so
    ``t >= pi / w``. (Phasor current of an RC branch and the rectifier's blocking condition:
    any circuits textbook [S]; the bound is a derivation of ours, checked against the exact
    engine in tests/test_design_bounds.py.) Arrays broadcast; SI units.

    Example: bridge, 207 V rms (Vpk 292.7 V), 50 Hz, swing 13.5 V, R C -> 0:
    acos(1 - 13.5 / 292.7) / (2 pi 50) = 0.970 ms.
    """
    w = 2 * math.pi * freq_hz
    if topology != "bridge":
        return np.full(np.broadcast(vpk_v, swing_v, r_ohm, c_f).shape, math.pi / w)
    phi = np.arctan(w * np.asarray(r_ohm, float) * np.asarray(c_f, float))
    arg = np.clip(np.cos(phi) - np.maximum(swing_v, 0.0) / np.asarray(vpk_v, float), -1.0, 1.0)
    return np.maximum(np.arccos(arg) - phi, 0.0) / w


def ripple_reservoir_need(
    req: Any, topology: str, vz: float, ztol_max: float, vf_lo: float, limit_v: float, r_max, c_min
) -> Any:
    """Least nominal reservoir capacitance that can keep the worst-corner ripple within
    ``limit_v`` [F] (necessary), at the engine's weakest corner (low line, lowest frequency,
    smallest X capacitance ``c_min``, largest series resistance ``r_max``), which the engine
    solves with its load.

    The rectified supply current is at most I^ |cos(theta - phi)| with I^ = w C Vpk (the X
    capacitor's current with the bus clamped, R -> 0 an upper bound) and is zero during the
    reversal of ``ripple_discharge_time`` (delta, in radians of the mains). While it is below the
    bus demand I the bus falls (the Zener is off), so the reservoir loses at least the deficit
    charge Q = (I^ / w) * D, with k = I / I^, theta_a = acos(k):
    bridge    D = [k (pi/2 - theta_a) - (1 - sin theta_a)] + k delta
                  + [k (theta_e - delta) + cos theta_e - cos delta],
              theta_e = max(delta, pi/2 - theta_a);
    half-wave D = 2 [k (pi/2 - theta_a) - (1 - sin theta_a)] + k pi  (no supply for half a cycle).
    The peak-to-peak ripple is then at least Q / C (C dV = I dt [S]); it stays within the limit
    only if C >= Q / limit. If the ripple is within the limit, the bus sags by at most the
    limit, so the bridge's reversal swing is at least 2 (Vz_min + 2 Vf) - limit. The demand is the
    steady bus demand without bursts. Derivation ours; tests/test_design_bounds.py checks the
    bound against the exact engine.
    """
    f_lo = min(req.mains.frequencies_hz)
    w = 2 * math.pi * f_lo
    vpk_lo = SQRT2 * req.mains.low_v
    demand = req.load_a + (req.regulator_quiescent_a if req.regulator else 0.0)
    i_hat = w * np.asarray(c_min, float) * vpk_lo
    k = np.clip(demand / np.maximum(i_hat, 1e-30), 0.0, 1.0)
    th_a = np.arccos(k)
    side = k * (math.pi / 2 - th_a) - (1 - np.sin(th_a))
    if topology == "bridge":
        swing = 2 * (vz * (1 - ztol_max) + 2 * vf_lo) - limit_v
        delta = ripple_discharge_time(topology, vpk_lo, f_lo, swing, r_max, c_min) * w
        th_e = np.maximum(delta, math.pi / 2 - th_a)
        deficit = side + k * delta + (k * (th_e - delta) + np.cos(th_e) - np.cos(delta))
    else:
        deficit = 2 * side + k * math.pi
    return i_hat / w * np.maximum(deficit, 0.0) / limit_v


def bleeder_resistance_ceiling(req: Any, c_nom: Any, c_tol: Any) -> Any:
    """Largest bleeder resistance, at its upper tolerance, that meets the discharge profile [ohm].

    The engine discharges from the highest mains crest (at least sqrt(2) x the high line)
    through the bleeder at +tolerance into the largest capacitance C (1 + tol):
    V(t) = V0 exp(-t / (Rb C)) (RC discharge [S]), so Rb <= t_allowed / (C ln(V0 / V_limit)),
    or Rb <= t_allowed / C for a time-constant rule (IEC 60950-1); infinite where the nominal
    capacitance is exempt (<= 0.1 uF, IEC 60335-1 22.5 and IEC 60950-1 [S]). The same formula
    as the engine, so no slack beyond rounding is needed.
    """
    limit_v, allowed_s, tau_rule = PROFILE_LIMITS[req.conditions.profile]
    c_nom = np.asarray(c_nom, dtype=float)
    c_dis = c_nom * (1 + np.asarray(c_tol, dtype=float))
    v0 = SQRT2 * req.mains.high_v
    if tau_rule:
        rb_hi = allowed_s / c_dis
    else:
        rb_hi = allowed_s / (c_dis * math.log(max(v0 / limit_v, 1.0 + 1e-12)))
    rb_hi = rb_hi * (1 + 1e-9)
    if req.conditions.profile in ("iec60335", "iec60950"):
        rb_hi = np.where(c_nom <= DISCHARGE_EXEMPT_F * (1 + 1e-9), np.inf, rb_hi)
    return rb_hi
