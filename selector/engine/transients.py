"""Transients: switch-on at the crest, IEC 61000-4-5 surge, discharge after unplugging, start-up
and hold-up through a load burst.

All functions are pure, SI in and out.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import OutOfRangeError
from . import closed_form as cf
from .circuit import Circuit, Harmonic
from .distortion import waveform_peak
from .steady_state import build_system

__all__ = [
    "DISCHARGE_RULES",
    "Discharge",
    "Holdup",
    "Inrush",
    "Startup",
    "Surge",
    "discharge",
    "holdup",
    "inrush",
    "replug_residual_v",
    "startup",
    "surge",
    "surge_wave",
]

#: IEC 61000-4-5 combination wave, 1.2/50 us open-circuit voltage as a double exponential
#: ``v = A V (exp(-t/t2) - exp(-t/t1 - t/t2))``: constants from memory [M]; the test checks the
#: front time (1.67 x (t90 - t30)) = 1.2 us and time to half value = 50 us, each within the
#: standard's +/-30 % and +/-20 % tolerance [S], and the peak = V.
SURGE_TAU1_S = 0.4074e-6
SURGE_TAU2_S = 68.22e-6
SURGE_A = 1.037
#: effective output impedance of the combination-wave generator, line to line [S]
SURGE_SOURCE_OHM = 2.0


@dataclass
class Inrush:
    """Switch-on at the crest of the highest mains with everything discharged (JSON keys)."""

    peak_current_a: float
    series_r_energy_j: float
    i2t_a2s: float
    x_cap_dvdt_v_per_s: float
    rectifier_peak_current_a: float
    duration_s: float
    corner: dict
    #: the pulse characteristic k0 = 2 * integral (dV/dt)^2 dt of the X capacitor [V^2/s]
    x_cap_k0_v2_per_s: float = 0.0
    #: the X capacitor's charge of the opposite polarity at the re-plug [V] (0: empty) and the
    #: re-plug delay it was computed for [s] (:func:`replug_residual_v`)
    replug_residual_v: float = 0.0
    replug_delay_s: float | None = None
    #: the corner of ``x_cap_dvdt_v_per_s`` and ``x_cap_k0_v2_per_s`` when it is not ``corner``
    #: (they peak at the lowest capacitance, the energy at the highest)
    x_cap_corner: dict | None = None


@dataclass
class Surge:
    """IEC 61000-4-5 combination wave at ``level_v`` (JSON keys).

    From :func:`.surge_circuit.worst_surge` (the generator as a circuit, in series with the
    mains at every phase and both polarities, through the whole circuit): every figure is the
    largest over the corners and phases, ``corners`` names where each one was found (corner keys
    plus ``phase_deg`` and ``polarity``); ``corner`` and ``phase_deg`` are those of the peak
    current. ``i2t_a2s`` is the line current's (= ``fuse_i2t_a2s``); ``rectifier_i2t_a2s`` per
    diode; ``x_cap_peak_total_v`` the X capacitor's charge at that phase plus the step.
    ``method`` says which model produced the figures (:func:`surge` leaves the new ones None).
    """

    level_v: float
    peak_current_a: float | None
    series_r_energy_j: float | None
    series_r_peak_voltage_v: float | None
    x_cap_voltage_step_v: float | None
    x_cap_dvdt_v_per_s: float | None
    i2t_a2s: float | None
    corner: dict | None
    zener_peak_current_a: float | None = None
    zener_pulse_energy_j: float | None = None
    zener_peak_power_w: float | None = None
    rectifier_peak_current_a: float | None = None
    rectifier_i2t_a2s: float | None = None
    fuse_i2t_a2s: float | None = None
    bus_peak_v: float | None = None
    x_cap_peak_total_v: float | None = None
    phase_deg: float | None = None
    vout_max_v: float | None = None
    vout_max_default: bool | None = None
    bus_ok: bool | None = None
    reservoir_esr_ohm: float | None = None
    zener_slope_ohm: float | None = None
    corners: dict | None = None
    method: str = "series loop 2 ohm + R + C, bus shorted"
    #: with a varistor across the line (``Circuit.varistor``): its peak current [A], its
    #: energy [J], the line's peak voltage at its terminals [V] and its catalogue code
    varistor_peak_current_a: float | None = None
    varistor_energy_j: float | None = None
    line_peak_v: float | None = None
    varistor_code: str | None = None


@dataclass
class Discharge:
    """Voltage between the plug pins after unplugging at the crest (JSON keys)."""

    profile: str
    limit_v: float
    time_s: float
    allowed_s: float
    time_constant_s: float
    start_v: float
    ok: bool
    exempt: bool
    rule: str
    corner: dict


@dataclass
class Holdup:
    """Reservoir through a load burst (JSON keys); ``None`` fields when there is no burst."""

    burst_current_a: float
    burst_duration_s: float
    droop_v: float
    allowed_droop_v: float
    recovery_s: float
    required_reservoir_f: float
    ok: bool


@dataclass
class Startup:
    """Time from switch-on (reservoir empty) to regulation at the weakest corner (JSON keys)."""

    time_s: float
    method: str
    corner: dict
    holdup: Holdup | None


def replug_residual_v(
    profile: str,
    crest_v: float,
    c_nominal_f: float,
    tau_s: float,
    delay_s: float,
) -> float:
    """The X capacitor's voltage ``delay_s`` after unplugging at the crest ``crest_v`` [V]: the
    worst that the discharge profile allows, ``V0 (V_lim / V0)^(delay / t_allowed)`` (an RC
    decay that just meets the profile's limit ``V_lim`` at its time ``t_allowed``; for the
    time-constant rule of IEC 60950-1, ``V0 exp(-delay / 1 s)``); a capacitor the profile exempts
    (<= 0.1 uF) decays through its bleeder, ``V0 exp(-delay / tau_s)`` (``tau_s`` = Rb C at the
    slowest corner, inf without a bleeder: no decay). Never above ``crest_v``.

    Any bleeder that passes the profile decays at least this fast, so the figure does not
    depend on the bleeder chosen (RC discharge, textbook [S]; profiles in ``DISCHARGE_RULES``).
    Example: iec60335 (34 V after 1 s [S]), crest 357.8 V, 0.2 s: 357.8 x (34 / 357.8)^0.2 =
    223.4 V; re-plugged at the opposite crest the step is 357.8 + 223.4 = 581.2 V (x 1.62).
    """
    if profile not in DISCHARGE_RULES:
        raise OutOfRangeError(f"unknown discharge profile {profile!r}")
    if crest_v <= 0 or delay_s < 0:
        raise OutOfRangeError(f"re-plug: crest {crest_v} V and delay {delay_s} s must be >= 0")
    limit, allowed, _ = DISCHARGE_RULES[profile]
    exempt = c_nominal_f <= _EXEMPT_C_F * (1 + 1e-9) and profile in ("iec60335", "iec60950")
    if exempt:
        return crest_v * math.exp(-delay_s / tau_s) if tau_s > 0 else 0.0
    if limit is None:
        return crest_v * math.exp(-delay_s / allowed)
    if crest_v <= limit:
        return crest_v
    return crest_v * (limit / crest_v) ** (delay_s / allowed)


def inrush(
    circuit: Circuit,
    mains_v: float,
    freq_hz: float,
    corner: dict,
    window_tau: float = 8.0,
    harmonics: tuple[Harmonic, ...] = (),
    residual_v: float = 0.0,
    replug_delay_s: float | None = None,
) -> Inrush:
    """Switch-on at the crest (``u = +Vpk`` at t0), the reservoir empty and the X capacitor
    charged to ``residual_v`` of the opposite polarity (``v_c = -residual_v``: the re-plug at
    the opposite crest, :func:`replug_residual_v`; 0: empty); exact PWL simulation.

    With ``harmonics`` (a distorted mains) the switch-on is at the instant of the distorted
    wave's largest ``|u|`` (:func:`~selector.engine.distortion.waveform_peak`), and the source
    keeps all its tones during the pulse.

    The pulse is integrated over ``window_tau`` time constants ``tau = (R + r_d) C C_r/(C + C_r)``
    (capped at a quarter cycle): energy in R, I^2 t, peak current, X capacitor dV/dt (= i / C)
    and its pulse characteristic k0 = 2 * integral (i / C)^2 dt = 2 I^2t / C^2.
    Check: for R C << 1/f the energy tends to ``0.5 C V^2``, ``I^2 t`` to ``V^2 C / (2 R)``
    and k0 to ``V^2 / (R C)`` with the step ``V = Vpk + residual_v`` (RC charging from a step,
    textbook [S]) - see tests/test_engine_transients.py. The diodes
    are the circuit's pulse diode (:meth:`Circuit.pulse_diode`, the high-current line).
    """
    circuit = circuit.for_pulses()
    system = build_system(circuit, mains_v, freq_hz, load_a=0.0, load_g=0.0, harmonics=harmonics)
    c = circuit.x_capacitance_f
    cr = circuit.reservoir_f
    r_d = circuit.diode_resistance_ohm * (2 if circuit.topology == "bridge" else 1)
    tau = (circuit.series_resistance_ohm + r_d) * c * cr / (c + cr)
    t0 = system.period / 4.0
    if harmonics:
        t0 = waveform_peak(harmonics)[1] / system.omega
    window = min(window_tau * tau, system.period / 4.0)
    key = (0, 0, 0)
    _, _, _, tr = system.run(
        key,
        (-float(residual_v), 0.0),
        t0,
        t0 + window,
        collect=True,
        quad_dt=min(system.period / 240, tau / 16),
    )
    i = tr.out["i_line"]
    r = circuit.series_resistance_ohm
    i2t = tr.integral(i * i)
    peak = float(np.max(np.abs(i)))
    return Inrush(
        peak_current_a=peak,
        series_r_energy_j=r * i2t,
        i2t_a2s=i2t,
        x_cap_dvdt_v_per_s=peak / c,
        rectifier_peak_current_a=float(np.max(tr.out["i_rect"])),
        duration_s=tau,
        corner=corner,
        x_cap_k0_v2_per_s=2.0 * i2t / (c * c),
        replug_residual_v=float(residual_v),
        replug_delay_s=replug_delay_s,
    )


def surge_wave(t_s, level_v: float):
    """Open-circuit 1.2/50 us surge voltage [V] at times ``t_s`` [s] (double exponential, [M])."""
    t = np.asarray(t_s, float)
    return (
        SURGE_A
        * level_v
        * (np.exp(-t / SURGE_TAU2_S) - np.exp(-t / SURGE_TAU1_S - t / SURGE_TAU2_S))
    )


def surge(circuit: Circuit, level_v: float, corner: dict) -> Surge:
    """Surge current through the generator's 2 ohm, the series R, the rectifier and the X capacitor.

    The X capacitor passes the fast edge and the bus (a large reservoir, clamped) is a short for
    it, so the loop is a series ``R_loop = 2 + R + r_d`` and ``C``, driven by the open-circuit wave
    ``v = A V (exp(-r1 t) - exp(-r2 t))``. Exact solution (superposition of exponentials):
    ``i(t) = (1/R_loop) sum_k a_k (kappa e^{-kappa t} - r_k e^{-r_k t}) / (kappa - r_k)``,
    ``kappa = 1 / (R_loop C)``; ``integral i^2 dt = sum_jk c_j c_k / (p_j + p_k)``. The mains
    current at that instant (tens of mA) adds to the surge current and is left out; the voltage
    drop of the bus (Vz) is neglected (conservative). Valid for R_loop >> 2 ohm, where the
    generator delivers its open-circuit wave shape; surge at the crest in the same polarity.
    """
    if level_v <= 0:
        return Surge(level_v, None, None, None, None, None, None, None)
    r = circuit.series_resistance_ohm
    r_d = circuit.diode_resistance_ohm * (2 if circuit.topology == "bridge" else 1)
    rl = SURGE_SOURCE_OHM + r + r_d
    c = circuit.x_capacitance_f
    kappa = 1.0 / (rl * c)
    av = SURGE_A * level_v
    rates = (1.0 / SURGE_TAU2_S, 1.0 / SURGE_TAU1_S + 1.0 / SURGE_TAU2_S)
    amps = (av, -av)
    # i(t) = sum coef * exp(-p t)
    coef, pole = [], []
    for a, rk in zip(amps, rates, strict=True):
        if abs(kappa - rk) < 1e-9 * rk:
            raise OutOfRangeError("surge: loop time constant coincides with the wave's")
        coef += [a * kappa / (rl * (kappa - rk)), -a * rk / (rl * (kappa - rk))]
        pole += [kappa, rk]
    coef_a = np.array(coef)
    pole_a = np.array(pole)
    i2t = float(np.sum(np.outer(coef_a, coef_a) / np.add.outer(pole_a, pole_a)))
    t = np.concatenate([[0.0], np.geomspace(1e-9, 20e-3, 700)])
    i = np.exp(-np.outer(t, pole_a)) @ coef_a
    qc = np.array([a / (rl * (kappa - rk)) for a, rk in zip(amps, rates, strict=True)])
    q = (np.exp(-np.outer(t, np.array(rates))) - np.exp(-kappa * t)[:, None]) @ qc
    peak = float(np.max(np.abs(i)))
    return Surge(
        level_v=level_v,
        peak_current_a=peak,
        series_r_energy_j=r * i2t,
        series_r_peak_voltage_v=r * peak,
        x_cap_voltage_step_v=float(np.max(np.abs(q))) / c,
        x_cap_dvdt_v_per_s=peak / c,
        i2t_a2s=i2t,
        corner=corner,
    )


#: discharge rules: profile -> (limit V or None for a time-constant rule, allowed s, rule text)
DISCHARGE_RULES = {
    "iec60335": (
        34.0,
        1.0,
        "IEC 60335-1 22.5: <= 34 V 1 s after unplug, C <= 0.1 uF exempt [S]",
    ),
    "iec62368": (
        60.0,
        2.0,
        "IEC 62368-1 5.5.2.2: ES1 (60 V [M]) 2 s after unplugging",
    ),
    "iec60950": (None, 1.0, "IEC 60950-1 2.1.1.7: C > 0.1 uF needs R C <= 1 s [S]"),
}
_EXEMPT_C_F = 0.1e-6


def discharge(
    profile: str, v_crest_v: float, c_f: float, r_bleed_ohm: float, c_nominal_f: float, corner: dict
) -> Discharge:
    """Pin voltage after unplugging at the crest: ``V(t) = V0 exp(-t / (Rb C))``.

    ``V0`` is the highest mains crest (conservative: the X capacitor cannot hold more), ``C`` and
    ``Rb`` the slowest corner (C max, Rb max). Exempt when the nominal capacitance is <= 0.1 uF
    (IEC 60335-1 and IEC 60950-1 [S]). ``time_s`` is the time to fall to the limit (iec60950: the
    time constant). Example: 357.8 V, 363 nF, 1.05 Mohm, iec60335: 0.90 s <= 1 s, ok.
    """
    if profile not in DISCHARGE_RULES:
        raise OutOfRangeError(f"unknown discharge profile {profile!r}")
    limit, allowed, rule = DISCHARGE_RULES[profile]
    tau = r_bleed_ohm * c_f if math.isfinite(r_bleed_ohm) else math.inf
    if limit is None:
        limit_v = v_crest_v * math.exp(-1.0)
        time_s = tau
    else:
        limit_v = limit
        time_s = (
            float(cf.discharge_time(v_crest_v, limit, r_bleed_ohm, c_f))
            if math.isfinite(tau)
            else math.inf
        )
        if v_crest_v <= limit:
            time_s = 0.0
    exempt = c_nominal_f <= _EXEMPT_C_F * (1 + 1e-9) and profile in ("iec60335", "iec60950")
    ok = exempt or time_s <= allowed
    return Discharge(
        profile=profile,
        limit_v=limit_v,
        time_s=time_s,
        allowed_s=allowed,
        time_constant_s=tau,
        start_v=v_crest_v,
        ok=bool(ok),
        exempt=bool(exempt),
        rule=rule,
        corner=corner,
    )


def startup(
    circuit: Circuit, mains_v: float, freq_hz: float, exact_dc_a: float, corner: dict
) -> Startup:
    """Time for the reservoir to charge from 0 V to regulation at one corner [s].

    ``t = integral_0^Vbus C_r dv / (I(v) - I_load(v))`` with ``I(v)`` the closed-form dropper
    current into a bus at ``v`` (:mod:`.closed_form`, R-corrected), scaled so that it equals the
    exact steady-state value ``exact_dc_a`` at regulation. ``inf`` when the load takes all the
    current anywhere on the way (DOMAIN.md section 2: ``t ~ C_r Vz / (I_dc - I_load)``).
    """
    top = circuit.topology
    c = circuit.x_capacitance_f
    r = circuit.series_resistance_ohm
    vf = circuit.diode_drop_v
    vbus = circuit.bus_voltage_v
    v = np.linspace(0.0, vbus, 201)
    if top == "bridge":
        i_v = cf.dc_current_bridge(mains_v, c, freq_hz, v, vf, r)
        i_reg = float(cf.dc_current_bridge(mains_v, c, freq_hz, vbus, vf, r))
    else:
        # half-wave: node A sits one diode drop above the bus while charging
        i_v = cf.dc_current_half_wave(mains_v, c, freq_hz, v + vf, vf, r)
        i_reg = float(cf.dc_current_half_wave(mains_v, c, freq_hz, circuit.zener_voltage_v, vf, r))
    scale = exact_dc_a / i_reg if i_reg > 0 else 0.0
    i_v = i_v * scale
    ld = circuit.load
    if circuit.regulator is not None:
        reg = circuit.regulator
        # a linear regulator draws (about) its full input current once it starts
        i_load = np.full_like(v, ld.demand_a(reg.output_v) + reg.quiescent_a)
    else:
        i_load = ld.current_a + (v / ld.resistance_ohm if ld.resistance_ohm else 0.0)
    net = i_v - i_load
    if np.any(net <= 0):
        t = math.inf
    else:
        inv = circuit.reservoir_f / np.maximum(net, 1e-15)
        t = float(np.sum(0.5 * (inv[1:] + inv[:-1]) * np.diff(v)))
    hold = holdup(circuit, exact_dc_a)
    return Startup(
        time_s=t,
        method="charge integral, closed form scaled to the exact current",
        corner=corner,
        holdup=hold,
    )


def holdup(circuit: Circuit, available_a: float) -> Holdup | None:
    """Reservoir droop during a load burst at the weakest corner.

    During the burst the dropper still gives ``available_a``; the reservoir covers the rest:
    ``dV = (I_base + I_burst - I_avail) t_burst / C_r`` (0 if covered), recovered at
    ``I_avail - I_base`` before the next burst. Allowed droop: down to the regulator's input
    need (``Vout + dropout``) or, without a regulator, 10 % of the bus voltage ([P], own choice).
    Required reservoir: ``C >= I_deficit t_burst / dV_allowed`` (DOMAIN.md section 2).
    """
    ld = circuit.load
    if not ld.has_burst:
        return None
    base = circuit.bus_demand_a()
    deficit = base + ld.burst_current_a - available_a
    cr = circuit.reservoir_f
    droop = max(deficit, 0.0) * ld.burst_duration_s / cr
    if circuit.regulator is not None:
        allowed = circuit.bus_voltage_v - circuit.regulator.output_v - circuit.regulator.dropout_v
    else:
        allowed = 0.1 * circuit.bus_voltage_v
    spare = available_a - base
    recovery = droop * cr / spare if spare > 0 else math.inf
    need = float(cf.holdup_capacitance(max(deficit, 0.0), ld.burst_duration_s, max(allowed, 1e-9)))
    ok = droop <= allowed and recovery <= ld.burst_period_s - ld.burst_duration_s
    return Holdup(
        burst_current_a=ld.burst_current_a,
        burst_duration_s=ld.burst_duration_s,
        droop_v=droop,
        allowed_droop_v=allowed,
        recovery_s=recovery,
        required_reservoir_f=need,
        ok=bool(ok),
    )
