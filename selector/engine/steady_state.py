"""Periodic steady state of the dropper as a piecewise-linear circuit, found by shooting.

Device models (piecewise linear, the same that the ngspice tests approximate):
rectifier diode = ``diode_drop_v`` + ``diode_resistance_ohm`` when forward biased, open otherwise;
Zener = ``zener_voltage_v`` + ``zener_impedance_ohm`` in breakdown, the diode model forward, open
between; reservoir, X capacitor and resistors ideal. A constant-current load turns into a resistor
below ``LOAD_KNEE_V`` so that an overloaded bus settles (a real load stops drawing as its supply
collapses) instead of running away.

The state at the positive-going zero crossing of the mains, ``x0 = (v_c, v_o)``, is found by
Newton's method on the cycle map (shooting): ``x0 = P(x0)``. The bridge is symmetric under
``u -> -u, v_c -> -v_c``, so half a cycle and the mirror ``S = diag(-1, 1)`` suffice as long as
the source has half-wave symmetry ``u(t + T/2) = -u(t)`` (a sine and any odd harmonics); with an
even harmonic, and always for the half-wave circuit, the full cycle is shot. A distorted mains
(:class:`~selector.engine.circuit.Harmonic`) enters as a multi-tone source (:mod:`.distortion`),
solved exactly by superposition in every linear segment (:mod:`.pwl`). The Jacobian of ``P``
is the product of the exact segment transition matrices (see :mod:`.pwl`). Convergence is
typically 2-5 iterations; slow modes (a resistive load with a big reservoir below regulation,
time constant of seconds) cost nothing extra, unlike simulating the start-up.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import OutOfRangeError
from .circuit import Circuit, Harmonic
from .distortion import has_even, thd, tones
from .pwl import Mode, PwlSystem, Trace

__all__ = ["LOAD_KNEE_V", "SteadyState", "build_system", "solve_steady_state"]

#: below this bus voltage a constant-current load behaves as a resistor (model choice, [P])
LOAD_KNEE_V = 0.5
_MIN_R = 1e-3  # floor for zero dynamic resistances [ohm] (1 mOhm: < 0.1 mV error at 50 mA)

_NAMES = (
    "i_line",  # line current [A], positive from live into the circuit
    "i_dc",  # current into the DC bus (bridge) / into the Zener node on positive half (half-wave)
    "i_z",  # Zener current, positive in breakdown [A]
    "v_z",  # voltage across the Zener, positive in breakdown direction [V]
    "i_load",  # load current [A]
    "i_res",  # reservoir current [A]
    "i_rect",  # current of the conducting rectifier path (bridge: |i|; half-wave: the diode) [A]
    "v_c",  # X capacitor voltage [V]
    "v_o",  # bus (reservoir) voltage [V]
    "u",  # mains voltage [V]
)


@dataclass
class _Params:
    topology: str
    vpk: float
    freq: float
    r: float
    c: float
    gb: float
    vf: float
    rs: float
    vz: float
    zz: float
    cr: float
    i_load: float
    g_load: float
    tones: tuple


def _params(
    circuit: Circuit,
    mains_v: float,
    freq_hz: float,
    load_a: float,
    load_g: float,
    harmonics: tuple[Harmonic, ...] = (),
):
    vpk = math.sqrt(2.0) * mains_v
    return _Params(
        topology=circuit.topology,
        vpk=vpk,
        tones=tones(vpk, 2 * math.pi * freq_hz, harmonics),
        freq=freq_hz,
        r=circuit.series_resistance_ohm,
        c=circuit.x_capacitance_f,
        gb=0.0 if not circuit.has_bleeder else 1.0 / circuit.bleeder_resistance_ohm,
        vf=circuit.diode_drop_v,
        rs=max(circuit.diode_resistance_ohm, _MIN_R),
        vz=circuit.zener_voltage_v,
        zz=max(circuit.zener_impedance_ohm, _MIN_R),
        cr=circuit.reservoir_f,
        i_load=load_a,
        g_load=load_g,
    )


class _F(tuple):
    """A linear form ``[k_vc, k_vo, k_u, k_const]`` of the state and the mains voltage: a
    4-tuple with the arithmetic the circuit equations need (cheaper than tiny numpy arrays)."""

    __slots__ = ()

    def __add__(self, o):  # type: ignore[override]
        return _F((self[0] + o[0], self[1] + o[1], self[2] + o[2], self[3] + o[3]))

    def __sub__(self, o):
        return _F((self[0] - o[0], self[1] - o[1], self[2] - o[2], self[3] - o[3]))

    def __mul__(self, k):  # type: ignore[override]
        return _F((self[0] * k, self[1] * k, self[2] * k, self[3] * k))

    __rmul__ = __mul__

    def __truediv__(self, k):
        return _F((self[0] / k, self[1] / k, self[2] / k, self[3] / k))

    def __neg__(self):
        return _F((-self[0], -self[1], -self[2], -self[3]))


def _lin(a=0.0, b=0.0, u=0.0, k=0.0) -> _F:
    return _F((a, b, u, k))


_VC = _lin(1.0)
_VO = _lin(0.0, 1.0)
_U = _lin(0.0, 0.0, 1.0)


def _load_rows(p: _Params, lstate: int) -> _F:
    if lstate == 0:
        return _lin(0.0, p.g_load, 0.0, p.i_load)
    return _lin(0.0, p.g_load + p.i_load / LOAD_KNEE_V)


def _load_guards(p: _Params, lstate: int, key, idx: int):
    if p.i_load <= 0:
        return [], []
    k = list(key)
    if lstate == 0:
        k[idx] = 1
        return [_VO - _lin(k=LOAD_KNEE_V)], [tuple(k)]
    k[idx] = 0
    return [_lin(k=LOAD_KNEE_V) - _VO], [tuple(k)]


def _zener_rows(p: _Params, z: int, v: _F):
    """Zener current as a linear form of the voltage form v across it."""
    if z == 1:
        return (v - _lin(k=p.vz)) / p.zz
    if z == -1:
        return (v + _lin(k=p.vf)) / p.rs
    return _lin()


def _zener_guards(p: _Params, z: int, v: _F, key, idx: int):
    rows, keys = [], []
    k = list(key)
    if z == 1:
        rows.append(v - _lin(k=p.vz))
        k[idx] = 0
        keys.append(tuple(k))
    elif z == -1:
        rows.append(-(v + _lin(k=p.vf)))
        k[idx] = 0
        keys.append(tuple(k))
    else:
        rows.append(_lin(k=p.vz) - v)
        k1 = list(key)
        k1[idx] = 1
        keys.append(tuple(k1))
        rows.append(v + _lin(k=p.vf))
        k2 = list(key)
        k2[idx] = -1
        keys.append(tuple(k2))
    return rows, keys


def _bridge_builder(p: _Params):
    rt = p.r + 2 * p.rs

    def build(key) -> Mode:
        s, z, ls = key
        if s != 0:
            i = (_U - _VC - s * _VO - _lin(k=2 * s * p.vf)) / rt
        else:
            i = _lin()
        i_dc = s * i
        iz = _zener_rows(p, z, _VO)
        il = _load_rows(p, ls)
        ires = i_dc - iz - il
        dvc = i / p.c - _VC * (p.gb / p.c)
        dvo = ires / p.cr
        rows = [i, i_dc, iz, _VO, il, ires, i_dc, _VC, _VO, _U]
        guards, keys = [], []
        if s == 0:
            guards += [-(_U - _VC - _VO - _lin(k=2 * p.vf)), _U - _VC + _VO + _lin(k=2 * p.vf)]
            keys += [(1, z, ls), (-1, z, ls)]
        else:
            guards.append(i * rt * s)
            keys.append((0, z, ls))
        g, k = _zener_guards(p, z, _VO, key, 1)
        guards += g
        keys += k
        g, k = _load_guards(p, ls, key, 2)
        guards += g
        keys += k
        n = len(rows)
        rows += guards
        return Mode(key, dvc, dvo, rows, [(n + j, kk) for j, kk in enumerate(keys)], p.tones)

    return build


def _halfwave_builder(p: _Params):
    gr = 1.0 / p.r
    gd_on = 1.0 / p.rs

    def build(key) -> Mode:
        z, d, ls = key
        if z == 1:
            gz, ez = 1.0 / p.zz, _lin(k=p.vz)
        elif z == -1:
            gz, ez = 1.0 / p.rs, _lin(k=-p.vf)
        else:
            gz, ez = 0.0, _lin()
        gd = gd_on if d else 0.0
        ed = _VO + _lin(k=p.vf)
        if gz + gd == 0.0:
            va = _U - _VC
        else:
            va = (gr * (_U - _VC) + gz * ez + gd * ed) / (gr + gz + gd)
        i = gr * (_U - _VC - va)
        iz = gz * (va - ez)
        idd = gd * (va - ed)
        il = _load_rows(p, ls)
        ires = idd - il
        i_dc = idd + (iz if z == 1 else _lin())
        dvc = i / p.c - _VC * (p.gb / p.c)
        dvo = ires / p.cr
        rows = [i, i_dc, iz, va, il, ires, idd, _VC, _VO, _U]
        guards, keys = _zener_guards(p, z, va, key, 0)
        if d:
            guards.append(va - ed)
            keys.append((z, 0, ls))
        else:
            guards.append(ed - va)
            keys.append((z, 1, ls))
        g, k = _load_guards(p, ls, key, 2)
        guards += g
        keys += k
        n = len(rows)
        rows += guards
        return Mode(key, dvc, dvo, rows, [(n + j, kk) for j, kk in enumerate(keys)], p.tones)

    return build


def build_system(
    circuit: Circuit,
    mains_v: float,
    freq_hz: float,
    load_a: float | None = None,
    load_g: float | None = None,
    harmonics: tuple[Harmonic, ...] = (),
) -> PwlSystem:
    """The switched system of ``circuit`` on ``mains_v`` rms (the fundamental's) at ``freq_hz``,
    with the ``harmonics`` of a distorted mains superposed.

    The bus load is ``load_a`` [A] plus ``load_g`` [S] x bus voltage; by default the circuit's own
    base load (regulator: its input current, constant).
    """
    if load_a is None or load_g is None:
        la, lg = bus_load(circuit)
        load_a = la if load_a is None else load_a
        load_g = lg if load_g is None else load_g
    p = _params(circuit, mains_v, freq_hz, load_a, load_g, tuple(harmonics))
    build = _bridge_builder(p) if p.topology == "bridge" else _halfwave_builder(p)
    return PwlSystem(build, _NAMES, p.vpk, freq_hz, volt_scale=p.vpk, tones=p.tones)


def bus_load(circuit: Circuit) -> tuple[float, float]:
    """(constant current [A], conductance [S]) the bus sees from the load (no bursts)."""
    ld = circuit.load
    if circuit.regulator is not None:
        reg = circuit.regulator
        return ld.demand_a(reg.output_v) + reg.quiescent_a, 0.0
    g = 0.0 if ld.resistance_ohm is None else 1.0 / ld.resistance_ohm
    return ld.current_a, g


@dataclass
class SteadyState:
    """Periodic steady state at one corner (SI). Means and rms over one mains cycle.

    ``zener_current_a`` is the mean breakdown (clamping) current; ``zener_power_w`` includes the
    forward half of a half-wave circuit's Zener."""

    mains_v: float
    freq_hz: float
    dc_current_a: float
    zener_current_a: float
    zener_peak_current_a: float
    zener_power_w: float
    load_current_a: float
    output_voltage_v: float
    output_min_v: float
    output_max_v: float
    ripple_v: float
    line_current_rms_a: float
    line_current_peak_a: float
    series_r_power_w: float
    bleeder_power_w: float
    x_cap_voltage_rms_v: float
    x_cap_voltage_peak_v: float
    rectifier_avg_current_a: float
    rectifier_peak_current_a: float
    reservoir_ripple_current_a: float
    real_power_w: float
    apparent_power_va: float
    reactive_power_var: float
    power_factor: float
    iterations: int
    x0: tuple[float, float]
    trace: Trace | None = None


def _initial_guess(circuit: Circuit, vpk: float, omega: float) -> tuple[np.ndarray, tuple]:
    """State at the positive-going zero crossing of the mains, from the ideal clamp picture.

    Shortly after the negative crest the rectifier conducts again, so at ``u = 0`` the capacitor
    sits below the clamp voltage by the drop of the charging current ``w C Vpk`` in R:
    ``v_c = -(V_clamp + R w C Vpk)``.
    """
    vf = circuit.diode_drop_v
    c = circuit.x_capacitance_f
    r = circuit.series_resistance_ohm
    wrc = omega * r * c
    drop = r * omega * c * vpk / math.sqrt(1.0 + wrc * wrc)
    if circuit.topology == "bridge":
        vo = circuit.zener_voltage_v
        return np.array([-(vo + 2 * vf + drop), vo]), (1, 1, 0)
    vo = circuit.zener_voltage_v - vf
    return np.array([-(circuit.zener_voltage_v + drop), vo]), (1, 1, 0)


def solve_steady_state(
    circuit: Circuit,
    mains_v: float,
    freq_hz: float,
    load_a: float | None = None,
    load_g: float | None = None,
    keep_trace: bool = False,
    x_guess: tuple[float, float] | None = None,
    tol: float = 1e-8,
    accept: float = 3e-4,
    max_iter: int = 40,
    harmonics: tuple[Harmonic, ...] = (),
) -> SteadyState:
    """Periodic steady state of ``circuit`` at one mains voltage [V rms of the fundamental] and
    frequency [Hz], with the ``harmonics`` of a distorted mains (relative to the fundamental).

    Shooting: Newton on ``x0 - P(x0) = 0`` with the exact Jacobian; converged when the cycle map
    moves the state by less than ``tol`` x crest voltage, or when Newton's predicted correction
    ``(J - I)^-1 (P(x0) - x0)`` is below ``accept`` relative to the crest (capacitor) and the
    bus voltage (reservoir) - the sampled run then is within that distance of the orbit.
    """
    harmonics = tuple(harmonics)
    system = build_system(circuit, mains_v, freq_hz, load_a, load_g, harmonics)
    # half-cycle symmetry of the bridge needs u(t + T/2) = -u(t): no even harmonic
    bridge = circuit.topology == "bridge" and not has_even(harmonics)
    span = system.period / 2 if bridge else system.period
    x, key = _initial_guess(circuit, system.vpk, system.omega)
    if x_guess is not None:
        x = np.array(x_guess, dtype=float)
    S = np.diag([-1.0, 1.0])
    scale = system.vpk
    it = 0
    converged = False
    collect = True
    trace = None
    r = np.zeros(2)
    for it in range(1, max_iter + 1):  # noqa: B007
        # sample the outputs on the run that is expected to be the last one (Newton converges
        # quadratically, so a small residual now means a converged next run)
        x1, key1, J, trace = system.run(key, x, 0.0, span, collect=collect)
        if bridge:
            x1 = S @ x1
            J = S @ J
            key1 = (-key1[0], key1[1], key1[2])
        r = x1 - x
        res = float(np.max(np.abs(r)))
        if res < tol * scale or (it > 8 and res < 1e-6 * scale):
            # (event times are located to ~1e-13 of a period; the map is resolved to ~1e-9 V/V)
            converged = True
            break
        collect = res < 1e-3 * scale
        try:
            dx = np.linalg.solve(J - np.eye(2), -r)
        except np.linalg.LinAlgError:
            dx = r
        if (
            trace is not None
            and abs(dx[0]) < accept * scale
            and abs(dx[1]) < accept * circuit.bus_voltage_v
        ):
            # Newton's own estimate of the distance to the periodic orbit is below ``accept``
            # (relative, per state): the sampled run is the answer
            converged = True
            break
        step = float(np.max(np.abs(dx)))
        if step > 0.5 * scale:
            dx *= 0.5 * scale / step
        if it > 12:  # Newton stalls on a kink of the piecewise map: mix in plain iteration
            dx = 0.5 * dx + 0.5 * r
        x = x + dx
        key = key1
    if not converged:
        raise OutOfRangeError(
            f"steady state did not converge at {mains_v:.4g} V, {freq_hz:.4g} Hz "
            f"(residual {float(np.max(np.abs(r))):.3g} V)"
        )
    if trace is None or (keep_trace and bridge):
        # bridge: half a cycle holds every even quantity (the circuit is mirror-symmetric);
        # plots want the full cycle
        full = system.period if keep_trace else span
        _, _, _, trace = system.run(key, x, 0.0, full, collect=True)
    v_rms = mains_v * math.sqrt(1.0 + thd(harmonics) ** 2)
    return _summarise(trace, circuit, mains_v, freq_hz, it, x, keep_trace, v_rms)


def _summarise(
    trace: Trace, circuit: Circuit, mains_v, freq_hz, it, x, keep, v_rms: float
) -> SteadyState:
    o = trace.out
    mean = trace.mean
    i = o["i_line"]
    i_rms = math.sqrt(max(mean(i * i), 0.0))
    vc = o["v_c"]
    vc_rms = math.sqrt(max(mean(vc * vc), 0.0))
    p_real = mean(o["u"] * i)
    s_app = v_rms * i_rms  # total rms of the (distorted) mains x rms line current
    q = math.sqrt(max(s_app * s_app - p_real * p_real, 0.0))
    vo = o["v_o"]
    rb = circuit.bleeder_resistance_ohm
    ires = o["i_res"]
    if circuit.topology == "bridge":
        rect_avg = mean(o["i_rect"]) / 2.0  # each diode of the bridge carries every other half
    else:
        rect_avg = mean(o["i_rect"])
    return SteadyState(
        mains_v=mains_v,
        freq_hz=freq_hz,
        dc_current_a=mean(o["i_dc"]),
        zener_current_a=mean(np.maximum(o["i_z"], 0.0)),
        zener_peak_current_a=float(np.max(o["i_z"])),
        zener_power_w=mean(o["i_z"] * o["v_z"]),
        load_current_a=mean(o["i_load"]),
        output_voltage_v=mean(vo),
        output_min_v=float(np.min(vo)),
        output_max_v=float(np.max(vo)),
        ripple_v=float(np.max(vo) - np.min(vo)),
        line_current_rms_a=i_rms,
        line_current_peak_a=float(np.max(np.abs(i))),
        series_r_power_w=circuit.series_resistance_ohm * i_rms * i_rms,
        bleeder_power_w=(vc_rms * vc_rms / rb) if math.isfinite(rb) else 0.0,
        x_cap_voltage_rms_v=vc_rms,
        x_cap_voltage_peak_v=float(np.max(np.abs(vc))),
        rectifier_avg_current_a=rect_avg,
        rectifier_peak_current_a=float(np.max(o["i_rect"])),
        reservoir_ripple_current_a=math.sqrt(max(mean(ires * ires), 0.0)),
        real_power_w=p_real,
        apparent_power_va=s_app,
        reactive_power_var=q,
        power_factor=p_real / s_app if s_app > 0 else 0.0,
        iterations=it,
        x0=(float(x[0]), float(x[1])),
        trace=trace if keep else None,
    )
