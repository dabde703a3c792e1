"""The screen: grid points (X option x series-R option) of one group, bounded and completed.

For a chunk of X options, each X allows a window of series resistance (necessary conditions: the
current bound meets the load; switch-on dV/dt and the rectifier's IFSM need R large enough); the
points of that ragged window are expanded in batches of at most ``POINTS_PER_BATCH``; the key of the
cheapest completion prunes them by the budget before any physics; then the X and series-R rules
on the bounds of ``bounds.screen_bounds`` (cheap rules first, surge bounds on the survivors), and
the cheapest completion (Zener, rectifier, reservoir, bleeder, fuse) from sorted look-ups.
Proof obligation: a point is dropped only if a bound fails a rule (so it fails exactly), or if its
lower-bound key is not below the budget; the key returned is a lower bound of the key of any exact
completion of the point.
"""

from __future__ import annotations

from types import SimpleNamespace
from typing import Any, Final

import numpy as np

from ..policy import Policy, standby_bound_w
from ..rules import X_CAP_IEC60384_14_KEY
from ..rules.life import EOL_LOSS_KEY
from .bounds import (
    SCREEN_SLACK,
    SURGE_SLACK,
    bleeder_resistance_ceiling,
    max_rectifier_resistance,
    max_series_resistance_for_current,
    ripple_reservoir_need,
    screen_bounds,
    surge_bounds,
)
from .candidates import rule_by_id, tally
from .groups import NO_BOUND, ZenerGroup
from .lookups import cheapest_at_least, cheapest_meeting_both
from .requirement import SQRT2, bus_demand, context_scalars
from .setup import SearchSetup

SURGE_RULES: Final[frozenset[str]] = frozenset(
    {"x_cap.dvdt_surge", "series_r.surge_energy", "series_r.surge_voltage"}
)


def screen_x_and_series_rules(
    s: dict[str, Any],
    xns: SimpleNamespace,
    rns: SimpleNamespace,
    pol: Policy,
    which: str = "all",
) -> np.ndarray:
    """The X, series-R and minimum-current rules on screen bounds; ``which``: 'all',
    'cheap' (everything but the surge rules) or 'surge'."""
    ok = np.ones(np.shape(s["min_dc_current_a"]), dtype=bool)

    def wanted(rid: str) -> bool:
        if which == "all":
            return True
        return (rid in SURGE_RULES) == (which == "surge")

    for rid in ("x_cap.dvdt_switch_on", "x_cap.k0_switch_on", "x_cap.dvdt_surge"):
        if wanted(rid):
            st, lim, _ = rule_by_id(rid).check(s, xns, pol)
            ok &= ~(st > lim)
            ok &= ~np.isnan(lim)  # an unknown dV/dt rating never passes
    for rid in (
        "series_r.power",
        "series_r.switch_on_energy",
        "series_r.surge_energy",
        "series_r.peak_voltage",
        "series_r.switch_on_voltage",
        "series_r.surge_voltage",
    ):
        if wanted(rid):
            st, lim, _ = rule_by_id(rid).check(s, rns, pol)
            ok &= np.asarray(st <= lim)
    if which != "surge":
        st, lim, _ = rule_by_id("whole.min_current").check(s, None, pol)
        ok &= np.asarray(st <= lim)
        loss = getattr(xns, "x_eol_loss", None)
        if loss is not None and "cap_loss_in_analysis" in s:
            # whole.end_of_life_current on the bound: the exact figure is the minimum DC
            # current x (1 - loss) / (1 - loss in the analysis), with that factor exact per
            # X option (its own loss, the worse part's for a pair) and at most 1, so the upper
            # bound of the minimum current times it bounds the end-of-life current from above
            st, lim, _ = rule_by_id("whole.end_of_life_current").check(
                {**s, EOL_LOSS_KEY: loss}, None, pol
            )
            ok &= np.asarray(st <= lim)
    return ok


#: the ragged expansion of X by R windows works on at most this many pairs at a time
POINTS_PER_BATCH: Final[int] = 2_000_000


