"""Benchmark: vectorised snapping vs a per-value Python loop, and CLI start-up time.

Run: python tests/bench/bench_snap.py   (prints figures and ratios; not a pytest test)
"""

from __future__ import annotations

import bisect
import math
import subprocess
import sys
import time

import numpy as np

from selector import eseries


def _loop_nearest(values, series="E12"):
    """The naive way: one value at a time in pure Python (bisect on a decade table)."""
    table = [v / 10 for v in eseries.SERIES[series]] + [10.0]
    out = []
    for x in values:
        d = math.floor(math.log10(x))
        m = x / 10**d
        i = bisect.bisect_left(table, m)
        up = table[min(i, len(table) - 1)]
        down = table[max(i - 1, 0)] if table[min(i, len(table) - 1)] != m else m
        out.append((up if math.log(up / m) <= math.log(m / down) else down) * 10**d)
    return out


def main() -> None:
    n = 1_000_000
    values = 10 ** np.random.default_rng(0).uniform(-12, 9, n)
    t0 = time.perf_counter()
    vec = eseries.nearest(values, "E12")
    t_vec = time.perf_counter() - t0
    as_list = values.tolist()
    t0 = time.perf_counter()
    loop = _loop_nearest(as_list)
    t_loop = time.perf_counter() - t0
    agree = np.mean(np.isclose(vec, loop, rtol=1e-9))
    print(
        f"snap {n:,} values (E12 nearest): vectorised {t_vec:.3f} s, Python loop {t_loop:.3f} s,"
        f" ratio {t_loop / t_vec:.1f}x, agreement {agree * 100:.4f} %"
    )

    runs = []
    for _ in range(5):
        t0 = time.perf_counter()
        subprocess.run(
            [sys.executable, "-m", "selector.cli", "--help"], check=True, capture_output=True
        )
        runs.append(time.perf_counter() - t0)
    t0 = time.perf_counter()
    subprocess.run([sys.executable, "-c", "pass"], check=True)
    bare = time.perf_counter() - t0
    best = min(runs)
    print(
        f"dropper --help start-up: best of 5 {best * 1000:.0f} ms; bare python {bare * 1000:.0f}"
        f" ms; ratio {best / bare:.1f}x"
    )
    heavy = subprocess.run(
        [
            sys.executable,
            "-c",
            "import sys, selector.cli; print(','.join(m for m in ('pandas', 'matplotlib', "
            "'sqlalchemy', 'scipy') if m in sys.modules))",
        ],
        capture_output=True,
        text=True,
        check=True,
    ).stdout.strip()
    print(f"heavy modules imported by the CLI at start-up: {heavy or 'none'}")


if __name__ == "__main__":
    main()
