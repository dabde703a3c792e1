"""Exact verification of one candidate point with the engine at every corner.

The point (X option, series-R option) and the screen's completion are built into an engine
``Circuit``; ``analyse`` solves the corners exactly; the completion (Zener, rectifier, reservoir,
bleeder, fuse) is re-chosen against the exact stresses (``cheapest_passing``, with the stresses that
depend on the chosen part rescaled per option) until it no longer changes; then every rule is
evaluated (``selector.rules.evaluate``) on the final set. A set is returned only when every rule
passes.
"""

from __future__ import annotations

import dataclasses
import math
from types import SimpleNamespace
from typing import Any, Final

import numpy as np

from .. import rules as R
from ..policy import standby_bound_w
from .candidates import OptionTable, rule_by_id
from .requirement import bus_demand, context_scalars
from .setup import SearchSetup


def catalogue_row(setup: SearchSetup, i: int) -> dict[str, Any]:
    """Catalogue row ``i`` of the filtered frame as a dict (cached: pandas row access is slow)."""
    cache = setup.row_cache
    row = cache.get(i)
    if row is None:
        row = cache[i] = setup.df.iloc[i].to_dict()
    return row


def rated_option(setup: SearchSetup, opts: OptionTable, i: int, role: str) -> R.RatedPart:
    """Option ``i`` of ``opts`` as the rules' rated part (kept per option: a part never
    changes during a search)."""
    key = (role, tuple(opts.rows[i]), opts.arrangement[i])
    part = setup.part_cache.get(key)
    if part is None:
        part = setup.part_cache[key] = _rated_option(setup, opts, i, role)
    return part


def _rated_option(setup: SearchSetup, opts: OptionTable, i: int, role: str) -> R.RatedPart:
    rows = opts.rows[i]
    arr = opts.arrangement[i]
    if arr == "bridge":
        arr = "single"  # four discrete diodes as a bridge: each diode sees the full stress
    return R.rated_part_from_row(
        catalogue_row(setup, rows[0]), role, qty=len(rows), arrangement=arr
    )


def rated_x_parts(setup: SearchSetup, i: int) -> list[R.RatedPart]:
    """X option ``i`` as rated parts (one, two equal in parallel, or two different)."""
    key = ("x_capacitor", tuple(setup.xo.rows[i]))
    parts = setup.part_cache.get(key)
    if parts is None:
        parts = setup.part_cache[key] = _rated_x_parts(setup, i)
    return list(parts)


def _rated_x_parts(setup: SearchSetup, i: int) -> list[R.RatedPart]:
    rows = setup.xo.rows[i]
    if len(rows) == 1:
        return [R.rated_part_from_row(catalogue_row(setup, rows[0]), "x_capacitor")]
    if rows[0] == rows[1]:
        return [
            R.rated_part_from_row(
                catalogue_row(setup, rows[0]),
                "x_capacitor",
                qty=2,
                arrangement="parallel",
            )
        ]
    return [R.rated_part_from_row(catalogue_row(setup, r), "x_capacitor") for r in rows]


def engine_api():
    """The engine's dataclasses (selector.engine.circuit) plus its analyse()."""
    from ..engine import circuit as C

    ns = SimpleNamespace(**{k: getattr(C, k) for k in C.__all__})
    from ..engine.analysis import (
        analyse,
        min_dc_current,
        surge_lower_bounds,
        surge_lower_bounds_many,
    )

    ns.analyse = analyse
    ns.surge_lower_bounds_many = surge_lower_bounds_many
    ns.min_dc_current = min_dc_current
    ns.surge_lower_bounds = surge_lower_bounds
    return ns


