"""The design solver: the cheapest (or smallest) compliant part set for a dropper requirement.

Search space (issue 4): X capacitance as one part or two in parallel (same or different); series
resistance as one part or two equal parts in series (one per line); bleeder as 1-3 equal parts in
series; rectifier as a bridge or four discrete diodes (half-wave: one diode, the Zener takes the
other half cycle); Zener as one part or two equal parts in series; a reservoir electrolytic; a
fuse, or a fusible series resistor serving as the fuse.

Method (exact over that space):

1. **Screen.** For every (topology, Zener voltage, X option, series-R option) point of the grid,
   numpy computes *lower bounds* of every stress (and an upper bound of the available current)
   from the closed forms of DOMAIN.md section 2, widened by ``SCREEN_SLACK``. The same rule
   functions as ``selector.rules`` then screen the arrays; for each surviving point the cheapest
   completion (Zener, bleeder, rectifier, reservoir, fuse) comes from sorted look-ups: parts
   sorted by the rating that matters, prefix/suffix minima of the objective key, searchsorted;
   the bleeder's two-sided window (discharge vs standby power) uses a sparse-table range minimum.
   A relaxation: a point the screen rejects cannot pass the exact check, and its key is a lower
   bound of the key of any exact completion.
2. **Verify.** Points in ascending key order are analysed with the engine (``analyse()``, every
   corner), the completion re-chosen against the exact stresses, and every rule evaluated. A
   verified design is final once no unverified point has a lower key (branch and bound), so the
   first ``top`` designs are the optimum over the search space.

The objective is a lexicographic key (price, area, count for ``minimize='price'``; the others
break ties) packed into one int64: price in 1e-5 units, area in 0.01 mm^2, count.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from types import SimpleNamespace
from typing import Any, Final

import numpy as np
import pandas as pd

from . import rules as R
from .errors import BadValueError, InfeasibleError
from .policy import Policy

__all__ = [
    "CURRENT_SLACK",
    "SCREEN_SLACK",
    "Design",
    "DesignPart",
    "Requirement",
    "bom_rows",
    "design",
    "design_to_dict",
    "objective_key",
    "write_bom",
]

#: relative widening of the closed-form screen (their error against the exact periodic solution
#: is documented by the engine, <= 0.83 %; 5 % covers it with room) -- a larger value only
#: costs time, a smaller one could drop a feasible set
SCREEN_SLACK: Final[float] = 0.05
#: the same for the minimum DC current, the quantity most candidates sit close to: the engine's
#: R-corrected closed forms are within 0.83 % of the exact solution at zero load and within
#: 0.3 % at full load (measured against analyse(), both topologies); 2 % covers that
CURRENT_SLACK: Final[float] = 0.02
#: a candidate whose exact minimum current misses the load by more than this fraction also
#: rules out the same X capacitance with any larger series resistance (the current falls with
#: R; the completion's diode drop and Zener impedance move it by well under 0.5 %)
CUT_TOLERANCE: Final[float] = 0.005
#: IEC 60335-1 22.5: capacitors <= 0.1 uF need no discharge [S]
_EXEMPT_C: Final[float] = 0.1e-6
_PROFILE_LIMITS: Final[dict[str, tuple[float, float, bool]]] = {
    # profile: (limit V, allowed s, time-constant rule)
    "iec60335": (34.0, 1.0, False),  # IEC 60335-1 22.5 [S]
    "iec62368": (60.0, 2.0, False),  # IEC 62368-1 5.5.2.2: 2 s [S], 60 V ES1 [M]
    "iec60950": (1.0, 1.0, True),  # IEC 60950-1 2.1.1.7: R C <= 1 s [S]
}
_SQRT2: Final[float] = math.sqrt(2.0)

# ---------------------------------------------------------------------------------------------
# requirement and result


@dataclass(frozen=True)
class Requirement:
    """What the user asks for (SI). ``mains``/``conditions`` are engine dataclasses."""

    load_a: float
    vout_v: float
    mains: Any
    conditions: Any
    cap_loss: float = 0.10
    topology: str = "bridge"  # bridge | half-wave | any
    zener_v: float | None = None
    regulator: bool = False
    regulator_dropout_v: float = 1.0
    regulator_quiescent_a: float = 0.0
    burst_current_a: float = 0.0
    burst_duration_s: float = 0.0
    burst_period_s: float = 0.0
    minimize: str = "price"
    top: int = 1
    smd_only: bool = False
    tht_only: bool = False
    exclude: tuple[str, ...] = ()

    def __post_init__(self) -> None:
        if not self.load_a > 0:
            raise BadValueError(f"load current must be > 0 A, got {self.load_a}")
        if not self.vout_v > 0:
            raise BadValueError(f"output voltage must be > 0 V, got {self.vout_v}")
        if self.topology not in ("bridge", "half-wave", "any"):
            raise BadValueError(
                f"unknown topology '{self.topology}'; valid: bridge, half-wave, any"
            )
        if self.minimize not in _OBJECTIVES:
            raise BadValueError(
                f"unknown objective '{self.minimize}'; valid: {', '.join(_OBJECTIVES)}"
            )
        if self.top < 1:
            raise BadValueError(f"--top must be >= 1, got {self.top}")
        if self.smd_only and self.tht_only:
            raise BadValueError("--smd-only and --tht-only exclude each other")
        if self.burst_current_a > 0 and not (0 < self.burst_duration_s < self.burst_period_s):
            raise BadValueError("a burst needs 0 < duration < period (e.g. 30m/5ms/1s)")


@dataclass
class DesignPart:
    role: str
    code: str
    kind: str
    family: str
    description: str
    value: float
    qty: int
    arrangement: str
    unit_price: float
    line_price: float
    area_mm2: float
    mount: str | None
    package: str | None
    price_note: str | None
    ratings: dict[str, Any]


@dataclass
class Design:
    rank: int
    topology: str
    total_price: float
    total_area_mm2: float
    part_count: int
    parts: list[DesignPart]
    effective: dict[str, float]
    worst_case: Any
    analysis: Any
    checks: list[R.Finding]
    binding: list[str]
    circuit: Any = None
    rated_parts: dict[str, list[R.RatedPart]] = field(default_factory=dict)
    #: how the search went: points screened, candidates verified, and whether it was exhaustive
    search: dict[str, Any] = field(default_factory=dict)


# ---------------------------------------------------------------------------------------------
# objective keys

_OBJECTIVES: Final[tuple[str, ...]] = ("price", "area", "count")
_P_SCALE, _A_SCALE = 1e5, 100.0
_BITS = {"price": 27, "area": 24, "count": 6}


def objective_key(price: Any, area: Any, count: Any, minimize: str = "price") -> Any:
    """Lexicographic objective packed into int64: the chosen field first, the others after.

    price in 1e-5 units (< 1342 per set), area in 0.01 mm^2 (< 167,772 mm^2), count < 64;
    sums of keys are keys of sums as long as the totals stay in range.
    """
    p = np.rint(np.asarray(price, dtype=float) * _P_SCALE).astype(np.int64)
    a = np.rint(np.asarray(area, dtype=float) * _A_SCALE).astype(np.int64)
    c = np.asarray(count).astype(np.int64)
    fields_ = {"price": p, "area": a, "count": c}
    order = [minimize] + [k for k in ("price", "area", "count") if k != minimize]
    key = np.zeros(np.broadcast(p, a, c).shape, dtype=np.int64)
    for name in order:
        key = (key << _BITS[name]) + fields_[name]
    return key


# ---------------------------------------------------------------------------------------------
# candidate tables


@dataclass
class _Options:
    """One role's options as arrays (one row per option) plus the catalogue rows they use."""

    role: str
    rows: list[tuple[int, ...]]  # catalogue row indices of each option's elements
    qty: np.ndarray
    arrangement: list[str]
    key: np.ndarray
    price: np.ndarray
    area: np.ndarray
    count: np.ndarray
    attrs: dict[str, np.ndarray]

    def __len__(self) -> int:
        return len(self.key)

    def take(self, idx: np.ndarray) -> _Options:
        idx = np.asarray(idx, dtype=np.int64)
        return _Options(
            self.role,
            [self.rows[i] for i in idx],
            self.qty[idx],
            [self.arrangement[i] for i in idx],
            self.key[idx],
            self.price[idx],
            self.area[idx],
            self.count[idx],
            {k: v[idx] for k, v in self.attrs.items()},
        )

    def ns(self, idx: Any = slice(None), share: float = 1.0) -> SimpleNamespace:
        """Attribute namespace the rule functions accept (arrays)."""
        a = {k: v[idx] for k, v in self.attrs.items()}
        qty = self.qty[idx].astype(float)
        n_series = np.where(np.array(self.arrangement, dtype=object)[idx] == "series", qty, 1.0)
        return SimpleNamespace(
            **a,
            power_share=share / qty,
            voltage_share=share / n_series.astype(float),
            fusible=a.get("fusible_flag"),
        )


_NUM_COLS: Final[tuple[str, ...]] = (
    "value",
    "tolerance",
    "rated_voltage_v",
    "rated_voltage_ac_v",
    "limiting_voltage_v",
    "power_w",
    "derate_start_c",
    "derate_end_c",
    "pulse_energy_j",
    "impulse_v",
    "dvdt_v_per_s",
    "vrrm_v",
    "if_av_a",
    "ifsm_a",
    "vf_v",
    "rs_ohm",
    "zz_ohm",
    "tj_max_c",
    "ripple_a",
    "temp_max_c",
    "i2t_a2s",
)


def _col(df: pd.DataFrame, name: str) -> np.ndarray:
    if name not in df.columns:
        return np.full(len(df), np.nan)
    return pd.to_numeric(df[name], errors="coerce").to_numpy(dtype=float)


def _single_options(
    df: pd.DataFrame, idx: np.ndarray, role: str, minimize: str, qtys: Sequence[int], arr: str
) -> _Options:
    """Options made of ``q`` equal elements of each row in ``idx`` for each q in ``qtys``."""
    rows: list[tuple[int, ...]] = []
    qty_l: list[int] = []
    arrs: list[str] = []
    base = {c: _col(df, c)[idx] for c in _NUM_COLS}
    cls = df["safety_class"].to_numpy(dtype=object)[idx] if "safety_class" in df else None
    fus = (
        df["fusible"].fillna(False).astype(bool).to_numpy()[idx]
        if "fusible" in df
        else np.zeros(len(idx), dtype=bool)
    )
    price = _col(df, "unit_price")[idx]
    area = _col(df, "area_mm2")[idx]
    attrs: dict[str, list[np.ndarray]] = {c: [] for c in _NUM_COLS}
    attrs["class_impulse_v"] = []
    attrs["fusible_flag"] = []
    prices, areas, counts = [], [], []
    for q in qtys:
        rows.extend((int(i),) * q for i in idx)
        qty_l.extend([q] * len(idx))
        arrs.extend([arr if q > 1 else "single"] * len(idx))
        for c in _NUM_COLS:
            attrs[c].append(base[c])
        if cls is not None:
            ci = np.array(
                [np.nan if v is None else R.x_class_impulse_v(v) for v in _clean_obj(cls)]
            )
        else:
            ci = np.full(len(idx), np.nan)
        attrs["class_impulse_v"].append(ci)
        attrs["fusible_flag"].append(fus)
        prices.append(price * q)
        areas.append(area * q)
        counts.append(np.full(len(idx), q))
    a = {k: np.concatenate(v) if v else np.zeros(0) for k, v in attrs.items()}
    pr = np.concatenate(prices) if prices else np.zeros(0)
    ar = np.concatenate(areas) if areas else np.zeros(0)
    co = np.concatenate(counts) if counts else np.zeros(0, dtype=int)
    return _Options(
        role,
        rows,
        np.array(qty_l, dtype=np.int64),
        arrs,
        objective_key(pr, ar, co, minimize),
        pr,
        ar,
        co,
        a,
    )


