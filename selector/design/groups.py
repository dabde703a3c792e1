"""Groups of the search: one per (topology, Zener voltage), with the options each role may use.

``make_group`` selects the reservoirs rated for the bus, the Zener capability, and the bleeders
that pass their own rules at this bus (indexed in a range-minimum table over resistance).
``prune_options`` keeps the X and series-R options that can take part in any feasible point of the
group. Proof obligation: each test is a necessary condition evaluated with the most favourable
partner of the other role (the smallest series resistance for an X option, the largest kept
capacitance for a series option), so no pruned option belongs to a feasible set.
"""

from __future__ import annotations

from dataclasses import dataclass
from types import SimpleNamespace
from typing import Final

import numpy as np

from ..policy import standby_bound_w
from .bounds import (
    SCREEN_SLACK,
    SURGE_SLACK,
    max_rectifier_resistance,
    max_series_resistance_for_current,
    screen_bounds,
    surge_bounds,
)
from .candidates import OptionTable, rule_by_id, tally
from .lookups import RangeMinimum, distinct_pairs
from .requirement import SQRT2, bus_demand, context_scalars
from .setup import SearchSetup


@dataclass
class ZenerGroup:
    """Everything the screen needs for one (topology, Zener voltage) group."""

    topology: str
    vz: float
    zo: OptionTable
    rect: OptionTable
    co: OptionTable
    co_idx: np.ndarray  # rows of setup.co that co holds
    cres_min: np.ndarray
    z_cap: np.ndarray
    b_table: RangeMinimum
    pbleed_of: float
    v_cap: float
    vf_lo: float
    vf_hi: float
    xkeep: np.ndarray  # X options, ascending key
    rkeep: np.ndarray  # series-R options, ascending total resistance
    r_sorted: np.ndarray
    min_r_key: int
    min_comp_key: int
    ztol_min: float = 0.0
    ztol_max: float = 0.0
    zz_min: float = 0.0
    cursor: int = 0


