"""Helpers that run the ngspice circuit simulator (Debian package ``ngspice``, ``ngspice -b``) on
dropper netlists, the outside reference for the engine's steady state and switch-on results.

Device models used in the netlists (SPICE level-1 diode, ngspice 39):

* rectifier and Zener forward: ``D(IS=1e-12 N=1 RS=0.1 CJO=20p)`` - an exponential junction;
* Zener: the same with ``BV=Vz IBV=10m`` (breakdown at Vz for 10 mA);
* a distorted mains as SIN sources in series, one per tone (``Scenario.harmonics``);
* ideal R and C; load as an ideal current source or resistor; 100 pF from every floating node to
  ground, 100 Mohm from the floating DC side to ground, zero-volt sources to sense currents
  (DOMAIN.md section 7).

The engine works with piecewise-linear devices; :func:`engine_diode` and :func:`engine_zener`
give the tangent (drop + resistance) of these exponential models at a typical current, which is
how the comparison maps one onto the other.
"""

from __future__ import annotations

import math
import os
import shutil
import subprocess
import tempfile
from dataclasses import dataclass, field

import numpy as np

from selector.engine.surge_circuit import ExpDiode

VT = 0.025852  # thermal voltage at 27 C [V] (kT/q)
IS = 1e-12
RS = 0.1
IBV = 10e-3
DIODE_MODEL = f".model DR D(IS={IS} N=1 RS={RS} CJO=20p)"
#: the same diode for the engine: lines fitted to it over a pulse's current range
PHYSICAL_DIODE = ExpDiode(is_a=IS, n=1.0, rs_ohm=RS, vt_v=VT)


def ngspice_path() -> str | None:
    return shutil.which("ngspice")


def engine_diode(i_typ: float) -> tuple[float, float]:
    """Tangent of the exponential diode at ``i_typ``: (drop [V], resistance [ohm])."""
    v = VT * math.log(i_typ / IS)
    return v - VT, VT / i_typ + RS


def engine_zener(vz: float, i_typ: float) -> tuple[float, float]:
    """Tangent of the breakdown branch ``V = BV + VT ln(I / IBV) + RS I`` at ``i_typ``."""
    v = vz + VT * math.log(i_typ / IBV)
    return v - VT, VT / i_typ + RS


@dataclass
class Scenario:
    """One comparison case (SI)."""

    name: str
    topology: str
    mains_v: float
    freq_hz: float
    cap_f: float
    r_ohm: float
    vz_v: float
    reservoir_f: float = 100e-6
    load_a: float = 0.0
    load_r: float | None = None
    bleeder_ohm: float = 1e6
    extra: dict = field(default_factory=dict)
    #: mains harmonics as (order, fraction of the fundamental, phase [deg]) in the sine reference
    #: of the fundamental: u = Vpk (sin(w t) + sum a_h sin(h w t + phi_h))
    harmonics: tuple[tuple[int, float, float], ...] = ()


def _source_lines(sc: Scenario, phase: float) -> list[str]:
    """The mains between ``line`` and ground: one SIN source, or the fundamental and one SIN
    source per harmonic in series (SPICE SIN(VO VA FREQ TD THETA PHASE), phase in degrees).
    ``phase`` shifts the fundamental; each harmonic is shifted by its order times as much, so
    the wave keeps its shape."""
    vpk = math.sqrt(2) * sc.mains_v
    if not sc.harmonics:
        return [f"VS line 0 SIN(0 {vpk} {sc.freq_hz} 0 0 {phase})"]
    nodes = ["line", *[f"hs{k}" for k in range(len(sc.harmonics))], "0"]
    lines = [f"VS {nodes[0]} {nodes[1]} SIN(0 {vpk} {sc.freq_hz} 0 0 {phase})"]
    for k, (order, frac, ph) in enumerate(sc.harmonics):
        lines.append(
            f"VH{order} {nodes[k + 1]} {nodes[k + 2]} "
            f"SIN(0 {vpk * frac} {order * sc.freq_hz} 0 0 {ph + order * phase})"
        )
    return lines