def circuit_for(setup, topology, vz, xi, ri, zi, di, ci, bi):
    E = engine_api()
    req = setup.req
    xrows = setup.xo.rows[xi]
    caps = tuple(float(catalogue_row(setup, r)["value"]) for r in xrows)
    rr = setup.ro.rows[ri]
    r_tot = float(sum(float(catalogue_row(setup, r)["value"]) for r in rr))
    rect = setup.rect[topology]
    drow = catalogue_row(setup, rect.rows[di][0])
    zo = setup.zo[(topology, vz)]
    zrows = zo.rows[zi]
    zrow = catalogue_row(setup, zrows[0])
    z_v = float(sum(float(catalogue_row(setup, r)["value"]) for r in zrows))
    zz = number_or(zrow.get("zz_ohm"), 0.0) * len(zrows)
    crow = catalogue_row(setup, setup.co.rows[ci][0])
    brows = setup.bo.rows[bi]
    rb = float(sum(float(catalogue_row(setup, r)["value"]) for r in brows))
    vf = number_or(drow.get("vf_v"), 0.8)
    rs = number_or(drow.get("rs_ohm"), 0.1)
    if drow.get("kind") == "bridge":
        pass  # a bridge part's vf is per diode (DEVELOPERS.md)
    load = E.Load(
        current_a=req.load_a,
        burst_current_a=req.burst_current_a,
        burst_duration_s=req.burst_duration_s,
        burst_period_s=req.burst_period_s,
    )
    reg = None
    if req.regulator:
        reg = E.Regulator(
            output_v=req.vout_v,
            dropout_v=req.regulator_dropout_v,
            quiescent_a=req.regulator_quiescent_a,
        )
    circ = E.Circuit(
        topology=topology,
        x_capacitors_f=caps,
        series_resistance_ohm=r_tot,
        bleeder_resistance_ohm=rb,
        diode_drop_v=vf,
        diode_resistance_ohm=rs,
        zener_voltage_v=z_v,
        zener_impedance_ohm=zz,
        reservoir_f=float(crow["value"]),
        load=load,
        regulator=reg,
    )
    xt = [number_or(catalogue_row(setup, r)["tolerance"], 0.2) for r in xrows]
    cap_tol = float(sum(c * t for c, t in zip(caps, xt, strict=True)) / sum(caps))
    tol = E.Tolerances(
        cap_tol=cap_tol,
        cap_loss=req.cap_loss,
        r_tol=max(number_or(catalogue_row(setup, r)["tolerance"], 0.05) for r in rr + brows),
        zener_tol=number_or(zrow.get("tolerance"), 0.05),
    )
    return circ, tol


def rule_role(rule_id: str) -> str:
    """The role of a rule id, or of a role wildcard such as ``zener.*``."""
    try:
        return rule_by_id(rule_id).role
    except KeyError:
        return "whole" if rule_id.startswith("whole.") else rule_id.split(".")[0]


def number_or(v: Any, default: float) -> float:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return default
    return default if math.isnan(f) else f


def rule_context(setup, circ, vz, ci, r_tol=0.0):
    req = setup.req
    avg_a, peak_a = bus_demand(req)
    crow = catalogue_row(setup, setup.co.rows[ci][0])
    ctx = {
        **context_scalars(req),
        "load_a": avg_a,
        # fault current with a shorted X capacitor: series resistance at its upper tolerance
        "series_resistance_ohm": circ.series_resistance_ohm * (1 + r_tol),
        "zener_voltage_v": vz,
        "reservoir_min_f": float(crow["value"]) * (1 - number_or(crow.get("tolerance"), 0.2)),
    }
    if req.burst_current_a > 0:
        ctx["burst_current_a"] = peak_a
        ctx["burst_duration_s"] = req.burst_duration_s
    return ctx


def surge_precheck_rules() -> tuple[R.Rule, ...]:
    """The rules checked on ``surge_lower_bounds`` before the full analysis: every rule of a
    part known before it (not the fuse, chosen after it) that reads surge figures only, and the
    bus peak (``whole.bus_surge_peak``, whose limit is the request's). Each compares a stress
    that can only grow from the quick bound to the full analysis (a maximum over fewer corners)
    with a limit of the part alone or of the request, so a failure on the bound is a failure of the
    analysis."""
    return tuple(
        r
        for r in R.RULES
        if r.id == "whole.bus_surge_peak"  # bus_rechoice.BUS_RULES
        or (
            r.role not in ("fuse", "whole", "varistor")
            and r.stress_keys
            and all(k.startswith("surge_") and k != "surge_level_v" for k in r.stress_keys)
        )
    )


#: roles whose parts the completion re-choice does not change: a precheck failure of one of
#: their rules ends the candidate; any other sends the completion round again
FIXED_ROLES: Final[frozenset[str]] = frozenset({"x_capacitor", "series_resistor", "whole"})


#: how many pending points share one batched surge simulation (verify.prefetch_surge_bounds)
SURGE_BATCH: Final[int] = 48


