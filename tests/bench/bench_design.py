"""Benchmark: `dropper design` (the solver) on the built-in catalogue and on synthetic catalogues
10x and 100x larger; and the naive cross product in Python against the solver on a small one.

Synthetic catalogues (demo data, invented): every built-in part gets ``k - 1`` variants with
values stepped between its neighbours (value x 10^(j / (24 k))) and prices and areas raised by
3 % per step, so the families stay the same and the catalogue holds more values and variants.

Each line: catalogue size, wall time of ``design()`` (imports and the catalogue read done
before; the median of ``--repeat`` runs), peak memory that tracemalloc saw in one more run,
the candidates verified with the engine, and the result. Goals (issue 4, 2 cores): under 1 s on
the built-in catalogue, under 10 s at 100x.

    python tests/bench/bench_design.py            # built-in, 10x, 100x, naive ratio
    python tests/bench/bench_design.py --quick    # built-in and 10x only
"""

from __future__ import annotations

import argparse
import statistics
import sys
import tempfile
import time
import tracemalloc
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

REQUIREMENTS = [
    # (label, load A, vout V, frequencies, topology) -- demo figures, invented
    ("12 mA 5.1 V 50/60 Hz bridge", 0.012, 5.1, (50.0, 60.0), "bridge"),
    ("5 mA 12 V 50 Hz bridge", 0.005, 12.0, (50.0,), "bridge"),
    ("4 mA 5.1 V 60 Hz half-wave", 0.004, 5.1, (60.0,), "half-wave"),
]


def synthetic(frame: pd.DataFrame, k: int) -> pd.DataFrame:
    """``k`` times the catalogue: each part plus k - 1 stepped variants (see module doc)."""
    if k <= 1:
        return frame
    parts = [frame]
    for j in range(1, k):
        v = frame.copy()
        step = 10 ** (j / (24.0 * k))
        scale_value = ~v["kind"].isin(["zener", "fuse", "diode", "bridge"])
        v.loc[scale_value, "value"] = v.loc[scale_value, "value"] * step
        v["unit_price"] = v["unit_price"] * (1 + 0.03 * j)
        v["area_mm2"] = v["area_mm2"] * (1 + 0.03 * j)
        v["code"] = v["code"] + f"-s{j}"
        parts.append(v)
    out = pd.concat(parts, ignore_index=True)
    out["id"] = np.arange(1, len(out) + 1)
    return out


def run_one(frame, req, repeat: int):
    from selector import design as D
    from selector.errors import InfeasibleError
    from selector.policy import Policy

    times = []
    result = None
    for _ in range(repeat):
        t0 = time.perf_counter()
        try:
            result = D.design(frame, req, Policy())
        except InfeasibleError as exc:
            result = exc
        times.append(time.perf_counter() - t0)
    tracemalloc.start()
    try:
        D.design(frame, req, Policy())
    except InfeasibleError:
        pass
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return statistics.median(times), peak, result


def naive_ratio() -> None:
    """The naive cross product (every combination analysed and evaluated in a Python loop) against
    the solver, on the small test catalogue, both with the closed-form stand-in evaluator."""
    from test_design_support import brute_force, small_catalogue, standin_analyse

    from selector import design as D
    from selector.engine import Conditions, Mains
    from selector.policy import Policy

    cat = small_catalogue()
    req = D.Requirement(
        load_a=0.008,
        vout_v=5.1,
        mains=Mains(230.0, 0.1, (50.0, 60.0)),
        conditions=Conditions(40.0, "iec60335", 1000.0),
    )
    t0 = time.perf_counter()
    best = brute_force(cat, req, Policy())
    t_naive = time.perf_counter() - t0
    t0 = time.perf_counter()
    got = D.design(cat, req, Policy(), analyse=standin_analyse)
    t_solver = time.perf_counter() - t0
    from test_design_support import design_key

    same = best is not None and design_key(got[0]) == best[0]
    print(
        f"naive cross product on the small catalogue ({len(cat)} parts): {t_naive:.2f} s; "
        f"solver {t_solver:.3f} s; ratio {t_naive / t_solver:.0f}x; same optimum: {same}"
    )


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="built-in and 10x only")
    ap.add_argument("--repeat", type=int, default=3)
    args = ap.parse_args()

    from selector import design as D
    from selector.catalogue import open_catalogue, parts_frame
    from selector.engine import Conditions, Mains

    with tempfile.TemporaryDirectory() as d:
        engine = open_catalogue(f"sqlite:///{Path(d) / 'bench.sqlite'}")
        base = parts_frame(engine)
        engine.dispose()
    sizes = (1, 10) if args.quick else (1, 10, 100)
    for k in sizes:
        frame = synthetic(base, k)
        label = "built-in" if k == 1 else f"{k}x synthetic"
        for name, load, vout, freqs, top in REQUIREMENTS:
            req = D.Requirement(
                load_a=load,
                vout_v=vout,
                mains=Mains(230.0, 0.10, freqs),
                conditions=Conditions(40.0, "iec60335", 1000.0),
                topology=top,
            )
            t, peak, res = run_one(frame, req, args.repeat if k < 100 else 1)
            if isinstance(res, Exception):
                what = f"infeasible: {str(res)[:60]}"
            else:
                what = f"price {res[0].total_price:.4f}, {res[0].part_count} parts"
            print(
                f"{label:>14} ({len(frame):>6} parts) | {name:<28} | {t:7.3f} s | "
                f"peak {peak / 1e6:7.1f} MB | {what}"
            )
    naive_ratio()


if __name__ == "__main__":
    main()
