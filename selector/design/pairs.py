"""Later phases of the search: X pairs in parallel, then unequal series-resistor pairs.

Method: the total capacitance a feasible set of a group can have lies in a window
(``capacitance_window``: the X criteria of ``prune_options`` on a fine grid at zero tolerance,
the most permissive case), and a pair dearer than the best set found so far minus the cheapest
completion cannot win. ``pairs_in_window`` enumerates exactly the pairs (i <= j) inside both
limits, vectorised by sorted search over the capacitance. Proof obligation: a pair outside the
window fails a necessary condition, a pair over the budget costs more than the incumbent.
"""

from __future__ import annotations

import math
from types import SimpleNamespace
from typing import Final

import numpy as np

from ..policy import standby_bound_w
from .bounds import max_series_resistance_for_current, screen_bounds
from .candidates import OptionTable, concat_options, keep_best_per_signature
from .groups import NO_BOUND, ZenerGroup, prune_for_group, series_necessary
from .lookups import cheapest_at_least
from .requirement import bus_demand, objective_key
from .series import unequal_series_pairs
from .setup import X_SIGNATURE, SearchSetup


def parallel_pairs(single: OptionTable, i: np.ndarray, j: np.ndarray, minimize: str) -> OptionTable:
    """The pairs (i[k], j[k]) of single X options in parallel; ratings = the weaker one,
    tolerance = the capacitance-weighted one (exact for both extremes)."""
    v = single.attrs["value"]
    t = np.nan_to_num(single.attrs["tolerance"], nan=0.2)
    attrs: dict[str, np.ndarray] = {}
    for k, arr in single.attrs.items():
        if k == "value":
            attrs[k] = arr[i] + arr[j]
        elif k == "tolerance":
            attrs[k] = (v[i] * t[i] + v[j] * t[j]) / (v[i] + v[j])
        elif k == "x_eol_loss":  # the worse part's loss, as rules.life.end_of_life_loss takes
            attrs[k] = np.fmax(arr[i], arr[j])
        else:
            attrs[k] = np.fmin(arr[i], arr[j])
    rows = [single.rows[a] + single.rows[b] for a, b in zip(i.tolist(), j.tolist(), strict=True)]
    price = single.price[i] + single.price[j]
    area = single.area[i] + single.area[j]
    count = single.count[i] + single.count[j]
    return OptionTable(
        single.role,
        rows,
        np.full(len(i), 2, dtype=np.int64),
        ["parallel"] * len(i),
        objective_key(price, area, count, minimize),
        price,
        area,
        count,
        attrs,
    )


#: at most this many X pairs enter the search (the cheapest in the capacitance window); when
#: the window holds more, the result says the search was limited
PAIR_CAP: Final[int] = 400_000


def pairs_in_window(
    single: OptionTable, c_lo: float, c_hi: float, budget: int, cap: int
) -> tuple[np.ndarray, np.ndarray, bool]:
    """Index pairs (i <= j) of singles with c_lo <= C_i + C_j <= c_hi and key_i + key_j <
    budget; the ``cap`` cheapest when there are more (then the flag says so)."""
    n = len(single)
    if n == 0:
        return np.zeros(0, np.int64), np.zeros(0, np.int64), False
    order = np.argsort(single.attrs["value"], kind="stable")
    vs = single.attrs["value"][order]
    ks = single.key[order]
    lo = np.maximum(np.searchsorted(vs, c_lo - vs, side="left"), np.arange(n))
    hi = np.searchsorted(vs, c_hi - vs, side="right")
    cnt = np.maximum(hi - lo, 0)
    best_i: list[np.ndarray] = []
    best_j: list[np.ndarray] = []
    best_k: list[np.ndarray] = []
    truncated = False
    block = 2_000_000
    start = 0
    while start < n:
        stop = start
        tot = 0
        while stop < n and (tot + cnt[stop] <= block or stop == start):
            tot += int(cnt[stop])
            stop += 1
        c = cnt[start:stop]
        if tot:
            a = np.repeat(np.arange(start, stop), c)
            offs = np.repeat(lo[start:stop] - np.concatenate([[0], np.cumsum(c)[:-1]]), c)
            b = np.arange(tot) + offs
            k = ks[a] + ks[b]
            m = k < budget
            a, b, k = a[m], b[m], k[m]
            best_i.append(a)
            best_j.append(b)
            best_k.append(k)
            allk = np.concatenate(best_k)
            if len(allk) > cap:
                truncated = True
                keep = np.argpartition(allk, cap - 1)[:cap]
                best_i = [np.concatenate(best_i)[keep]]
                best_j = [np.concatenate(best_j)[keep]]
                best_k = [allk[keep]]
        start = stop
    if not best_i:
        return np.zeros(0, np.int64), np.zeros(0, np.int64), False
    ia = order[np.concatenate(best_i)]
    ib = order[np.concatenate(best_j)]
    return ia, ib, truncated


