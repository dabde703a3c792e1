"""Profile of `dropper design` on a few representative requests: where the time goes.

Runs ``design()`` under cProfile on each request (the built-in catalogue, read once before) and
prints the cumulative seconds of the solver's stages and of the engine calls inside the
verification, so that a speed change can be aimed at the largest share. Profiling slows Python
code more than numpy code: read the figures as shares, not as times.

    python tests/bench/profile_design.py            # the four requests below
    python tests/bench/profile_design.py --dump /tmp/p   # also write one .pstats file each
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

REQUESTS = [
    # (label, load A, vout V, mains V, frequencies, topology) -- demo figures, invented
    ("5 mA 12 V 230 V 50/60 Hz bridge", 0.005, 12.0, 230.0, (50.0, 60.0), "bridge"),
    ("12 mA 5.1 V 230 V 50/60 Hz bridge", 0.012, 5.1, 230.0, (50.0, 60.0), "bridge"),
    ("5 mA 12 V 230 V 50 Hz bridge", 0.005, 12.0, 230.0, (50.0,), "bridge"),
    ("4 mA 5.1 V 120 V 60 Hz half-wave", 0.004, 5.1, 120.0, (60.0,), "half-wave"),
]

#: (label, module file suffix, function name): cumulative time of each, nested as indented
STAGES = [
    ("prepare (candidate tables)", "design/setup.py", "prepare"),
    ("screen: X chunks", "design/screen.py", "screen_x_chunk"),
    ("screen: series pairs", "design/pairs.py", "add_series_pairs"),
    ("screen: X pairs", "design/pairs.py", "add_x_pairs"),
    ("verification (all)", "design/search.py", "_verify_pending"),
    ("  min_dc_current (quick rejection)", "engine/analysis.py", "min_dc_current"),
    ("  surge bounds, batched prefetch", "design/verify.py", "prefetch_surge_bounds"),
    ("  analyse (full corner analysis)", "engine/analysis.py", "analyse"),
    ("    its surge through the circuit", "engine/analysis.py", "surge_through_circuit"),
    ("  rules: evaluate", "rules/evaluation.py", "evaluate"),
    ("  completion re-choice", "design/verify.py", "cheapest_passing"),
    ("surge simulation (everywhere)", "engine/surge_simulation.py", "simulate"),
    ("steady-state solves (everywhere)", "engine/steady_state.py", "solve_steady_state"),
]


def stage_times(stats: pstats.Stats) -> dict[str, tuple[int, float]]:
    """(calls, cumulative s) of each STAGES entry."""
    out = {}
    raw = stats.stats  # type: ignore[attr-defined]
    for label, suffix, name in STAGES:
        calls, cum = 0, 0.0
        for (file, _, func), (_, nc, _, ct, _) in raw.items():
            if func == name and file.replace("\\", "/").endswith(suffix):
                calls += nc
                cum += ct
        out[label] = (calls, cum)
    return out


def clear_engine_caches() -> None:
    """Empty the engine's per-process caches (selector.engine.reuse), where the checkout has
    them, so that every request starts as a fresh CLI call does."""
    try:
        from selector.engine import reuse
    except ImportError:
        return
    reuse.clear()


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--dump", help="folder for one .pstats file per request")
    a = ap.parse_args()
    t0 = time.perf_counter()
    from selector import design as D
    from selector.catalogue import open_catalogue, parts_frame, resolve_url
    from selector.engine import Conditions, Mains
    from selector.policy import Policy

    frame = parts_frame(open_catalogue(resolve_url(None)))
    print(
        f"start-up (imports and catalogue read, in this process): {time.perf_counter() - t0:.2f} s"
    )
    for n, (label, load, vout, volts, freqs, top) in enumerate(REQUESTS):
        req = D.Requirement(
            load_a=load,
            vout_v=vout,
            mains=Mains(volts, 0.10, freqs),
            conditions=Conditions(40.0, "iec60335", 1000.0),
            topology=top,
        )
        clear_engine_caches()
        t = time.perf_counter()
        D.design(frame, req, Policy())
        plain = time.perf_counter() - t
        clear_engine_caches()  # as a fresh CLI call: nothing kept from the run before
        prof = cProfile.Profile()
        prof.enable()
        res = D.design(frame, req, Policy())
        prof.disable()
        stats = pstats.Stats(prof)
        if a.dump:
            Path(a.dump).mkdir(parents=True, exist_ok=True)
            stats.dump_stats(str(Path(a.dump) / f"design_{n}.pstats"))
        total = stats.total_tt  # type: ignore[attr-defined]
        search = res[0].search
        print(
            f"\n{label}: {plain:.2f} s unprofiled, {total:.2f} s profiled; "
            f"{search['candidates_verified']} candidates verified, price {res[0].total_price:.4f}"
        )
        for stage, (calls, cum) in stage_times(stats).items():
            print(f"  {stage:<38} {calls:>6} calls {cum:7.2f} s {cum / total * 100:5.1f} %")


if __name__ == "__main__":
    main()
