"""Benchmark: the whole corner analysis of one circuit against one ngspice corner.

Run: ``python tests/bench/bench_engine.py`` (needs ngspice for the reference). Prints the time
of ``selector.engine.analyse`` (all corners, transients), the time of one ngspice run of one
corner to steady state (12 mains cycles from a pre-charged reservoir, maximum step 5 us, as in
DOMAIN.md section 7), their ratio (goal: >= 100), and the agreement with ngspice over the
scenarios of tests/test_ngspice.py (largest deviation per quantity). Also the same analysis on a
distorted mains (the EN 50160 profile, 3rd/5th/7th [M]) and its ratio to the sine's.
"""

from __future__ import annotations

import os
import resource
import statistics
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import ngspice_util as nu  # noqa: E402
from test_ngspice import SCENARIOS, engine_circuit  # noqa: E402

from selector.engine import (  # noqa: E402
    Circuit,
    Conditions,
    Load,
    Mains,
    Tolerances,
    analyse,
    reuse,  # noqa: E402
    solve_steady_state,
)
from selector.engine.transients import inrush  # noqa: E402


def time_analysis(repeat: int = 30, harmonics: tuple = ()) -> tuple[float, float, float, int]:
    circuit = Circuit(
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=470,
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=12,
        reservoir_f=220e-6,
        load=Load(current_a=0.010),
    )
    mains = Mains(230, 0.10, (50.0, 60.0), harmonics=harmonics)
    analyse(circuit, mains, Tolerances(), Conditions())  # warm-up (imports, caches)
    times, cpu = [], []
    solves = 0
    for _ in range(repeat):
        # each run analyses the circuit afresh: the per-process reuse caches
        # (selector.engine.reuse) would otherwise serve every solve of the repeat
        reuse.clear()
        t = time.perf_counter()
        c = time.process_time()
        a = analyse(circuit, mains, Tolerances(), Conditions())
        cpu.append(time.process_time() - c)
        times.append(time.perf_counter() - t)
        solves = a.exact_solves
    return min(times), statistics.median(times), statistics.median(cpu), solves


def _children_cpu() -> float:
    ru = resource.getrusage(resource.RUSAGE_CHILDREN)
    return ru.ru_utime + ru.ru_stime


def time_ngspice(repeat: int = 5) -> tuple[float, float, float]:
    sc = nu.Scenario(
        "bench", "bridge", 230, 50, 330e-9, 470, 12.0, reservoir_f=220e-6, load_a=0.010
    )
    period = 1 / sc.freq_hz
    text = nu.netlist(sc, "OUT", 12 * period, 5e-6, False, sc.vz_v)
    times, cpu = [], []
    for _ in range(repeat):
        t = time.perf_counter()
        c = _children_cpu()
        nu.run(text, "OUT")
        cpu.append(_children_cpu() - c)
        times.append(time.perf_counter() - t)
    return min(times), statistics.median(times), statistics.median(cpu)


def agreement() -> dict[str, float]:
    worst: dict[str, float] = {}

    def note(name: str, a: float, b: float, scale: float | None = None) -> None:
        d = abs(a - b) / abs(scale if scale is not None else b)
        worst[name] = max(worst.get(name, 0.0), d)

    for sc in SCENARIOS:
        ref = nu.steady_metrics(sc)
        st = solve_steady_state(engine_circuit(sc), sc.mains_v, sc.freq_hz)
        note("dc_current_a", st.dc_current_a, ref["dc_current_a"])
        note("line_current_rms_a", st.line_current_rms_a, ref["line_current_rms_a"])
        scale = max(abs(ref["zener_power_w"]), 0.2 * sc.vz_v * ref["dc_current_a"])
        note("zener_power_w", st.zener_power_w, ref["zener_power_w"], scale)
        note("output_voltage_v", st.output_voltage_v, ref["output_voltage_v"])
        c = engine_circuit(sc, switch_on=True)
        res = inrush(c, sc.mains_v, sc.freq_hz, {})
        r_d = c.diode_resistance_ohm * (2 if c.topology == "bridge" else 1)
        tau = (
            (c.series_resistance_ohm + r_d)
            * sc.cap_f
            * sc.reservoir_f
            / (sc.cap_f + sc.reservoir_f)
        )
        sw = nu.switch_on_metrics(sc, min(8 * tau, 0.25 / sc.freq_hz))
        note("switch_on_peak_a", res.peak_current_a, sw["peak_current_a"])
        note("switch_on_energy_j", res.series_r_energy_j, sw["series_r_energy_j"])
    return worst


def main() -> None:
    print(f"machine load average (1 min): {os.getloadavg()[0]:.2f} on {os.cpu_count()} CPUs")
    an_min, an_med, an_cpu, solves = time_analysis()
    print(
        f"engine: whole corner analysis (16 corners, {solves} exact solves + transients): "
        f"wall min {an_min * 1e3:.2f} ms, median {an_med * 1e3:.2f} ms; "
        f"CPU median {an_cpu * 1e3:.2f} ms"
    )
    from selector.engine.circuit import EN50160_HARMONICS

    h_min, h_med, h_cpu, h_solves = time_analysis(harmonics=EN50160_HARMONICS)
    print(
        f"engine on a distorted mains (EN 50160 profile, {h_solves} exact solves): "
        f"wall min {h_min * 1e3:.2f} ms, median {h_med * 1e3:.2f} ms; CPU median "
        f"{h_cpu * 1e3:.2f} ms ({h_cpu / an_cpu:.1f}x the sine's CPU)"
    )
    if nu.ngspice_path() is None:
        print("ngspice not installed: no reference time")
        return
    ng_min, ng_med, ng_cpu = time_ngspice()
    print(
        f"ngspice: one corner, 12 cycles, max step 5 us: wall min {ng_min * 1e3:.1f} ms, "
        f"median {ng_med * 1e3:.1f} ms; CPU median {ng_cpu * 1e3:.1f} ms"
    )
    print(
        f"ratio (ngspice one corner / engine all corners): wall min/min {ng_min / an_min:.1f}x, "
        f"wall median/median {ng_med / an_med:.1f}x, CPU {ng_cpu / an_cpu:.1f}x "
        f"(goal >= 100x)"
    )
    print(f"agreement with ngspice over {len(SCENARIOS)} scenarios (largest deviation):")
    for k, v in agreement().items():
        print(f"  {k:<22} {v * 100:6.2f} %")


if __name__ == "__main__":
    main()