def prefetch_surge_bounds(setup, topology, vz, points) -> None:
    """Fill the quick surge bounds of ``points`` ((X option, series option, completion) each)
    into ``setup.surge_bounds``'s cache with one batched simulation, so that their
    verification finds them there (``engine.analysis.surge_lower_bounds_many``: the same
    figures as one call per circuit). Points whose bound is already known are skipped."""
    cache = getattr(setup.surge_bounds, "cache", None)
    many = setup.surge_bounds_many
    req = setup.req
    if cache is None or many is None or not req.conditions.surge_v > 0:
        return
    todo: dict[tuple, tuple] = {}
    for xi, ri, completion in points:
        zi, di, ci, bi = completion
        circ, tol = circuit_for(setup, topology, vz, xi, ri, zi, di, ci, bi)
        key = (circ, req.mains, tol, req.conditions.surge_v)
        if key not in cache:
            todo.setdefault(key, (circ, req.mains, tol))
    if len(todo) < 2:
        return  # one circuit: its own call costs the same
    for key, bounds in zip(todo, many(list(todo.values()), req.conditions.surge_v), strict=True):
        cache[key] = bounds


def verify_candidate(setup, topology, vz, xi, ri, scr):
    """Analyse one grid point exactly; re-choose its completion; evaluate every rule.

    The completion (Zener, rectifier, reservoir, bleeder; the fuse after them) is re-chosen as
    the cheapest that passes its rules under the exact stresses of the current one, until the
    choice repeats: a fixed point, or a cycle (counted in ``stats['completion_cycles']``). A
    completion that fails the bus peak (:data:`BUS_RULES`) rules out every (Zener, reservoir)
    pair it dominates with the same rectifier and bleeder; the next proposal is then the
    cheapest pair not ruled out (counted in ``stats['bus_rechoices']``). Every completion tried
    is evaluated in full, and the cheapest one that passes every rule is returned: (key, part
    indices, analysis, findings, circuit, rated parts), or None when none passes (the failing
    rules are tallied in ``stats['exact_fail']``).
    """
    from .bus_rechoice import (
        BUS_RULES,
        WINDOW_RULES,
        cheapest_open_pair,
        dominated,
        strongest_pairs_pass,
    )

    zo, rect, co, bo = setup.zo[(topology, vz)], setup.rect[topology], setup.co, setup.bo
    stats = setup.stats if setup.stats is not None else {}
    fails = stats.setdefault("exact_fail", {})
    current = tuple(int(v) for v in scr)
    tried: set[tuple[int, ...]] = set()
    bus_failures: list[tuple[tuple[int, ...], bool]] = []  # (completion, same Zener only)
    best = None
    while current not in tried:
        tried.add(current)
        res, s, circ = _evaluate_completion(setup, topology, vz, xi, ri, current)
        if res is not None and (best is None or res[0] < best[0]):
            best = res
        failed = setup.last_exact[0] if res is None and setup.last_exact else []
        if any(rid in WINDOW_RULES for rid in failed):
            bus_failures.append((current, True))
        if any(rid in BUS_RULES for rid in failed):
            first = all(same_zener for _, same_zener in bus_failures)
            bus_failures.append((current, False))
            if first and not strongest_pairs_pass(
                setup, topology, vz, xi, ri, current, bus_failures
            ):
                break  # no completion can hold the bus: every pair is dominated by a failed one
        if "max_zener_power_w" not in s:
            # rejected before the full analysis: on the minimum current or the X / series-R
            # surge rules the candidate ends (neither depends on the completion beyond the
            # diode drop and the Zener's tolerance); on a completion part's surge rule or the
            # bus peak the completion is re-chosen against the surge figures it has
            if not failed or any(
                rule_role(rid) in FIXED_ROLES and rid not in BUS_RULES for rid in failed
            ):
                break
            # only the parts whose surge rules failed change: with the steady-state stresses
            # unknown, the others' rules could not be checked; a new bleeder keeps at most
            # the resistance of the screen's (whose discharge bound it met; the discharge
            # time grows with R)
            redo = {rule_role(rid) for rid in failed}
            proposal = (
                cheapest_passing(setup, zo, "zener", s) if "zener" in redo else current[0],
                cheapest_passing(setup, rect, "rectifier", s)
                if "rectifier" in redo
                else current[1],
                current[2],
                cheapest_passing(setup, bo, "bleeder", s, rb_max=circ.bleeder_resistance_ohm)
                if "bleeder" in redo
                else current[3],
            )
            reservoir_s, c_now = {**s, "reservoir_min_f": 0.0}, None
        else:
            reservoir_s, c_now = {**s, "reservoir_min_f": 0.0}, circ.reservoir_f
            proposal = (
                cheapest_passing(setup, zo, "zener", s),
                cheapest_passing(setup, rect, "rectifier", s),
                cheapest_passing(setup, co, "reservoir", reservoir_s, c_now=c_now),
                cheapest_passing(setup, bo, "bleeder", s, rb_now=circ.bleeder_resistance_ohm),
            )
        if bus_failures and min(proposal) >= 0 and dominated(setup, zo, proposal, bus_failures):
            pair = cheapest_open_pair(
                setup,
                zo,
                proposal,
                bus_failures,
                passing_options(setup, zo, "zener", s)[0],
                passing_options(setup, co, "reservoir", reservoir_s, c_now=c_now)[0],
            )
            stats["bus_rechoices"] = stats.get("bus_rechoices", 0) + 1
            if pair is None:
                break  # every pair is ruled out (the failures were tallied where they occurred)
            proposal = (pair[0], proposal[1], pair[1], proposal[3])
        if any(v < 0 for v in proposal):
            if best is None:
                for name, v in zip(
                    ("zener", "rectifier", "reservoir", "bleeder"), proposal, strict=True
                ):
                    rid = "whole.standby_power" if v == BLOCKED_BY_STANDBY else f"{name}.*"
                    if v < 0:
                        fails[rid] = fails.get(rid, 0) + 1
            break
        if proposal == current:
            break
        if proposal in tried:
            stats["completion_cycles"] = stats.get("completion_cycles", 0) + 1
        current = proposal
    return best