def _load_lines(sc: Scenario, pos: str, neg: str) -> list[str]:
    if sc.load_r is not None:
        return [f"RL {pos} {neg} {sc.load_r}"]
    if sc.load_a > 0:
        return [f"IL {pos} {neg} DC {sc.load_a}"]
    return []


def netlist(sc: Scenario, out: str, tstop: float, tmax: float, switch_on: bool, v0: float) -> str:
    """The netlist text. ``switch_on``: source starts at its crest, all capacitors empty;
    otherwise the reservoir starts at ``v0`` and the X capacitor empty."""
    phase = 90 if switch_on else 0
    lines = [
        f"* dropper {sc.name}",
        *_source_lines(sc, phase),
        f"R1 line n1 {sc.r_ohm}",
        f"C1 n1 n2 {sc.cap_f} IC=0",
        f"RB n1 n2 {sc.bleeder_ohm}",
        "VSENSE n2 n3 0",
        "CP1 n1 0 100p",
        "CP2 n3 0 100p",
        DIODE_MODEL,
        f".model DZ D(IS={IS} N=1 RS={RS} CJO=20p BV={sc.vz_v} IBV={IBV})",
    ]
    if sc.topology == "bridge":
        lines += [
            "D1 n3 pb DR",
            "D2 nm n3 DR",
            "D3 0 pb DR",
            "D4 nm 0 DR",
            "VB pb p 0",
            f"CR p nm {sc.reservoir_f} IC={0 if switch_on else v0}",
            "VZS p pz 0",
            "DZ1 nm pz DZ",
            "CP3 p 0 100p",
            "CP4 nm 0 100p",
            "RREF nm 0 100Meg",
            *_load_lines(sc, "p", "nm"),
        ]
        vecs = "v(line) i(vsense) i(vb) i(vzs) v(p)-v(nm)"
        ic = "" if switch_on else f".ic v(p)={v0 / 2} v(nm)={-v0 / 2}"
    else:
        lines += [
            "VZS n3 az 0",
            "DZ1 0 az DZ",
            "D1 n3 pb DR",
            "VB pb p 0",
            f"CR p 0 {sc.reservoir_f} IC={0 if switch_on else v0}",
            *_load_lines(sc, "p", "0"),
        ]
        vecs = "v(line) i(vsense) i(vb) i(vzs) v(n3) v(p)"
        ic = "" if switch_on else f".ic v(p)={v0}"
    lines += [
        ic,
        f".tran {tmax} {tstop} 0 {tmax} uic",
        ".options reltol=1e-4 abstol=1e-10 vntol=1e-7",
        ".control",
        "set wr_singlescale",
        "set wr_vecnames",
        "run",
        f"wrdata {out} {vecs}",
        ".endc",
        ".end",
    ]
    return "\n".join(lines) + "\n"


def run(text: str, out: str, timeout: float = 120.0) -> np.ndarray:
    """Run ``ngspice -b`` on the netlist text; return the data columns (time first)."""
    with tempfile.TemporaryDirectory() as d:
        cir = os.path.join(d, "dropper.cir")
        with open(cir, "w") as fh:
            fh.write(text.replace(out, os.path.join(d, "out.txt")))
        proc = subprocess.run(
            ["ngspice", "-b", cir], capture_output=True, text=True, timeout=timeout, cwd=d
        )
        path = os.path.join(d, "out.txt")
        if not os.path.exists(path):
            raise RuntimeError(f"ngspice failed: {proc.stdout[-2000:]} {proc.stderr[-2000:]}")
        data = np.loadtxt(path, skiprows=1)
    return data


def _trapz(y: np.ndarray, t: np.ndarray) -> float:
    return float(np.sum(0.5 * (y[1:] + y[:-1]) * np.diff(t)))


