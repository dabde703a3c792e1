"""Benchmark: the vectorised production yield against one exact solve per unit.

Run: ``python tests/bench/bench_yield.py [SAMPLES]`` (default 10,000). Prints

* the time of ``production_yield`` for SAMPLES units of the issue's example (330 nF, 470 ohm,
  1 Mohm, 12 V, 220 uF, 15 mA, 230 V +/-10 %, 50/60 Hz), calibration solves included;
* the time of the per-unit alternatives, measured on a sub-sample and extrapolated to SAMPLES
  units: one exact steady-state solve per unit (``available_current``, the current criterion
  alone) and one whole worst-case analysis per unit (``analyse``, what a loop over
  ``dropper check`` would cost);
* the ratios, and the largest deviation of the calibrated current from the exact solve over
  the sub-sample (the accuracy the speed is bought with).
"""

from __future__ import annotations

import dataclasses
import sys
import time

import numpy as np

from selector.engine import Circuit, Conditions, Load, Mains, Tolerances, analyse
from selector.production_yield import available_current, production_yield


def main(samples: int = 10_000, exact_units: int = 500, analyse_units: int = 40) -> None:
    circuit = Circuit(
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=470.0,
        bleeder_resistance_ohm=1e6,
        zener_voltage_v=12.0,
        reservoir_f=220e-6,
        load=Load(current_a=15e-3),
    )
    mains = Mains(230.0, 0.10, (50.0, 60.0))
    tol = Tolerances()
    production_yield(circuit, mains, tol, samples=100, seed=0)  # warm-up (imports)
    t0 = time.perf_counter()
    res = production_yield(circuit, mains, tol, Conditions(), samples=samples, seed=1)
    t_vec = time.perf_counter() - t0

    v = res.values
    units = np.random.default_rng(2).choice(samples, min(exact_units, samples), replace=False)
    worst = 0.0
    t0 = time.perf_counter()
    for i in units:
        unit = dataclasses.replace(
            circuit,
            x_capacitors_f=(v["x_capacitance_f"][i] * (1 - tol.cap_loss),),
            series_resistance_ohm=v["series_resistance_ohm"][i],
            bleeder_resistance_ohm=v["bleeder_resistance_ohm"][i],
            zener_voltage_v=v["zener_voltage_v"][i],
            reservoir_f=v["reservoir_f"][i],
        )
        exact = available_current(unit, res.criterion_v[i], res.criterion_hz[i])
        worst = max(worst, abs(res.current_a[i] / exact - 1.0))
    t_exact = (time.perf_counter() - t0) / len(units) * samples

    zero = Tolerances(cap_tol=0.0, cap_loss=0.0, r_tol=0.0, zener_tol=0.0)
    t0 = time.perf_counter()
    for i in units[:analyse_units]:
        unit = dataclasses.replace(
            circuit,
            x_capacitors_f=(v["x_capacitance_f"][i],),
            series_resistance_ohm=v["series_resistance_ohm"][i],
            zener_voltage_v=v["zener_voltage_v"][i],
        )
        analyse(unit, mains, zero, Conditions())
    t_analyse = (time.perf_counter() - t0) / min(analyse_units, len(units)) * samples

    print(f"units: {samples}; yield {res.yield_fraction * 100:.2f} % "
          f"({res.ci_low * 100:.2f} .. {res.ci_high * 100:.2f} %)")  # fmt: skip
    print(f"vectorised production_yield:          {t_vec:8.3f} s "
          f"({res.calibration.points} exact solves for the calibration)")  # fmt: skip
    print(f"one exact solve per unit (from {len(units)}):   {t_exact:8.3f} s   "
          f"ratio {t_exact / t_vec:6.0f}x")  # fmt: skip
    print(f"one analyse() per unit (from {min(analyse_units, len(units))}):      "
          f"{t_analyse:8.3f} s   ratio {t_analyse / t_vec:6.0f}x")  # fmt: skip
    print(f"largest deviation calibrated vs exact over {len(units)} units: {worst * 100:.4f} %; "
          f"at the fit points {res.calibration.max_error * 100:.4f} %; uncalibrated closed form "
          f"{res.calibration.closed_form_max_error * 100:.3f} %")  # fmt: skip


if __name__ == "__main__":
    main(int(sys.argv[1]) if len(sys.argv) > 1 else 10_000)