def _evaluate_completion(setup, topology, vz, xi, ri, completion):
    """One completion analysed at every corner and evaluated by every rule.

    Returns (result or None, the exact stresses, the circuit); records the failing rules and
    ``setup.last_exact`` for the search's cuts.
    """
    pol, req = setup.policy, setup.req
    zi, di, ci, bi = completion
    zo, rect, co, bo, fo = (
        setup.zo[(topology, vz)],
        setup.rect[topology],
        setup.co,
        setup.bo,
        setup.fo,
    )
    circ, tol = circuit_for(setup, topology, vz, xi, ri, zi, di, ci, bi)
    ctx = rule_context(setup, circ, vz, ci, float(setup.ro.attrs["tolerance"][ri]))
    stats = setup.stats if setup.stats is not None else {}
    fails = stats.setdefault("exact_fail", {})
    if setup.min_current is not None:
        # the most frequent exact failure first, at the cost of one or two solves: the same
        # figure analyse() would report (engine.analysis.min_dc_current)
        i_min = setup.min_current(circ, req.mains, tol)
        if ctx["load_a"] * (1 + pol.load_margin) > i_min:
            fails["whole.min_current"] = fails.get("whole.min_current", 0) + 1
            s = {**ctx, "min_dc_current_a": i_min}
            setup.last_exact = (["whole.min_current"], s, circ)
            return None, s, circ
    parts = parts_by_role(setup, topology, vz, xi, ri, zi, di, ci, bi, None)
    if setup.surge_bounds is not None and req.conditions.surge_v > 0:
        # the surge rules of the X capacitor and the series resistance on a quick lower bound
        # of the engine's surge figures (engine.analysis.surge_lower_bounds)
        sb = {**ctx, **setup.surge_bounds(circ, req.mains, tol, req.conditions.surge_v)}
        sb["surge_level_v"] = req.conditions.surge_v
        # the limit the analysis's surge section carries (Conditions.vout_max)
        sb["surge_vout_max_v"] = req.conditions.vout_max(circ)
        bad, excess = [], {}
        for rule in surge_precheck_rules():
            role_parts = parts.get(rule.role)
            for part in role_parts if isinstance(role_parts, list) else [role_parts]:
                if rule.applies is not None and not rule.applies(sb, part):
                    continue
                st, lim, _ = rule.check(sb, part, pol)
                if not st <= lim:
                    bad.append(rule.id)
                    excess[rule.id] = float(st / lim) if lim > 0 else math.inf
                    break
        excess.pop("whole.bus_surge_peak", None)  # a cut figure only from strongest_pairs_pass
        setup.last_excess = excess
        if bad:
            for rid in bad:
                fails[rid] = fails.get(rid, 0) + 1
            setup.last_exact = (bad, sb, circ)
            return None, sb, circ
    an = setup.analyse(circ, req.mains, tol, req.conditions)
    s, _ = R.stresses_from_analysis(an, ctx)
    fsel = None
    if not bool(setup.ro.attrs["fusible_flag"][ri]):
        fsel = cheapest_fuse(setup, s, parts)
        if fsel is None:
            fails["fuse.*"] = fails.get("fuse.*", 0) + 1
            setup.last_exact = (["fuse.*"], s, circ)
            return None, s, circ
        parts = parts_by_role(setup, topology, vz, xi, ri, zi, di, ci, bi, fsel)
    findings = R.evaluate(parts, an, pol, context=ctx)
    bad = [f.rule for f in R.blocking(findings)]
    setup.last_exact = (bad, s, circ)
    if bad:
        for b in bad:
            fails[b] = fails.get(b, 0) + 1
        if len(set(bad)) == 1:  # the only rule between this set and a design
            sole = stats.setdefault("sole_fail", {})
            sole[bad[0]] = sole.get(bad[0], 0) + 1
        return None, s, circ
    key = (
        setup.xo.key[xi]
        + setup.ro.key[ri]
        + zo.key[zi]
        + rect.key[di]
        + co.key[ci]
        + bo.key[bi]
        + (fo.key[fsel] if fsel is not None else 0)
    )
    sel = (topology, vz, xi, ri, zi, di, ci, bi, fsel)
    return (int(key), sel, an, findings, circ, parts), s, circ


