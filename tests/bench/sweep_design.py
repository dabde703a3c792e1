"""Sweep of ordinary design requests on the built-in catalogue: outcomes, times, stage shares.

144 requests: loads 3, 5, 10, 20, 30, 50 mA x outputs 3.3, 5.1, 12, 24 V x mains 120 V 60 Hz,
230 V 50/60 Hz, 240 V 50 Hz x bridge and half-wave; every other option at its default. Prints one
line per request (outcome, price, seconds) and a summary: feasible count, "search limited" count,
median and largest time, and the share of the search's time in its stages.

    python tests/bench/sweep_design.py                 # this checkout
    python tests/bench/sweep_design.py --baseline e70dadb   # also the solver of that revision
    python tests/bench/sweep_design.py --quick          # 24 requests

``--baseline REV`` exports that revision with ``git archive`` into a temporary folder (nothing in
the repository changes) and runs this same script on its package in a subprocess (``--json``),
so both solvers see the same requests; ``--save FILE`` keeps a run's rows and
``--baseline-json FILE`` compares with them later. It prints the ratio of the total times, the
ratio per request, and whether every request got the same outcome, parts and price. The share
of time counts the start-up (imports and catalogue read) once per request, as one CLI call
each would pay it; "search" is what the named stages leave of a request's time. Times are
wall-clock on a shared machine: read them as ratios.
"""

from __future__ import annotations

import argparse
import itertools
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

LOADS_A = (3e-3, 5e-3, 10e-3, 20e-3, 30e-3, 50e-3)
VOUTS_V = (3.3, 5.1, 12.0, 24.0)
MAINS = ((120.0, (60.0,)), (230.0, (50.0, 60.0)), (240.0, (50.0,)))
TOPOLOGIES = ("bridge", "half-wave")


