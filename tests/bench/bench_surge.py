"""Benchmark: the surge analysis of all corners and phases against one ngspice surge run.

Run: ``python tests/bench/bench_surge.py`` (needs ngspice for the reference). Prints the time of
:func:`selector.engine.surge_circuit.worst_surge` (the generator through the whole circuit at
every corner x the four phases x both polarities: 2 mains x 2 capacitances x 2 resistances x
2 Zener voltages x 1 or 2 frequencies), the time of one ngspice run of one corner and phase
(the 300 us pulse with a 20 ns maximum step, and its pre-charge run of four mains cycles), and
the ratios (goal: >= 100 against the pulse run). Times are CPU seconds (the engine's process
time, ngspice's as a child process), so a loaded machine does not skew the ratio; wall-clock
figures are printed too.
"""

from __future__ import annotations

import resource
import statistics
import sys
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

import ngspice_util as nu  # noqa: E402

from selector.engine import (  # noqa: E402
    Circuit,
    Mains,
    Tolerances,
    corners,
    reuse,  # noqa: E402
)
from selector.engine import surge_circuit as scm  # noqa: E402


def _children_cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def time_engine(freqs: tuple[float, ...], repeat: int = 7) -> tuple[float, float, int]:
    """(best CPU s, median wall s, runs) of worst_surge over the corner grid."""
    circuit = Circuit(
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=47.0,
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=5.1,
        zener_impedance_ohm=0.5,
        reservoir_f=470e-6,
        reservoir_esr_ohm=0.3,
    )
    grid = corners(circuit, Mains(230.0, 0.10, freqs), Tolerances())
    scm.worst_surge(circuit, grid, 2000.0)  # warm-up
    cpu, wall = [], []
    for _ in range(repeat):
        reuse.clear()  # a fresh circuit each run: no per-process reuse (selector.engine.reuse)
        t = time.perf_counter()
        c = time.process_time()
        scm.worst_surge(circuit, grid, 2000.0)
        cpu.append(time.process_time() - c)
        wall.append(time.perf_counter() - t)
    runs = len(grid) * len(scm.SURGE_PHASES_DEG) * 2
    return min(cpu), statistics.median(wall), runs


def time_ngspice(repeat: int = 3) -> tuple[float, float]:
    """(best CPU s of the pulse run, best CPU s of the pre-charge run) of ngspice."""
    sc = nu.SurgeScenario("bench", "bridge", 330e-9, 47.0, 5.1, 470e-6, 0.3, 2000.0, 90.0, 1)
    u0 = sc.level_v / scm.GENERATOR.peak_per_volt()
    pre_t, pulse_t = [], []
    for _ in range(repeat):
        t = _children_cpu()
        pre = nu.surge_pre_state(sc)
        t1 = _children_cpu()
        nu.surge_metrics(sc, scm.GENERATOR, u0, scm.SURGE_WINDOW_S, pre=pre)
        pulse_t.append(_children_cpu() - t1)
        pre_t.append(t1 - t)
    return min(pulse_t), min(pre_t)


def main() -> None:
    if nu.ngspice_path() is None:
        print("ngspice not found: install the Debian package 'ngspice'")
        return
    pulse, pre = time_ngspice()
    print(
        f"ngspice, one corner and phase (CPU): pulse {pulse * 1e3:.0f} ms, "
        f"pre-charge {pre * 1e3:.0f} ms"
    )
    for freqs in ((50.0,), (50.0, 60.0)):
        best, med, runs = time_engine(freqs)
        print(
            f"engine, {runs} runs ({len(freqs)} frequency): best CPU {best * 1e3:.1f} ms, "
            f"median wall {med * 1e3:.1f} ms; ratio vs the ngspice pulse {pulse / best:.1f}x, "
            f"vs pulse + pre-charge {(pulse + pre) / best:.1f}x, per run "
            f"{pulse * runs / best:.0f}x"
        )


if __name__ == "__main__":
    main()
