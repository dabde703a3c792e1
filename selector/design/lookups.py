"""Sorted look-ups the screen uses to pick the cheapest completion of many grid points at once.

``cheapest_at_least``: options sorted by a capability, suffix minima of the key, searchsorted:
exact (the returned option is the cheapest with capability >= need). ``RangeMinimum``: a sparse
table over options sorted by value: the cheapest option whose value lies in a closed interval,
exact, O(1) per query after O(n log n) set-up. ``distinct_pairs``: the distinct (a, b) pairs of
two columns and the index of each row's pair, like ``np.unique(axis=0, return_inverse=True)``
(which sorts rows as opaque records and takes about 15 times longer on 400k rows).
"""

from __future__ import annotations

import numpy as np


def distinct_pairs(a: np.ndarray, b: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The distinct rows of the columns ``a``, ``b`` (sorted by a, then b) and, for each input
    row, the index of its row among them: ``ua[inv] == a`` and ``ub[inv] == b``. NaN equals NaN.

    >>> ua, ub, inv = distinct_pairs(np.array([2.0, 1.0, 2.0]), np.array([0.1, 0.1, 0.1]))
    >>> ua.tolist(), ub.tolist(), inv.tolist()
    ([1.0, 2.0], [0.1, 0.1], [1, 0, 1])
    """
    a = np.asarray(a, dtype=float)
    b = np.asarray(b, dtype=float)
    n = len(a)
    if n == 0:
        return a.copy(), b.copy(), np.zeros(0, dtype=np.int64)
    order = np.lexsort((b, a))
    sa, sb = a[order], b[order]

    def differs(x: np.ndarray) -> np.ndarray:
        nan = np.isnan(x)
        return (x[1:] != x[:-1]) & ~(nan[1:] & nan[:-1])

    new = np.concatenate([[True], differs(sa) | differs(sb)])
    group = np.cumsum(new) - 1
    inv = np.empty(n, dtype=np.int64)
    inv[order] = group
    first = order[new]
    return a[first], b[first], inv


def cheapest_at_least(cap: np.ndarray, key: np.ndarray, need: np.ndarray) -> np.ndarray:
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


class RangeMinimum:
    """Sparse table: cheapest option whose sort value lies in [lo, hi], vectorised queries.

    Among options of equal key the one with the LARGEST sort value wins (for bleeders sorted by
    resistance: the lower no-load loss, the tie-break policy of the search)."""

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
            table.append(np.where(k[a] < k[b], a, b))
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
            res[m] = np.where(self.k[a] < self.k[b], a, b)
        out[has] = self.order[res]
        return out


def cheapest_meeting_both(
    cap_a: np.ndarray, need_a: np.ndarray, cap_b: np.ndarray, need_b: np.ndarray, key: np.ndarray
) -> np.ndarray:
    """Index of the cheapest option with cap_a >= need_a AND cap_b >= need_b (-1 if none).

    Exact: options are tried in ascending key, vectorised over the points (options are few).
    """
    need_a, need_b = np.broadcast_arrays(np.asarray(need_a, float), np.asarray(need_b, float))
    out = np.full(need_a.shape, -1, dtype=np.int64)
    open_ = np.ones(need_a.shape, dtype=bool)
    for j in np.argsort(key, kind="stable"):
        hit = open_ & (cap_a[j] >= need_a) & (cap_b[j] >= need_b)
        out[hit] = j
        open_ &= ~hit
        if not open_.any():
            break
    return out