def capacitance_window(setup: SearchSetup, G: ZenerGroup) -> tuple[float, float]:
    """Total X capacitance range a feasible set of this group can have [F] (necessary).

    The X criteria of ``prune_options`` on a fine log grid of capacitances at zero tolerance
    (the most permissive case: tolerance only lowers the minimum current
    and raises the Zener power).
    """
    req, pol = setup.req, setup.policy
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    ro = setup.ro
    r_tot = ro.attrs["total_ohm"]
    rtol = np.nan_to_num(ro.attrs["tolerance"], nan=0.05)
    r_lo = float(np.min(r_tot * (1 - rtol)))
    r_hi = float(np.max(r_tot * (1 + rtol)))
    grid = np.geomspace(1e-9, 4e-5, 1200)
    step = grid[1] / grid[0]
    zero = np.zeros(len(grid))
    r_allow = max_series_resistance_for_current(
        req, G.topology, G.vz, G.vf_lo, grid * (1 - req.cap_loss), need
    )
    ok = r_allow >= r_lo
    b = screen_bounds(
        req,
        G.topology,
        G.vz,
        grid,
        zero,
        np.clip(r_allow, r_lo, r_hi),
        zero,
        G.vf_lo,
        G.vf_hi,
        G.ztol_min,
        G.zz_min,
    )
    ok &= b["max_zener_power_w"] <= float(np.max(G.z_cap))
    ok &= b["max_zener_power_w"] + b["rectifier_loss_w"] <= standby_bound_w(pol)
    idx = np.flatnonzero(ok)
    if len(idx) == 0:
        return math.inf, -math.inf
    return float(grid[idx[0]] / step), float(grid[idx[-1]] * step)


def add_x_pairs(setup: SearchSetup, groups: list[ZenerGroup], budget: int, stats: dict) -> None:
    """Phase 2 of the search: X pairs within the capacitance window and under the cost budget
    join the options; each group gets them (pruned, in key order) as its next X list."""
    windows = [capacitance_window(setup, g) for g in groups]
    c_lo = min(w[0] for w in windows)
    c_hi = max(w[1] for w in windows)
    if not c_lo <= c_hi:
        return
    xs = setup.xs
    ia, ib, trunc = pairs_in_window(xs, c_lo, c_hi, budget, PAIR_CAP)
    stats["pairs"] = len(ia)
    if trunc:
        stats["pairs_truncated"] = True
    if len(ia) == 0:
        return
    pairs = parallel_pairs(xs, ia, ib, setup.req.minimize)
    pairs = keep_best_per_signature(pairs, X_SIGNATURE, setup.req.top)
    start = len(setup.xo)
    setup.xo = concat_options([setup.xo, pairs])
    new = np.arange(start, len(setup.xo))
    for g in groups:
        xk, rk = prune_for_group(setup, g, xidx=new)
        _set_group_options(setup, g, xk, rk)


def _set_group_options(setup: SearchSetup, g: ZenerGroup, xk: np.ndarray, rk: np.ndarray) -> None:
    """The group's next phase: X options ``xk`` (in key order) against series options ``rk``."""
    g.cursor = 0
    if len(xk) == 0 or len(rk) == 0:
        g.xkeep = np.zeros(0, dtype=np.int64)
        return
    g.xkeep = xk[np.argsort(setup.xo.key[xk], kind="stable")]
    r_tot = setup.ro.attrs["total_ohm"][rk]
    order = np.argsort(r_tot, kind="stable")
    g.rkeep, g.r_sorted = rk[order], r_tot[order]
    g.min_r_key = int(np.min(setup.ro.key[g.rkeep]))


