"""Candidate tables: every role's options as typed arrays (``OptionTable``), built once per
request from the catalogue frame (``prepare``).

An option is one catalogue part, or a group of parts that serve one role together (two X
capacitors in parallel, two series resistors, up to three bleeders in series, two Zeners in
series, four diodes as a bridge). Options whose role-intrinsic rules fail at the request's
mains and ambient (X class, AC voltage, impulse class; rectifier VRRM; reservoir temperature) are
dropped here. Proof obligation: those rules depend on the part and the request only, so a
dropped option fails them in every set. ``keep_best_per_signature`` keeps the ``top`` cheapest
options of each electrical signature (options of equal signature are interchangeable in every
rule, so at most ``top`` of them can appear in the ``top`` best sets).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from types import SimpleNamespace
from typing import Any, Final

import numpy as np
import pandas as pd

from .. import rules as R
from ..errors import BadValueError, InfeasibleError
from ..policy import Policy
from .requirement import Requirement, context_scalars, objective_key


@dataclass
class OptionTable:
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

    def take(self, idx: np.ndarray) -> OptionTable:
        idx = np.asarray(idx, dtype=np.int64)
        return OptionTable(
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


NUMERIC_COLUMNS: Final[tuple[str, ...]] = (
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


def numeric_column(df: pd.DataFrame, name: str) -> np.ndarray:
    if name not in df.columns:
        return np.full(len(df), np.nan)
    return pd.to_numeric(df[name], errors="coerce").to_numpy(dtype=float)


def options_of_parts(
    df: pd.DataFrame, idx: np.ndarray, role: str, minimize: str, qtys: Sequence[int], arr: str
) -> OptionTable:
    """Options made of ``q`` equal elements of each row in ``idx`` for each q in ``qtys``."""
    rows: list[tuple[int, ...]] = []
    qty_l: list[int] = []
    arrs: list[str] = []
    base = {c: numeric_column(df, c)[idx] for c in NUMERIC_COLUMNS}
    cls = df["safety_class"].to_numpy(dtype=object)[idx] if "safety_class" in df else None
    fus = (
        df["fusible"].fillna(False).astype(bool).to_numpy()[idx]
        if "fusible" in df
        else np.zeros(len(idx), dtype=bool)
    )
    price = numeric_column(df, "unit_price")[idx]
    area = numeric_column(df, "area_mm2")[idx]
    attrs: dict[str, list[np.ndarray]] = {c: [] for c in NUMERIC_COLUMNS}
    attrs["class_impulse_v"] = []
    attrs["fusible_flag"] = []
    prices, areas, counts = [], [], []
    for q in qtys:
        rows.extend((int(i),) * q for i in idx)
        qty_l.extend([q] * len(idx))
        arrs.extend([arr if q > 1 else "single"] * len(idx))
        for c in NUMERIC_COLUMNS:
            attrs[c].append(base[c])
        if cls is not None:
            ci = np.array(
                [np.nan if v is None else R.x_class_impulse_v(v) for v in clean_objects(cls)]
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
    return OptionTable(
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


def clean_objects(values: np.ndarray) -> list[Any]:
    out = []
    for v in values:
        if v is None or (isinstance(v, float) and math.isnan(v)):
            out.append(None)
        else:
            out.append(str(v))
    return out


def keep_best_per_signature(opts: OptionTable, sig_cols: Sequence[str], keep: int) -> OptionTable:
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


@dataclass
class SearchSetup:
    req: Requirement
    policy: Policy
    df: pd.DataFrame
    xo: OptionTable
    ro: OptionTable
    bo: OptionTable
    rect: dict[str, OptionTable]
    zo: dict[tuple[str, float], OptionTable]  # (topology, effective Vz) -> options
    co: OptionTable
    fo: OptionTable
    topologies: tuple[str, ...]
    bus_need_v: float
    xs: OptionTable | None = None  # the single X options (xo grows by pairs)
    analyse: Callable[..., Any] | None = None
    stats: dict[str, Any] | None = None
    last_exact: Any = None


def filter_frame(df: pd.DataFrame, req: Requirement) -> pd.DataFrame:
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


def rows_of_kind(df: pd.DataFrame, kinds: Sequence[str]) -> np.ndarray:
    return np.flatnonzero(df["kind"].isin(kinds).to_numpy())


def prepare(df_all: pd.DataFrame, req: Requirement, policy: Policy) -> SearchSetup:
    df = filter_frame(df_all, req)
    k = req.top
    mz = req.minimize
    s0 = context_scalars(req)
    # X capacitors: only parts of an X subclass that pass the role-intrinsic rules
    xi = rows_of_kind(df, ["x_capacitor"])
    xs = options_of_parts(df, xi, "x_capacitor", mz, [1], "single")
    if len(xs):
        ns = xs.ns()
        okm = np.ones(len(xs), dtype=bool)
        for rid in ("x_cap.safety_class", "x_cap.ac_voltage", "x_cap.impulse"):
            st, lim, _ = rule_by_id(rid).check(s0, ns, policy)
            okm &= np.asarray(st <= lim)
        xs = xs.take(np.flatnonzero(okm))
    xs = keep_best_per_signature(xs, ("value", "tolerance", "dvdt_v_per_s"), k)
    xo = xs  # pairs join later, within the capacitance window and the cost budget
    # series resistors: 1 or 2 equal in series, value within the engine's range
    ri = rows_of_kind(df, ["resistor"])
    rv = numeric_column(df, "value")[ri]
    ri_s = ri[(rv >= 0.5) & (rv <= 1e5)]
    ro = options_of_parts(df, ri_s, "series_resistor", mz, [1, 2], "series")
    ro = ro.take(np.flatnonzero(ro.attrs["value"] * ro.qty <= 1e5))
    ro = keep_best_per_signature(
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
    ro = ro.take(pareto_series_options(ro, np.arange(len(ro)), k))
    # bleeders: 1-3 equal in series, intrinsic rules (power at high line, voltage) screened
    bi = ri[rv >= 1e3 / 3]
    bo = options_of_parts(df, bi, "bleeder", mz, [1, 2, 3], "series")
    bo.attrs["total_ohm"] = bo.attrs["value"] * bo.qty
    bo = bo.take(np.flatnonzero(bo.attrs["total_ohm"] >= 1e3))
    bo = keep_best_per_signature(
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
    rect: dict[str, OptionTable] = {}
    bri = rows_of_kind(df, ["bridge"])
    di = rows_of_kind(df, ["diode"])
    b1 = options_of_parts(df, bri, "rectifier", mz, [1], "single")
    d4 = options_of_parts(df, di, "rectifier", mz, [4], "bridge")
    rect["bridge"] = concat_options([b1, d4])
    rect["half-wave"] = options_of_parts(df, di, "rectifier", mz, [1], "single")
    for t in rect:
        o = rect[t]
        if len(o):
            st, lim, _ = rule_by_id("rectifier.vrrm").check(
                {**s0, "max_rectifier_reverse_voltage_v": 0.0}, o.ns(), policy
            )
            rect[t] = o.take(np.flatnonzero(np.asarray(st <= lim)))
    # topologies and the bus voltage the Zener must hold
    tops = ("bridge", "half-wave") if req.topology == "any" else (req.topology,)
    bus_need = req.vout_v + (req.regulator_dropout_v if req.regulator else 0.0)
    # Zeners by (topology, effective voltage): one part, or two equal in series
    zi = rows_of_kind(df, ["zener"])
    zv = numeric_column(df, "value")[zi]
    zo: dict[tuple[str, float], OptionTable] = {}
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
        zo[(top, vz0)] = options_of_parts(df, sel1, "zener", mz, [1], "single")
        half = volts[(2 * volts >= vz0 - 1e-9) & (2 * volts <= vz0 * 1.05)]
        if len(half):
            vh = float(half[0])
            selh = zi[np.isclose(zv, vh, rtol=1e-3)]
            pairs = options_of_parts(df, selh, "zener", mz, [2], "series")
            vz2 = round(2 * vh, 6)
            if math.isclose(vz2, vz0, rel_tol=1e-3):
                zo[(top, vz0)] = concat_options([zo[(top, vz0)], pairs])
            else:
                zo[(top, vz2)] = pairs
    if len(volts) and not zo:
        raise InfeasibleError(
            f"no Zener of {bus_need:g} V or more (plus the half-wave diode drop) in the catalogue",
            rule="zener.voltage",
            relaxation=f"a lower output voltage (largest Zener {volts.max():g} V)",
        )
    # reservoirs: intrinsic temperature rule; the voltage rule per Zener group later
    ci = rows_of_kind(df, ["electrolytic"])
    co = options_of_parts(df, ci, "reservoir", mz, [1], "single")
    if len(co):
        st, lim, _ = rule_by_id("reservoir.temperature").check(s0, co.ns(), policy)
        co = co.take(np.flatnonzero(np.asarray(st <= lim)))
    # fuses
    fi = rows_of_kind(df, ["fuse"])
    fo = options_of_parts(df, fi, "fuse", mz, [1], "single")
    return SearchSetup(req, policy, df, xo, ro, bo, rect, zo, co, fo, tops, bus_need, xs)


def concat_options(parts: Sequence[OptionTable]) -> OptionTable:
    parts = [p for p in parts if len(p)] or list(parts[:1])
    if len(parts) == 1:
        return parts[0]
    keys = set(parts[0].attrs)
    return OptionTable(
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


def rule_by_id(rule_id: str) -> R.Rule:
    for r in R.RULES:
        if r.id == rule_id:
            return r
    raise KeyError(rule_id)


def pareto_series_options(ro: OptionTable, idx: np.ndarray, keep: int) -> np.ndarray:
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


def tally(stats: dict, rule_id: str, bad: np.ndarray) -> None:
    n = int(np.sum(bad))
    if n:
        d = stats["completion"].setdefault(rule_id, 0)
        stats["completion"][rule_id] = d + n
