"""Series-resistance options: one resistor, two equal ones, or two different ones in series.

Two resistors in series carry the same current, so element ``i`` of resistance ``R_i`` takes the
share ``s_i = R_i / R_total`` of the power, of the pulse energy and of the voltage (Ohm's law,
any circuits textbook [S]). Every series-resistor rule has the form ``stress * s_i <= rating_i``
(power against the derated rating, pulse energy, pulse and peak voltage against the limiting
element voltage), so an option passes iff ``stress <= min_i(rating_i / s_i)``. Each option is
therefore stored as one *equivalent element* with

    value = total_ohm = R_a + R_b,   power_w = min_i(P_derated,i / s_i),
    pulse_energy_j = min_i(E_i / s_i),   limiting_voltage_v = min_i(LEV_i / s_i),

tolerance = the larger of the two, the power already derated to the request's ambient (its
derating columns then say "no derating"), and ``qty`` 1, so that the rule functions of
``selector.rules`` screen the options unchanged and exactly. A fusible element makes the option
its own fuse; the fusible rule (the element must dissipate ``fusible_fault_factor`` times its
rating with the X capacitor shorted) reads ``fusible_power_w = min over fusible elements of
P_i / s_i`` (raw rating, no derating: the fault power is far above any derating).

Proof obligations: (1) the equivalence above is exact for every rule of role ``series_resistor``
and for ``fuse.fusible_opens_on_short`` (each is linear in the element's share); (2) an element
dominated within its (resistance, tolerance, fusibility) by ``top`` others (ratings all >=, key
<=) forms only pairs that are dominated the same way, so pairs are built from the elements that
survive ``pareto_series_options`` at share 1; (3) pairs whose total exceeds ``r_max_ohm`` (the
largest resistance that can still meet the load with the largest X capacitance) cannot be
feasible.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from typing import Final

import numpy as np
import pandas as pd

from .. import rules as R
from .candidates import OptionTable, concat_options, keep_best_per_signature, options_of_parts
from .requirement import objective_key

__all__ = [
    "SERIES_SIGNATURE",
    "SeriesElements",
    "pareto_series_options",
    "series_options",
    "unequal_series_pairs",
]

#: columns that tell two series options apart electrically (``keep_best_per_signature``)
SERIES_SIGNATURE: Final[tuple[str, ...]] = (
    "total_ohm",
    "tolerance",
    "power_w",
    "pulse_energy_j",
    "limiting_voltage_v",
    "fusible_flag",
    "fusible_power_w",
)
#: derating columns of an equivalent element whose power is already derated (never reached)
_NO_DERATING_C: Final[tuple[float, float]] = (1e3, 2e3)
#: tolerance of a resistor whose row has none (the value the verification assumes)
_DEFAULT_TOLERANCE: Final[float] = 0.05


def _element_table(df: pd.DataFrame, idx: np.ndarray, minimize: str, ambient_c: float):
    """The single resistors as equivalent elements at share 1 (power derated to ``ambient_c``)."""
    el = options_of_parts(df, idx, "series_resistor", minimize, [1], "single")
    a = el.attrs
    start = np.where(
        np.isnan(a["derate_start_c"]), R.RESISTOR_GENERIC_DERATING_C[0], a["derate_start_c"]
    )
    end = np.where(np.isnan(a["derate_end_c"]), R.RESISTOR_GENERIC_DERATING_C[1], a["derate_end_c"])
    end = np.maximum(end, start + 1e-9)
    derated = R.derated_power(a["power_w"], ambient_c, start, end)
    fusible = a["fusible_flag"].astype(bool)
    return el, {
        "value": a["value"],
        "tolerance": np.nan_to_num(a["tolerance"], nan=_DEFAULT_TOLERANCE),
        "power_w": np.asarray(derated, dtype=float),
        "pulse_energy_j": a["pulse_energy_j"],
        "limiting_voltage_v": a["limiting_voltage_v"],
        "fusible": fusible,
        "fusible_power_w": np.where(fusible, a["power_w"], np.nan),
    }


def _options(
    el: OptionTable,
    e: dict,
    ia: np.ndarray,
    ib: np.ndarray | None,
    minimize: str,
    keep: Callable[[dict[str, np.ndarray]], np.ndarray] | None = None,
) -> OptionTable:
    """Options of elements ``ia`` alone (``ib`` None) or ``ia`` + ``ib`` in series; ``keep``
    (equivalent ratings -> mask) drops options before their rows are listed."""
    ib_ = ia if ib is None else ib
    total = e["value"][ia] + (e["value"][ib] if ib is not None else 0.0)
    share_a = e["value"][ia] / total if ib is not None else np.ones(len(ia))
    share_b = e["value"][ib_] / total if ib is not None else share_a

    def worst(name: str) -> np.ndarray:
        return np.minimum(e[name][ia] / share_a, e[name][ib_] / share_b)

    fus_a, fus_b = e["fusible"][ia], e["fusible"][ib_]
    n = len(ia)
    attrs = {
        "value": total,
        "total_ohm": total,
        "tolerance": np.maximum(e["tolerance"][ia], e["tolerance"][ib_]),
        "power_w": worst("power_w"),
        "derate_start_c": np.full(n, _NO_DERATING_C[0]),
        "derate_end_c": np.full(n, _NO_DERATING_C[1]),
        "pulse_energy_j": worst("pulse_energy_j"),
        "limiting_voltage_v": worst("limiting_voltage_v"),
        "fusible_flag": fus_a | fus_b,
        "fusible_power_w": np.fmin(
            np.where(fus_a, e["fusible_power_w"][ia] / share_a, np.nan),
            np.where(fus_b, e["fusible_power_w"][ib_] / share_b, np.nan),
        ),
    }
    if keep is not None:
        key = el.key[ia] + (el.key[ib] if ib is not None else 0)
        m = np.flatnonzero(keep({**attrs, "key": key}))
        attrs = {k: v[m] for k, v in attrs.items()}
        ia, ib_ = ia[m], ib_[m]
        ib = None if ib is None else ib_
        n = len(ia)
    if ib is None:
        rows = [el.rows[i] for i in ia.tolist()]
        price, area, count = el.price[ia], el.area[ia], el.count[ia]
    else:
        # the fusible element first, so that the BOM and the fuse role name it
        first_b = e["fusible"][ib] & ~e["fusible"][ia]
        ra = np.array([r[0] for r in el.rows], dtype=np.int64)
        a_rows = np.where(first_b, ra[ib], ra[ia]).tolist()
        b_rows = np.where(first_b, ra[ia], ra[ib]).tolist()
        rows = list(zip(a_rows, b_rows, strict=True))
        price = el.price[ia] + el.price[ib]
        area = el.area[ia] + el.area[ib]
        count = el.count[ia] + el.count[ib]
    return OptionTable(
        "series_resistor",
        rows,
        np.ones(n, dtype=np.int64),
        ["single" if ib is None else "series"] * n,
        objective_key(price, area, count, minimize),
        price,
        area,
        count,
        attrs,
    )


def _pair_indices(values: np.ndarray, r_max: float, equal: bool) -> tuple[np.ndarray, np.ndarray]:
    """Index pairs (i < j, or i == j with ``equal``) with values[i] + values[j] <= r_max."""
    order = np.argsort(values, kind="stable")
    v = values[order]
    n = len(v)
    lo = np.arange(n) if equal else np.arange(n) + 1
    hi = np.searchsorted(v, r_max - v, side="right")
    cnt = np.maximum(hi - lo, 0)
    total = int(cnt.sum())
    a = np.repeat(np.arange(n), cnt)
    b = np.arange(total) + np.repeat(lo - np.concatenate([[0], np.cumsum(cnt)[:-1]]), cnt)
    return order[a], order[b]


@dataclass
class SeriesElements:
    """The single resistors a series option can be made of (equivalent elements at share 1),
    kept for the unequal pairs that join the search later (``unequal_series_pairs``)."""

    table: OptionTable
    ratings: dict[str, np.ndarray]
    survivors: np.ndarray  # elements not dominated ``top`` times (proof obligation 2)


def series_options(
    df: pd.DataFrame,
    idx: np.ndarray,
    minimize: str,
    ambient_c: float,
    keep: int,
) -> tuple[OptionTable, SeriesElements]:
    """The first series options of the search: each resistor of ``idx`` alone and two equal
    ones in series (up to 100 kohm in total, the engine's range); and the elements for
    ``unequal_series_pairs``."""
    el, e = _element_table(df, idx, minimize, ambient_c)
    singles = _options(el, e, np.arange(len(el)), None, minimize)
    survivors = pareto_series_options(singles, np.arange(len(singles)), keep)
    doubles = survivors[2 * e["value"][survivors] <= 1e5]
    opts = concat_options([singles.take(survivors), _options(el, e, doubles, doubles, minimize)])
    opts = keep_best_per_signature(opts, SERIES_SIGNATURE, keep)
    opts = opts.take(pareto_series_options(opts, np.arange(len(opts)), keep))
    return opts, SeriesElements(el, e, survivors)


def unequal_series_pairs(
    elements: SeriesElements,
    r_max_ohm: float,
    key_budget: int,
    minimize: str,
    keep: int,
    necessary: Callable[[dict[str, np.ndarray]], np.ndarray] | None = None,
    switch_on_energy_j: float = 0.0,
    pulse_energy_fraction: float = 1.0,
    admissible: Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray] | None = None,
) -> OptionTable:
    """Two different resistors in series: every pair of surviving elements whose total is at
    most ``r_max_ohm`` and whose key is below ``key_budget`` (proof obligations 2 and 3; a pair
    at or over the budget costs at least the incumbent); ``necessary`` maps equivalent ratings
    (and ``key``, the pair's objective key) to a mask of the pairs that pass the caller's
    necessary conditions; ``switch_on_energy_j`` is a lower bound of the switch-on energy in
    the series resistance of any feasible set; ``admissible(total_ohm, tolerance, key)`` is a
    cheaper mask applied first."""
    surv = elements.survivors
    e = elements.ratings
    surv = surv[e["value"][surv] < r_max_ohm]
    # an element takes at least the share R_i / r_max of the switch-on energy, which does not
    # depend on R (0.5 C V^2): elements that cannot carry that share form no feasible pair
    if switch_on_energy_j > 0:
        share_min = e["value"][surv] / r_max_ohm
        ok = e["pulse_energy_j"][surv] * pulse_energy_fraction >= switch_on_energy_j * share_min
        surv = surv[ok]
    ia, ib = _pair_indices(elements.ratings["value"][surv], r_max_ohm, equal=False)
    ia, ib = surv[ia], surv[ib]
    k = elements.table.key
    cheap = k[ia] + k[ib] < key_budget
    ia, ib = ia[cheap], ib[cheap]
    if admissible is not None and len(ia):
        tol = np.maximum(e["tolerance"][ia], e["tolerance"][ib])
        fine = admissible(e["value"][ia] + e["value"][ib], tol, k[ia] + k[ib])
        ia, ib = ia[fine], ib[fine]
    pairs = _options(elements.table, elements.ratings, ia, ib, minimize, necessary)
    pairs = keep_best_per_signature(pairs, SERIES_SIGNATURE, keep)
    return pairs.take(pareto_series_options(pairs, np.arange(len(pairs)), keep))


def pareto_series_options(ro: OptionTable, idx: np.ndarray, keep: int) -> np.ndarray:
    """Drop series options dominated ``keep`` or more times within their (total resistance,
    tolerance, fusibility): another option with every equivalent rating >= (and, when fusible,
    a fusible element that opens at least as readily) at no higher key."""
    if len(idx) == 0:
        return idx
    a = ro.attrs
    cap = np.column_stack(
        [
            np.nan_to_num(a["power_w"][idx], nan=-1),
            np.nan_to_num(a["pulse_energy_j"][idx], nan=-1),
            np.nan_to_num(a["limiting_voltage_v"][idx], nan=-1),
            # the fusible element must open: a LOWER rating per share is better
            -np.nan_to_num(a["fusible_power_w"][idx], nan=0.0),
        ]
    )
    grp = np.column_stack(
        [
            np.round(a["total_ohm"][idx], 9),
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
        per_block = max(1, 2_000_000 // int(size * size * cap.shape[1]))
        for b0 in range(0, len(st), per_block):
            sb = st[b0 : b0 + per_block]
            m = order[sb[:, None] + np.arange(size)[None, :]]  # (groups, size)
            c = cap[m]  # (groups, size, ratings)
            k = key[m]  # (groups, size)
            # dom[g, i, j]: j dominates i (ratings all >=, and cheaper or strictly better)
            ge = np.all(c[:, None, :, :] >= c[:, :, None, :], axis=3)
            gt = np.any(c[:, None, :, :] > c[:, :, None, :], axis=3)
            better = (k[:, None, :] < k[:, :, None]) | ((k[:, None, :] == k[:, :, None]) & gt)
            dom = ge & better
            dom[:, np.arange(size), np.arange(size)] = False
            keep_mask[m[dom.sum(axis=2) < keep]] = True
    return np.sort(idx[keep_mask])