def cheapest_passing(
    setup,
    opts: OptionTable,
    role: str,
    s: dict[str, Any],
    rb_now: float | None = None,
    c_now: float | None = None,
    rb_max: float | None = None,
) -> int:
    """Cheapest option of ``opts`` that passes every rule of ``role`` under stresses ``s``
    (:func:`passing_options`); -1 when none does, :data:`BLOCKED_BY_STANDBY` when only the
    standby limit rejects every bleeder. Among bleeders of equal key the larger resistance
    (less no-load loss; tie-break policy)."""
    if len(opts) == 0:
        return -1
    ok, blocked = passing_options(setup, opts, role, s, rb_now, c_now, rb_max)
    if blocked:
        return BLOCKED_BY_STANDBY
    idx = np.flatnonzero(ok)
    if len(idx) == 0:
        return -1
    if role == "bleeder" and "total_ohm" in opts.attrs:
        order = np.lexsort((-opts.attrs["total_ohm"][idx], opts.key[idx]))
        return int(idx[order[0]])
    return int(idx[np.argmin(opts.key[idx])])


def passing_options(
    setup,
    opts: OptionTable,
    role: str,
    s: dict[str, Any],
    rb_now: float | None = None,
    c_now: float | None = None,
    rb_max: float | None = None,
) -> tuple[np.ndarray, bool]:
    """(mask of the options of ``opts`` that pass every rule of ``role`` under stresses ``s``,
    whether only the standby limit rejects every bleeder).

    For the bleeder the stresses that depend on its own resistance are rescaled per candidate:
    discharge time (and time constant) in proportion to R, power in inverse proportion (RC
    discharge, P = V^2 / R [S]), and the no-load power changes by the bleeder's difference.
    For the reservoir the ripple scales as 1 / C from ``c_now``. ``rb_max`` keeps only
    bleeders of at most that total resistance.
    """
    ns = opts.ns()
    ok = np.ones(len(opts), dtype=bool)
    if len(opts) == 0:
        return ok, False
    if rb_max is not None and "total_ohm" in opts.attrs:
        ok &= opts.attrs["total_ohm"] <= rb_max * (1 + 1e-12)
    standby_ok = None
    if role == "reservoir" and c_now and not is_missing(s.get("max_output_ripple_v")):
        # ripple between charging pulses scales as 1 / C (C dV = I dt [S]) for each candidate
        s = dict(s)
        s["max_output_ripple_v"] = s["max_output_ripple_v"] * c_now / opts.attrs["value"]
    if role == "bleeder" and rb_now is not None and "total_ohm" in opts.attrs:
        ratio = opts.attrs["total_ohm"] / rb_now
        s = dict(s)
        for k in ("discharge_time_s", "discharge_time_constant_s"):
            if not is_missing(s.get(k)):
                s[k] = s[k] * ratio
        pb = s.get("max_bleeder_power_w")
        if not is_missing(pb):
            s["max_bleeder_power_w"] = pb / ratio
            nl = s.get("no_load_real_power_w")
            if not is_missing(nl):
                standby_ok = nl + pb * (1 / ratio - 1) <= standby_bound_w(setup.policy)
    else:
        standby_ok = None
    for rule in R.rules_for(role):
        if rule.role == "whole":
            continue
        if rule.applies is not None and not rule.applies(s, ns):
            continue  # e.g. the surge rules without a surge level
        if any(is_missing(s.get(k)) for k in rule.stress_keys):
            continue  # the exact evaluate() turns this into a warn and rejects the design
        st, lim, _ = rule.check(s, ns, setup.policy)
        ok &= np.asarray(st <= lim)
    if (
        role == "reservoir"
        and s.get("burst_current_a")
        and not is_missing(s.get("min_dc_current_a"))
    ):
        deficit = max(s["burst_current_a"] - s["min_dc_current_a"], 0.0)
        cmin = opts.attrs["value"] * (1 - np.nan_to_num(opts.attrs["tolerance"], nan=0.2))
        ok &= cmin >= deficit * s["burst_duration_s"] / (
            s["zener_voltage_v"] * setup.policy.burst_droop_fraction
        )
    if standby_ok is not None:
        if ok.any() and not (ok & standby_ok).any():
            return ok & standby_ok, True  # the bleeder's own rules pass; the standby rule fails
        ok &= standby_ok
    return ok, False