def steady_metrics(sc: Scenario, cycles: int = 20, avg_cycles: int = 5) -> dict[str, float]:
    """Run ``cycles`` mains cycles from a pre-charged reservoir; average the last ``avg_cycles``.

    Returns dc_current_a (bridge: into the bus; half-wave: diode + Zener reverse current),
    zener_power_w, line_current_rms_a, output_voltage_v.
    """
    period = 1.0 / sc.freq_hz
    v0 = sc.vz_v if sc.topology == "bridge" else sc.vz_v - 0.7
    if sc.load_r is not None:
        v0 = min(v0, 0.5 * v0 + 0.5 * sc.load_r * 1e-3)
    text = netlist(sc, "OUT", cycles * period, period / 4000, False, v0)
    d = run(text, "OUT")
    t = d[:, 0]
    t_a = (cycles - avg_cycles) * period
    m = t >= t_a - 1e-12
    t, d = t[m], d[m]
    span = t[-1] - t[0]
    i_line = d[:, 2]
    if sc.topology == "bridge":
        i_dc = d[:, 3]
        iz = d[:, 4]
        vz = d[:, 5]
        vo = vz
    else:
        iz = d[:, 4]
        i_dc = d[:, 3] + np.maximum(iz, 0.0)
        vz = d[:, 5]
        vo = d[:, 6]
    return {
        "dc_current_a": _trapz(i_dc, t) / span,
        "zener_power_w": _trapz(iz * vz, t) / span,
        "line_current_rms_a": math.sqrt(_trapz(i_line * i_line, t) / span),
        "output_voltage_v": _trapz(vo, t) / span,
    }


def switch_on_metrics(sc: Scenario, window_s: float) -> dict[str, float]:
    """Switch on at the crest with all capacitors empty; peak line current and the energy in the
    series resistor over ``window_s``."""
    text = netlist(sc, "OUT", window_s, window_s / 4000, True, 0.0)
    d = run(text, "OUT")
    t = d[:, 0]
    i = d[:, 2]
    return {
        "peak_current_a": float(np.max(np.abs(i))),
        "series_r_energy_j": sc.r_ohm * _trapz(i * i, t),
    }


# --- surge (IEC 61000-4-5 combination wave through the whole circuit) ------------------------


@dataclass
class SurgeScenario:
    """One surge comparison case (SI): the circuit, the surge level [V], the mains phase [deg]
    at which it starts and its polarity (+1/-1). ``zener_rs`` is the Zener model's RS."""

    name: str
    topology: str
    cap_f: float
    r_ohm: float
    vz_v: float
    reservoir_f: float
    esr_ohm: float
    level_v: float
    phase_deg: float
    polarity: int
    mains_v: float = 230.0
    freq_hz: float = 50.0
    bleeder_ohm: float = 1e6
    zener_rs: float = RS


