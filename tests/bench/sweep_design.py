"""Sweep of ordinary design requests on the built-in catalogue: outcomes, times, stage shares.

144 requests: loads 3, 5, 10, 20, 30, 50 mA x outputs 3.3, 5.1, 12, 24 V x mains 120 V 60 Hz,
230 V 50/60 Hz, 240 V 50 Hz x bridge and half-wave; every other option at its default. Prints one
line per request (outcome, price, seconds) and a summary: feasible count, "search limited" count,
median and largest time, and the share of the search's time in its stages.

    python tests/bench/sweep_design.py                 # this checkout
    python tests/bench/sweep_design.py --baseline e217d5e   # also the solver of that revision
    python tests/bench/sweep_design.py --quick          # 24 requests

``--baseline`` checks the revision out into a temporary git worktree and runs this same script
there in a subprocess (``--json``), so both solvers see the same requests; it prints the ratio of
the total times. Times are wall-clock on a shared machine: read them as ratios.
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
    from selector import design as D
    from selector.catalogue import open_catalogue, parts_frame, resolve_url
    from selector.engine.circuit import Conditions, Mains
    from selector.errors import InfeasibleError
    from selector.policy import Policy

    t0 = time.perf_counter()
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
        t = time.perf_counter()
        row = {"load_a": load, "vout_v": vout, "mains_v": volts, "topology": top}
        try:
            d = D.design(frame, req, Policy())[0]
            row.update(
                outcome="limited" if not d.search.get("exhaustive", True) else "design",
                price=d.total_price,
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
        for k, v in (r.get("seconds_by_stage") or {}).items():
            if k != "total":
                stages[k] = stages.get(k, 0.0) + v
    if stages:
        shares = ", ".join(f"{k} {v / total * 100:.0f} %" for k, v in stages.items())
        print(f"  share of design time: {shares}")
    refusals: dict[str, int] = {}
    for r in rows:
        if r["outcome"] == "no design":
            refusals[str(r.get("rule"))] = refusals.get(str(r.get("rule")), 0) + 1
    if refusals:
        print("  refusals by rule: " + ", ".join(f"{k} {v}" for k, v in sorted(refusals.items())))
    return total


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true")
    ap.add_argument("--json", action="store_true", help="print the raw rows as JSON")
    ap.add_argument("--baseline", help="git revision whose solver to run on the same requests")
    ap.add_argument("--verbose", action="store_true", help="one line per request")
    a = ap.parse_args()
    rows = run(a.quick)
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
    if a.baseline:
        repo = Path(__file__).resolve().parents[2]
        with tempfile.TemporaryDirectory() as tmp:
            wt = Path(tmp) / "baseline"
            subprocess.run(
                ["git", "-C", str(repo), "worktree", "add", "--detach", str(wt), a.baseline],
                check=True,
                capture_output=True,
            )
            try:
                # its own data folder: the baseline builds the catalogue of its own schema
                env = {**os.environ, "PYTHONPATH": str(wt), "XDG_DATA_HOME": str(Path(tmp) / "xdg")}
                env.pop("DROPPER_DB", None)
                cmd = [sys.executable, str(Path(__file__).resolve()), "--json"]
                if a.quick:
                    cmd.append("--quick")
                out = subprocess.run(cmd, env=env, cwd=wt, check=True, capture_output=True)
                base_rows = json.loads(out.stdout.decode().strip().splitlines()[-1])
            finally:
                subprocess.run(
                    ["git", "-C", str(repo), "worktree", "remove", "--force", str(wt)],
                    capture_output=True,
                )
        before = summarise(base_rows, f"baseline {a.baseline}")
        print(f"ratio of total design time, baseline / this checkout: {before / now:.2f}x")
        cheaper = sum(
            1
            for r, b in zip(rows[1:], base_rows[1:], strict=True)
            if r.get("price") is not None
            and b.get("price") is not None
            and r["price"] < b["price"] - 1e-9
        )
        newly = sum(
            1
            for r, b in zip(rows[1:], base_rows[1:], strict=True)
            if r.get("price") is not None and b.get("price") is None
        )
        print(f"requests now cheaper: {cheaper}; feasible now but not before: {newly}")


if __name__ == "__main__":
    main()