def screen_x_chunk(setup: SearchSetup, G: ZenerGroup, xs: np.ndarray, budget: int, stats: dict):
    """Screen the points (x in ``xs``) x (series R in the window that x allows), in batches of
    at most POINTS_PER_BATCH points. Returns (x indices, R indices, lower-bound keys,
    completion indices) of the points that pass with key < budget, in key order."""
    outs = []
    start = 0
    while start < len(xs):
        n = batch_length(setup, G, xs[start:])
        out = screen_batch(setup, G, xs[start : start + n], budget, stats)
        if out is not None:
            outs.append(out)
        start += n
    if not outs:
        return None
    if len(outs) == 1:
        return outs[0]
    xg, rg, key, comp = (np.concatenate([o[i] for o in outs]) for i in range(4))
    order = np.argsort(key, kind="stable")
    return xg[order], rg[order], key[order], comp[order]


def batch_length(setup: SearchSetup, G: ZenerGroup, xs: np.ndarray) -> int:
    """How many of ``xs`` fit in one batch (their R windows summed), at least one."""
    req, pol = setup.req, setup.policy
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    xo = setup.xo
    xtol = np.nan_to_num(xo.attrs["tolerance"][xs], nan=0.2)
    c_min = xo.attrs["value"][xs] * (1 - xtol) * (1 - req.cap_loss)
    r_hi = max_series_resistance_for_current(req, G.topology, G.vz, G.vf_lo, c_min, need)
    cnt = np.searchsorted(G.r_sorted, r_hi, side="right")
    over = np.flatnonzero(np.cumsum(cnt) > POINTS_PER_BATCH)
    return max(1, int(over[0]) if len(over) else len(xs))


def completion_lower_bound(
    setup: SearchSetup, G: ZenerGroup, xs: np.ndarray, r_hi: np.ndarray
) -> np.ndarray:
    """Per X: how much the cheapest Zener and bleeder it can use cost above the group's cheapest
    (a lower bound; NO_BOUND where none can serve).

    Zener: its power at the largest series resistance the load allows (the power falls as R
    rises) must fit; bleeder: the discharge rule at this capacitance caps its resistance.
    """
    req, pol = setup.req, setup.policy
    xo = setup.xo
    cx = xo.attrs["value"][xs]
    xtol = np.nan_to_num(xo.attrs["tolerance"][xs], nan=0.2)
    zero = np.zeros(len(xs))
    r_use = np.maximum(r_hi, 1e-3)
    b = screen_bounds(
        req,
        G.topology,
        G.vz,
        cx,
        xtol,
        r_use,
        zero,
        G.vf_lo,
        G.vf_hi,
        G.ztol_min,
        G.zz_min,
        surge=False,
    )
    zsel = cheapest_at_least(G.z_cap, G.zo.key, b["max_zener_power_w"])
    z_extra = np.where(zsel >= 0, G.zo.key[np.maximum(zsel, 0)] - int(np.min(G.zo.key)), NO_BOUND)
    rb_hi = bleeder_resistance_ceiling(req, cx, xtol)
    bsel = G.b_table.query(np.zeros(len(xs)), rb_hi)
    b_min = G.min_comp_key - (
        int(np.min(G.zo.key)) + int(np.min(G.rect.key)) + int(np.min(G.co.key))
    )
    b_extra = np.where(bsel >= 0, setup.bo.key[np.maximum(bsel, 0)] - b_min, NO_BOUND)
    del pol
    return np.minimum(z_extra + b_extra, NO_BOUND)


