"""The engine's per-process caches (selector.engine.reuse) return what the solvers return.

Regression checks of the engine against itself (no outside source): the reference is the
uncached path, one solve or one simulation per circuit, as before the caches existed.
"""

from __future__ import annotations

import numpy as np
import pytest

from selector.engine import Circuit, Mains, Tolerances, corners, reuse
from selector.engine import analysis as an
from selector.engine import surge_circuit as scm
from selector.engine.steady_state import solve_steady_state


def random_circuits(n: int, seed: int) -> list[Circuit]:
    """Random but plausible droppers (invented values, E12-ish)."""
    rng = np.random.default_rng(seed)
    out = []
    for _ in range(n):
        out.append(
            Circuit(
                topology=str(rng.choice(["bridge", "half-wave"])),
                x_capacitors_f=(float(rng.choice([100e-9, 220e-9, 330e-9, 470e-9, 680e-9])),),
                series_resistance_ohm=float(rng.choice([22.0, 47.0, 100.0, 150.0, 330.0])),
                bleeder_resistance_ohm=float(rng.choice([330e3, 1e6, 2.2e6])),
                zener_voltage_v=float(rng.choice([3.3, 5.1, 12.0, 24.0])),
                zener_impedance_ohm=float(rng.choice([0.0, 0.5, 5.0])),
                reservoir_f=float(rng.choice([47e-6, 220e-6, 1000e-6])),
                reservoir_esr_ohm=float(rng.choice([0.1, 0.5, 2.0])),
            )
        )
    return out


MAINS = Mains(230.0, 0.10, (50.0, 60.0))


def reference_worst_surge(circuit: Circuit, grid, level_v: float):
    """The pre-cache algorithm: every case of ``circuit`` simulated in one batch of its own,
    each stress the largest run (first one on ties)."""
    cases = [scm.surge_case(circuit, k) for k in grid]
    run = scm.simulate(cases, level_v)
    names = scm.SURGE_STRESSES
    values = {name: float(np.max(getattr(run, name))) for name in names}
    where = {}
    for name in names:
        r = int(np.argmax(getattr(run, name)))
        where[name] = (grid[int(run.case[r])], float(run.phase_deg[r]), int(run.polarity[r]))
    return values, where


def test_steady_state_cache_is_the_solver():
    reuse.clear()
    for c in random_circuits(6, seed=3):
        for kw in ({}, {"load_a": 0.0, "load_g": 0.0}):
            ref = solve_steady_state(c, 253.0, 60.0, **kw)
            got = reuse.steady_state(c, 253.0, 60.0, (), **kw)
            assert got == ref  # every field, bit for bit (dataclass equality)
            assert reuse.steady_state(c, 253.0, 60.0, (), **kw) is got  # the second is a hit
    assert reuse.stats["steady_hits"] == 12 and reuse.stats["steady_misses"] == 12


@pytest.mark.parametrize("level_v", [1000.0, 2000.0])
def test_cached_surge_matches_one_simulation_per_circuit(level_v):
    """40 random circuits: the quick bounds of all of them (batched, filling the cache), then
    the full corner grid of each through the cache, against one simulation per circuit."""
    reuse.clear()
    circuits = random_circuits(40, seed=int(level_v))
    tol = Tolerances()
    an.surge_lower_bounds_many([(c, MAINS, tol) for c in circuits], level_v)
    assert reuse.stats["surge_misses"] > 0
    misses_before = reuse.stats["surge_misses"]
    for c in circuits:
        grid = list(dict.fromkeys(corners(c, MAINS, tol)))
        values, where = scm.worst_surge(c, grid, level_v)
        ref_values, ref_where = reference_worst_surge(c, grid, level_v)
        for name, ref in ref_values.items():
            assert values[name] == pytest.approx(ref, rel=1e-9, abs=1e-300), name
            k, phase, polarity = ref_where[name]
            w = where[name]
            if values[name] != ref:  # a near-tie may pick another run of (almost) equal value
                continue
            assert (w["mains_v"], w["freq_hz"], w["cap_f"], w["r_ohm"], w["vz_v"]) == (
                k.mains_v,
                k.freq_hz,
                k.cap_f,
                k.r_ohm,
                k.vz_v,
            )
            assert (w["phase_deg"], w["polarity"]) == (phase, polarity)
    # the bounds' corners (high line, lowest R, highest Vz) were not simulated again
    hits = reuse.stats["surge_hits"]
    assert hits >= 40 * 2  # at least two bound corners per circuit (two frequencies)
    assert (
        reuse.stats["surge_misses"] - misses_before
        == sum(len(set(corners(c, MAINS, tol))) for c in circuits) - hits
    )


def test_analyse_reuses_the_quick_rejections():
    """min_dc_current then analyse of one circuit: the weakest corner is solved once."""
    reuse.clear()
    c = random_circuits(1, seed=11)[0]
    i_min = an.min_dc_current(c, MAINS, Tolerances())
    misses = reuse.stats["steady_misses"]
    full = an.analyse(c, MAINS, Tolerances())
    assert full.worst_case.min_dc_current_a == i_min
    assert reuse.stats["steady_hits"] >= 1
    assert reuse.stats["steady_misses"] > misses  # the other corners are new