def make_group(setup: SearchSetup, topology: str, vz: float, stats: dict) -> ZenerGroup | None:
    req, pol = setup.req, setup.policy
    s0 = context_scalars(req)
    rect = setup.rect.get(topology)
    zo = setup.zo[(topology, vz)]
    if rect is None or len(rect) == 0 or len(zo) == 0:
        return None
    vf = rect.attrs["vf_v"]
    vf_lo = float(np.nanmin(vf)) if np.any(~np.isnan(vf)) else 0.0
    vf_hi = float(np.nanmax(vf)) if np.any(~np.isnan(vf)) else 0.0
    # reservoir candidates for this bus (voltage rule at the Zener's upper tolerance)
    co = setup.co
    co_idx = np.arange(len(co))
    if len(co):
        st, lim, _ = rule_by_id("reservoir.voltage").check(
            {"max_output_voltage_v": vz * 1.05 * (1 - SCREEN_SLACK)}, co.ns(), pol
        )
        co_idx = np.flatnonzero(np.asarray(st <= lim))
        co = co.take(co_idx)
    if len(co) == 0:
        tally(stats, "reservoir.voltage", np.ones(1, dtype=bool))
        return None
    cres_min = co.attrs["value"] * (1 - np.nan_to_num(co.attrs["tolerance"], nan=0.2))
    # Zener capability: per-element derated power x fraction x number in series
    _, zlim, _ = rule_by_id("zener.power").check(
        {"max_zener_power_w": 0.0, "ambient_c": s0["ambient_c"]}, zo.ns(), pol
    )
    z_cap = np.asarray(zlim, dtype=float) * zo.qty
    # bleeder options passing their own rules at this bus; range-minimum table over R
    bo = setup.bo
    bns = bo.ns()
    vpk_hi = SQRT2 * req.mains.high_v
    vo_hi = (vz * 1.05 + 2 * vf_hi) if topology == "bridge" else vz * 1.05
    v_cap = max(vpk_hi - vo_hi, 0.0) * (1 - SCREEN_SLACK)
    btol = np.nan_to_num(bo.attrs["tolerance"], nan=0.05)
    pb = (v_cap / SQRT2) ** 2 / (bo.attrs["total_ohm"] * (1 + btol))
    st, lim, _ = rule_by_id("bleeder.power").check(
        {"max_bleeder_power_w": pb, "ambient_c": s0["ambient_c"]}, bns, pol
    )
    b_ok = np.asarray(st <= lim)
    st, lim, _ = rule_by_id("bleeder.voltage").check({"max_bleeder_voltage_v": v_cap}, bns, pol)
    b_ok &= np.asarray(st <= lim)
    # each bleeder at its upper tolerance, as the engine discharges through it (its series
    # resistance tolerance is at least the bleeder's own): see bounds.bleeder_resistance_ceiling
    b_table = RangeMinimum(np.where(b_ok, bo.attrs["total_ohm"] * (1 + btol), np.nan), bo.key)
    ztol_min = float(np.nanmin(np.nan_to_num(zo.attrs["tolerance"], nan=0.0)))
    ztol_max = float(np.nanmax(np.nan_to_num(zo.attrs["tolerance"], nan=0.05)))
    zz_min = float(np.min(np.nan_to_num(zo.attrs["zz_ohm"], nan=0.0) * zo.qty))
    xkeep, rkeep = prune_options(
        setup, topology, vz, vf_lo, vf_hi, float(np.max(z_cap)), ztol_min, zz_min
    )
    if not np.any(b_ok):
        tally(stats, "bleeder.power", np.ones(1, dtype=bool))
        return None
    if len(xkeep) == 0 or len(rkeep) == 0:
        # no single X capacitor can serve; pairs may (phase 2 of the search)
        tally(stats, "whole.min_current", np.ones(1, dtype=bool))
        xkeep = np.zeros(0, dtype=np.int64)
        rkeep = np.zeros(0, dtype=np.int64)
    xkeep = xkeep[np.argsort(setup.xo.key[xkeep], kind="stable")]
    r_tot = setup.ro.attrs["total_ohm"][rkeep]
    order = np.argsort(r_tot, kind="stable")
    rkeep, r_sorted = rkeep[order], r_tot[order]
    min_comp = (
        int(np.min(zo.key))
        + int(np.min(rect.key))
        + int(np.min(co.key))
        + int(np.min(bo.key[b_ok]))
    )
    return ZenerGroup(
        topology,
        vz,
        zo,
        rect,
        co,
        co_idx,
        cres_min,
        z_cap,
        b_table,
        (v_cap / SQRT2) ** 2,
        v_cap,
        vf_lo,
        vf_hi,
        xkeep,
        rkeep,
        r_sorted,
        int(np.min(setup.ro.key[rkeep])) if len(rkeep) else 0,
        min_comp,
        ztol_min=ztol_min,
        ztol_max=ztol_max,
        zz_min=zz_min,
    )


NO_BOUND: Final[int] = np.iinfo(np.int64).max // 4


def prune_options(
    setup, topology, vz, vf_lo, vf_hi, z_cap_max, ztol_min=0.0, zz_min=0.0, xidx=None, ridx=None
):
    """X and series-R options that can take part in any feasible point of this group.

    Necessary conditions only (each uses the most favourable partner of the other role):
    X: the current at the smallest series resistance meets the load; the Zener power at the
    largest series resistance fits the largest Zener and the standby limit. R: the current
    with the largest kept capacitance meets the load; the R rules hold with the smallest kept
    capacitance. ``xidx`` / ``ridx`` restrict the options examined (default: all); the
    resistance range the X test uses is always that of every series option.
    """
    req, pol = setup.req, setup.policy
    xo, ro = setup.xo, setup.ro
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    r_tot = ro.attrs["total_ohm"]
    rtol = np.nan_to_num(ro.attrs["tolerance"], nan=0.05)
    if xidx is None:
        xidx = np.arange(len(xo))
    xtol_all = np.nan_to_num(xo.attrs["tolerance"], nan=0.2)
    xtol = xtol_all[xidx]
    cx = xo.attrs["value"][xidx]
    r_lo = float(np.min(r_tot * (1 - rtol)))
    r_hi = float(np.max(r_tot * (1 + rtol)))
    zero = np.zeros(len(xidx))
    # the largest series resistance that still meets the load with this X; the Zener power
    # can be no lower than at that resistance (it falls as R rises)
    r_allow = max_series_resistance_for_current(
        req, topology, vz, vf_lo, cx * (1 - xtol) * (1 - req.cap_loss), need
    )
    xk = r_allow >= r_lo
    r_use = np.clip(r_allow, r_lo, r_hi)
    b_hi = screen_bounds(req, topology, vz, cx, xtol, r_use, zero, vf_lo, vf_hi, ztol_min, zz_min)
    xk &= b_hi["max_zener_power_w"] <= z_cap_max
    xk &= b_hi["max_zener_power_w"] + b_hi["rectifier_loss_w"] <= standby_bound_w(pol)
    xkeep = xidx[np.flatnonzero(xk)]
    if len(xkeep) == 0:
        return xkeep, np.zeros(0, dtype=np.int64)
    if ridx is None:
        ridx = np.arange(len(ro))
    ok = series_necessary(
        setup, topology, vz, vf_lo, vf_hi, ztol_min, xkeep, r_tot[ridx], rtol[ridx], ro.ns(ridx)
    )
    return xkeep, ridx[ok]