def _clean_obj(values: np.ndarray) -> list[Any]:
    out = []
    for v in values:
        if v is None or (isinstance(v, float) and math.isnan(v)):
            out.append(None)
        else:
            out.append(str(v))
    return out


def _dedupe(opts: _Options, sig_cols: Sequence[str], keep: int) -> _Options:
    """Keep the ``keep`` best options per electrical signature (exact for the top-``keep``)."""
    if len(opts) == 0:
        return opts
    sig = np.column_stack(
        [np.nan_to_num(opts.attrs[c], nan=-1.0) for c in sig_cols] + [opts.qty.astype(float)]
    )
    order = np.lexsort((opts.key,) + tuple(sig[:, j] for j in range(sig.shape[1] - 1, -1, -1)))
    s = sig[order]
    new = np.ones(len(order), dtype=bool)
    new[1:] = np.any(s[1:] != s[:-1], axis=1)
    grp = np.cumsum(new) - 1
    first = np.flatnonzero(new)
    rank = np.arange(len(order)) - first[grp]
    return opts.take(np.sort(order[rank < keep]))


def _pairs_of(single: _Options, i: np.ndarray, j: np.ndarray, minimize: str) -> _Options:
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
        else:
            attrs[k] = np.fmin(arr[i], arr[j])
    rows = [single.rows[a] + single.rows[b] for a, b in zip(i.tolist(), j.tolist(), strict=True)]
    price = single.price[i] + single.price[j]
    area = single.area[i] + single.area[j]
    count = single.count[i] + single.count[j]
    return _Options(
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


def _window_pairs(
    single: _Options, c_lo: float, c_hi: float, budget: int, cap: int
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


# ---------------------------------------------------------------------------------------------
# sorted look-ups


def _cheapest_at_least(cap: np.ndarray, key: np.ndarray, need: np.ndarray) -> np.ndarray:
    """Index of the cheapest option with capability >= need (-1 if none), vectorised.

    Options sorted by capability; suffix minima of the key; searchsorted.
    """
    if len(cap) == 0:
        return np.full(np.shape(need), -1, dtype=np.int64)
    ok = ~np.isnan(cap)
    ids = np.flatnonzero(ok)
    order = ids[np.argsort(cap[ids], kind="stable")]
    c = cap[order]
    k = key[order]
    # suffix argmin of the key (a loop over the options, never over the grid)
    best = np.empty(len(k), dtype=np.int64)
    cur = len(k) - 1
    for pos in range(len(k) - 1, -1, -1):
        if k[pos] <= k[cur]:
            cur = pos
        best[pos] = cur
    pos = np.searchsorted(c, need, side="left")
    out = np.full(np.shape(need), -1, dtype=np.int64)
    has = pos < len(c)
    out[has] = order[best[pos[has]]]
    return out


class _RangeMin:
    """Sparse table: cheapest option whose sort value lies in [lo, hi], vectorised queries."""

    def __init__(self, value: np.ndarray, key: np.ndarray) -> None:
        ok = ~np.isnan(value)
        ids = np.flatnonzero(ok)
        self.order = ids[np.argsort(value[ids], kind="stable")]
        self.v = value[self.order]
        k = key[self.order]
        n = len(k)
        self.k = k
        table = [np.arange(n, dtype=np.int64)]
        j = 1
        while (1 << j) <= n:
            prev = table[-1]
            half = 1 << (j - 1)
            a = prev[: n - (1 << j) + 1]
            b = prev[half : half + n - (1 << j) + 1]
            table.append(np.where(k[a] <= k[b], a, b))
            j += 1
        self.table = table

    def query(self, lo: np.ndarray, hi: np.ndarray) -> np.ndarray:
        n = len(self.v)
        lo_b = np.broadcast_to(lo, np.broadcast(lo, hi).shape)
        hi_b = np.broadcast_to(hi, lo_b.shape)
        out = np.full(lo_b.shape, -1, dtype=np.int64)
        if n == 0:
            return out
        left = np.searchsorted(self.v, lo_b, side="left")
        right = np.searchsorted(self.v, hi_b, side="right") - 1
        has = right >= left
        if not np.any(has):
            return out
        left_h, right_h = left[has], right[has]
        length = right_h - left_h + 1
        lev = np.floor(np.log2(length)).astype(np.int64)
        res = np.empty(len(left_h), dtype=np.int64)
        for j in np.unique(lev):
            m = lev == j
            a = self.table[j][left_h[m]]
            b = self.table[j][right_h[m] - (1 << j) + 1]
            res[m] = np.where(self.k[a] <= self.k[b], a, b)
        out[has] = self.order[res]
        return out


# ---------------------------------------------------------------------------------------------
# the solver


@dataclass
class _Setup:
    req: Requirement
    policy: Policy
    df: pd.DataFrame
    xo: _Options
    ro: _Options
    bo: _Options
    rect: dict[str, _Options]
    zo: dict[tuple[str, float], _Options]  # (topology, effective Vz) -> options
    co: _Options
    fo: _Options
    topologies: tuple[str, ...]
    bus_need_v: float
    xs: _Options | None = None  # the single X options (xo grows by pairs)
    analyse: Callable[..., Any] | None = None
    stats: dict[str, Any] | None = None
    last_exact: Any = None


def _filter_frame(df: pd.DataFrame, req: Requirement) -> pd.DataFrame:
    keep = np.ones(len(df), dtype=bool)
    if req.smd_only:
        keep &= df["mount"].fillna("").to_numpy() == "smd"
    if req.tht_only:
        keep &= df["mount"].fillna("").to_numpy() == "tht"
    if req.exclude:
        fam = df["family"].fillna("").str.lower().to_numpy()
        known = set(fam)
        for ex in req.exclude:
            e = ex.strip().lower()
            if e not in known:
                raise BadValueError(
                    f"--exclude: no family '{ex}' in the catalogue; families: "
                    + ", ".join(sorted(known))
                )
            keep &= fam != e
    price = pd.to_numeric(df["unit_price"], errors="coerce").to_numpy(dtype=float)
    keep &= ~np.isnan(price)
    return df.loc[keep].reset_index(drop=True)


def _idx(df: pd.DataFrame, kinds: Sequence[str]) -> np.ndarray:
    return np.flatnonzero(df["kind"].isin(kinds).to_numpy())


def _context_scalars(req: Requirement) -> dict[str, float]:
    m = req.mains
    return {
        "mains_max_v": float(m.high_v),
        "mains_min_v": float(m.low_v),
        "ambient_c": float(req.conditions.ambient_c),
        "surge_level_v": float(req.conditions.surge_v),
    }


def _bus_demand(req: Requirement) -> tuple[float, float]:
    """(average bus demand [A], bus demand during a burst [A])."""
    base = req.load_a + (req.regulator_quiescent_a if req.regulator else 0.0)
    avg = base
    peak = base
    if req.burst_current_a > 0:
        avg = base + req.burst_current_a * req.burst_duration_s / req.burst_period_s
        peak = base + req.burst_current_a
    return avg, peak


def _prepare(df_all: pd.DataFrame, req: Requirement, policy: Policy) -> _Setup:
    df = _filter_frame(df_all, req)
    k = req.top
    mz = req.minimize
    s0 = _context_scalars(req)
    # X capacitors: only parts of an X subclass that pass the role-intrinsic rules
    xi = _idx(df, ["x_capacitor"])
    xs = _single_options(df, xi, "x_capacitor", mz, [1], "single")
    if len(xs):
        ns = xs.ns()
        okm = np.ones(len(xs), dtype=bool)
        for rid in ("x_cap.safety_class", "x_cap.ac_voltage", "x_cap.impulse"):
            st, lim, _ = _rule(rid).check(s0, ns, policy)
            okm &= np.asarray(st <= lim)
        xs = xs.take(np.flatnonzero(okm))
    xs = _dedupe(xs, ("value", "tolerance", "dvdt_v_per_s"), k)
    xo = xs  # pairs join later, within the capacitance window and the cost budget
    # series resistors: 1 or 2 equal in series, value within the engine's range
    ri = _idx(df, ["resistor"])
    rv = _col(df, "value")[ri]
    ri_s = ri[(rv >= 0.5) & (rv <= 1e5)]
    ro = _single_options(df, ri_s, "series_resistor", mz, [1, 2], "series")
    ro = ro.take(np.flatnonzero(ro.attrs["value"] * ro.qty <= 1e5))
    ro = _dedupe(
        ro,
        (
            "value",
            "tolerance",
            "power_w",
            "derate_start_c",
            "derate_end_c",
            "pulse_energy_j",
            "limiting_voltage_v",
            "fusible_flag",
        ),
        k,
    )
    # an option that another of the same resistance, tolerance and fusibility beats in every
    # rating at no higher cost can be left out (the R rules only ever ask for more rating)
    ro = ro.take(_pareto_r(ro, np.arange(len(ro)), k))
    # bleeders: 1-3 equal in series, intrinsic rules (power at high line, voltage) screened
    bi = ri[rv >= 1e3 / 3]
    bo = _single_options(df, bi, "bleeder", mz, [1, 2, 3], "series")
    bo.attrs["total_ohm"] = bo.attrs["value"] * bo.qty
    bo = bo.take(np.flatnonzero(bo.attrs["total_ohm"] >= 1e3))
    bo = _dedupe(
        bo,
        (
            "total_ohm",
            "tolerance",
            "power_w",
            "derate_start_c",
            "derate_end_c",
            "limiting_voltage_v",
        ),
        k,
    )
    # rectifiers
    rect: dict[str, _Options] = {}
    bri = _idx(df, ["bridge"])
    di = _idx(df, ["diode"])
    b1 = _single_options(df, bri, "rectifier", mz, [1], "single")
    d4 = _single_options(df, di, "rectifier", mz, [4], "bridge")
    rect["bridge"] = _concat([b1, d4])
    rect["half-wave"] = _single_options(df, di, "rectifier", mz, [1], "single")
    for t in rect:
        o = rect[t]
        if len(o):
            st, lim, _ = _rule("rectifier.vrrm").check(
                {**s0, "max_rectifier_reverse_voltage_v": 0.0}, o.ns(), policy
            )
            rect[t] = o.take(np.flatnonzero(np.asarray(st <= lim)))
    # topologies and the bus voltage the Zener must hold
    tops = ("bridge", "half-wave") if req.topology == "any" else (req.topology,)
    bus_need = req.vout_v + (req.regulator_dropout_v if req.regulator else 0.0)
    # Zeners by (topology, effective voltage): one part, or two equal in series
    zi = _idx(df, ["zener"])
    zv = _col(df, "value")[zi]
    zo: dict[tuple[str, float], _Options] = {}
    volts = np.unique(zv[~np.isnan(zv)]) if len(zi) else np.zeros(0)
    if req.zener_v is not None and not np.any(np.isclose(volts, req.zener_v, rtol=1e-3)):
        raise BadValueError(
            f"--zener {req.zener_v:g} V: no such Zener voltage in the catalogue; available: "
            + ", ".join(f"{v:g}" for v in volts)
        )
    for top in tops:
        if len(volts) == 0:
            break
        if req.zener_v is not None:
            vz0 = float(volts[np.argmin(abs(volts - req.zener_v))])
        else:
            # half-wave: the bus is Vz minus the diode's drop (the largest in the catalogue)
            drop = 0.0
            if top == "half-wave" and len(rect["half-wave"]):
                drop = float(np.nanmax(rect["half-wave"].attrs["vf_v"]))
            cand = volts[volts >= bus_need + drop - 1e-9]
            if len(cand) == 0:
                continue
            vz0 = float(cand[0])
        sel1 = zi[np.isclose(zv, vz0, rtol=1e-3)]
        zo[(top, vz0)] = _single_options(df, sel1, "zener", mz, [1], "single")
        half = volts[(2 * volts >= vz0 - 1e-9) & (2 * volts <= vz0 * 1.05)]
        if len(half):
            vh = float(half[0])
            selh = zi[np.isclose(zv, vh, rtol=1e-3)]
            pairs = _single_options(df, selh, "zener", mz, [2], "series")
            vz2 = round(2 * vh, 6)
            if math.isclose(vz2, vz0, rel_tol=1e-3):
                zo[(top, vz0)] = _concat([zo[(top, vz0)], pairs])
            else:
                zo[(top, vz2)] = pairs
    if len(volts) and not zo:
        raise InfeasibleError(
            f"no Zener of {bus_need:g} V or more (plus the half-wave diode drop) in the catalogue",
            rule="zener.voltage",
            relaxation=f"a lower output voltage (largest Zener {volts.max():g} V)",
        )
    # reservoirs: intrinsic temperature rule; the voltage rule per Zener group later
    ci = _idx(df, ["electrolytic"])
    co = _single_options(df, ci, "reservoir", mz, [1], "single")
    if len(co):
        st, lim, _ = _rule("reservoir.temperature").check(s0, co.ns(), policy)
        co = co.take(np.flatnonzero(np.asarray(st <= lim)))
    # fuses
    fi = _idx(df, ["fuse"])
    fo = _single_options(df, fi, "fuse", mz, [1], "single")
    return _Setup(req, policy, df, xo, ro, bo, rect, zo, co, fo, tops, bus_need, xs)


def _concat(parts: Sequence[_Options]) -> _Options:
    parts = [p for p in parts if len(p)] or list(parts[:1])
    if len(parts) == 1:
        return parts[0]
    keys = set(parts[0].attrs)
    return _Options(
        parts[0].role,
        sum((p.rows for p in parts), []),
        np.concatenate([p.qty for p in parts]),
        sum((p.arrangement for p in parts), []),
        np.concatenate([p.key for p in parts]),
        np.concatenate([p.price for p in parts]),
        np.concatenate([p.area for p in parts]),
        np.concatenate([p.count for p in parts]),
        {k: np.concatenate([p.attrs[k] for p in parts]) for k in keys},
    )


def _rule(rule_id: str) -> R.Rule:
    for r in R.RULES:
        if r.id == rule_id:
            return r
    raise KeyError(rule_id)


# ---------------------------------------------------------------------------------------------
# the screen: closed forms (DOMAIN.md section 2) as bounds over grid arrays


def _screen_bounds(
    req: Requirement,
    topology: str,
    vz: float,
    c_nom: np.ndarray,
    c_tol: np.ndarray,
    r_nom: np.ndarray,
    r_tol: np.ndarray,
    vf_lo: float,
    vf_hi: float,
    ztol_min: float = 0.0,
    zz_min: float = 0.0,
    surge: bool = True,
    rd_max: float = 0.0,
) -> dict[str, np.ndarray]:
    """Bounds of the exact worst-case figures, widened by SCREEN_SLACK.

    Upper bound of the minimum DC current; lower bounds of every stress. Closed forms:
    bridge I_dc = 4 f C (Vpk - Vo') / sqrt(1 + (w R C)^2); half-wave I = f C (2 Vpk - Vz - 2 Vf)
    / sqrt(1 + (w R C)^2); switch-on peak Vpk / R, energy 0.5 C V^2, I^2t = V^2 C / (2 R);
    RC discharge. Sources: DOMAIN.md section 2 (textbook RC circuits [S]).
    """
    m = req.mains
    r_nom = np.maximum(r_nom, 1e-9)
    lo = SCREEN_SLACK
    f_lo, f_hi = min(m.frequencies_hz), max(m.frequencies_hz)
    vpk_hi = _SQRT2 * m.high_v
    c_min = c_nom * (1 - c_tol) * (1 - req.cap_loss)
    c_max = c_nom * (1 + c_tol)
    r_min = r_nom * (1 - r_tol)
    r_max = r_nom * (1 + r_tol)
    w_hi = 2 * math.pi * f_hi
    from .engine import closed_form as cf

    # engine closed forms (documented error <= 0.83 % against the exact solution for
    # w R C <= 0.4): the minimum current at low line / low f / -C / +R / nominal Vz (the exact
    # corner has Vz at its upper tolerance: less current), the Zener power at high line / high f
    # / +C / -R / Vz raised by the smallest Zener tolerance in the group, zero load
    vz_hi = vz * (1 + ztol_min)
    i_ub = cf.dc_current(topology, m.low_v, c_min, f_lo, vz, vf_lo, r_max)
    i_hi = cf.dc_current(topology, m.high_v, c_max, f_hi, vz_hi, vf_hi, r_min)
    pz = cf.zener_power_no_load(topology, m.high_v, c_max, f_hi, vz_hi, vf_hi, r_min)
    # the Zener's dynamic impedance raises its voltage by Zz I at that current
    pz = pz + zz_min * i_hi**2
    vo_hi = vz_hi + 2 * vf_hi if topology == "bridge" else vz_hi
    i_ub = np.maximum(i_ub, 0.0) * (1 + CURRENT_SLACK)
    lb = 1 - lo
    fac = max(0.0, 1 - vo_hi / vpk_hi)
    i_rms = m.high_v * w_hi * c_max / np.sqrt(1 + (w_hi * r_max * c_max) ** 2) * fac
    # switch-on and surge: the engine takes both at the +C / -R corner of the highest mains
    # (selector.engine.analysis, "transients at their own worst corners"), everything
    # discharged, so only the diode drops stand against the crest
    v_on = max(vpk_hi - 2 * vf_hi, 0.0)
    i_on = v_on / r_min
    out = {
        "min_dc_current_a": i_ub,
        "max_zener_power_w": np.maximum(pz, 0) * lb,
        # no-load loss in the rectifier: the whole current crosses two diodes of a bridge
        "rectifier_loss_w": (2 * vf_lo * i_hi * lb) if topology == "bridge" else 0.0 * i_hi,
        # the engine takes the largest power over the corners, so the +R corner bounds it
        "max_series_r_power_w": i_rms**2 * r_max * lb,
        "max_line_current_rms_a": i_rms * lb,
        "max_rectifier_avg_current_a": np.zeros_like(i_ub),
        "max_reservoir_ripple_current_a": np.zeros_like(i_ub),
        "inrush_peak_current_a": i_on * lb,
        "inrush_rectifier_peak_current_a": i_on * lb,
        "inrush_series_r_energy_j": 0.5 * c_max * v_on**2 * lb,
        "inrush_i2t_a2s": v_on**2 * c_max / (2 * r_min) * lb,
        "inrush_x_cap_dvdt_v_per_s": i_on / c_max * lb,
        **(_surge_bounds(req.conditions.surge_v, r_min, c_max, lb, rd_max) if surge else {}),
        "series_resistance_ohm": r_min,
        "c_max": c_max,
        "c_min_nom": c_nom * (1 - c_tol),
        "v_on": np.full_like(i_ub, v_on),
        "i_hi": i_hi,
    }
    return out


_SURGE_T: Final[np.ndarray] = np.geomspace(5e-9, 300e-6, 40)


def _rd_max(rect: _Options, topology: str) -> float:
    """Largest rectifier resistance in the surge loop [ohm]: two diodes of a bridge, one in
    a half-wave (as the engine's surge model counts them)."""
    rs = rect.attrs["rs_ohm"] if len(rect) else np.zeros(0)
    if len(rs) == 0 or np.all(np.isnan(rs)):
        return 0.0
    return float(np.nanmax(rs)) * (2 if topology == "bridge" else 1)


def _surge_bounds(vs: float, r: Any, c: Any, lb: float, rd: float = 0.0) -> dict[str, Any]:
    """Lower bounds of the surge stresses, vectorised, from the engine's own surge model.

    The loop (2 ohm generator + R) and C driven by the open-circuit 1.2/50 us double
    exponential ``v = A V (exp(-t/t2) - exp(-t/t1 - t/t2))`` (selector.engine.transients, whose
    constants are marked [M] there): i(t) = sum of four exponentials, solved exactly; the peak
    is taken over 40 sampled times (never above the true peak), the energy R integral(i^2) in
    closed form. Evaluated at the engine's transient corner (lowest R, highest C) with the
    largest rectifier resistance ``rd`` in the loop (it only lowers the current), scaled by
    ``lb`` (the slack).
    """
    from .engine import transients as T

    r = np.asarray(r, dtype=float)
    c = np.asarray(c, dtype=float)
    shape = np.broadcast(r, c).shape
    if vs <= 0:
        z = np.zeros(shape)
        return {
            "surge_series_r_energy_j": z,
            "surge_series_r_peak_voltage_v": z,
            "surge_x_cap_dvdt_v_per_s": z,
        }
    rl = T.SURGE_SOURCE_OHM + r + rd
    kappa = 1.0 / (rl * c)
    av = T.SURGE_A * vs
    rates = (1.0 / T.SURGE_TAU2_S, 1.0 / T.SURGE_TAU1_S + 1.0 / T.SURGE_TAU2_S)
    amps = (av, -av)
    coef, pole = [], []
    for a, rk in zip(amps, rates, strict=True):
        d = kappa - rk
        d = np.where(np.abs(d) < 1e-9 * rk, 1e-9 * rk, d)  # a coincident pole: nudge it
        coef += [a * kappa / (rl * d), -a * rk / (rl * d)]
        pole += [kappa, np.full(shape, rk)]
    cf = np.stack(np.broadcast_arrays(*coef), axis=-1)
    pl = np.stack(np.broadcast_arrays(*pole), axis=-1)
    i2t = np.sum(
        cf[..., :, None] * cf[..., None, :] / (pl[..., :, None] + pl[..., None, :]), axis=(-1, -2)
    )
    peak = np.zeros(shape)
    for tt in _SURGE_T:
        peak = np.maximum(peak, np.abs(np.sum(cf * np.exp(-pl * tt), axis=-1)))
    return {
        "surge_series_r_energy_j": np.maximum(r * i2t, 0.0) * lb,
        "surge_series_r_peak_voltage_v": r * peak * lb,
        "surge_x_cap_dvdt_v_per_s": peak / c * lb,
    }


_SURGE_RULES: Final[frozenset[str]] = frozenset(
    {"x_cap.dvdt_surge", "series_r.surge_energy", "series_r.surge_voltage"}
)


def _screen_rules_x_r(
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
        return (rid in _SURGE_RULES) == (which == "surge")

    for rid in ("x_cap.dvdt_switch_on", "x_cap.dvdt_surge"):
        if wanted(rid):
            st, lim, _ = _rule(rid).check(s, xns, pol)
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
            st, lim, _ = _rule(rid).check(s, rns, pol)
            ok &= np.asarray(st <= lim)
    if which != "surge":
        st, lim, _ = _rule("whole.min_current").check(s, None, pol)
        ok &= np.asarray(st <= lim)
    return ok


@dataclass
class _Group:
    """Everything the screen needs for one (topology, Zener voltage) group."""

    topology: str
    vz: float
    zo: _Options
    rect: _Options
    co: _Options
    co_idx: np.ndarray  # rows of setup.co that co holds
    cres_min: np.ndarray
    z_cap: np.ndarray
    b_table: _RangeMin
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
    zz_min: float = 0.0
    cursor: int = 0


def _group(setup: _Setup, topology: str, vz: float, stats: dict) -> _Group | None:
    req, pol = setup.req, setup.policy
    s0 = _context_scalars(req)
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
        st, lim, _ = _rule("reservoir.voltage").check(
            {"max_output_voltage_v": vz * 1.05 * (1 - SCREEN_SLACK)}, co.ns(), pol
        )
        co_idx = np.flatnonzero(np.asarray(st <= lim))
        co = co.take(co_idx)
    if len(co) == 0:
        _tally(stats, "reservoir.voltage", np.ones(1, dtype=bool))
        return None
    cres_min = co.attrs["value"] * (1 - np.nan_to_num(co.attrs["tolerance"], nan=0.2))
    # Zener capability: per-element derated power x fraction x number in series
    _, zlim, _ = _rule("zener.power").check(
        {"max_zener_power_w": 0.0, "ambient_c": s0["ambient_c"]}, zo.ns(), pol
    )
    z_cap = np.asarray(zlim, dtype=float) * zo.qty
    # bleeder options passing their own rules at this bus; range-minimum table over R
    bo = setup.bo
    bns = bo.ns()
    vpk_hi = _SQRT2 * req.mains.high_v
    vo_hi = (vz * 1.05 + 2 * vf_hi) if topology == "bridge" else vz * 1.05
    v_cap = max(vpk_hi - vo_hi, 0.0) * (1 - SCREEN_SLACK)
    btol = np.nan_to_num(bo.attrs["tolerance"], nan=0.05)
    pb = (v_cap / _SQRT2) ** 2 / (bo.attrs["total_ohm"] * (1 + btol))
    st, lim, _ = _rule("bleeder.power").check(
        {"max_bleeder_power_w": pb, "ambient_c": s0["ambient_c"]}, bns, pol
    )
    b_ok = np.asarray(st <= lim)
    st, lim, _ = _rule("bleeder.voltage").check({"max_bleeder_voltage_v": v_cap}, bns, pol)
    b_ok &= np.asarray(st <= lim)
    b_table = _RangeMin(np.where(b_ok, bo.attrs["total_ohm"] * (1 - btol), np.nan), bo.key)
    ztol_min = float(np.nanmin(np.nan_to_num(zo.attrs["tolerance"], nan=0.0)))
    zz_min = float(np.min(np.nan_to_num(zo.attrs["zz_ohm"], nan=0.0) * zo.qty))
    xkeep, rkeep = _prune(setup, topology, vz, vf_lo, vf_hi, float(np.max(z_cap)), ztol_min, zz_min)
    if not np.any(b_ok):
        _tally(stats, "bleeder.power", np.ones(1, dtype=bool))
        return None
    if len(xkeep) == 0 or len(rkeep) == 0:
        # no single X capacitor can serve; pairs may (phase 2 of the search)
        _tally(stats, "whole.min_current", np.ones(1, dtype=bool))
        xkeep = np.zeros(0, dtype=np.int64)
        rkeep = np.zeros(0, dtype=np.int64)
    xkeep = xkeep[np.argsort(setup.xo.key[xkeep], kind="stable")]
    r_tot = setup.ro.attrs["value"][rkeep] * setup.ro.qty[rkeep]
    order = np.argsort(r_tot, kind="stable")
    rkeep, r_sorted = rkeep[order], r_tot[order]
    min_comp = (
        int(np.min(zo.key))
        + int(np.min(rect.key))
        + int(np.min(co.key))
        + int(np.min(bo.key[b_ok]))
    )
    return _Group(
        topology,
        vz,
        zo,
        rect,
        co,
        co_idx,
        cres_min,
        z_cap,
        b_table,
        (v_cap / _SQRT2) ** 2,
        v_cap,
        vf_lo,
        vf_hi,
        xkeep,
        rkeep,
        r_sorted,
        int(np.min(setup.ro.key[rkeep])) if len(rkeep) else 0,
        min_comp,
        ztol_min,
        zz_min,
    )


_BIG: Final[int] = np.iinfo(np.int64).max // 4


def _r_window_hi(req, topology, vz, vf_lo, c_min, need):
    """Largest total series resistance that can still meet ``need`` [ohm] (necessary).

    Inverts the screen's upper bound of the minimum current, (1 + slack) times the engine's
    closed form 4 f C (Vpk / k - Vz - 2 Vf) (bridge) or f C (2 Vpk / k - Vz - Vf) (half-wave),
    k = sqrt(1 + (w R C)^2), for k, then R = sqrt(k^2 - 1) / (w C). -1 where even R = 0 fails.
    """
    f = min(req.mains.frequencies_hz)
    w = 2 * math.pi * f
    vpk = _SQRT2 * req.mains.low_v
    g = 1 + CURRENT_SLACK
    with np.errstate(divide="ignore", invalid="ignore"):
        if topology == "bridge":
            k = vpk / (need / (g * 4 * f * c_min) + vz + 2 * vf_lo)
        else:
            k = 2 * vpk / (need / (g * f * c_min) + vz + vf_lo)
        r = np.sqrt(np.maximum(k * k - 1, 0.0)) / (w * c_min)
    return np.where(k >= 1, r, -1.0)


#: the ragged expansion of X by R windows works on at most this many pairs at a time
_POINTS_PER_BATCH: Final[int] = 2_000_000


def _screen_chunk(setup: _Setup, G: _Group, xs: np.ndarray, budget: int, stats: dict):
    """Screen the points (x in ``xs``) x (series R in the window that x allows), in batches of
    at most _POINTS_PER_BATCH points. Returns (x indices, R indices, lower-bound keys,
    completion indices) of the points that pass with key < budget, in key order."""
    outs = []
    start = 0
    while start < len(xs):
        n = _batch_len(setup, G, xs[start:])
        out = _screen_batch(setup, G, xs[start : start + n], budget, stats)
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


def _batch_len(setup: _Setup, G: _Group, xs: np.ndarray) -> int:
    """How many of ``xs`` fit in one batch (their R windows summed), at least one."""
    req, pol = setup.req, setup.policy
    avg_a, _ = _bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    xo = setup.xo
    xtol = np.nan_to_num(xo.attrs["tolerance"][xs], nan=0.2)
    c_min = xo.attrs["value"][xs] * (1 - xtol) * (1 - req.cap_loss)
    r_hi = _r_window_hi(req, G.topology, G.vz, G.vf_lo, c_min, need)
    cnt = np.searchsorted(G.r_sorted, r_hi, side="right")
    over = np.flatnonzero(np.cumsum(cnt) > _POINTS_PER_BATCH)
    return max(1, int(over[0]) if len(over) else len(xs))


def _x_completion_lb(setup: _Setup, G: _Group, xs: np.ndarray, r_hi: np.ndarray) -> np.ndarray:
    """Per X: how much the cheapest Zener and bleeder it can use cost above the group's cheapest
    (a lower bound; _BIG where none can serve).

    Zener: its power at the largest series resistance the load allows (the power falls as R
    rises) must fit; bleeder: the discharge rule at this capacitance caps its resistance.
    """
    req, pol = setup.req, setup.policy
    xo = setup.xo
    cx = xo.attrs["value"][xs]
    xtol = np.nan_to_num(xo.attrs["tolerance"][xs], nan=0.2)
    zero = np.zeros(len(xs))
    r_use = np.maximum(r_hi, 1e-3)
    b = _screen_bounds(
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
    zsel = _cheapest_at_least(G.z_cap, G.zo.key, b["max_zener_power_w"])
    z_extra = np.where(zsel >= 0, G.zo.key[np.maximum(zsel, 0)] - int(np.min(G.zo.key)), _BIG)
    limit_v, allowed_s, tau_rule = _PROFILE_LIMITS[req.conditions.profile]
    c_dis = cx * (1 + xtol)
    v0 = _SQRT2 * req.mains.high_v
    if tau_rule:
        rb_hi = allowed_s / (c_dis * (1 - SCREEN_SLACK))
    else:
        rb_hi = allowed_s / (c_dis * math.log(max(v0 / limit_v, 1.0 + 1e-12)) * (1 - SCREEN_SLACK))
    if req.conditions.profile == "iec60335":
        rb_hi = np.where(cx * (1 - xtol) <= _EXEMPT_C, np.inf, rb_hi)
    bsel = G.b_table.query(np.zeros(len(xs)), rb_hi)
    b_min = G.min_comp_key - (
        int(np.min(G.zo.key)) + int(np.min(G.rect.key)) + int(np.min(G.co.key))
    )
    b_extra = np.where(bsel >= 0, setup.bo.key[np.maximum(bsel, 0)] - b_min, _BIG)
    del pol
    return np.minimum(z_extra + b_extra, _BIG)


def _screen_batch(setup: _Setup, G: _Group, xs: np.ndarray, budget: int, stats: dict):
    """One batch of _screen_chunk."""
    req, pol = setup.req, setup.policy
    xo, ro = setup.xo, setup.ro
    avg_a, _ = _bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    xtol = np.nan_to_num(xo.attrs["tolerance"][xs], nan=0.2)
    cx = xo.attrs["value"][xs]
    # the series-R window each X allows (necessary conditions, see _screen_bounds):
    #   current: I_ub(C, R) >= need  ->  R <= sqrt((I0 / need)^2 - 1) / (w_lo C_min)
    #   switch-on dV/dt on C and rectifier IFSM: R >= V_on / (C dV/dt), V_on / IFSM_max
    c_min = cx * (1 - xtol) * (1 - req.cap_loss)
    r_hi = _r_window_hi(req, G.topology, G.vz, G.vf_lo, c_min, need)
    lb = 1 - SCREEN_SLACK
    c_max = cx * (1 + xtol)
    v_on = max(_SQRT2 * req.mains.high_v - (G.vz + 2 * G.vf_hi), 0.0)
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
    comp_lb = G.min_comp_key + _x_completion_lb(setup, G, xs, r_hi)[xpos]
    m = kx + comp_lb + np.where(ro.attrs["fusible_flag"][rg], 0, fuse_min) < budget
    xg, rg, kx = xg[m], rg[m], kx[m]
    if len(xg) == 0:
        return None
    # the physics in slices of bounded size
    outs = []
    for s0_ in range(0, len(xg), _PHYSICS_SLICE):
        sl = slice(s0_, s0_ + _PHYSICS_SLICE)
        out = _screen_points(setup, G, xg[sl], rg[sl], kx[sl], budget, stats)
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
_PHYSICS_SLICE: Final[int] = 150_000


def _screen_points(setup: _Setup, G: _Group, xg, rg, kx, budget: int, stats: dict):
    """The physics screen of a set of points (X index, R index, their key)."""
    req, pol = setup.req, setup.policy
    xo, ro = setup.xo, setup.ro
    s0 = _context_scalars(req)
    avg_a, peak_a = _bus_demand(req)
    rtol = np.nan_to_num(ro.attrs["tolerance"][rg], nan=0.05)
    r_tot = ro.attrs["value"][rg] * ro.qty[rg]
    b = _screen_bounds(
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
    ok = _screen_rules_x_r(s, xns, rns, pol, which="cheap")
    stats["points"] += len(ok)
    if budget >= _BIG:  # diagnostics for an infeasible request; not needed once a set exists
        _count_block(stats, s, xns, rns, pol, ok)
    # quick completion checks before the costlier surge bounds
    room0 = pol.standby_limit_w - (
        b["max_zener_power_w"] + b["max_series_r_power_w"] + b["rectifier_loss_w"]
    )
    _tally(stats, "whole.standby_power", ok & ~(room0 > 0))
    ok &= room0 > 0
    _tally(stats, "zener.power", ok & ~(b["max_zener_power_w"] <= np.max(G.z_cap)))
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
        _surge_bounds(
            req.conditions.surge_v,
            b["series_resistance_ohm"],
            b["c_max"],
            1 - SCREEN_SLACK,
            _rd_max(G.rect, G.topology),
        )
    )
    s = {**s0, **b, "load_a": avg_a}
    xns, rns = xo.ns(xg), ro.ns(rg)
    ok = _screen_rules_x_r(s, xns, rns, pol, which="surge")
    ok_xr = ok.copy()
    zo, rect, co = G.zo, G.rect, G.co
    zsel = _cheapest_at_least(G.z_cap, zo.key, b["max_zener_power_w"])
    _tally(stats, "zener.power", ok_xr & (zsel < 0))
    ok &= zsel >= 0
    rsel = _cheapest_at_least(
        rect.attrs["ifsm_a"] * pol.rectifier_surge_fraction,
        rect.key,
        b["inrush_rectifier_peak_current_a"],
    )
    _tally(stats, "rectifier.ifsm", ok_xr & (rsel < 0))
    ok &= rsel >= 0
    deficit = np.maximum(peak_a - b["min_dc_current_a"], 0.0)
    need_c = deficit * req.burst_duration_s / (G.vz * pol.burst_droop_fraction)
    csel = _cheapest_at_least(G.cres_min, co.key, need_c)
    _tally(stats, "whole.burst_holdup", ok_xr & (csel < 0))
    ok &= csel >= 0
    limit_v, allowed_s, tau_rule = _PROFILE_LIMITS[req.conditions.profile]
    # the engine discharges from the crest of the highest mains through the largest bleeder
    # into the largest capacitance; the table holds each bleeder at its lowest tolerance
    c_dis = b["c_max"]
    v0 = _SQRT2 * req.mains.high_v
    if tau_rule:
        rb_hi = allowed_s / (c_dis * (1 - SCREEN_SLACK))
    else:
        rb_hi = allowed_s / (c_dis * math.log(max(v0 / limit_v, 1.0 + 1e-12)) * (1 - SCREEN_SLACK))
    if req.conditions.profile == "iec60335":
        rb_hi = np.where(b["c_min_nom"] <= _EXEMPT_C, np.inf, rb_hi)
    room = pol.standby_limit_w - (
        b["max_zener_power_w"] + b["max_series_r_power_w"] + b["rectifier_loss_w"]
    )
    _tally(stats, "whole.standby_power", ok_xr & ~(room > 0))
    ok &= room > 0
    rb_lo = np.where(room > 0, G.pbleed_of / np.maximum(room, 1e-12), np.inf)
    bsel = G.b_table.query(rb_lo, rb_hi)
    _tally(stats, "bleeder.discharge", ok_xr & (room > 0) & (bsel < 0))
    ok &= bsel >= 0
    fus = ro.attrs["fusible_flag"][rg].astype(bool)
    fkey, fok = _fuse_choice(setup.fo, ro, rg, b, s0, pol, fus)
    _tally(stats, "fuse.opens_on_short", ok_xr & ~fok)
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


def _prune(setup, topology, vz, vf_lo, vf_hi, z_cap_max, ztol_min=0.0, zz_min=0.0, xidx=None):
    """X and series-R options that can take part in any feasible point of this group.

    Necessary conditions only (each uses the most favourable partner of the other role):
    X: the current at the smallest series resistance meets the load; the Zener power at the
    largest series resistance fits the largest Zener and the standby limit. R: the current
    with the largest kept capacitance meets the load; the R rules hold with the smallest kept
    capacitance. Then R options dominated by another of the same resistance and tolerance
    (higher or equal ratings, lower or equal key) by ``top`` or more are dropped.
    """
    req, pol = setup.req, setup.policy
    xo, ro = setup.xo, setup.ro
    s0 = _context_scalars(req)
    avg_a, _ = _bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    r_tot = ro.attrs["value"] * ro.qty
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
    r_allow = _r_window_hi(req, topology, vz, vf_lo, cx * (1 - xtol) * (1 - req.cap_loss), need)
    xk = r_allow >= r_lo
    r_use = np.clip(r_allow, r_lo, r_hi)
    b_hi = _screen_bounds(req, topology, vz, cx, xtol, r_use, zero, vf_lo, vf_hi, ztol_min, zz_min)
    xk &= b_hi["max_zener_power_w"] <= z_cap_max
    xk &= b_hi["max_zener_power_w"] + b_hi["rectifier_loss_w"] <= pol.standby_limit_w
    xkeep = xidx[np.flatnonzero(xk)]
    if len(xkeep) == 0:
        return xkeep, np.zeros(0, dtype=np.int64)
    cx = xo.attrs["value"]
    xtol = xtol_all
    c_best = float(np.max(cx[xkeep] * (1 - xtol[xkeep])))
    c_least = float(np.min(cx[xkeep] * (1 - xtol[xkeep])))
    n = len(ro)
    b = _screen_bounds(
        req, topology, vz, np.full(n, c_best), np.zeros(n), r_tot, rtol, vf_lo, vf_hi, ztol_min
    )
    rk = b["min_dc_current_a"] >= need
    b2 = _screen_bounds(
        req,
        topology,
        vz,
        np.full(n, c_least),
        np.zeros(n),
        r_tot,
        rtol,
        vf_lo,
        vf_hi,
        ztol_min,
        surge=False,
    )
    s = {**s0, **b2, "load_a": 0.0}
    rns = ro.ns()
    for rid in (
        "series_r.power",
        "series_r.switch_on_energy",
        "series_r.switch_on_voltage",
        "series_r.peak_voltage",
    ):
        st, lim, _ = _rule(rid).check(s, rns, pol)
        rk &= np.asarray(st <= lim)
    rk &= b2["max_series_r_power_w"] <= pol.standby_limit_w
    rkeep = np.flatnonzero(rk)
    # the surge rule (costlier bound) on the survivors only
    if len(rkeep):
        sb = _surge_bounds(
            req.conditions.surge_v,
            b2["series_resistance_ohm"][rkeep],
            np.full(len(rkeep), c_least),
            1 - SCREEN_SLACK,
            _rd_max(setup.rect[topology], topology),
        )
        st, lim, _ = _rule("series_r.surge_voltage").check(sb, ro.ns(rkeep), pol)
        rkeep = rkeep[np.asarray(st <= lim)]
    return xkeep, rkeep


def _c_window(setup: _Setup, G: _Group) -> tuple[float, float]:
    """Total X capacitance range a feasible set of this group can have [F] (necessary).

    The X criteria of ``_prune`` on a fine log grid of capacitances at zero tolerance (the most
    permissive case: tolerance only lowers the minimum current and raises the Zener power).
    """
    req, pol = setup.req, setup.policy
    avg_a, _ = _bus_demand(req)
    need = avg_a * (1 + pol.load_margin)
    ro = setup.ro
    r_tot = ro.attrs["value"] * ro.qty
    rtol = np.nan_to_num(ro.attrs["tolerance"], nan=0.05)
    r_lo = float(np.min(r_tot * (1 - rtol)))
    r_hi = float(np.max(r_tot * (1 + rtol)))
    grid = np.geomspace(1e-9, 4e-5, 1200)
    step = grid[1] / grid[0]
    zero = np.zeros(len(grid))
    r_allow = _r_window_hi(req, G.topology, G.vz, G.vf_lo, grid * (1 - req.cap_loss), need)
    ok = r_allow >= r_lo
    b = _screen_bounds(
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
    ok &= b["max_zener_power_w"] + b["rectifier_loss_w"] <= pol.standby_limit_w
    idx = np.flatnonzero(ok)
    if len(idx) == 0:
        return math.inf, -math.inf
    return float(grid[idx[0]] / step), float(grid[idx[-1]] * step)


def _add_pairs(setup: _Setup, groups: list[_Group], budget: int, stats: dict) -> None:
    """Phase 2 of the search: X pairs within the capacitance window and under the cost budget
    join the options; each group gets them (pruned, in key order) as its next X list."""
    windows = [_c_window(setup, g) for g in groups]
    c_lo = min(w[0] for w in windows)
    c_hi = max(w[1] for w in windows)
    if not c_lo <= c_hi:
        return
    xs = setup.xs
    ia, ib, trunc = _window_pairs(xs, c_lo, c_hi, budget, PAIR_CAP)
    stats["pairs"] = len(ia)
    if trunc:
        stats["pairs_truncated"] = True
    if len(ia) == 0:
        return
    pairs = _pairs_of(xs, ia, ib, setup.req.minimize)
    pairs = _dedupe(pairs, ("value", "tolerance", "dvdt_v_per_s"), setup.req.top)
    start = len(setup.xo)
    setup.xo = _concat([setup.xo, pairs])
    new = np.arange(start, len(setup.xo))
    for g in groups:
        xk, rk = _prune(
            setup,
            g.topology,
            g.vz,
            g.vf_lo,
            g.vf_hi,
            float(np.max(g.z_cap)),
            g.ztol_min,
            g.zz_min,
            xidx=new,
        )
        if len(xk) == 0 or len(rk) == 0:
            g.xkeep = np.zeros(0, dtype=np.int64)
            g.cursor = 0
            continue
        g.xkeep = xk[np.argsort(setup.xo.key[xk], kind="stable")]
        g.cursor = 0
        r_tot = setup.ro.attrs["value"][rk] * setup.ro.qty[rk]
        order = np.argsort(r_tot, kind="stable")
        g.rkeep, g.r_sorted = rk[order], r_tot[order]
        g.min_r_key = int(np.min(setup.ro.key[g.rkeep]))


def _pareto_r(ro: _Options, idx: np.ndarray, keep: int) -> np.ndarray:
    """Drop series-R options dominated ``keep`` or more times within their (R, tol, fusible)."""
    if len(idx) == 0:
        return idx
    q = ro.qty[idx].astype(float)
    a = ro.attrs
    cap = np.column_stack(
        [
            np.nan_to_num(a["power_w"][idx], nan=-1) * q,
            np.nan_to_num(a["pulse_energy_j"][idx], nan=-1) * q,
            np.nan_to_num(a["limiting_voltage_v"][idx], nan=-1) * q,
            np.nan_to_num(a["derate_start_c"][idx], nan=-1),
            np.nan_to_num(a["derate_end_c"][idx], nan=-1),
        ]
    )
    grp = np.column_stack(
        [
            np.round(a["value"][idx] * ro.qty[idx], 9),
            np.nan_to_num(a["tolerance"][idx], nan=-1),
            a["fusible_flag"][idx].astype(float),
        ]
    )
    key = ro.key[idx]
    _, inv = np.unique(grp, axis=0, return_inverse=True)
    inv = np.asarray(inv).ravel()
    order = np.argsort(inv, kind="stable")
    inv_s = inv[order]
    starts = np.flatnonzero(np.r_[True, inv_s[1:] != inv_s[:-1]])
    sizes = np.diff(np.r_[starts, len(inv_s)])
    keep_mask = np.zeros(len(idx), dtype=bool)
    # groups of one: nothing to compare; larger ones in buckets of equal size, vectorised
    keep_mask[order[starts[sizes == 1]]] = True
    for size in np.unique(sizes[sizes > 1]):
        st = starts[sizes == size]
        for b0 in range(0, len(st), 4096):
            sb = st[b0 : b0 + 4096]
            m = order[sb[:, None] + np.arange(size)[None, :]]  # (groups, size)
            c = cap[m]  # (groups, size, 5)
            k = key[m]  # (groups, size)
            # dom[g, i, j]: j dominates i (ratings all >=, and cheaper or strictly better)
            ge = np.all(c[:, None, :, :] >= c[:, :, None, :], axis=3)
            gt = np.any(c[:, None, :, :] > c[:, :, None, :], axis=3)
            better = (k[:, None, :] < k[:, :, None]) | ((k[:, None, :] == k[:, :, None]) & gt)
            dom = ge & better
            dom[:, np.arange(size), np.arange(size)] = False
            keep_mask[m[dom.sum(axis=2) < keep]] = True
    return np.sort(idx[keep_mask])


def _tally(stats: dict, rule_id: str, bad: np.ndarray) -> None:
    n = int(np.sum(bad))
    if n:
        d = stats["completion"].setdefault(rule_id, 0)
        stats["completion"][rule_id] = d + n


def _fuse_choice(fo, ro, rg, b, s0, pol, fusible):
    n = len(rg)
    fkey = np.zeros(n, dtype=np.int64)
    fok = fusible.copy()
    # fusible resistor: fault power rule on the resistor itself
    if np.any(fusible):
        rns = ro.ns(rg)
        st, lim, _ = _rule("fuse.fusible_opens_on_short").check(
            {**s0, "series_resistance_ohm": b["series_resistance_ohm"] * 1.0}, rns, pol
        )
        fok &= np.asarray(st <= lim) | ~fusible
    if len(fo):
        fns = fo.ns()
        i2t_cap = fns.i2t_a2s * pol.fuse_i2t_fraction
        need_fault = fns.value * pol.fuse_fault_factor
        fault = s0["mains_min_v"] / np.maximum(b["series_resistance_ohm"], 1e-3)
        # fault current upper bound: R at its low tolerance -> series_resistance_ohm = r_min
        best = np.full(n, -1, dtype=np.int64)
        bestkey = np.full(n, np.iinfo(np.int64).max, dtype=np.int64)
        order = np.argsort(fo.key)
        for j in order:  # fuses are few; loop over fuse options, vectorised over the grid
            okj = (b["inrush_i2t_a2s"] <= i2t_cap[j]) & (need_fault[j] <= fault)
            upd = okj & (best < 0)
            best[upd] = j
            bestkey[upd] = fo.key[j]
        use = ~fusible & (best >= 0)
        fkey = np.where(use, bestkey, 0)
        fok = fok | use
    return fkey, fok


def _count_block(stats, s, xns, rns, pol, ok_all):
    """Tally, per rule, the grid points where it alone is the first failing rule."""
    blk = stats["blocking"]
    for rid in (
        "whole.min_current",
        "series_r.power",
        "series_r.switch_on_energy",
        "series_r.switch_on_voltage",
        "x_cap.dvdt_switch_on",
    ):
        r = _rule(rid)
        p = None if r.role == "whole" else (xns if r.role == "x_capacitor" else rns)
        st, lim, m = r.check(s, p, pol)
        bad = ~np.asarray(st <= lim)
        if np.any(bad):
            d = blk.setdefault(rid, {"count": 0, "best_ratio": 0.0})
            d["count"] += int(np.sum(bad))
            with np.errstate(divide="ignore", invalid="ignore"):
                ratio = np.nanmax(np.where(bad, lim / st, np.nan)) if np.any(bad) else 0.0
            d["best_ratio"] = max(d["best_ratio"], float(ratio))


# ---------------------------------------------------------------------------------------------
# verification with the engine


def _row(setup: _Setup, i: int) -> pd.Series:
    return setup.df.iloc[i]


def _rated(setup: _Setup, opts: _Options, i: int, role: str) -> R.RatedPart:
    rows = opts.rows[i]
    arr = opts.arrangement[i]
    if arr == "bridge":
        arr = "single"  # four discrete diodes as a bridge: each diode sees the full stress
    return R.rated_part_from_row(
        _row(setup, rows[0]).to_dict(), role, qty=len(rows), arrangement=arr
    )


def _x_rated(setup: _Setup, i: int) -> list[R.RatedPart]:
    rows = setup.xo.rows[i]
    if len(rows) == 1:
        return [R.rated_part_from_row(_row(setup, rows[0]).to_dict(), "x_capacitor")]
    if rows[0] == rows[1]:
        return [
            R.rated_part_from_row(
                _row(setup, rows[0]).to_dict(), "x_capacitor", qty=2, arrangement="parallel"
            )
        ]
    return [R.rated_part_from_row(_row(setup, r).to_dict(), "x_capacitor") for r in rows]


def _engine():
    """The engine's dataclasses (selector.engine.circuit) plus its analyse()."""
    from .engine import circuit as C

    ns = SimpleNamespace(**{k: getattr(C, k) for k in C.__all__})
    try:
        from .engine import analyse

        ns.analyse = analyse
    except ImportError:  # pragma: no cover - the engine is a dependency of the package
        ns.analyse = None
    return ns


def _circuit_for(setup, topology, vz, xi, ri, zi, di, ci, bi):
    E = _engine()
    req = setup.req
    df = setup.df
    xrows = setup.xo.rows[xi]
    caps = tuple(float(df.at[r, "value"]) for r in xrows)
    rr = setup.ro.rows[ri]
    r_tot = float(sum(float(df.at[r, "value"]) for r in rr))
    rect = setup.rect[topology]
    drow = df.iloc[rect.rows[di][0]]
    zo = setup.zo[(topology, vz)]
    zrows = zo.rows[zi]
    zrow = df.iloc[zrows[0]]
    z_v = float(sum(float(df.at[r, "value"]) for r in zrows))
    zz = _nz(zrow.get("zz_ohm"), 0.0) * len(zrows)
    crow = df.iloc[setup.co.rows[ci][0]]
    brows = setup.bo.rows[bi]
    rb = float(sum(float(df.at[r, "value"]) for r in brows))
    vf = _nz(drow.get("vf_v"), 0.8)
    rs = _nz(drow.get("rs_ohm"), 0.1)
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
    xt = [_nz(df.at[r, "tolerance"], 0.2) for r in xrows]
    cap_tol = float(sum(c * t for c, t in zip(caps, xt, strict=True)) / sum(caps))
    tol = E.Tolerances(
        cap_tol=cap_tol,
        cap_loss=req.cap_loss,
        r_tol=max(_nz(df.at[r, "tolerance"], 0.05) for r in rr + brows),
        zener_tol=_nz(zrow.get("tolerance"), 0.05),
    )
    return circ, tol


def _nz(v: Any, default: float) -> float:
    try:
        f = float(v)
    except (TypeError, ValueError):
        return default
    return default if math.isnan(f) else f


def _context_for(setup, circ, vz, ci, r_tol=0.0):
    req = setup.req
    avg_a, peak_a = _bus_demand(req)
    crow = setup.df.iloc[setup.co.rows[ci][0]]
    ctx = {
        **_context_scalars(req),
        "load_a": avg_a,
        # fault current with a shorted X capacitor: series resistance at its upper tolerance
        "series_resistance_ohm": circ.series_resistance_ohm * (1 + r_tol),
        "zener_voltage_v": vz,
        "reservoir_min_f": float(crow["value"]) * (1 - _nz(crow.get("tolerance"), 0.2)),
    }
    if req.burst_current_a > 0:
        ctx["burst_current_a"] = peak_a
        ctx["burst_duration_s"] = req.burst_duration_s
    return ctx


def _verify(setup, topology, vz, xi, ri, scr):
    """Analyse one grid point exactly; re-choose its completion; evaluate every rule.

    Returns (key, parts indices, analysis, findings) or None when no completion passes.
    """
    pol = setup.policy
    req = setup.req
    zo, rect, co, bo, fo = (
        setup.zo[(topology, vz)],
        setup.rect[topology],
        setup.co,
        setup.bo,
        setup.fo,
    )
    zi, di, ci, bi = scr
    for _ in range(4):
        circ, tol = _circuit_for(setup, topology, vz, xi, ri, zi, di, ci, bi)
        an = setup.analyse(circ, req.mains, tol, req.conditions)
        ctx = _context_for(setup, circ, vz, ci, float(setup.ro.attrs["tolerance"][ri]))
        s, corners = R.stresses_from_analysis(an, ctx)
        new = (
            _best_passing(setup, zo, "zener", s),
            _best_passing(setup, rect, "rectifier", s),
            _best_passing(
                setup, co, "reservoir", {**s, "reservoir_min_f": 0.0}, c_now=circ.reservoir_f
            ),
            _best_passing(setup, bo, "bleeder", s, rb_now=circ.bleeder_resistance_ohm),
        )
        if any(v < 0 for v in new):
            if setup.stats is not None:
                fails = setup.stats.setdefault("exact_fail", {})
                for name, v in zip(
                    ("zener", "rectifier", "reservoir", "bleeder"), new, strict=True
                ):
                    if v == _BLOCKED_BY_STANDBY:
                        fails["whole.standby_power"] = fails.get("whole.standby_power", 0) + 1
                    elif v < 0:
                        fails[name + ".*"] = fails.get(name + ".*", 0) + 1
            return None
        if new == (zi, di, ci, bi):
            break
        zi, di, ci, bi = new
    else:
        return None
    parts = _parts_by_role(setup, topology, vz, xi, ri, zi, di, ci, bi, None)
    fsel = None
    if not bool(setup.ro.attrs["fusible_flag"][ri]):
        fsel = _best_fuse(setup, s, parts)
        if fsel is None:
            return None
        parts = _parts_by_role(setup, topology, vz, xi, ri, zi, di, ci, bi, fsel)
    findings = R.evaluate(parts, an, pol, context=ctx)
    bad = [f.rule for f in findings if f.severity != "pass"]
    setup.last_exact = (bad, s, circ)
    if bad:
        fails = setup.stats.setdefault("exact_fail", {}) if setup.stats is not None else {}
        for b in bad:
            fails[b] = fails.get(b, 0) + 1
        return None
    key = (
        setup.xo.key[xi]
        + setup.ro.key[ri]
        + zo.key[zi]
        + rect.key[di]
        + co.key[ci]
        + bo.key[bi]
        + (fo.key[fsel] if fsel is not None else 0)
    )
    return int(key), (topology, vz, xi, ri, zi, di, ci, bi, fsel), an, findings, circ, parts


def _best_passing(
    setup,
    opts: _Options,
    role: str,
    s: dict[str, Any],
    rb_now: float | None = None,
    c_now: float | None = None,
) -> int:
    """Cheapest option of ``opts`` that passes every rule of ``role`` under stresses ``s``.

    For the bleeder the stresses that depend on its own resistance are rescaled per candidate:
    discharge time (and time constant) in proportion to R, power in inverse proportion (RC
    discharge, P = V^2 / R [S]), and the no-load power changes by the bleeder's difference.
    """
    if len(opts) == 0:
        return -1
    ns = opts.ns()
    ok = np.ones(len(opts), dtype=bool)
    standby_ok = None
    if role == "reservoir" and c_now and not _missing(s.get("max_output_ripple_v")):
        # ripple between charging pulses scales as 1 / C (C dV = I dt [S]) for each candidate
        s = dict(s)
        s["max_output_ripple_v"] = s["max_output_ripple_v"] * c_now / opts.attrs["value"]
    if role == "bleeder" and rb_now is not None and "total_ohm" in opts.attrs:
        ratio = opts.attrs["total_ohm"] / rb_now
        s = dict(s)
        for k in ("discharge_time_s", "discharge_time_constant_s"):
            if not _missing(s.get(k)):
                s[k] = s[k] * ratio
        pb = s.get("max_bleeder_power_w")
        if not _missing(pb):
            s["max_bleeder_power_w"] = pb / ratio
            nl = s.get("no_load_real_power_w")
            if not _missing(nl):
                standby_ok = nl + pb * (1 / ratio - 1) <= setup.policy.standby_limit_w
    else:
        standby_ok = None
    for rule in R.rules_for(role):
        if rule.role == "whole" or (rule.applies is not None and not rule.applies(s, ns)):
            continue  # (the part-independent conditions: surge level, burst)
        if any(_missing(s.get(k)) for k in rule.stress_keys):
            continue  # the exact evaluate() turns this into a warn and rejects the design
        st, lim, _ = rule.check(s, ns, setup.policy)
        ok &= np.asarray(st <= lim)
    if role == "reservoir" and s.get("burst_current_a"):
        deficit = max(s["burst_current_a"] - s["min_dc_current_a"], 0.0)
        cmin = opts.attrs["value"] * (1 - np.nan_to_num(opts.attrs["tolerance"], nan=0.2))
        ok &= cmin >= deficit * s["burst_duration_s"] / (
            s["zener_voltage_v"] * setup.policy.burst_droop_fraction
        )
    if standby_ok is not None:
        if ok.any() and not (ok & standby_ok).any():
            return _BLOCKED_BY_STANDBY  # the bleeder's own rules pass; the whole-supply rule fails
        ok &= standby_ok
    idx = np.flatnonzero(ok)
    if len(idx) == 0:
        return -1
    return int(idx[np.argmin(opts.key[idx])])


#: returned by _best_passing when only the no-load (standby) power limit rejects every bleeder
_BLOCKED_BY_STANDBY: Final = -2


def _missing(v: Any) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def _best_fuse(setup, s, parts) -> int | None:
    fo = setup.fo
    if len(fo) == 0:
        return None
    for j in np.argsort(fo.key):
        p = _rated(setup, fo, int(j), "fuse")
        ok = True
        for rule in R.rules_for("fuse"):
            if rule.applies is not None and not rule.applies(s, p):
                continue
            st, lim, _ = rule.check(s, p, setup.policy)
            if not st <= lim:
                ok = False
                break
        if ok:
            return int(j)
    return None


def _parts_by_role(setup, topology, vz, xi, ri, zi, di, ci, bi, fi):
    out: dict[str, Any] = {
        "x_capacitor": _x_rated(setup, xi),
        "series_resistor": _rated(setup, setup.ro, ri, "series_resistor"),
        "zener": _rated(setup, setup.zo[(topology, vz)], zi, "zener"),
        "rectifier": _rated(setup, setup.rect[topology], di, "rectifier"),
        "reservoir": _rated(setup, setup.co, ci, "reservoir"),
        "bleeder": _rated(setup, setup.bo, bi, "bleeder"),
    }
    if fi is not None:
        out["fuse"] = _rated(setup, setup.fo, fi, "fuse")
    elif bool(setup.ro.attrs["fusible_flag"][ri]):
        sr = out["series_resistor"]
        out["fuse"] = dataclasses.replace(sr, role="fuse")
    return out


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
    setup = _prepare(frame, req, pol)
    setup.analyse = analyse or _engine().analyse
    if setup.analyse is None:
        raise RuntimeError("selector.engine.analyse is not available")
    _precheck(setup)
    stats: dict[str, Any] = {
        "points": 0,
        "passed": 0,
        "blocking": {},
        "completion": {},
        "verified": 0,
    }
    setup.stats = stats
    groups = [g for g in (_group(setup, t, v, stats) for t, v in setup.zo) if g is not None]
    chunk = 256
    total_chunks = sum((len(g.xkeep) + chunk - 1) // chunk for g in groups)
    done_chunks = 0
    pending: list[list[Any]] = []  # [keys, xs, rs, group, pointer]
    found: list[tuple[int, Any]] = []
    cuts: dict[tuple[int, int], float] = {}
    eager_limit = 40

    def bound() -> int:
        if len(found) < req.top:
            return _BIG
        return sorted(k for k, _ in found)[req.top - 1]

    def next_chunk_lb() -> tuple[int, _Group | None]:
        best, bg = _BIG, None
        for g in groups:
            if g.cursor < len(g.xkeep):
                lb = int(setup.xo.key[g.xkeep[g.cursor]]) + g.min_r_key + g.min_comp_key
                if lb < best:
                    best, bg = lb, g
        return best, bg

    for phase in ("singles", "pairs"):
        if phase == "pairs":
            if stats.get("verify_limit") or not groups:
                break
            base = min(g.min_r_key + g.min_comp_key for g in groups)
            b = bound()
            _add_pairs(setup, groups, _BIG if b >= _BIG else b - base, stats)
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
                r_corner = float(setup.ro.attrs["value"][ri] * setup.ro.qty[ri]) * (
                    1 + float(np.nan_to_num(setup.ro.attrs["tolerance"][ri], nan=0.05))
                )
                ck = (id(G), xi)
                if ck in cuts and r_corner >= cuts[ck]:
                    stats["cut"] = stats.get("cut", 0) + 1
                    continue
                stats["verified"] += 1
                setup.last_exact = None
                res = _verify(setup, G.topology, G.vz, xi, ri, guess)
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
            out = _screen_chunk(setup, g, xs, bound(), stats)
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
        raise _infeasible(setup, stats, verified=stats["verified"])
    out = [_to_design(setup, rank + 1, res) for rank, (_, res) in enumerate(found[: req.top])]
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


def _precheck(setup: _Setup) -> None:
    """Fast infeasibility: no option at all for a role, or not enough capacitance anywhere."""
    req = setup.req
    for role, opts in (
        ("x_capacitor", setup.xo),
        ("series_resistor", setup.ro),
        ("bleeder", setup.bo),
        ("reservoir", setup.co),
    ):
        if len(opts) == 0:
            raise InfeasibleError(
                f"no catalogue part can serve as {role} under the filters and rules",
                rule=f"{role}.*",
                relaxation="fewer filters (--smd-only/--tht-only/--exclude/--stock-only)",
            )
    if not setup.zo:
        raise InfeasibleError(
            "no Zener in the catalogue", rule="zener.power", relaxation="a catalogue with Zeners"
        )
    avg_a, _ = _bus_demand(req)
    need = avg_a * (1 + setup.policy.load_margin)
    best = 0.0
    best_top = ""
    v_single = setup.xo.attrs["value"]
    # singles and the largest pair (two of the largest part) at their most favourable
    values = np.append(v_single, 2 * np.max(v_single)) if len(v_single) else v_single
    for t in setup.topologies:
        vz = min(v for _, v in setup.zo)
        b = _screen_bounds(
            req,
            t,
            vz,
            values,
            np.zeros(len(values)),
            np.full(len(values), 1.0),
            np.zeros(len(values)),
            0.0,
            0.0,
        )
        i = float(np.max(b["min_dc_current_a"]))
        if i > best:
            best, best_top = i, t
    if best < need:
        cmax = 2 * float(np.max(setup.xo.attrs["value"]))
        m = req.mains
        vpk = _SQRT2 * m.low_v
        f = min(m.frequencies_hz)
        c_need = need / (4 * f * (vpk - min(v for _, v in setup.zo))) / (1 - req.cap_loss) / 0.8
        relax = [
            f"X capacitance of about {c_need * 1e6:.3g} uF, more than any catalogue pair "
            f"({cmax * 1e6:.3g} uF)",
            f"a load of at most {best / (1 + setup.policy.load_margin) * 1e3:.3g} mA",
        ]
        if "half-wave" in setup.topologies and "bridge" not in setup.topologies:
            relax.append("bridge instead of half-wave (twice the current)")
        if len(m.frequencies_hz) > 1:
            relax.append(f"a single mains frequency of {max(m.frequencies_hz):g} Hz")
        raise InfeasibleError(
            f"blocked by rule whole.min_current: the best catalogue set gives about "
            f"{best * 1e3:.3g} mA ({best_top}) against {need * 1e3:.3g} mA needed; relax: "
            + "; or ".join(relax),
            rule="whole.min_current",
            relaxation=relax[0],
        )


_HINTS: Final[dict[str, str]] = {
    "whole.min_current": "more X capacitance, a lower load, bridge instead of half-wave, "
    "or a single mains frequency",
    "series_r.power": "a higher-power series resistor family or a lower ambient",
    "series_r.switch_on_energy": "a pulse-rated series resistor family (metal oxide, wirewound)",
    "series_r.switch_on_voltage": "a series resistor family with a higher limiting voltage",
    "x_cap.dvdt_switch_on": "a larger series resistance or an X capacitor with a higher dV/dt",
    "zener.power": "a higher Zener power class (or two Zeners in series), a lower ambient, "
    "or a single mains frequency",
    "rectifier.ifsm": "a rectifier with a higher IFSM or a larger series resistance",
    "whole.burst_holdup": "a larger reservoir, a shorter burst, or a lower burst current",
    "whole.standby_power": "a lower load (less X capacitance) or a lower Zener voltage",
    "bleeder.discharge": "a bleeder family rated for more power/voltage (split in 3), or "
    "less X capacitance",
    "fuse.opens_on_short": "a slower fuse (more I^2t) or a fusible series resistor",
}


def _infeasible(setup: _Setup, stats: dict, verified: int = 0) -> InfeasibleError:
    """The blocking rule: among points that pass the X/R rules, the completion rule that fails
    most often; otherwise the X/R rule that fails most often, with how far it misses."""
    comp = stats.get("completion", {})
    blk = stats.get("blocking", {})
    if verified:
        fails = stats.get("exact_fail", {})
        limited = (
            " (search limited: the verification cap was reached, so a passing set may exist)"
            if stats.get("verify_limit")
            else ""
        )
        if fails:
            rid = max(fails.items(), key=lambda kv: kv[1])[0]
            hint = _HINTS.get(rid, "a lower surge level or a looser --policy")
            return InfeasibleError(
                f"blocked by rule {rid}: the {verified} candidates the screen let through all fail "
                f"the exact check at some corner ({rid} most often, {fails[rid]} times)"
                f"{limited}; relax: {hint}",
                rule=rid,
                relaxation=hint,
            )
        return InfeasibleError(
            f"no design passes every rule at every corner: the {verified} candidates the screen "
            "let through all fail the exact check; relax: a lower surge level or a looser "
            "--policy",
            rule="(exact check)",
            relaxation="a lower surge level or a looser policy",
        )
    if comp:
        rid = max(comp.items(), key=lambda kv: kv[1])[0]
        return InfeasibleError(
            f"blocked by rule {rid}: no catalogue part completes any otherwise feasible set; "
            f"relax: {_HINTS.get(rid, 'a looser policy')}",
            rule=rid,
            relaxation=_HINTS.get(rid),
        )
    if not blk:
        return InfeasibleError(
            "no part set passes the rules", rule="(unknown)", relaxation="a looser policy"
        )
    rid, d = max(blk.items(), key=lambda kv: kv[1]["count"])
    miss = 1.0 / max(d["best_ratio"], 1e-12) - 1.0
    return InfeasibleError(
        f"blocked by rule {rid}: the closest candidate misses its limit by {miss:.0%}; relax: "
        f"{_HINTS.get(rid, 'a looser policy')}",
        rule=rid,
        relaxation=_HINTS.get(rid),
    )


# ---------------------------------------------------------------------------------------------
# result


_RATING_KEYS: Final[dict[str, tuple[str, ...]]] = {
    "x_capacitor": ("safety_class", "rated_voltage_ac_v", "dvdt_v_per_s", "impulse_v"),
    "series_resistor": ("power_w", "limiting_voltage_v", "pulse_energy_j", "fusible"),
    "bleeder": ("power_w", "limiting_voltage_v"),
    "rectifier": ("vrrm_v", "if_av_a", "ifsm_a", "vf_v"),
    "zener": ("power_w", "tj_max_c", "zz_ohm"),
    "reservoir": ("rated_voltage_v", "ripple_a", "temp_max_c"),
    "fuse": ("i2t_a2s", "rated_voltage_ac_v"),
}


def _dpart(setup, role, rows, arrangement) -> DesignPart:
    row = setup.df.iloc[rows[0]]
    qty = len(rows)
    price = _nz(row.get("unit_price"), 0.0)
    ratings = {}
    for k in _RATING_KEYS[role]:
        v = row.get(k)
        if v is not None and not (isinstance(v, float) and math.isnan(v)):
            ratings[k] = v.item() if hasattr(v, "item") else v
    ratings["tolerance"] = _nz(row.get("tolerance"), float("nan"))
    return DesignPart(
        role=role,
        code=str(row["code"]),
        kind=str(row["kind"]),
        family=str(row.get("family", "")),
        description=str(row.get("description", "") or ""),
        value=float(row["value"]),
        qty=qty,
        arrangement=arrangement,
        unit_price=price,
        line_price=price * qty,
        area_mm2=_nz(row.get("area_mm2"), 0.0) * qty,
        mount=row.get("mount"),
        package=row.get("package"),
        price_note=row.get("price_note"),
        ratings=ratings,
    )


def _to_design(setup: _Setup, rank: int, res) -> Design:
    key, sel, an, findings, circ, rparts = res
    topology, vz, xi, ri, zi, di, ci, bi, fi = sel
    parts: list[DesignPart] = []
    xrows = setup.xo.rows[xi]
    if len(xrows) == 2 and xrows[0] != xrows[1]:
        parts += [_dpart(setup, "x_capacitor", (r,), "parallel") for r in xrows]
    else:
        parts.append(
            _dpart(setup, "x_capacitor", xrows, "parallel" if len(xrows) > 1 else "single")
        )
    for role, opts, i in (
        ("series_resistor", setup.ro, ri),
        ("bleeder", setup.bo, bi),
        ("rectifier", setup.rect[topology], di),
        ("zener", setup.zo[(topology, vz)], zi),
        ("reservoir", setup.co, ci),
    ):
        arr = opts.arrangement[i]
        parts.append(_dpart(setup, role, opts.rows[i], arr))
    if fi is not None:
        parts.append(_dpart(setup, "fuse", setup.fo.rows[fi], "single"))
    total_price = float(sum(p.line_price for p in parts))
    total_area = float(sum(p.area_mm2 for p in parts))
    count = int(sum(p.qty for p in parts))
    binding = _binding(findings)
    zopt = setup.zo[(topology, vz)]
    zrow = setup.df.iloc[zopt.rows[zi][0]]
    effective = {
        "x_capacitance_f": float(circ.x_capacitance_f),
        "series_resistance_ohm": float(circ.series_resistance_ohm),
        "bleeder_resistance_ohm": float(circ.bleeder_resistance_ohm),
        "zener_voltage_v": float(circ.zener_voltage_v),
        "zener_power_rating_w": _nz(zrow.get("power_w"), float("nan")) * zopt.qty[zi],
        "reservoir_f": float(circ.reservoir_f),
    }
    rp = {k: (v if isinstance(v, list) else [v]) for k, v in rparts.items()}
    return Design(
        rank=rank,
        topology=topology,
        total_price=total_price,
        total_area_mm2=total_area,
        part_count=count,
        parts=parts,
        effective=effective,
        worst_case=getattr(an, "worst_case", None),
        analysis=an,
        checks=findings,
        binding=binding,
        circuit=circ,
        rated_parts=rp,
    )


def _binding(findings: Sequence[R.Finding], n: int = 3) -> list[str]:
    """The rules with the smallest margins (the ones that decide the design)."""
    ms = [f for f in findings if f.margin is not None and f.unit != "class"]
    ms.sort(key=lambda f: f.margin)
    return [f.rule for f in ms[:n]]


# ---------------------------------------------------------------------------------------------
# JSON and BOM


def design_to_dict(d: Design) -> dict[str, Any]:
    """The JSON shape of one design (issue 4): SI numbers, snake_case keys with unit suffixes."""
    return {
        "rank": d.rank,
        "topology": d.topology,
        "total_price": d.total_price,
        "total_area_mm2": d.total_area_mm2,
        "part_count": d.part_count,
        "price_note": next((p.price_note for p in d.parts if p.price_note), None),
        "parts": [
            {
                "role": p.role,
                "code": p.code,
                "family": p.family,
                "description": p.description,
                "value": p.value,
                "qty": p.qty,
                "arrangement": p.arrangement,
                "unit_price": p.unit_price,
                "line_price": p.line_price,
                "area_mm2": p.area_mm2,
                "mount": p.mount,
                "package": p.package,
                **{k: v for k, v in p.ratings.items()},
            }
            for p in d.parts
        ],
        "effective": d.effective,
        "worst_case": d.worst_case,
        "binding": d.binding,
        "search": d.search,
        "checks": [
            {
                "rule": f.rule,
                "part": f.part,
                "stress": f.stress,
                "limit": f.limit,
                "unit": f.unit,
                "margin": f.margin,
                "ok": f.ok,
                "severity": f.severity,
                "source": f.source,
                "corner": f.corner,
                "note": f.note,
            }
            for f in d.checks
        ],
    }


_REF_PREFIX: Final[dict[str, str]] = {
    "x_capacitor": "C",
    "series_resistor": "R",
    "bleeder": "R",
    "rectifier": "D",
    "zener": "D",
    "reservoir": "C",
    "fuse": "F",
}
_FORMULA_START: Final[tuple[str, ...]] = ("=", "+", "-", "@")


def _cell(text: Any) -> str:
    """A CSV cell a spreadsheet will not run as a formula (leading = + - @ get a quote)."""
    s = "" if text is None else str(text)
    if s.startswith(_FORMULA_START):
        return "'" + s
    return s


def bom_rows(d: Design) -> list[dict[str, str]]:
    """BOM lines of a design: Reference, Value, Qty, Description, Footprint, Role.

    Descriptions are the catalogue's, which carry the ratings in text (class, voltage, power,
    limiting voltage), so that `dropper audit` can read them back.
    """
    from .units import format_value

    unit = {
        "x_capacitor": "F",
        "reservoir": "F",
        "series_resistor": "ohm",
        "bleeder": "ohm",
        "zener": "V",
        "fuse": "A",
        "rectifier": "A",
    }
    counters: dict[str, int] = {}
    rows = []
    for p in d.parts:
        prefix = "BR" if p.kind == "bridge" else _REF_PREFIX[p.role]
        refs = []
        for _ in range(p.qty):
            counters[prefix] = counters.get(prefix, 0) + 1
            refs.append(f"{prefix}{counters[prefix]}")
        value = format_value(p.value, unit[p.role], ascii=True)
        if p.role == "rectifier":
            value = p.code
        rows.append(
            {
                "Reference": ", ".join(refs),
                "Value": value,
                "Qty": str(p.qty),
                "Description": p.description,
                "Footprint": p.package or "",
                "Role": p.role,
            }
        )
    return rows


def write_bom(d: Design, path: str | Any) -> None:
    """Write the BOM of ``d`` as CSV atomically (temporary file, then rename)."""
    import csv
    import os
    import tempfile
    from pathlib import Path

    target = Path(path)
    rows = bom_rows(d)
    cols = ["Reference", "Value", "Qty", "Description", "Footprint", "Role"]
    fd, tmp = tempfile.mkstemp(prefix=".bom-", suffix=".csv", dir=target.parent or Path("."))
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            w = csv.writer(fh)
            w.writerow(cols)
            for r in rows:
                w.writerow([_cell(r[c]) for c in cols])
        os.replace(tmp, target)
    except BaseException:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        raise
