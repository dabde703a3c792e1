"""Is any part set cheaper than the solver's one and still audit-clean? A random search.

For each request the solver's design is taken apart role by role: one part (or one element of
a series pair) at a time is swapped for a random cheaper catalogue part of the same kind, the
set is written as a BOM and audited with the same options (``dropper audit``'s own code path,
``selector.cli.audit.audit_options`` + ``audit_bom``). A swap that audits with no failure and no
warning would be a compliant set cheaper than the "optimal" design: the script counts them and
prints each one. It also drops the fuse when the series resistance is fusible.

    python tests/bench/random_sets_vs_design.py            # 50 requests, 40 swaps each
    python tests/bench/random_sets_vs_design.py --requests 5 --swaps 20

Exit code 1 when a cheaper audit-clean set was found.
"""

from __future__ import annotations

import argparse
import dataclasses
import itertools
import random
import sys
import tempfile
import time
from pathlib import Path


def requests(n: int, seed: int) -> list[dict]:
    grid = list(
        itertools.product(
            ("5m", "10m", "12m", "20m", "30m"),
            ("3.3", "5.1", "12"),
            (("230", "50,60"), ("120", "60"), ("240", "50")),
            ("bridge", "half-wave"),
        )
    )
    rnd = random.Random(seed)
    rnd.shuffle(grid)
    return [
        {"load": ld, "vout": v, "mains": m, "freq": f, "topology": t}
        for ld, v, (m, f), t in grid[:n]
    ]


def _swap_candidates(frame, part, rnd: random.Random, k: int):
    """Up to ``k`` catalogue rows of the part's kind whose line price is below the part's."""
    rows = frame[(frame["kind"] == part.kind) & (frame["code"] != part.code)]
    rows = rows[rows["unit_price"] * part.qty < part.line_price - 1e-12]
    if len(rows) == 0:
        return []
    idx = list(range(len(rows)))
    rnd.shuffle(idx)
    return [rows.iloc[i] for i in idx[:k]]


def _as_part(row, like):
    from selector.design.result import imported_supplier, row_rule_ratings

    price = float(row["unit_price"])
    return dataclasses.replace(
        like,
        code=str(row["code"]),
        kind=str(row["kind"]),
        family=str(row.get("family", "")),
        description=str(row.get("description", "") or ""),
        value=float(row["value"]),
        unit_price=price,
        line_price=price * like.qty,
        package=row.get("package"),
        ratings={},
        # the swapped-in row's own ratings go to the BOM's Ratings column, not the old part's
        rule_ratings=row_rule_ratings(row),
        supplier=imported_supplier(row),
        price_note=row.get("price_note"),
    )


def search(req: dict, swaps: int, seed: int, frame, tmp: Path) -> tuple[float | None, list]:
    from selector import design as D
    from selector.audit.evaluate import audit_bom
    from selector.cli._circuit import conditions_from_options, mains_from_options
    from selector.cli.audit import audit_options
    from selector.errors import InfeasibleError
    from selector.policy import Policy
    from selector.units import parse_value

    r = D.Requirement(
        load_a=parse_value(req["load"], "A"),
        vout_v=parse_value(req["vout"], "V"),
        mains=mains_from_options(req["mains"], "10", req["freq"]),
        conditions=conditions_from_options("40", "iec60335", "1k"),
        topology=req["topology"],
    )
    try:
        best = D.design(frame, r, Policy())[0]
    except InfeasibleError:
        return None, []
    opts = audit_options(mains=req["mains"], freq=req["freq"], load=req["load"])
    rnd = random.Random(seed)
    cheaper_clean = []
    trials = []
    for i, part in enumerate(best.parts):
        for row in _swap_candidates(frame, part, rnd, max(1, swaps // len(best.parts))):
            parts = list(best.parts)
            parts[i] = _as_part(row, part)
            trials.append(parts)
    fusible = [p for p in best.parts if p.role == "series_resistor" and "fusible" in p.family]
    if fusible:
        trials.append([p for p in best.parts if p.role != "fuse"])
    for parts in trials:
        price = sum(p.line_price for p in parts)
        if price >= best.total_price - 1e-9:
            continue
        d = dataclasses.replace(best, parts=parts, total_price=price)
        path = tmp / "set.csv"
        D.write_bom(d, path)
        try:
            res = audit_bom(path, **opts)
        except Exception as exc:  # a set the reader refuses is not a compliant set
            print(f"    (audit refused a trial: {exc})", file=sys.stderr)
            continue
        s = res.to_dict()["summary"]
        if s["fail"] == 0 and s["warn"] == 0:
            cheaper_clean.append((price, [p.code for p in parts]))
    return best.total_price, cheaper_clean


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--requests", type=int, default=50)
    ap.add_argument("--swaps", type=int, default=40)
    ap.add_argument("--seed", type=int, default=7)
    a = ap.parse_args()
    from selector.catalogue import catalogue_frame, resolve_url

    frame = catalogue_frame(resolve_url(None))
    found = 0
    feasible = 0
    t0 = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        for n, req in enumerate(requests(a.requests, a.seed)):
            price, clean = search(req, a.swaps, a.seed + n, frame, Path(tmp))
            label = " ".join(f"{k}={v}" for k, v in req.items())
            if price is None:
                print(f"{label}: no design")
                continue
            feasible += 1
            print(f"{label}: design {price:.4f}, cheaper audit-clean swaps {len(clean)}")
            for p, codes in clean:
                print(f"    CHEAPER {p:.4f}: {', '.join(codes)}")
            found += len(clean)
    print(
        f"{feasible} designs, {found} cheaper audit-clean sets found "
        f"({time.perf_counter() - t0:.0f} s)"
    )
    return 1 if found else 0


if __name__ == "__main__":
    sys.exit(main())
