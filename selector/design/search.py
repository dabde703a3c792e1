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
import time
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
import pandas as pd

from ..errors import InfeasibleError
from ..policy import Policy
from .explain import checked_relaxation, infeasible_error, precheck
from .groups import NO_BOUND, ZenerGroup, make_group
from .pairs import add_series_pairs, add_x_pairs
from .requirement import KEY_BITS, PRICE_SCALE, Design, Requirement
from .result import to_design
from .screen import screen_x_chunk
from .setup import memoised, prepare
from .verify import SURGE_BATCH, engine_api, prefetch_surge_bounds, verify_candidate

#: a candidate whose exact minimum current misses the load by more than this fraction also
#: rules out the same X capacitance with any larger series resistance (the current falls with
#: R; the completion's diode drop and Zener impedance move it by well under 0.5 %)
CUT_TOLERANCE: Final[float] = 0.005

#: a candidate whose quick surge bound exceeds the limit of an X-capacitor surge rule by more
#: than this fraction also rules out the same X option with any lower series resistance (less
#: resistance, more pulse current, a larger dV/dt and voltage step); one that exceeds the
#: series-R peak-voltage rule's limit so rules out the same series option with any larger X
#: capacitance (the capacitor charges less during the pulse and passes more current). Both
#: directions, and that the completion parts (Zener slope, reservoir, bleeder, diode drop) move
#: these figures by less than this fraction (measured: under 9 % from 3.3 ohm, under 3 % from
#: 10 ohm), are checked in tests/test_design_bounds.py. The pulse energy moves by up to 22 %
#: with the completion and cuts nothing.
SURGE_CUT_TOLERANCE: Final[float] = 0.10
#: The bus peak during the surge cuts both ways too, but only from the completion that holds
#: the bus best (bus_rechoice.strongest_pairs_pass: the largest reservoir with the Zeners of least
#: slope and tolerance): the pulse current, and with it the bus peak, rises as the series
#: resistance falls and as the X capacitance grows (tests/test_design_bus.py checks both on
#: the engine); the rectifier and bleeder of another point move it by far less than the
#: tolerance.
BUS_CUT_RULES: Final[tuple[str, ...]] = ("whole.bus_surge_peak",)
X_SURGE_CUT_RULES: Final[tuple[str, ...]] = (
    "x_cap.dvdt_surge",
    "x_cap.surge_total",
    *BUS_CUT_RULES,
)
R_SURGE_CUT_RULES: Final[tuple[str, ...]] = ("series_r.surge_voltage", *BUS_CUT_RULES)


@dataclass
class _Pending:
    """Screened points of one chunk, in ascending lower-bound key; ``pos`` is the next one."""

    keys: np.ndarray
    x_options: np.ndarray
    series_options: np.ndarray
    completions: np.ndarray
    group: ZenerGroup
    pos: int = 0
    #: points before this one have their quick surge bounds computed (batched)
    prefetched: int = 0

    def head_key(self) -> int | None:
        return int(self.keys[self.pos]) if self.pos < len(self.keys) else None


@dataclass
class _Search:
    """State of one branch-and-bound run (see the module docstring)."""

    setup: Any
    groups: list[ZenerGroup]
    top: int
    deadline: float | None
    pending: list[_Pending] = field(default_factory=list)
    found: list[tuple[tuple[int, float], Any]] = field(default_factory=list)
    cuts: dict[tuple[int, int], float] = field(default_factory=dict)
    #: (group, X option) -> the highest low-corner series R that failed an X surge rule
    x_surge_cuts: dict[tuple[int, int], float] = field(default_factory=dict)
    #: (group, series option) -> the lowest high-corner X capacitance that failed a series-R
    #: surge rule
    r_surge_cuts: dict[tuple[int, int], float] = field(default_factory=dict)
    seconds: dict[str, float] = field(default_factory=lambda: dict.fromkeys(STAGES, 0.0))
    stopped_by: str | None = None

    def bound(self) -> int:
        """Key of the ``top``-th best verified set (NO_BOUND before there are ``top``)."""
        if len(self.found) < self.top:
            return NO_BOUND
        return sorted(k[0] for k, _ in self.found)[self.top - 1]

    def next_chunk(self) -> tuple[int, ZenerGroup | None]:
        """Lower bound of every point not yet screened in this phase, and its group."""
        best, best_group = NO_BOUND, None
        for g in self.groups:
            if g.cursor < len(g.xkeep):
                lb = int(self.setup.xo.key[g.xkeep[g.cursor]]) + g.min_r_key + g.min_comp_key
                if lb < best:
                    best, best_group = lb, g
        return best, best_group

    def head(self) -> _Pending | None:
        best = None
        for p in self.pending:
            k = p.head_key()
            if k is not None and (best is None or k < best.head_key()):
                best = p
        return best

    def out_of_time(self) -> bool:
        if self.deadline is not None and time.monotonic() > self.deadline:
            self.stopped_by = "time limit"
            return True
        return False

    def best_possible(self, later_phases_lb: int) -> int:
        """The least key any set not yet verified can have."""
        lbs = [later_phases_lb, self.next_chunk()[0]]
        lbs += [k for p in self.pending if (k := p.head_key()) is not None]
        return min(lbs)


