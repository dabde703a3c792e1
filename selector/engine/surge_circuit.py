"""IEC 61000-4-5 surge through the whole dropper: the combination-wave generator as a circuit, in
series with the mains at a chosen phase, into the real circuit (series R, X capacitor with its
charge, bleeder, bridge or half-wave diode + Zener, reservoir with its ESR, Zener with its slope
resistance, load).

This module is the circuit-level API: the pre-state of each circuit at the surge's phase, the
case of a circuit at a corner (:func:`surge_case`), the worst of every stress over corners,
phases and polarities (:func:`worst_surge`), and the exponential diode of the reference
netlists. The generator and its derivation are in :mod:`.surge_generator`, the
piecewise-linear simulation in :mod:`.surge_simulation`; their public names are re-exported
here.

The pre-state (X capacitor and bus at the surge's phase) comes from the clamped-bus phasor
picture at the standard's phases (:func:`pre_states_clamped`, within 1 V of the periodic
solution for ``w R C <= 0.1``) or else from the periodic steady state (:func:`pre_states`).
The load is off during the surge (see :func:`surge_case`).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import OutOfRangeError
from .surge_generator import (
    GENERATOR,
    UNDERSHOOT_TARGET,
    Generator,
    current_wave_times,
    derive_generator,
    generator_waveform,
    voltage_wave_times,
)
from .surge_simulation import SURGE_WINDOW_S, SurgeCase, SurgeRun, simulate

__all__ = [
    "GENERATOR",
    "CLAMPED_MAX_WRC",
    "DEFAULT_ZENER_SURGE_SLOPE_OHM",
    "SURGE_PHASES_DEG",
    "SURGE_STRESSES",
    "SURGE_WINDOW_S",
    "UNDERSHOOT_TARGET",
    "VARISTOR_STRESSES",
    "ExpDiode",
    "Generator",
    "SurgeCase",
    "SurgeRun",
    "current_wave_times",
    "derive_generator",
    "generator_waveform",
    "pre_states",
    "pre_states_clamped",
    "simulate",
    "surge_case",
    "voltage_wave_times",
    "worst_surge",
    "worst_surge_many",
    "zener_surge_slope",
]


@dataclass(frozen=True)
class ExpDiode:
    """An exponential junction with series resistance: ``V = n VT ln(1 + I / Is) + Rs I``.

    The physical diode that the ngspice reference netlists use (SPICE level-1 ``D(IS N RS)``)
    and from which the engine's piecewise-linear diode (drop + resistance) is taken with
    :meth:`line`. ``VT`` = kT/q at 27 C = 25.852 mV [S: physical constants].
    """

    is_a: float = 1e-12
    n: float = 1.0
    rs_ohm: float = 0.1
    vt_v: float = 0.025852

    def voltage(self, i_a):
        i = np.asarray(i_a, float)
        return self.n * self.vt_v * np.log1p(i / self.is_a) + self.rs_ohm * i

    def line(self, i_lo_a: float, i_hi_a: float) -> tuple[float, float]:
        """Straight line ``V = Vf + Rd I`` fitted (least squares, uniform in I) to the junction
        over ``[i_lo, i_hi]`` [A]: (Vf [V], Rd [ohm]). Chosen over the current range a pulse
        actually sweeps, the line is within a few mV of the junction there; the tangent at a
        small current overstates the drop at tens of amperes by ``VT I / i_small``."""
        if not 0 < i_lo_a < i_hi_a:
            raise OutOfRangeError("diode line needs 0 < i_lo < i_hi")
        i = np.linspace(i_lo_a, i_hi_a, 201)
        rd, vf = np.polyfit(i, self.voltage(i), 1)
        return float(vf), float(rd)


#: Zener slope resistance the surge model takes when the circuit gives none (0): at pulse
#: currents of amperes the bulk resistance of a 0.5-5 W Zener is of the order of an ohm, far from
#: ideal ([P] common practice, no source; give the part's figure with ``--zener-z``)
DEFAULT_ZENER_SURGE_SLOPE_OHM = 1.0

#: mains phases at which the surge is applied [deg], each with both polarities: the test
#: sequence of IEC 61000-4-5 [M]. A 10-degree grid finds no stress more than 0.5 % above the
#: worst of these four (tests/test_surge_circuit.py::test_phase_grid_is_fine_enough).
SURGE_PHASES_DEG = (0.0, 90.0, 180.0, 270.0)

#: stresses reported by :func:`worst_surge` (SurgeRun field = JSON key)
SURGE_STRESSES = (
    "peak_current_a",
    "series_r_energy_j",
    "series_r_peak_voltage_v",
    "x_cap_voltage_step_v",
    "x_cap_peak_total_v",
    "x_cap_dvdt_v_per_s",
    "zener_peak_current_a",
    "zener_pulse_energy_j",
    "zener_peak_power_w",
    "rectifier_peak_current_a",
    "rectifier_i2t_a2s",
    "fuse_i2t_a2s",
    "bus_peak_v",
)

#: stresses :func:`worst_surge` adds for a circuit with a varistor (SurgeRun field = JSON key)
VARISTOR_STRESSES = ("varistor_peak_current_a", "varistor_energy_j", "line_peak_v")


#: largest w R C for which :func:`pre_states_clamped` is used (its error is then < 1 V)
CLAMPED_MAX_WRC = 0.1


def pre_states_clamped(circuit, mains_v: float, freq_hz: float, phases_deg) -> tuple[list, list]:
    """X-capacitor and bus voltage [V] at the mains phases 0/90/180/270 from the clamped-bus
    picture (no load, so the clamp holds the bus at ``V_bus`` = Vz + Zz I_dc; half-wave
    Vz + Zz I - Vf, the peak of the Zener node less a diode drop):

    while the rectifier conducts, the loop is R + C driven by ``u - s V_clamp``, whose
    sinusoidal current ``i = I cos(w t - a)``, ``I = w C Vpk / sqrt(1 + (w R C)^2)``,
    ``a = atan(w R C)``, gives ``v_x = u - s V_clamp - R i`` (``V_clamp`` = Vz + 2 Vf for the
    bridge; Vz on the positive and Vf on the negative side for the half-wave). At the zero
    crossing and at the crest the rectifier still conducts, so ``v_x(0) = -V+ - R I cos a``,
    ``v_x(90) = Vpk - V+ - R I sin a``, and their mirror images at 180 and 270 degrees with
    ``V-``. The start of each conduction interval leaves an R C transient that this leaves out,
    so it is used for ``w R C <= 0.1`` only (:data:`CLAMPED_MAX_WRC`; within 1 V of the sampled
    periodic solution for 10 ohm..2.2 kohm, 47 nF..2.2 uF, tests/test_surge_circuit.py: 0.1 %
    of an X capacitor's surge peak). Circuit theory (phasors), textbook.
    Other phases: ValueError.
    """
    vpk = math.sqrt(2.0) * mains_v
    w = 2 * math.pi * freq_hz
    c = circuit.x_capacitance_f
    r = circuit.series_resistance_ohm
    vf = circuit.diode_drop_v
    vz = circuit.zener_voltage_v
    wrc = w * r * c
    i_pk = w * c * vpk / math.sqrt(1.0 + wrc * wrc)
    a = math.atan(wrc)
    zz = circuit.zener_impedance_ohm
    if circuit.topology == "bridge":
        hi = lo = vz + 2 * vf
        # the reservoir averages the Zener's current: I_dc = 4 f C (Vpk - V+) (DOMAIN.md 2)
        bus = vz + zz * 4 * freq_hz * c * (vpk - hi)
    else:
        hi, lo = vz, vf
        # the reservoir holds the peak of node A less one diode drop
        bus = vz + zz * i_pk - vf
    ri_c, ri_s = r * i_pk * math.cos(a), r * i_pk * math.sin(a)
    out = {0.0: -hi - ri_c, 90.0: vpk - hi - ri_s, 180.0: lo + ri_c, 270.0: -(vpk - lo - ri_s)}
    vx = []
    for ph in phases_deg:
        key = ph % 360.0
        if key not in out:
            raise ValueError(f"clamped pre-state only at 0/90/180/270 degrees, not {ph}")
        vx.append(out[key])
    return vx, [bus] * len(vx)


def pre_states(circuit, mains_v: float, freq_hz: float, phases_deg) -> tuple[list, list]:
    """X-capacitor and bus voltage [V] at each mains phase (u = Vpk sin(phase)) of the periodic
    steady state without load (:func:`.steady_state.solve_steady_state`): phase 0 is the
    shooting solution itself, other phases are read from its sampled cycle (linear
    interpolation between the samples of the cycle: ~0.1 V off the exact state near the crest,
    0.01 % of a surge's kilovolt)."""
    from .steady_state import solve_steady_state

    st = solve_steady_state(circuit, mains_v, freq_hz, load_a=0.0, load_g=0.0, keep_trace=True)
    tr = st.trace
    order = np.argsort(tr.t)
    t = tr.t[order]
    v_c = tr.out["v_c"][order]
    v_o = tr.out["v_o"][order]
    vx, vo = [], []
    for ph in phases_deg:
        ph = ph % 360.0
        if ph == 0.0:
            vx.append(float(st.x0[0]))
            vo.append(float(st.x0[1]))
            continue
        tt = ph / 360.0 / freq_hz
        vx.append(float(np.interp(tt, t, v_c)))
        vo.append(float(np.interp(tt, t, v_o)))
    return vx, vo


def zener_surge_slope(circuit) -> float:
    """Zener slope resistance [ohm] in the surge: the circuit's, or
    :data:`DEFAULT_ZENER_SURGE_SLOPE_OHM` when it gives 0 (an ideal clamp)."""
    zz = circuit.zener_impedance_ohm
    return zz if zz > 0 else DEFAULT_ZENER_SURGE_SLOPE_OHM


def surge_case(circuit, k, phases_deg=SURGE_PHASES_DEG, exact_pre_state=False) -> SurgeCase:
    """The :class:`SurgeCase` of ``circuit`` at corner ``k`` (an :class:`.analysis.Corner`:
    mains, frequency, capacitance, series R, bleeder, Zener voltage), pre-charged as in the
    periodic steady state (:func:`pre_states_clamped` at the standard's phases, else
    :func:`pre_states`; steady-state diodes); the pulse itself uses the pulse diode
    (:meth:`.circuit.Circuit.pulse_diode`). The load is off during the surge (its mA are
    negligible against the surge's amperes, and without it the Zener takes the most, [P])."""
    from .analysis import corner_circuit

    cc = corner_circuit(circuit, k)
    wrc = 2 * math.pi * k.freq_hz * k.r_ohm * k.cap_f
    standard = all((ph % 360.0) in (0.0, 90.0, 180.0, 270.0) for ph in phases_deg)
    if standard and wrc <= CLAMPED_MAX_WRC and not exact_pre_state:
        vx, vo = pre_states_clamped(cc, k.mains_v, k.freq_hz, phases_deg)
    else:
        vx, vo = pre_states(cc, k.mains_v, k.freq_hz, phases_deg)
    vf, rd = circuit.pulse_diode()
    return SurgeCase(
        topology=circuit.topology,
        mains_v=k.mains_v,
        freq_hz=k.freq_hz,
        cap_f=k.cap_f,
        r_ohm=k.r_ohm,
        bleeder_ohm=k.bleeder_ohm,
        vf_v=vf,
        rd_ohm=rd,
        vz_v=k.vz_v,
        zz_ohm=zener_surge_slope(circuit),
        reservoir_f=circuit.reservoir_f,
        esr_ohm=circuit.reservoir_esr_ohm,
        load_a=0.0,
        load_g=0.0,
        phases_deg=tuple(phases_deg),
        v_x0=tuple(vx),
        v_o0=tuple(vo),
        varistor=circuit.varistor,
    )


def worst_surge(circuit, grid, level_v: float, phases_deg=SURGE_PHASES_DEG):
    """Every stress of :data:`SURGE_STRESSES` (and :data:`VARISTOR_STRESSES` when the circuit
    has a varistor) at its own worst (corner, phase, polarity).

    ``grid`` is the list of corners (:func:`.analysis.corners`); all corners x phases x both
    polarities are simulated in one batch and the largest value of each stress is taken, so no
    monotonicity is assumed. Returns (values dict, corner records dict) with each record the
    corner's keys plus ``phase_deg`` and ``polarity``.
    """
    return worst_surge_many([(circuit, grid)], level_v, phases_deg)[0]


def worst_surge_many(jobs, level_v: float, phases_deg=SURGE_PHASES_DEG):
    """:func:`worst_surge` of each (circuit, grid) of ``jobs``, simulated in one batch per
    topology (the simulation is vectorised over its cases, so many small circuits cost far
    less together than one by one). Returns the (values, corner records) of each job, in
    order.

    Each case's runs are kept in :data:`.reuse.SURGE_CASES` and only cases not seen before are
    simulated: a case (:func:`surge_case`) holds every number its runs depend on, so the runs
    are the same whichever job asks (see :mod:`.reuse`)."""
    from .reuse import SURGE_CASES

    out: list = [None] * len(jobs)
    by_topology: dict[str, list[int]] = {}
    for j, (circuit, _) in enumerate(jobs):
        by_topology.setdefault(circuit.topology, []).append(j)
    for members in by_topology.values():
        cases, owner = [], []
        for j in members:
            circuit, grid = jobs[j]
            cases += [surge_case(circuit, k, phases_deg) for k in grid]
            owner += [(j, k) for k in grid]
        runs = [SURGE_CASES.get(c, level_v) for c in cases]
        todo = list(dict.fromkeys(c for c, r in zip(cases, runs, strict=True) if r is None))
        if todo:
            fresh = _case_runs(simulate(todo, level_v), len(todo))
            for c, r in zip(todo, fresh, strict=True):
                SURGE_CASES.put(c, level_v, r)
            new = dict(zip(todo, fresh, strict=True))
            runs = [new[c] if r is None else r for c, r in zip(cases, runs, strict=True)]
        for j in members:
            circuit = jobs[j][0]
            mine = [n for n, (jj, _) in enumerate(owner) if jj == j]
            table = np.concatenate([runs[n] for n in mine])
            case_of_row = np.concatenate([np.full(len(runs[n]), n) for n in mine])
            values, where = {}, {}
            names = SURGE_STRESSES
            if circuit.varistor is not None:
                names = SURGE_STRESSES + VARISTOR_STRESSES
            for name in names:
                arr = table[:, _RUN_FIELDS.index(name)]
                r = int(np.argmax(arr))
                values[name] = float(arr[r])
                where[name] = {
                    **owner[int(case_of_row[r])][1].record(circuit),
                    "load_a": 0.0,
                    "phase_deg": float(table[r, _RUN_FIELDS.index("phase_deg")]),
                    "polarity": int(table[r, _RUN_FIELDS.index("polarity")]),
                }
            out[j] = (values, where)
    return out


#: the columns of a case's kept runs (:func:`_case_runs`)
_RUN_FIELDS = ("phase_deg", "polarity") + SURGE_STRESSES + VARISTOR_STRESSES


def _case_runs(run: SurgeRun, n_cases: int) -> list[np.ndarray]:
    """The rows of ``run`` of each case 0..n_cases-1 as one (runs x :data:`_RUN_FIELDS`) array,
    in the simulation's order (a missing varistor figure is NaN)."""
    n = len(run.case)
    cols = []
    for name in _RUN_FIELDS:
        v = getattr(run, name, None)
        cols.append(np.full(n, np.nan) if v is None else np.asarray(v, float))
    table = np.stack(cols, axis=1)
    return [table[run.case == c] for c in range(n_cases)]
