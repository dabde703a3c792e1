"""The grid of ordinary bridge requests on which designs must last (life, product class).

Bridge; 230 V 50 Hz and 120 V 60 Hz; 5-30 mA at 5.1 V, 12-20 mA at 12 V, 5-12 mA at 24 V
(24 requests). Each runs through the CLI (``dropper design ... --json``) so that the script
reads what any revision prints; extra options (``--standby-limit 0.5``) pass through. Prints
one line per request and a summary of what the designs are made of: X-capacitor families,
series-resistance range, reservoir families, fuse families, and the life figures where the
output has them.

    python tests/bench/life_grid.py
    python tests/bench/life_grid.py --standby-limit 0.5
"""

from __future__ import annotations

import collections
import json
import subprocess
import sys

GRID = (
    [(5.1, i) for i in ("5m", "10m", "15m", "20m", "25m", "30m")]
    + [(12.0, i) for i in ("12m", "15m", "20m")]
    + [(24.0, i) for i in ("5m", "8m", "12m")]
)
MAINS = (("230", "50"), ("120", "60"))
RULE_ROLES = {"whole", "reservoir", "x_cap", "series_r", "fuse", "zener", "rectifier", "bleeder"}


def main(extra: list[str]) -> int:
    feasible = 0
    x_fam: collections.Counter = collections.Counter()
    res_fam: collections.Counter = collections.Counter()
    fuse_fam: collections.Counter = collections.Counter()
    series_r: list[float] = []
    refused: collections.Counter = collections.Counter()
    life_short = 0
    for volts, freq in MAINS:
        for vout, load in GRID:
            cmd = [sys.executable, "-m", "selector.cli", "design", "--load", load, "--vout",
                   f"{vout:g}", "--mains", volts, "--freq", freq, "--json", *extra]  # fmt: skip
            proc = subprocess.run(cmd, capture_output=True, text=True)
            label = f"{volts} V {freq} Hz {vout:g} V {load}"
            if proc.returncode != 0 or not proc.stdout.strip():
                why = (proc.stderr.strip().splitlines() or ["?"])[-1][:150]
                for word in why.replace(",", " ").split():
                    if "." in word and word.split(".")[0] in RULE_ROLES:
                        refused[word.strip("();:")] += 1
                print(f"{label:28s} exit {proc.returncode}: {why}")
                continue
            design = json.loads(proc.stdout)["designs"][0]
            feasible += 1
            parts = design["parts"]
            r_total = sum(p["value"] for p in parts if p["role"] == "series_resistor")
            series_r.append(r_total)
            for p in parts:
                if p["role"] == "x_capacitor":
                    x_fam[p["family"]] += 1
                elif p["role"] == "reservoir":
                    res_fam[p["family"]] += 1
                elif p["role"] == "fuse":
                    fuse_fam[p["family"]] += 1
            life = design.get("life") or {}
            if life and life.get("reservoir_life_h", 1e99) < life.get("target_life_h", 0):
                life_short += 1
            print(f"{label:28s} {design['total_price']:.3f}  R={r_total:g} ohm  "
                  f"life={life.get('reservoir_life_h', '-')} h  "
                  f"eol_i={life.get('end_of_life_min_dc_current_a', '-')} A")  # fmt: skip
    n = len(GRID) * len(MAINS)
    print(f"feasible {feasible}/{n}; refusals by rule: {dict(refused)}")
    print(f"X capacitor families: {dict(x_fam)}")
    print(f"reservoir families: {dict(res_fam)}; fuse families: {dict(fuse_fam)}")
    if series_r:
        print(f"series resistance {min(series_r):g}-{max(series_r):g} ohm")
    print(f"designs whose reservoir life is below the target: {life_short}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main(sys.argv[1:]))
