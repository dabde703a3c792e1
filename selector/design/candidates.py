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
from collections.abc import Sequence
from dataclasses import dataclass
from types import SimpleNamespace
from typing import Any, Final

import numpy as np
import pandas as pd

from .. import rules as R
from .requirement import objective_key


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
    "rated_life_h",
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
    attrs["fuse_time_lag"] = []
    time_lag = np.full(len(idx), np.nan)
    if role == "fuse":  # the fuse's type (time-lag or fast-acting) from its description, code
        cols = [
            df[c].fillna("").astype(str).to_numpy()[idx] if c in df else np.full(len(idx), "")
            for c in ("description", "code")
        ]
        time_lag = np.array(
            [R.fuse_time_lag_of_text(f"{d} {c}") for d, c in zip(*cols, strict=True)]
        )
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
        attrs["fuse_time_lag"].append(time_lag)
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


def tally(stats: dict, rule_id: str, bad: np.ndarray) -> None:
    n = int(np.sum(bad))
    if n:
        d = stats["completion"].setdefault(rule_id, 0)
        stats["completion"][rule_id] = d + n