def requests(quick: bool) -> list[tuple[float, float, float, tuple[float, ...], str]]:
    grid = list(itertools.product(LOADS_A, VOUTS_V, MAINS, TOPOLOGIES))
    out = [(i, v, m[0], m[1], t) for i, v, m, t in grid]
    # quick: every sixth request, stepping through the mains x topology cycle so that each
    # mains and both topologies are sampled
    return [out[6 * k + k % 6] for k in range(len(out) // 6)] if quick else out


def run(quick: bool) -> list[dict]:
    t0 = time.perf_counter()  # start-up: the imports and the catalogue read, as a CLI pays them
    from selector import design as D
    from selector.catalogue import open_catalogue, parts_frame, resolve_url
    from selector.engine.circuit import Conditions, Mains
    from selector.errors import InfeasibleError
    from selector.policy import Policy

    frame = parts_frame(open_catalogue(resolve_url(None)))
    start_s = time.perf_counter() - t0
    rows = []
    for load, vout, volts, freqs, top in requests(quick):
        req = D.Requirement(
            load_a=load,
            vout_v=vout,
            mains=Mains(volts, 0.10, freqs),
            conditions=Conditions(40.0, "iec60335", 1000.0),
            topology=top,
        )
        try:  # a fresh CLI call keeps nothing from the request before (selector.engine.reuse)
            from selector.engine import reuse

            reuse.clear()
        except ImportError:
            pass
        t = time.perf_counter()
        row = {"load_a": load, "vout_v": vout, "mains_v": volts, "topology": top}
        try:
            d = D.design(frame, req, Policy())[0]
            row.update(
                outcome="limited" if not d.search.get("exhaustive", True) else "design",
                price=d.total_price,
                parts=sorted(f"{p.role}:{p.code}x{p.qty}" for p in d.parts),
                seconds_by_stage=d.search.get("seconds"),
            )
        except InfeasibleError as exc:
            row.update(outcome="no design", rule=getattr(exc, "rule", None), price=None)
        row["seconds"] = time.perf_counter() - t
        rows.append(row)
    return [{"start_s": start_s}] + rows


def summarise(rows: list[dict], label: str) -> float:
    head, rows = rows[0], rows[1:]
    n = len(rows)
    feasible = sum(r["outcome"] in ("design", "limited") for r in rows)
    limited = sum(r["outcome"] == "limited" for r in rows)
    times = [r["seconds"] for r in rows]
    total = sum(times)
    print(
        f"{label}: {feasible}/{n} feasible, {limited} search limited, catalogue read "
        f"{head['start_s']:.2f} s, design median {statistics.median(times):.2f} s, "
        f"max {max(times):.2f} s, total {total:.1f} s"
    )
    stages: dict[str, float] = {}
    for r in rows:
        by_stage = r.get("seconds_by_stage") or {}
        for k, v in by_stage.items():
            if k != "total":
                stages[k] = stages.get(k, 0.0) + v
        # the branch-and-bound bookkeeping: what the named stages leave of the request's time
        named = sum(v for k, v in by_stage.items() if k != "total")
        if by_stage:
            stages["search"] = stages.get("search", 0.0) + max(r["seconds"] - named, 0.0)
        else:  # no design: the search and the explanation's re-runs, not split by stage
            key = "no-design requests"
            stages[key] = stages.get(key, 0.0) + r["seconds"]
    if stages:
        # each request as a CLI call pays the start-up once
        whole = head["start_s"] * n + total
        shares = ", ".join(
            f"{k} {v / whole * 100:.0f} %"
            for k, v in [("start-up", head["start_s"] * n), *stages.items()]
        )
        print(f"  share of time (start-up counted once per request): {shares}")
    refusals: dict[str, int] = {}
    for r in rows:
        if r["outcome"] == "no design":
            refusals[str(r.get("rule"))] = refusals.get(str(r.get("rule")), 0) + 1
    if refusals:
        print("  refusals by rule: " + ", ".join(f"{k} {v}" for k, v in sorted(refusals.items())))
    return total


def baseline_rows(revision: str, quick: bool) -> list[dict]:
    """This same script run on the solver of ``revision``: its tree exported with ``git
    archive`` into a temporary folder (no worktree, nothing in the repository changes) and put
    first on PYTHONPATH, with its own data folder (it builds the catalogue of its own schema)."""
    repo = Path(__file__).resolve().parents[2]
    with tempfile.TemporaryDirectory() as tmp:
        tree = Path(tmp) / "baseline"
        tree.mkdir()
        archive = subprocess.run(
            ["git", "-C", str(repo), "archive", revision], check=True, capture_output=True
        ).stdout
        subprocess.run(["tar", "-x", "-C", str(tree)], input=archive, check=True)
        env = {**os.environ, "PYTHONPATH": str(tree), "XDG_DATA_HOME": str(Path(tmp) / "xdg")}
        env.pop("DROPPER_DB", None)
        cmd = [sys.executable, str(Path(__file__).resolve()), "--json"]
        if quick:
            cmd.append("--quick")
        out = subprocess.run(cmd, env=env, cwd=tree, check=True, capture_output=True)
        return json.loads(out.stdout.decode().strip().splitlines()[-1])


def compare(rows: list[dict], base_rows: list[dict]) -> int:
    """Print how the designs of this checkout differ from the baseline's on each request
    (outcome, price, parts); returns the number of requests that differ."""
    differ = 0
    for r, b in zip(rows[1:], base_rows[1:], strict=True):
        same = r["outcome"] == b["outcome"] and (
            r.get("price") is None
            or (abs(r["price"] - b["price"]) <= 1e-9 and r.get("parts") == b.get("parts"))
        )
        if not same:
            differ += 1
            print(
                f"  differs: {r['load_a'] * 1e3:g} mA {r['vout_v']:g} V {r['mains_v']:g} V "
                f"{r['topology']}: {b['outcome']} {b.get('price')} -> {r['outcome']} "
                f"{r.get('price')}"
            )
    print(
        f"designs identical (outcome, parts, price) on {len(rows) - 1 - differ} of "
        f"{len(rows) - 1} requests"
    )
    return differ


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--json", action="store_true", help="print the raw rows as JSON")
    ap.add_argument("--baseline", help="git revision whose solver to run on the same requests")
    ap.add_argument("--verbose", action="store_true", help="one line per request")
    ap.add_argument("--save", help="also write the rows as JSON to this file")
    ap.add_argument("--baseline-json", help="rows of a previous run (--save) as the baseline")
    a = ap.parse_args()
    rows = run(a.quick)
    if a.save:
        Path(a.save).write_text(json.dumps(rows))
    if a.json:
        print(json.dumps(rows))
        return
    if a.verbose:
        for r in rows[1:]:
            price = f"{r['price']:.4f}" if r.get("price") is not None else "-"
            print(
                f"  {r['load_a'] * 1e3:4g} mA {r['vout_v']:4g} V {r['mains_v']:3g} V "
                f"{r['topology']:<9} {r['outcome']:<9} {price:>8} {r['seconds']:6.2f} s "
                f"{r.get('rule') or ''}"
            )
    now = summarise(rows, "this checkout")
    if a.baseline or a.baseline_json:
        if a.baseline_json:
            base_rows = json.loads(Path(a.baseline_json).read_text())
            label = f"baseline {a.baseline_json}"
        else:
            base_rows = baseline_rows(a.baseline, a.quick)
            label = f"baseline {a.baseline}"
        before = summarise(base_rows, label)
        print(f"ratio of total design time, baseline / this checkout: {before / now:.2f}x")
        per = [b["seconds"] / r["seconds"] for r, b in zip(rows[1:], base_rows[1:], strict=True)]
        print(
            f"ratio per request: median {statistics.median(per):.2f}x, "
            f"least {min(per):.2f}x, largest {max(per):.2f}x"
        )
        compare(rows, base_rows)


if __name__ == "__main__":
    main()