def _surge_circuit_lines(
    sc: SurgeScenario, vcx: float, vres: float, u0: float | None = None
) -> tuple[list[str], str]:
    """The dropper from node ``line`` on (X capacitor and reservoir with their initial
    voltages); returns (lines, ngspice vectors to write). With the mains voltage ``u0`` at the
    start, every node gets a consistent initial voltage (otherwise the 100 pF node capacitors
    start at 0 V and their charging spike would be read as the surge's peak current)."""
    lines = [
        f"R1 line n1 {sc.r_ohm}",
        f"C1 n1 n2 {sc.cap_f} IC={vcx}",
        f"RB n1 n2 {sc.bleeder_ohm}",
        "VSENSE n2 n3 0",
        "CP1 n1 0 100p",
        "CP2 n3 0 100p",
        DIODE_MODEL,
        f".model DZ D(IS={IS} N=1 RS={sc.zener_rs} CJO=20p BV={sc.vz_v} IBV={IBV})",
    ]
    esr = max(sc.esr_ohm, 1e-6)
    if sc.topology == "bridge":
        lines += [
            "D1 n3 pb DR",
            "D2 nm n3 DR",
            "D3 0 pb DR",
            "D4 nm 0 DR",
            "VB pb p 0",
            f"RESR p pr {esr}",
            f"CR pr nm {sc.reservoir_f} IC={vres}",
            "VZS p pz 0",
            "DZ1 nm pz DZ",
            "CP3 p 0 100p",
            "CP4 nm 0 100p",
            "RREF nm 0 100Meg",
        ]
        p, nm = vres / 2, -vres / 2
        if u0 is not None:
            # the bridge state the start voltages imply; the bridge's diodes get at most 0.75 V
            n3 = u0 - vcx
            if n3 > p + 0.7:
                nm, p = -0.7, vres - 0.7
                n3 = min(n3, p + 0.75)
            elif n3 < nm - 0.7:
                p, nm = -0.7, -0.7 - vres
                n3 = max(n3, nm - 0.75)
            lines.append(f".ic v(line)={n3 + vcx} v(n1)={n3 + vcx} v(n2)={n3} v(n3)={n3}")
        lines.append(f".ic v(p)={p} v(pb)={p} v(pr)={p} v(nm)={nm}")
        vecs = "i(vsense) v(n1)-v(n2) i(vzs) v(p)-v(nm) v(pr)-v(nm)"
    else:
        lines += [
            "VZS n3 az 0",
            "DZ1 0 az DZ",
            "D1 n3 pb DR",
            "VB pb p 0",
            f"RESR p pr {esr}",
            f"CR pr 0 {sc.reservoir_f} IC={vres}",
            f".ic v(p)={vres} v(pr)={vres}",
        ]
        if u0 is not None:
            # node A is held by the Zener (forward or breakdown) or the diode into the bus
            n3 = min(max(u0 - vcx, -0.75), vres + 0.75, sc.vz_v + 0.2)
            lines.append(
                f".ic v(line)={n3 + vcx} v(n1)={n3 + vcx} v(n2)={n3} v(n3)={n3} v(az)={n3} "
                f"v(pb)={vres}"
            )
        vecs = "i(vsense) v(n1)-v(n2) i(vzs) v(n3) v(p) v(pr) i(vb)"
    return lines, vecs


def _control(tstop: float, tmax: float, vecs: str) -> list[str]:
    return [
        f".tran {tmax} {tstop} 0 {tmax} uic",
        ".options reltol=1e-4 abstol=1e-10 vntol=1e-7",
        ".control",
        "set wr_singlescale",
        "set wr_vecnames",
        "run",
        f"wrdata OUT {vecs}",
        ".endc",
        ".end",
    ]


def surge_pre_state(sc: SurgeScenario, cycles: int = 4) -> tuple[float, float]:
    """ngspice's own X-capacitor and reservoir voltages at the surge phase: ``cycles`` mains
    cycles from a reservoir pre-charged near Vz (no load), ending at ``phase_deg``."""
    vpk = math.sqrt(2) * sc.mains_v
    v0 = sc.vz_v if sc.topology == "bridge" else sc.vz_v - 0.7
    body, vecs = _surge_circuit_lines(sc, 0.0, v0)
    tstop = (cycles + sc.phase_deg / 360.0) / sc.freq_hz
    text = "\n".join(
        [
            f"* dropper surge pre-state {sc.name}",
            f"VS line 0 SIN(0 {vpk} {sc.freq_hz} 0 0 0)",
            *body,
            *_control(tstop, 2e-6, vecs),
        ]
    )
    d = run(text + "\n", "OUT")
    vcx = float(d[-1, 2])
    vres = float(d[-1, 5]) if sc.topology == "bridge" else float(d[-1, 6])
    return vcx, vres


def varistor_lines(varistor) -> tuple[list[str], str]:
    """A varistor from ``line`` to neutral as a behavioural current source of the power law
    ``I = 1 mA sgn(V) (|V| / V_1mA)^alpha`` (ngspice B source), sensed by ``VMS``; returns
    (lines, vectors: its current and the line voltage)."""
    law = f"I = {1e-3} * sgn(v(lm)) * pow(abs(v(lm)) / {varistor.v_1ma_v}, {varistor.alpha})"
    return ["VMS line lm 0", f"BMOV lm 0 {law}"], "i(vms) v(line)"