def screen_batch(setup: SearchSetup, G: ZenerGroup, xs: np.ndarray, budget: int, stats: dict):
    """One batch of screen_x_chunk."""
    req, pol = setup.req, setup.policy
    xo, ro = setup.xo, setup.ro
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    xtol = np.nan_to_num(xo.attrs["tolerance"][xs], nan=0.2)
    cx = xo.attrs["value"][xs]
    # the series-R window each X allows (necessary conditions, see screen_bounds):
    #   current: I_ub(C, R) >= need  ->  R <= sqrt((I0 / need)^2 - 1) / (w_lo C_min)
    #   switch-on dV/dt on C and rectifier IFSM: R >= V_on / (C dV/dt), V_on / IFSM_max
    c_min = cx * (1 - xtol) * (1 - req.cap_loss)
    r_hi = max_series_resistance_for_current(req, G.topology, G.vz, G.vf_lo, c_min, need)
    lb = 1 - SCREEN_SLACK
    c_max = cx * (1 + xtol)
    v_on = max(SQRT2 * req.mains.high_v - (G.vz + 2 * G.vf_hi), 0.0)
    dv = np.nan_to_num(xo.attrs["dvdt_v_per_s"][xs], nan=np.inf)
    ifsm_max = float(np.nanmax(G.rect.attrs["ifsm_a"])) if len(G.rect) else np.inf
    r_lo = np.maximum(v_on * lb / (c_max * dv), v_on * lb / ifsm_max) / 1.25
    lo_i = np.searchsorted(G.r_sorted, r_lo, side="left")
    hi_i = np.searchsorted(G.r_sorted, r_hi, side="right")
    cnt = np.maximum(hi_i - lo_i, 0)
    total = int(cnt.sum())
    if total == 0:
        return None
    xpos = np.repeat(np.arange(len(xs)), cnt)
    start = np.repeat(lo_i - np.concatenate([[0], np.cumsum(cnt)[:-1]]), cnt)
    rpos = np.arange(total) + start
    xg = xs[xpos]
    rg = G.rkeep[rpos]
    # keys: prune by the budget before any physics
    kx = xo.key[xg] + ro.key[rg]
    # the cheapest completion: Zener, rectifier, reservoir, bleeder, and a fuse unless the
    # series resistor is fusible
    fuse_min = int(np.min(setup.fo.key)) if len(setup.fo) else 0
    comp_lb = G.min_comp_key + completion_lower_bound(setup, G, xs, r_hi)[xpos]
    m = kx + comp_lb + np.where(ro.attrs["fusible_flag"][rg], 0, fuse_min) < budget
    xg, rg, kx = xg[m], rg[m], kx[m]
    if len(xg) == 0:
        return None
    # the physics in slices of bounded size
    outs = []
    for s0_ in range(0, len(xg), PHYSICS_SLICE):
        sl = slice(s0_, s0_ + PHYSICS_SLICE)
        out = screen_points(setup, G, xg[sl], rg[sl], kx[sl], budget, stats)
        if out is not None:
            outs.append(out)
    if not outs:
        return None
    if len(outs) == 1:
        return outs[0]
    xg, rg, key, comp = (np.concatenate([o[i] for o in outs]) for i in range(4))
    order = np.argsort(key, kind="stable")  # the pending lists must stay in key order
    return xg[order], rg[order], key[order], comp[order]


#: points per slice of the physics screen (bounds the memory of the bound arrays)
PHYSICS_SLICE: Final[int] = 150_000


