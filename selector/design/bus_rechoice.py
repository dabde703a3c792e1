"""The completion's re-choice for the bus voltage: the bus peak during the surge and the
bottom of the output window (used by ``verify.verify_candidate``).

Method: a completion (Zener, rectifier, reservoir, bleeder options) that fails one of these
whole-circuit rules rules out every completion it dominates (:func:`dominated`), and the next
proposal is the cheapest (Zener, reservoir) pair no failure rules out
(:func:`cheapest_open_pair`). Proof obligation: the rule's figure is monotone in the values
dominance compares (tests/test_design_bus.py checks each direction on the engine), so a
dominated pair cannot pass where the failed one did not, and the cheapest open pair is the
cheapest that might. :func:`strongest_pairs_pass` decides at the first bus failure whether any
pair can pass at all.
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np

from .. import rules as R
from .candidates import OptionTable, rule_by_id
from .verify import catalogue_row, circuit_for, number_or, prefetch_surge_bounds, rule_context

#: whole-circuit rules that the completion can meet: the bus peak during the surge falls with a
#: larger reservoir and with a Zener of lower slope resistance and tolerance, so a failure of
#: one (Zener, reservoir) pair rules out every pair it dominates (:func:`dominated`) and the
#: completion moves on to the cheapest pair not ruled out (:func:`cheapest_open_pair`)
BUS_RULES: Final[frozenset[str]] = frozenset({"whole.bus_surge_peak"})
#: whole-circuit rules that a larger reservoir meets with the same Zener: the trough of the
#: output ripple rises with the reservoir's capacitance (C dV = I dt [S]), so a failure rules
#: out every smaller reservoir with the same Zener, rectifier and bleeder
WINDOW_RULES: Final[frozenset[str]] = frozenset({"whole.output_window_min"})


def strongest_pairs_pass(setup, topology, vz, xi, ri, completion, failures) -> bool:
    """Whether any (Zener, reservoir) pair might hold the bus where ``completion`` did not.

    The strongest pairs are the reservoir of the largest capacitance with each Zener that no
    other one beats in both surge slope and tolerance (:func:`dominated`): together they
    dominate every pair. Their quick surge bounds are checked in one batched simulation; each
    that fails joins ``failures``. When all fail, no completion of this point can pass, and
    ``setup.last_excess`` gets the least excess of the bus rule among them: the search cuts on
    it (search.BUS_CUT_RULES: a lower series resistance or a larger X capacitance only raises
    the pulse current)."""
    zo = setup.zo[(topology, vz)]
    slope, tol = bus_figures(setup, zo)
    cap = setup.co.attrs["value"]
    if len(zo) == 0 or len(cap) == 0:
        return False
    c_big = int(np.flatnonzero(cap == cap.max())[np.argmin(setup.co.key[cap == cap.max()])])
    front = [
        z
        for z in range(len(zo))
        if not any(
            (slope[o] <= slope[z] and tol[o] <= tol[z])
            and (slope[o] < slope[z] or tol[o] < tol[z] or o < z)
            for o in range(len(zo))
        )
    ]
    _, d, _, b = completion
    points = [(xi, ri, (z, d, c_big, b)) for z in front]
    prefetch_surge_bounds(setup, topology, vz, points)
    req, rule = setup.req, rule_by_id("whole.bus_surge_peak")
    excesses = []
    for _, _, comp in points:
        circ, tol_ = circuit_for(setup, topology, vz, xi, ri, *comp)
        sb = {**rule_context(setup, circ, vz, comp[2]), "surge_level_v": req.conditions.surge_v}
        if setup.surge_bounds is not None:
            sb.update(setup.surge_bounds(circ, req.mains, tol_, req.conditions.surge_v))
            sb["surge_vout_max_v"] = req.conditions.vout_max(circ)
        else:  # a stand-in analysis (tests): its own figures
            an = setup.analyse(circ, req.mains, tol_, req.conditions)
            sb = R.stresses_from_analysis(an, sb)[0]
        st, lim, _ = rule.check(sb, None, setup.policy)
        if st <= lim:
            return True
        failures.append((comp, False))
        excesses.append(float(st / lim) if lim > 0 else math.inf)
    setup.last_excess = {"whole.bus_surge_peak": min(excesses)}
    return False


def bus_figures(setup, zo: OptionTable) -> tuple[np.ndarray, np.ndarray]:
    """(surge slope resistance [ohm], tolerance) of every Zener option of ``zo``, as the
    engine's surge model takes them (``circuit_for``; a slope of 0 is the engine's default,
    ``engine.surge_circuit.zener_surge_slope``)."""
    key = ("bus_figures", id(zo))
    figs = setup.part_cache.get(key)
    if figs is None:
        from ..engine.surge_circuit import DEFAULT_ZENER_SURGE_SLOPE_OHM

        slope, tol = [], []
        for rows in zo.rows:
            row = catalogue_row(setup, rows[0])
            zz = number_or(row.get("zz_ohm"), 0.0) * len(rows)
            slope.append(zz if zz > 0 else DEFAULT_ZENER_SURGE_SLOPE_OHM)
            tol.append(number_or(row.get("tolerance"), 0.05))
        figs = setup.part_cache[key] = (np.array(slope), np.array(tol))
    return figs


def dominated(setup, zo: OptionTable, completion, failures) -> bool:
    """Whether ``completion`` (Zener, rectifier, reservoir, bleeder options) can only do worse
    than a failed one, ``failures`` holding (completion, same Zener only) pairs. For the bus
    peak (:data:`BUS_RULES`): the same rectifier and bleeder, a Zener of no lower surge slope
    and tolerance (the clamp takes less of the pulse and starts higher) and a reservoir of no
    more capacitance (it absorbs less charge; the engine gives every reservoir the same ESR,
    ``circuit_for``). For the output window's bottom (:data:`WINDOW_RULES`): the same Zener,
    rectifier and bleeder and a reservoir of no more capacitance (a deeper ripple trough). The
    monotonicity is checked on the engine in tests/test_design_bus.py."""
    slope, tol = bus_figures(setup, zo)
    cap = setup.co.attrs["value"]
    z, d, c, b = completion
    return any(
        f[1] == d
        and f[3] == b
        and (z == f[0] if same_zener else slope[z] >= slope[f[0]] and tol[z] >= tol[f[0]])
        and cap[c] <= cap[f[2]]
        for f, same_zener in failures
    )


def cheapest_open_pair(setup, zo, completion, failures, zener_ok, reservoir_ok):
    """The (Zener, reservoir) option pair of least key that passes each part's own rules
    (``zener_ok``, ``reservoir_ok`` masks) and that no failed completion dominates (with the
    rectifier and bleeder of ``completion``), or None when every pair is ruled out."""
    slope, tol = bus_figures(setup, zo)
    cap = setup.co.attrs["value"]
    z_idx, c_idx = np.flatnonzero(zener_ok), np.flatnonzero(reservoir_ok)
    if len(z_idx) == 0 or len(c_idx) == 0:
        return None
    open_ = np.ones((len(z_idx), len(c_idx)), dtype=bool)
    _, d, _, b = completion
    for (fz, fd, fc, fb), same_zener in failures:
        if fd != d or fb != b:
            continue
        if same_zener:
            z_hit = z_idx == fz
        else:
            z_hit = (slope[z_idx] >= slope[fz]) & (tol[z_idx] >= tol[fz])
        c_hit = cap[c_idx] <= cap[fc]
        open_ &= ~(z_hit[:, None] & c_hit[None, :])
    if not open_.any():
        return None
    keys = zo.key[z_idx][:, None] + setup.co.key[c_idx][None, :]
    keys = np.where(open_, keys, np.iinfo(np.int64).max)
    zi, ci = np.unravel_index(int(np.argmin(keys)), keys.shape)
    return int(z_idx[zi]), int(c_idx[ci])