def surge_netlist(
    sc: SurgeScenario, gen, u0: float, vcx: float, vres: float, window: float, varistor=None
):
    """The surge netlist: the generator (``gen``: element values, charged to ``u0`` with the
    scenario's polarity) between the mains source and the dropper, from the pre-state; with
    ``varistor`` (:class:`selector.engine.varistor.Varistor`) one across the line."""
    vpk = math.sqrt(2) * sc.mains_v
    u_start = vpk * math.sin(math.radians(sc.phase_deg))
    body, vecs = _surge_circuit_lines(sc, vcx, vres, u_start)
    lines = [
        f"* dropper surge {sc.name}",
        f"VS a 0 SIN(0 {vpk} {sc.freq_hz} 0 0 {sc.phase_deg})",
        f"CC g1 a {gen.cc_f} IC={sc.polarity * u0}",
        f"RS1 g1 a {gen.rs1_ohm}",
        f"LR g1 g2 {gen.lr_h} IC=0",
        f"RM g2 line {gen.rm_ohm}",
        f"RS2 line a {gen.rs2_ohm}",
        f".ic v(a)={u_start} v(g1)={u_start + sc.polarity * u0} v(g2)={u_start}",
        *body,
    ]
    if varistor is not None:
        mov, mov_vecs = varistor_lines(varistor)
        lines += mov
        vecs += " " + mov_vecs
    lines += _control(window, 20e-9, vecs)
    return "\n".join(lines) + "\n"


def surge_metrics(
    sc: SurgeScenario, gen, u0: float, window: float, pre=None, varistor=None
) -> dict:
    """Run the surge in ngspice and return the stresses the engine reports (same names); with
    ``varistor`` also its peak current, energy and the line's peak voltage."""
    vcx, vres = pre if pre is not None else surge_pre_state(sc)
    d = run(surge_netlist(sc, gen, u0, vcx, vres, window, varistor), "OUT")
    extra = {}
    if varistor is not None:
        t, i_m, v_line = d[:, 0], d[:, -2], d[:, -1]
        extra = {
            "varistor_peak_current_a": float(np.max(np.abs(i_m))),
            "varistor_energy_j": _trapz(v_line * i_m, t),
            "line_peak_v": float(np.max(np.abs(v_line))),
        }
    t = d[:, 0]
    i = d[:, 1]
    vx = d[:, 2]
    iz = d[:, 3]
    if sc.topology == "bridge":
        vz = d[:, 4]
        bus = d[:, 4]
        pos, neg = np.maximum(i, 0.0), np.maximum(-i, 0.0)
        rect_pk = max(float(np.max(pos)), float(np.max(neg)))
        rect_i2t = max(_trapz(pos * pos, t), _trapz(neg * neg, t))
    else:
        vz = d[:, 4]
        bus = d[:, 5]
        idd = np.maximum(d[:, 7], 0.0)
        fwd = np.maximum(-iz, 0.0)
        rect_pk = max(float(np.max(idd)), float(np.max(fwd)))
        rect_i2t = max(_trapz(idd * idd, t), _trapz(fwd * fwd, t))
    i_cx = i - vx / sc.bleeder_ohm
    i2t = _trapz(i * i, t)
    return {
        "pre_state": (vcx, vres),
        "peak_current_a": float(np.max(np.abs(i))),
        "series_r_energy_j": sc.r_ohm * i2t,
        "x_cap_peak_total_v": float(np.max(np.abs(vx))),
        "x_cap_voltage_step_v": float(np.max(np.abs(vx - vx[0]))),
        "x_cap_dvdt_v_per_s": float(np.max(np.abs(i_cx))) / sc.cap_f,
        "zener_peak_current_a": float(np.max(np.maximum(iz, 0.0))),
        "zener_pulse_energy_j": _trapz(np.abs(iz * vz), t),
        "zener_peak_power_w": float(np.max(np.abs(iz * vz))),
        "rectifier_peak_current_a": rect_pk,
        "rectifier_i2t_a2s": rect_i2t,
        "fuse_i2t_a2s": i2t,
        "bus_peak_v": float(np.max(bus)),
        **extra,
    }