def add_series_pairs(
    setup: SearchSetup, groups: list[ZenerGroup], budget: int, stats: dict
) -> None:
    """Phase 3 of the search: two different series resistors join the options; each group gets
    every X option (singles and pairs) against the new series options.

    Necessary conditions (see ``series``): a pair's total is at most the largest resistance that
    still meets the load with the largest capacitance of any group's window; its key is below
    the budget less the cheapest X option and the cheapest completion of any group.
    """
    req, pol = setup.req, setup.policy
    if setup.series_elements is None or not groups:
        return
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    r_max = 0.0
    for g in groups:
        _, c_hi = capacitance_window(setup, g)
        if not math.isfinite(c_hi) or c_hi <= 0:
            continue
        r = max_series_resistance_for_current(
            req, g.topology, g.vz, g.vf_lo, np.array([c_hi * (1 - req.cap_loss)]), need
        )
        r_max = max(r_max, float(r[0]))
    r_max = min(r_max, 1e5)
    if r_max <= 0:
        return
    base = int(np.min(setup.xo.key)) + min(g.min_comp_key for g in groups)
    key_budget = budget if budget >= NO_BOUND else budget - base
    # the X options of each group (singles and pairs) that a series pair would meet
    group_x = [prune_for_group(setup, g, ridx=np.zeros(0, dtype=np.int64))[0] for g in groups]

    need = avg_a * (1 + pol.load_margin)
    # per group: the largest series resistance each X option allows (current bound)
    group_r_allow = []
    for g, xk in zip(groups, group_x, strict=True):
        xtol = np.nan_to_num(setup.xo.attrs["tolerance"][xk], nan=0.2)
        c_weak = setup.xo.attrs["value"][xk] * (1 - xtol) * (1 - req.cap_loss)
        group_r_allow.append(
            max_series_resistance_for_current(req, g.topology, g.vz, g.vf_lo, c_weak, need)
        )

    def admissible(total: np.ndarray, tol: np.ndarray, key: np.ndarray) -> np.ndarray:
        """Pairs that fit the budget with the cheapest X option of some group able to carry
        the load through them (and that group's cheapest completion)."""
        ok = np.zeros(len(total), dtype=bool)
        if budget >= NO_BOUND:
            return ~ok
        r_weak = total * (1 + tol)
        for g, xk, r_allow in zip(groups, group_x, group_r_allow, strict=True):
            if len(xk):
                xsel = cheapest_at_least(r_allow, setup.xo.key[xk], r_weak)
                x_key = np.where(xsel >= 0, setup.xo.key[xk][np.maximum(xsel, 0)], NO_BOUND)
                ok |= key + x_key + g.min_comp_key < budget
        return ok

    def necessary(attrs: dict[str, np.ndarray]) -> np.ndarray:
        """Pairs that pass some group's series necessary conditions."""
        ok = np.zeros(len(attrs["total_ohm"]), dtype=bool)
        rns = SimpleNamespace(
            **attrs, power_share=1.0, voltage_share=1.0, fusible=attrs["fusible_flag"]
        )
        for g, xk in zip(groups, group_x, strict=True):
            if len(xk):
                ok |= series_necessary(
                    setup,
                    g.topology,
                    g.vz,
                    g.vf_lo,
                    g.vf_hi,
                    g.ztol_min,
                    xk,
                    attrs["total_ohm"],
                    attrs["tolerance"],
                    rns,
                )
        return ok

    # the least switch-on energy of any group: 0.5 C V^2 with the smallest kept capacitance
    energies = []
    for g, xk in zip(groups, group_x, strict=True):
        if len(xk) == 0:
            continue
        cmin = setup.xo.attrs["value"][xk] * (
            1 - np.nan_to_num(setup.xo.attrs["tolerance"][xk], nan=0.2)
        )
        one = np.ones(1)
        b = screen_bounds(
            req,
            g.topology,
            g.vz,
            one * float(np.min(cmin)),
            0 * one,
            one,
            0 * one,
            g.vf_lo,
            g.vf_hi,
            surge=False,
        )
        energies.append(float(b["inrush_series_r_energy_j"][0]))
    pairs = unequal_series_pairs(
        setup.series_elements,
        r_max,
        key_budget,
        req.minimize,
        req.top,
        necessary,
        switch_on_energy_j=min(energies) if energies else 0.0,
        pulse_energy_fraction=pol.pulse_energy_fraction,
        admissible=admissible,
    )
    stats["series_pairs"] = len(pairs)
    if len(pairs) == 0:
        for g in groups:
            _set_group_options(setup, g, np.zeros(0, np.int64), np.zeros(0, np.int64))
        return
    start = len(setup.ro)
    setup.ro = concat_options([setup.ro, pairs])
    new = np.arange(start, len(setup.ro))
    for g, xk in zip(groups, group_x, strict=True):
        rns = setup.ro.ns(new)
        r_tot = setup.ro.attrs["total_ohm"][new]
        rtol = setup.ro.attrs["tolerance"][new]
        ok = series_necessary(
            setup, g.topology, g.vz, g.vf_lo, g.vf_hi, g.ztol_min, xk, r_tot, rtol, rns
        )
        _set_group_options(setup, g, xk, new[ok])
