"""The search: branch and bound over the screened points in ascending lower-bound key.

Points leave the screen in key order per chunk; a point is verified when its lower bound is below
both the lower bound of everything not yet screened and the key of the ``top``-th best verified
set. Proof obligation: when the loop ends with no point below the incumbent's key, no unverified
point can beat the incumbent (its key is bounded below by its screen key), so the first ``top``
verified sets are the optimum over the search space. X pairs join after the singles, within
the capacitance window and the cost budget (see ``pairs``).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from typing import Any, Final

import numpy as np
import pandas as pd

from ..policy import Policy
from .explain import infeasible_error, precheck
from .groups import NO_BOUND, ZenerGroup, make_group
from .pairs import add_series_pairs, add_x_pairs
from .requirement import Design, Requirement
from .result import to_design
from .screen import screen_x_chunk
from .setup import prepare
from .verify import engine_api, verify_candidate

#: a candidate whose exact minimum current misses the load by more than this fraction also
#: rules out the same X capacitance with any larger series resistance (the current falls with
#: R; the completion's diode drop and Zener impedance move it by well under 0.5 %)
CUT_TOLERANCE: Final[float] = 0.005


def design(
    frame: pd.DataFrame,
    req: Requirement,
    policy: Policy | None = None,
    progress: Callable[[int, int], None] | None = None,
    max_verify: int = 400,
    analyse: Callable[..., Any] | None = None,
) -> list[Design]:
    """The ``req.top`` best compliant designs over the catalogue ``frame`` (parts_frame).

    ``analyse(circuit, mains, tolerances, conditions)`` defaults to the engine's. Raises
    InfeasibleError naming the blocking rule and the smallest relaxation.
    """
    pol = policy or Policy()
    setup = prepare(frame, req, pol)
    setup.analyse = analyse or engine_api().analyse
    if setup.analyse is None:
        raise RuntimeError("selector.engine.analyse is not available")
    precheck(setup)
    stats: dict[str, Any] = {
        "points": 0,
        "passed": 0,
        "blocking": {},
        "completion": {},
        "verified": 0,
    }
    setup.stats = stats
    groups = [g for g in (make_group(setup, t, v, stats) for t, v in setup.zo) if g is not None]
    chunk = 256
    total_chunks = sum((len(g.xkeep) + chunk - 1) // chunk for g in groups)
    done_chunks = 0
    pending: list[list[Any]] = []  # [keys, xs, rs, group, pointer]
    found: list[tuple[int, Any]] = []
    cuts: dict[tuple[int, int], float] = {}
    eager_limit = 40

    def bound() -> int:
        if len(found) < req.top:
            return NO_BOUND
        return sorted(k for k, _ in found)[req.top - 1]

    def next_chunk_lb() -> tuple[int, ZenerGroup | None]:
        best, bg = NO_BOUND, None
        for g in groups:
            if g.cursor < len(g.xkeep):
                lb = int(setup.xo.key[g.xkeep[g.cursor]]) + g.min_r_key + g.min_comp_key
                if lb < best:
                    best, bg = lb, g
        return best, bg

    for phase in ("singles", "x pairs", "series pairs"):
        if phase != "singles":
            if stats.get("verify_limit") or not groups:
                break
            b = bound()
            if phase == "x pairs":
                base = min(g.min_r_key + g.min_comp_key for g in groups)
                add_x_pairs(setup, groups, NO_BOUND if b >= NO_BOUND else b - base, stats)
            else:
                add_series_pairs(setup, groups, b, stats)
        while True:
            nxt, g = next_chunk_lb()
            # verify pending points whose lower bound is below anything still unscreened
            while True:
                head = None
                for p in pending:
                    if p[4] < len(p[0]) and (head is None or p[0][p[4]] < head[0][head[4]]):
                        head = p
                if head is None:
                    break
                lbk = int(head[0][head[4]])
                # without a verified set, check the best pending point at once (out of order,
                # which costs nothing in exactness): its cost then prunes the screen
                eager = len(found) < req.top and stats["verified"] < eager_limit
                if (lbk >= nxt and not eager) or lbk >= bound():
                    break
                xi, ri, G = int(head[1][head[4]]), int(head[2][head[4]]), head[3]
                guess = tuple(int(v) for v in head[5][head[4]])
                head[4] += 1
                if stats["verified"] >= max_verify:
                    stats["verify_limit"] = True
                    break
                r_corner = float(setup.ro.attrs["total_ohm"][ri]) * (
                    1 + float(np.nan_to_num(setup.ro.attrs["tolerance"][ri], nan=0.05))
                )
                ck = (id(G), xi)
                if ck in cuts and r_corner >= cuts[ck]:
                    stats["cut"] = stats.get("cut", 0) + 1
                    continue
                stats["verified"] += 1
                setup.last_exact = None
                res = verify_candidate(setup, G.topology, G.vz, xi, ri, guess)
                if res is not None:
                    found.append((res[0], res))
                elif setup.last_exact is not None and "whole.min_current" in setup.last_exact[0]:
                    s_ex = setup.last_exact[1]
                    # cut: with this X in this group, a larger series resistance only lowers the
                    # current; completion parts move it by far less than CUT_TOLERANCE
                    if s_ex["min_dc_current_a"] * (1 + CUT_TOLERANCE) < s_ex["load_a"] * (
                        1 + setup.policy.load_margin
                    ):
                        cuts[ck] = min(cuts.get(ck, math.inf), r_corner)
            if stats.get("verify_limit") or g is None or nxt >= bound():
                break
            # small chunks until a set is verified (its cost then prunes the rest), then larger
            size = chunk if found else min(chunk, 4 << min(done_chunks, 6))
            xs = g.xkeep[g.cursor : g.cursor + size]
            g.cursor += size
            out = screen_x_chunk(setup, g, xs, bound(), stats)
            if out is not None:
                pending.append([out[2], out[0], out[1], g, 0, out[3]])
            done_chunks += 1
            total_chunks = max(total_chunks, done_chunks)
            if progress:
                progress(done_chunks, total_chunks)
    if progress:
        progress(total_chunks, total_chunks)
    found.sort(key=lambda t: t[0])
    setup.stats = stats
    if not found:
        raise infeasible_error(setup, stats, verified=stats["verified"])
    out = [to_design(setup, rank + 1, res) for rank, (_, res) in enumerate(found[: req.top])]
    limited = bool(stats.get("verify_limit") or stats.get("pairs_truncated"))
    search = {
        "points_screened": int(stats["points"]),
        "candidates_verified": int(stats["verified"]),
        "x_pairs": int(stats.get("pairs", 0)),
        "exhaustive": not limited,
        "note": (
            "search limited (verification or pair cap reached): cheapest found, not proven optimal"
            if limited
            else "optimal over the search space (screen bounds + exact check at every corner)"
        ),
    }
    for d in out:
        d.search = search
    return out