def prune_for_group(setup, g: ZenerGroup, xidx=None, ridx=None):
    """``prune_options`` with the group's own figures (see there)."""
    return prune_options(
        setup,
        g.topology,
        g.vz,
        g.vf_lo,
        g.vf_hi,
        float(np.max(g.z_cap)),
        g.ztol_min,
        g.zz_min,
        xidx=xidx,
        ridx=ridx,
    )


def series_necessary(setup, topology, vz, vf_lo, vf_hi, ztol_min, xkeep, r_tot, rtol, rns):
    """Mask of series options (total resistance, tolerance, rule namespace) that can take part
    in a feasible point with some X option of ``xkeep``: the current with the largest kept
    capacitance meets the load; the series-R rules hold with the smallest (their stresses grow
    with C); the series-R loss alone stays within the standby limit."""
    req, pol = setup.req, setup.policy
    xo = setup.xo
    s0 = context_scalars(req)
    avg_a, _ = bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    n = len(r_tot)
    if len(xkeep) == 0 or n == 0:
        return np.zeros(n, dtype=bool)
    cmin = xo.attrs["value"][xkeep] * (1 - np.nan_to_num(xo.attrs["tolerance"][xkeep], nan=0.2))
    c_best, c_least = float(np.max(cmin)), float(np.min(cmin))
    # the bounds depend on (R, tolerance) only: evaluate each distinct pair once
    r_u, t_u, inv = distinct_pairs(r_tot, rtol)
    if len(r_u) >= 0.8 * n:
        r_u, t_u, inv = r_tot, rtol, np.arange(n)
    m = len(r_u)
    b = screen_bounds(
        req, topology, vz, np.full(m, c_best), np.zeros(m), r_u, t_u, vf_lo, vf_hi, ztol_min
    )
    rk = b["min_dc_current_a"][inv] >= need
    b2 = screen_bounds(
        req,
        topology,
        vz,
        np.full(m, c_least),
        np.zeros(m),
        r_u,
        t_u,
        vf_lo,
        vf_hi,
        ztol_min,
        surge=False,
    )
    b2 = {
        k: (v[inv] if isinstance(v, np.ndarray) and v.shape == (m,) else v) for k, v in b2.items()
    }
    s = {**s0, **b2, "load_a": 0.0}
    for rid in (
        "series_r.power",
        "series_r.switch_on_energy",
        "series_r.switch_on_voltage",
        "series_r.peak_voltage",
    ):
        st, lim, _ = rule_by_id(rid).check(s, rns, pol)
        rk &= np.asarray(st <= lim)
    rk &= b2["max_series_r_power_w"] <= standby_bound_w(pol)
    # the surge rule (costlier bound) on the survivors only
    live = np.flatnonzero(rk)
    if len(live):
        sb = surge_bounds(
            req.conditions.surge_v,
            b2["series_resistance_ohm"][live],
            np.full(len(live), c_least),
            1 - SURGE_SLACK,
            max_rectifier_resistance(setup.rect[topology], topology),
        )
        sub = SimpleNamespace(
            **{k: (v[live] if isinstance(v, np.ndarray) else v) for k, v in vars(rns).items()}
        )
        st, lim, _ = rule_by_id("series_r.surge_voltage").check(sb, sub, pol)
        rk[live] = np.asarray(st <= lim)
    return rk