#: the stages whose time the search report gives
STAGES: Final[tuple[str, ...]] = ("prepare", "screen", "verify")
#: X options per screened chunk once a set is known (smaller chunks before, see below)
CHUNK: Final[int] = 256
#: before any set is verified, the best pending point is verified at once (out of key order,
#: which costs nothing in exactness) up to this many times: its key then prunes the screen
EAGER_LIMIT: Final[int] = 40


def design(
    frame: pd.DataFrame,
    req: Requirement,
    policy: Policy | None = None,
    progress: Callable[[int, int], None] | None = None,
    analyse: Callable[..., Any] | None = None,
    time_limit_s: float | None = None,
    explain: bool = True,
) -> list[Design]:
    """The ``req.top`` best compliant designs over the catalogue ``frame`` (parts_frame).

    ``analyse(circuit, mains, tolerances, conditions)`` defaults to the engine's. With
    ``time_limit_s`` the search stops after that long and says which bound is still open (the
    best set found and the least key any unverified set can have); without it the search runs
    until it has proven optimality over the search space. Raises InfeasibleError naming the
    blocking rule and, with ``explain``, a relaxation that was applied and found a design
    (``explain.checked_relaxation``; the error then carries ``relaxed_requirement`` and
    ``relaxed_policy``).
    """
    t0 = time.monotonic()
    pol = policy or Policy()
    setup = prepare(frame, req, pol)
    api = engine_api()
    setup.analyse = analyse or memoised(api.analyse)
    # the quick exact rejection needs the engine's own analysis (not a stand-in)
    setup.min_current = memoised(api.min_dc_current) if analyse is None else None
    setup.surge_bounds = memoised(api.surge_lower_bounds) if analyse is None else None
    setup.surge_bounds_many = api.surge_lower_bounds_many if analyse is None else None
    if setup.analyse is None:
        raise RuntimeError("selector.engine.analyse is not available")
    try:
        precheck(setup)
    except InfeasibleError as err:
        if not explain:
            raise
        raise _explained(err, frame, req, pol, analyse, {}, None) from None
    stats: dict[str, Any] = {
        "points": 0,
        "passed": 0,
        "blocking": {},
        "completion": {},
        "verified": 0,
    }
    setup.stats = stats
    groups = [g for g in (make_group(setup, t, v, stats) for t, v in setup.zo) if g is not None]
    deadline = None if time_limit_s is None else t0 + float(time_limit_s)
    run = _Search(setup, groups, req.top, deadline)
    run.seconds["prepare"] = time.monotonic() - t0
    total_chunks = sum((len(g.xkeep) + CHUNK - 1) // CHUNK for g in groups)
    done_chunks = 0
    # a lower bound for the phases not yet started (any X, any series option, any completion)
    any_lb = (
        int(np.min(setup.xs.key)) + int(np.min(setup.ro.key)) + min(g.min_comp_key for g in groups)
        if groups and len(setup.xs) and len(setup.ro)
        else NO_BOUND
    )
    phases = ("singles", "x pairs", "series pairs")
    for n_phase, phase in enumerate(phases):
        if phase != "singles":
            if run.stopped_by or not groups:
                break
            t = time.monotonic()
            b = run.bound()
            if phase == "x pairs":
                base = min(g.min_r_key + g.min_comp_key for g in groups)
                add_x_pairs(setup, groups, NO_BOUND if b >= NO_BOUND else b - base, stats)
            else:
                add_series_pairs(setup, groups, b, stats)
            run.seconds["screen"] += time.monotonic() - t
        later_lb = any_lb if n_phase + 1 < len(phases) else NO_BOUND
        while not run.stopped_by:
            nxt, g = run.next_chunk()
            _verify_pending(run, nxt)
            if run.stopped_by or g is None or nxt >= run.bound():
                break
            if run.out_of_time():
                break
            # small chunks until a set is verified (its key then prunes the rest), then larger
            size = CHUNK if run.found else min(CHUNK, 4 << min(done_chunks, 6))
            xs = g.xkeep[g.cursor : g.cursor + size]
            g.cursor += size
            t = time.monotonic()
            out = screen_x_chunk(setup, g, xs, run.bound(), stats)
            run.seconds["screen"] += time.monotonic() - t
            if out is not None:
                run.pending.append(_Pending(out[2], out[0], out[1], out[3], g))
            done_chunks += 1
            total_chunks = max(total_chunks, done_chunks)
            if progress:
                progress(done_chunks, total_chunks)
        if run.stopped_by:
            open_lb = run.best_possible(later_lb)
            break
    else:
        open_lb = NO_BOUND
    if progress:
        progress(total_chunks, total_chunks)
    run.found.sort(key=lambda t: t[0])
    if not run.found:
        err = infeasible_error(setup, stats, verified=stats["verified"])
        if explain and not run.stopped_by:
            err = _explained(err, frame, req, pol, analyse, stats, deadline)
        if run.stopped_by:
            err = InfeasibleError(
                f"no design found within the time limit ({time_limit_s:g} s); "
                "the search was not completed, so a compliant set may still exist",
                rule=getattr(err, "rule", None),
                relaxation="a longer --time-limit",
            )
        raise err
    best = [res for _, res in run.found[: req.top]]
    out = [to_design(setup, rank + 1, res) for rank, res in enumerate(best)]
    search = _report(run, stats, best[-1][0], open_lb, req.minimize, time.monotonic() - t0)
    for d in out:
        d.search = search
    return out


def _verify_pending(run: _Search, next_unscreened: int) -> None:
    """Verify pending points in key order while their bound is below everything unscreened
    and below the incumbent."""
    setup, stats = run.setup, run.setup.stats
    while True:
        head = run.head()
        if head is None:
            return
        lb = head.head_key()
        eager = len(run.found) < run.top and stats["verified"] < EAGER_LIMIT
        if (lb >= next_unscreened and not eager) or lb >= run.bound():
            return
        if run.out_of_time():
            return
        i = head.pos
        x_option, series_option = int(head.x_options[i]), int(head.series_options[i])
        guess = tuple(int(v) for v in head.completions[i])
        group = head.group
        head.pos += 1
        r_corner = float(setup.ro.attrs["total_ohm"][series_option]) * (
            1 + float(np.nan_to_num(setup.ro.attrs["tolerance"][series_option], nan=0.05))
        )
        cut_key = (id(group), x_option)
        if cut_key in run.cuts and r_corner >= run.cuts[cut_key]:
            stats["cut"] = stats.get("cut", 0) + 1
            continue
        r_low = float(setup.ro.attrs["total_ohm"][series_option]) * (
            1 - float(np.nan_to_num(setup.ro.attrs["tolerance"][series_option], nan=0.05))
        )
        c_high = x_corner_high(setup, x_option)
        if r_low <= run.x_surge_cuts.get(cut_key, -math.inf) or c_high >= run.r_surge_cuts.get(
            (id(group), series_option), math.inf
        ):
            stats["surge_cut"] = stats.get("surge_cut", 0) + 1
            continue
        stats["verified"] += 1
        setup.last_exact = None
        setup.last_excess = {}
        t = time.monotonic()
        if i >= head.prefetched:
            # the quick surge bounds of this point and the next ones, in one simulation
            stop = min(i + SURGE_BATCH, len(head.keys))
            points = [
                (int(head.x_options[j]), int(head.series_options[j]), tuple(head.completions[j]))
                for j in range(i, stop)
                if int(head.keys[j]) < run.bound()
            ]
            prefetch_surge_bounds(setup, group.topology, group.vz, points)
            head.prefetched = stop
        res = verify_candidate(setup, group.topology, group.vz, x_option, series_option, guess)
        run.seconds["verify"] += time.monotonic() - t
        if res is not None:
            # equal keys: the lower no-load (standby) power first (tie-break policy)
            no_load = getattr(getattr(res[2], "worst_case", None), "no_load_real_power_w", None)
            run.found.append(((res[0], float(no_load or 0.0)), res))
        elif setup.last_exact is not None and setup.last_excess:
            # cuts on the surge rules of the X capacitor and the series resistance (see
            # SURGE_CUT_TOLERANCE): this X with any lower series resistance, and this series
            # option with any larger X capacitance, fail the same rule
            excess = setup.last_excess
            if any(excess.get(rid, 0.0) > 1 + SURGE_CUT_TOLERANCE for rid in X_SURGE_CUT_RULES):
                run.x_surge_cuts[cut_key] = max(run.x_surge_cuts.get(cut_key, -math.inf), r_low)
            if any(excess.get(rid, 0.0) > 1 + SURGE_CUT_TOLERANCE for rid in R_SURGE_CUT_RULES):
                key_r = (id(group), series_option)
                run.r_surge_cuts[key_r] = min(run.r_surge_cuts.get(key_r, math.inf), c_high)
        elif setup.last_exact is not None and "whole.min_current" in setup.last_exact[0]:
            s_ex = setup.last_exact[1]
            # cut: with this X in this group, a larger series resistance only lowers the
            # current; completion parts move it by far less than CUT_TOLERANCE
            if s_ex["min_dc_current_a"] * (1 + CUT_TOLERANCE) < s_ex["load_a"] * (
                1 + setup.policy.load_margin
            ):
                run.cuts[cut_key] = min(run.cuts.get(cut_key, math.inf), r_corner)


def x_corner_high(setup, x_option: int) -> float:
    """The X option's capacitance at its upper tolerance [F] (the surge's high corner)."""
    attrs = setup.xo.attrs
    tol = float(np.nan_to_num(attrs["tolerance"][x_option], nan=0.2))
    return float(attrs["value"][x_option]) * (1 + tol)


def _key_price(key: int, minimize: str) -> float | None:
    """The price part of an objective key (when price is the first field)."""
    if minimize != "price" or key >= NO_BOUND:
        return None
    return (key >> (KEY_BITS["area"] + KEY_BITS["count"])) / PRICE_SCALE


def _report(run: _Search, stats: dict, best_key: int, open_lb: int, minimize: str, total: float):
    """The search report: what was screened and verified, and what was proven."""
    stopped = run.stopped_by or ("pair cap" if stats.get("pairs_truncated") else None)
    proven = stopped is None or open_lb >= best_key
    if proven:
        note = "optimal over the search space (screen bounds + exact check at every corner)"
    elif run.stopped_by == "time limit":
        note = "stopped by the time limit: best found, not proven optimal"
    else:
        note = "search limited by the X pair cap: best found, not proven optimal"
    return {
        "points_screened": int(stats["points"]),
        "candidates_verified": int(stats["verified"]),
        "x_pairs": int(stats.get("pairs", 0)),
        "series_pairs": int(stats.get("series_pairs", 0)),
        "completion_cycles": int(stats.get("completion_cycles", 0)),
        "exhaustive": bool(proven),
        "stopped_by": None if proven else stopped,
        "best_found_key": int(best_key),
        "best_possible_key": int(best_key if proven else min(open_lb, best_key)),
        "best_found_price": _key_price(best_key, minimize),
        "best_possible_price": _key_price(best_key if proven else min(open_lb, best_key), minimize),
        "seconds": {**{k: round(v, 4) for k, v in run.seconds.items()}, "total": round(total, 4)},
        "note": note,
    }


#: how long the explanation of an infeasible request may spend re-running the search [s]
EXPLAIN_SECONDS: Final[float] = 30.0


def _explained(err, frame, req, pol, analyse, stats, deadline):
    """The infeasibility error with a checked relaxation (see ``explain.checked_relaxation``).

    Rules are tried in this order: those that were the only failure of some exactly verified
    set (they remove the last otherwise feasible sets), then the screen's and the exact check's
    tallies, then the rule the error names.
    """
    order: list[str] = []
    for tally in (
        stats.get("sole_fail", {}),
        stats.get("exact_fail", {}),
        stats.get("completion", {}),
        {k: v["count"] for k, v in stats.get("blocking", {}).items()},
    ):
        for rid, _ in sorted(tally.items(), key=lambda kv: -kv[1]):
            if rid not in order:
                order.append(rid)
    if err.rule and err.rule not in order:
        order.append(err.rule)
    end = time.monotonic() + EXPLAIN_SECONDS
    if deadline is not None:
        end = min(end, deadline)
    tried: dict = {}

    def feasible(r, p) -> bool:
        left = end - time.monotonic()
        if left <= 0:
            return False
        try:
            design(frame, r, p, analyse=analyse, time_limit_s=left, explain=False)
        except InfeasibleError:
            return False
        tried["last"] = (r, p)
        return True

    found = checked_relaxation(feasible, req, pol, order, end)
    if found is None:
        return err
    rule, text = found
    detail = "no set passes every rule at every corner"
    original = str(err)
    if err.rule == rule and original.startswith(f"blocked by rule {rule}: "):
        detail = original[len(f"blocked by rule {rule}: ") :].split("; relax:")[0]
    out = InfeasibleError(
        f"blocked by rule {rule}: {detail}; relax: {text} "
        "(checked: with it the search finds a design)",
        rule=rule,
        relaxation=text,
    )
    out.relaxed_requirement, out.relaxed_policy = tried["last"]
    return out