def screen_points(setup: SearchSetup, G: ZenerGroup, xg, rg, kx, budget: int, stats: dict):
    """The physics screen of a set of points (X index, R index, their key)."""
    req, pol = setup.req, setup.policy
    xo, ro = setup.xo, setup.ro
    s0 = context_scalars(req)
    avg_a, peak_a = bus_demand(req)
    rtol = np.nan_to_num(ro.attrs["tolerance"][rg], nan=0.05)
    r_tot = ro.attrs["total_ohm"][rg]
    b = screen_bounds(
        req,
        G.topology,
        G.vz,
        xo.attrs["value"][xg],
        np.nan_to_num(xo.attrs["tolerance"][xg], nan=0.2),
        r_tot,
        rtol,
        G.vf_lo,
        G.vf_hi,
        G.ztol_min,
        G.zz_min,
        surge=False,
    )
    s = {**s0, **b, "load_a": avg_a}
    xns, rns = xo.ns(xg), ro.ns(rg)
    ok = screen_x_and_series_rules(s, xns, rns, pol, which="cheap")
    stats["points"] += len(ok)
    if budget >= NO_BOUND:  # diagnostics for an infeasible request; not needed once a set exists
        count_blocking(stats, s, xns, rns, pol, ok)
    # quick completion checks before the costlier surge bounds
    room0 = standby_bound_w(pol) - (
        b["max_zener_power_w"] + b["max_series_r_power_w"] + b["rectifier_loss_w"]
    )
    tally(stats, "whole.standby_power", ok & ~(room0 > 0))
    ok &= room0 > 0
    tally(stats, "zener.power", ok & ~(b["max_zener_power_w"] <= np.max(G.z_cap)))
    ok &= b["max_zener_power_w"] <= np.max(G.z_cap)
    keep = np.flatnonzero(ok)
    if len(keep) == 0:
        return None
    xg, rg, kx = xg[keep], rg[keep], kx[keep]
    b = {
        k: (v[keep] if isinstance(v, np.ndarray) and v.shape == ok.shape else v)
        for k, v in b.items()
    }
    b.update(
        surge_bounds(
            req.conditions.surge_v,
            b["series_resistance_ohm"],
            b["c_max"],
            1 - SURGE_SLACK,
            max_rectifier_resistance(G.rect, G.topology),
        )
    )
    s = {**s0, **b, "load_a": avg_a}
    xns, rns = xo.ns(xg), ro.ns(rg)
    ok = screen_x_and_series_rules(s, xns, rns, pol, which="surge")
    ok_xr = ok.copy()
    zo, rect, co = G.zo, G.rect, G.co
    zsel = cheapest_at_least(G.z_cap, zo.key, b["max_zener_power_w"])
    tally(stats, "zener.power", ok_xr & (zsel < 0))
    ok &= zsel >= 0
    rsel = cheapest_at_least(
        rect.attrs["ifsm_a"] * pol.rectifier_surge_fraction,
        rect.key,
        b["inrush_rectifier_peak_current_a"],
    )
    tally(stats, "rectifier.ifsm", ok_xr & (rsel < 0))
    ok &= rsel >= 0
    deficit = np.maximum(peak_a - b["min_dc_current_a"], 0.0)
    need_c = deficit * req.burst_duration_s / (G.vz * pol.burst_droop_fraction)
    # the output ripple rule: the nominal capacitance the engine's ripple needs at least
    need_ripple = ripple_reservoir_need(
        req,
        G.topology,
        G.vz,
        G.ztol_max,
        G.vf_lo,
        G.vz * pol.output_ripple_fraction,
        ro.attrs["total_ohm"][rg] * (1 + np.nan_to_num(ro.attrs["tolerance"][rg], nan=0.05)),
        b["c_min_nom"] * (1 - req.cap_loss),
    )
    if req.burst_current_a > 0:
        csel = cheapest_meeting_both(G.cres_min, need_c, co.attrs["value"], need_ripple, co.key)
    else:
        csel = cheapest_at_least(co.attrs["value"], co.key, need_ripple)
    tally(stats, "whole.burst_holdup", ok_xr & (csel < 0))
    ok &= csel >= 0
    rb_hi = bleeder_resistance_ceiling(
        req, xo.attrs["value"][xg], np.nan_to_num(xo.attrs["tolerance"][xg], nan=0.2)
    )
    room = standby_bound_w(pol) - (
        b["max_zener_power_w"] + b["max_series_r_power_w"] + b["rectifier_loss_w"]
    )
    tally(stats, "whole.standby_power", ok_xr & ~(room > 0))
    ok &= room > 0
    rb_lo = np.where(room > 0, G.pbleed_of / np.maximum(room, 1e-12), np.inf)
    bsel = G.b_table.query(rb_lo, rb_hi)
    tally(stats, "bleeder.discharge", ok_xr & (room > 0) & (bsel < 0))
    ok &= bsel >= 0
    fus = ro.attrs["fusible_flag"][rg].astype(bool)
    # every X option is of an X subclass (setup.prepare keeps no other), so of an IEC 60384-14
    # class: the 'opens on a shorted X capacitor' rules are waived at every point
    x_exempt = rule_by_id("fuse.opens_on_short").waiver({X_CAP_IEC60384_14_KEY: True}) is not None
    fkey, fok = cheapest_fuse_per_point(setup.fo, ro, rg, b, s0, pol, fus, x_exempt)
    tally(stats, "fuse.opens_on_short", ok_xr & ~fok)
    ok &= fok
    key = (
        kx
        + np.where(zsel >= 0, zo.key[np.maximum(zsel, 0)], 0)
        + np.where(rsel >= 0, rect.key[np.maximum(rsel, 0)], 0)
        + np.where(csel >= 0, co.key[np.maximum(csel, 0)], 0)
        + np.where(bsel >= 0, setup.bo.key[np.maximum(bsel, 0)], 0)
        + fkey
    )
    ok &= key < budget
    sel = np.flatnonzero(ok)
    stats["passed"] += len(sel)
    if len(sel) == 0:
        return None
    order = np.argsort(key[sel], kind="stable")
    sel = sel[order]
    comp = np.column_stack([zsel[sel], rsel[sel], G.co_idx[csel[sel]], bsel[sel]])
    return xg[sel], rg[sel], key[sel], comp


