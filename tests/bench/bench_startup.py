"""Benchmark: CLI start-up time of this checkout against a baseline revision (issue 13, start-up).

For ``dropper --help``, ``dropper parts stats`` and a small ``dropper design`` (12 mA, 5.1 V,
230 V 50/60 Hz; demo figures, invented): the median wall time and CPU time (user + system,
steadier when others load the machine) of ``--repeat`` runs, each in a fresh process, baseline
and current runs interleaved (alternating which goes first) so that load on the shared machine
hits both alike. Then the design's start-up alone (imports plus the catalogue frame, no solver),
the part that the parts-frame cache shortens. Each tree gets its own data and cache folders in a
temporary directory; one warm-up run first builds its catalogue (and, for the current tree, the
cache).

The baseline is checked out with ``git worktree add --detach`` into the temporary directory and
removed again at the end; each tree runs with ``PYTHONPATH`` (and the working folder) pointing at
it. Ratios are baseline / current (above 1: the current tree is faster).

    python tests/bench/bench_startup.py                  # baseline e217d5e, 5 runs each
    python tests/bench/bench_startup.py --baseline HEAD~3 --repeat 9
"""

from __future__ import annotations

import argparse
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[2]
DESIGN = ["design", "--load", "12m", "--vout", "5.1", "--mains", "230", "--freq", "50,60"]
COMMANDS = [
    ("dropper --help", ["--help"]),
    ("dropper parts stats", ["parts", "stats"]),
    ("dropper design (12 mA 5.1 V)", DESIGN),
]
# imports and catalogue frame as the design command does them (either tree's API)
STARTUP = """
import time
t0, c0 = time.perf_counter(), time.process_time()
import selector.cli, selector.design
try:
    from selector.catalogue.frame_cache import catalogue_frame
    frame = catalogue_frame(None)
except ImportError:
    from selector.catalogue import open_catalogue, parts_frame
    frame = parts_frame(open_catalogue(None))
print(time.perf_counter() - t0, time.process_time() - c0)
"""


def _env(tree: Path, base: Path, label: str) -> dict[str, str]:
    env = {k: v for k, v in os.environ.items() if k != "DROPPER_DB"}
    env.update(
        PYTHONPATH=str(tree),
        XDG_DATA_HOME=str(base / f"data-{label}"),
        XDG_CACHE_HOME=str(base / f"cache-{label}"),
    )
    return env


def _cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def _wall(tree: Path, env: dict[str, str], args: list[str]) -> tuple[float, float]:
    """(wall, CPU user+system) seconds of one command in a fresh process."""
    c0, t0 = _cpu(), time.perf_counter()
    done = subprocess.run(
        [sys.executable, "-m", "selector.cli", *args], cwd=tree, env=env, capture_output=True
    )
    elapsed, cpu = time.perf_counter() - t0, _cpu() - c0
    if done.returncode not in (0, 1):
        raise SystemExit(f"{' '.join(args)} failed in {tree}: {done.stderr.decode()[-500:]}")
    return elapsed, cpu


def _startup(tree: Path, env: dict[str, str]) -> tuple[float, float]:
    """(wall, CPU) seconds of the design's imports and catalogue frame, timed inside."""
    done = subprocess.run(
        [sys.executable, "-c", STARTUP], cwd=tree, env=env, capture_output=True, check=True
    )
    wall, cpu = done.stdout.decode().split()[-2:]
    return float(wall), float(cpu)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--baseline", default="e217d5e", help="git revision to compare with")
    parser.add_argument("--repeat", type=int, default=5, help="runs per command and tree")
    opts = parser.parse_args()

    with tempfile.TemporaryDirectory(prefix="dropper-bench-startup-") as tmp:
        base = Path(tmp)
        old = base / "baseline"
        subprocess.run(
            ["git", "worktree", "add", "--detach", "--quiet", str(old), opts.baseline],
            cwd=ROOT,
            check=True,
        )
        try:
            trees = {"baseline": old, "current": ROOT}
            envs = {label: _env(tree, base, label) for label, tree in trees.items()}
            for label, tree in trees.items():  # first use: build the catalogue (and cache)
                _wall(tree, envs[label], DESIGN)
            head = subprocess.run(
                ["git", "rev-parse", "--short", "HEAD"], cwd=ROOT, capture_output=True, text=True
            ).stdout.strip()
            print(
                f"baseline {opts.baseline}, current {head} (+ uncommitted changes if any); "
                f"median of {opts.repeat} runs in fresh processes; baseline -> current (ratio)"
            )
            rows = [(name, lambda t, e, a=args: _wall(t, e, a)) for name, args in COMMANDS]
            rows.append(("design start-up (imports + frame)", _startup))
            for name, measure in rows:
                times: dict[str, list[tuple[float, float]]] = {label: [] for label in trees}
                for run in range(opts.repeat):
                    order = list(trees) if run % 2 == 0 else list(reversed(trees))
                    for label in order:  # alternate who goes first
                        times[label].append(measure(trees[label], envs[label]))
                wall = {k: statistics.median(t[0] for t in v) for k, v in times.items()}
                cpu = {k: statistics.median(t[1] for t in v) for k, v in times.items()}
                print(
                    f"{name:34s} wall {wall['baseline'] * 1000:5.0f} -> "
                    f"{wall['current'] * 1000:5.0f} ms ({wall['baseline'] / wall['current']:4.2f}x)"
                    f"   CPU {cpu['baseline'] * 1000:5.0f} -> {cpu['current'] * 1000:5.0f} ms "
                    f"({cpu['baseline'] / cpu['current']:4.2f}x)"
                )
        finally:
            subprocess.run(
                ["git", "worktree", "remove", "--force", str(old)], cwd=ROOT, check=False
            )


if __name__ == "__main__":
    main()