#: returned by cheapest_passing when only the no-load (standby) power limit rejects every bleeder
BLOCKED_BY_STANDBY: Final = -2


def is_missing(v: Any) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def cheapest_fuse(setup, s, parts) -> int | None:
    fo = setup.fo
    if len(fo) == 0:
        return None
    x_parts = parts.get("x_capacitor")
    x_group = [x_parts] if isinstance(x_parts, R.RatedPart) else list(x_parts or [])
    exempt = bool(x_group) and all(R.is_iec60384_14_class(p.safety_class) for p in x_group)
    s = {**s, R.X_CAP_IEC60384_14_KEY: exempt}
    for j in np.argsort(fo.key):
        p = rated_option(setup, fo, int(j), "fuse")
        ok = True
        for rule in R.rules_for("fuse"):
            if rule.applies is not None and not rule.applies(s, p):
                continue
            if rule.waiver is not None and rule.waiver(s):
                continue  # a failure would only be a waived warning
            st, lim, _ = rule.check(s, p, setup.policy)
            if not st <= lim:
                ok = False
                break
        if ok:
            return int(j)
    return None


def rated_series_parts(setup: SearchSetup, i: int) -> list[R.RatedPart]:
    """The series option ``i`` as the rules see it: one part, two equal parts in series, or
    two different parts each carrying its share R_i / R_total of power and voltage."""
    key = ("series_resistor", tuple(setup.ro.rows[i]))
    parts = setup.part_cache.get(key)
    if parts is None:
        parts = setup.part_cache[key] = _rated_series_parts(setup, i)
    return list(parts)


def _rated_series_parts(setup: SearchSetup, i: int) -> list[R.RatedPart]:
    rows = setup.ro.rows[i]
    if len(rows) == 1 or rows[0] == rows[1]:
        arr = "single" if len(rows) == 1 else "series"
        row = catalogue_row(setup, rows[0])
        return [R.rated_part_from_row(row, "series_resistor", qty=len(rows), arrangement=arr)]
    values = [float(catalogue_row(setup, r)["value"]) for r in rows]
    total = sum(values)
    return [
        R.rated_part_from_row(catalogue_row(setup, r), "series_resistor", share=v / total)
        for r, v in zip(rows, values, strict=True)
    ]


def parts_by_role(setup, topology, vz, xi, ri, zi, di, ci, bi, fi):
    out: dict[str, Any] = {
        "x_capacitor": rated_x_parts(setup, xi),
        "series_resistor": rated_series_parts(setup, ri),
        "zener": rated_option(setup, setup.zo[(topology, vz)], zi, "zener"),
        "rectifier": rated_option(setup, setup.rect[topology], di, "rectifier"),
        "reservoir": rated_option(setup, setup.co, ci, "reservoir"),
        "bleeder": rated_option(setup, setup.bo, bi, "bleeder"),
    }
    if fi is not None:
        out["fuse"] = rated_option(setup, setup.fo, fi, "fuse")
    elif bool(setup.ro.attrs["fusible_flag"][ri]):
        # the fusible element (listed first) serves as the fuse, with its share of the fault
        sr = out["series_resistor"][0]
        out["fuse"] = dataclasses.replace(sr, role="fuse")
    return out