def cheapest_fuse_per_point(fo, ro, rg, b, s0, pol, fusible, x_exempt=False):
    """Cheapest fuse per grid point (key, ok); a fusible series resistor serves as its own
    fuse. ``x_exempt``: the shorted-X-capacitor rules are waived (IEC 60384-14 X capacitor),
    so only the switch-on I^2t rule binds."""
    n = len(rg)
    fkey = np.zeros(n, dtype=np.int64)
    fok = fusible.copy()
    # fusible resistor: fault power rule on the resistor itself
    if np.any(fusible) and not x_exempt:
        rns = ro.ns(rg)
        rns.power_w = rns.fusible_power_w  # the fusible element's rating per share (series)
        st, lim, _ = rule_by_id("fuse.fusible_opens_on_short").check(
            {**s0, "series_resistance_ohm": b["series_resistance_ohm"] * 1.0}, rns, pol
        )
        fok &= np.asarray(st <= lim) | ~fusible
    if len(fo):
        fns = fo.ns()
        # the rule's own limit: melting I^2t derated for the switch-on count and the fuse type
        _, i2t_cap, _ = rule_by_id("fuse.inrush_i2t").check(
            {**s0, "inrush_i2t_a2s": np.zeros(len(fo))}, fns, pol
        )
        i2t_cap = np.asarray(i2t_cap, dtype=float)
        need_fault = fns.value * pol.fuse_fault_factor
        fault = s0["mains_min_v"] / np.maximum(b["series_resistance_ohm"], 1e-3)
        # fault current upper bound: R at its low tolerance -> series_resistance_ohm = r_min
        best = np.full(n, -1, dtype=np.int64)
        bestkey = np.full(n, np.iinfo(np.int64).max, dtype=np.int64)
        order = np.argsort(fo.key)
        for j in order:  # fuses are few; loop over fuse options, vectorised over the grid
            okj = (b["inrush_i2t_a2s"] <= i2t_cap[j]) & ((need_fault[j] <= fault) | x_exempt)
            upd = okj & (best < 0)
            best[upd] = j
            bestkey[upd] = fo.key[j]
        use = ~fusible & (best >= 0)
        fkey = np.where(use, bestkey, 0)
        fok = fok | use
    return fkey, fok


def count_blocking(stats, s, xns, rns, pol, ok_all):
    """Tally, per rule, the grid points where it alone is the first failing rule."""
    blk = stats["blocking"]
    for rid in (
        "whole.min_current",
        "series_r.power",
        "series_r.switch_on_energy",
        "series_r.switch_on_voltage",
        "x_cap.dvdt_switch_on",
    ):
        r = rule_by_id(rid)
        p = None if r.role == "whole" else (xns if r.role == "x_capacitor" else rns)
        st, lim, m = r.check(s, p, pol)
        bad = ~np.asarray(st <= lim)
        if np.any(bad):
            d = blk.setdefault(rid, {"count": 0, "best_ratio": 0.0})
            d["count"] += int(np.sum(bad))
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.nanmax(np.where(bad, lim / st, np.nan)) if np.any(bad) else 0.0
            d["best_ratio"] = max(d["best_ratio"], float(ratio))
