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

VT = 0.025852  # thermal voltage at 27 C [V] (kT/q)
IS = 1e-12
RS = 0.1
IBV = 10e-3
DIODE_MODEL = f".model DR D(IS={IS} N=1 RS={RS} CJO=20p)"


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
