"""Statistics of a production-yield run (one job: pure statistics on drawn units): the
band positions a unit's values are drawn at (uniform, or normal truncated at +/-3 sigma),
Wilson's score interval of the yield, Spearman's rank correlation, and the sensitivity of
the units' margins to each drawn variable. The run itself is
:func:`selector.production_yield.production_yield`, which re-exports the public names.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any, Final

import numpy as np

from .engine.circuit import Tolerances
from .errors import BadValueError

__all__ = [
    "DISTRIBUTIONS",
    "NORMAL_SIGMAS",
    "Z_95",
    "band_positions",
    "margin_sensitivities",
    "rank_correlation",
    "wilson_interval",
]

DISTRIBUTIONS: Final[tuple[str, ...]] = ("uniform", "normal")
#: the band edge of the normal draw, in standard deviations
NORMAL_SIGMAS: Final[float] = 3.0
#: two-sided 95 % normal quantile
Z_95: Final[float] = 1.959963984540054


def wilson_interval(successes: int, trials: int, z: float = Z_95) -> tuple[float, float]:
    """Wilson score interval for a binomial proportion [-].

    ``p = k / n``; ``centre = (p + z^2 / 2n) / (1 + z^2 / n)``;
    ``half = z / (1 + z^2 / n) * sqrt(p (1 - p) / n + z^2 / 4n^2)``; interval centre +/- half.
    Unlike the normal (Wald) interval it stays inside 0..1 and is not empty at k = 0 or k = n:
    at k = 0 the upper end is ``z^2 / (n + z^2)``, at k = n the lower end is ``n / (n + z^2)``.
    Valid for 0 <= k <= n, n >= 1; ``z`` the two-sided normal quantile (1.96 for 95 %).

    Source: E. B. Wilson, "Probable inference, the law of succession, and statistical
    inference", Journal of the American Statistical Association 22 (1927) 209-212 [S];
    worked examples in R. G. Newcombe, Statistics in Medicine 17 (1998) 857-872, table II [M].

    Example: 0 of 20 -> (0, 0.1611); 81 of 263 -> (0.2553, 0.3662).
    """
    if trials < 1 or not 0 <= successes <= trials:
        raise BadValueError(f"Wilson interval needs 0 <= successes <= trials, trials >= 1 "
                            f"(got {successes} of {trials})")  # fmt: skip
    n = float(trials)
    p = successes / n
    z2 = z * z
    denom = 1.0 + z2 / n
    centre = (p + z2 / (2.0 * n)) / denom
    half = z / denom * math.sqrt(p * (1.0 - p) / n + z2 / (4.0 * n * n))
    lo = 0.0 if successes == 0 else max(0.0, centre - half)
    hi = 1.0 if successes == trials else min(1.0, centre + half)
    return lo, hi


def _ranks(x: np.ndarray) -> np.ndarray:
    """Ranks 1..n with ties given their average rank."""
    order = np.argsort(x, kind="mergesort")
    xs = x[order]
    ranks = np.empty(len(x), dtype=float)
    # start index of each run of equal values
    starts = np.flatnonzero(np.r_[True, xs[1:] != xs[:-1]])
    ends = np.r_[starts[1:], len(x)]
    avg = (starts + ends + 1) / 2.0  # mean of the 1-based ranks start+1 .. end
    ranks[order] = np.repeat(avg, ends - starts)
    return ranks


def rank_correlation(x: Any, y: Any) -> float:
    """Spearman's rank correlation [-]: Pearson's correlation of the ranks (ties: mean rank).

    ``rho = cov(rank x, rank y) / (sd(rank x) sd(rank y))``; 0 when either is constant.
    Source: C. Spearman, American Journal of Psychology 15 (1904) 72-101 [S]. Without ties it
    equals ``1 - 6 sum d^2 / (n (n^2 - 1))``. Example: x = 1..5, y = (2, 1, 4, 3, 5) -> 0.8.
    """
    a = np.asarray(x, dtype=float)
    b = np.asarray(y, dtype=float)
    if a.shape != b.shape or a.ndim != 1 or len(a) < 2:
        raise BadValueError("rank correlation needs two 1-D arrays of the same length >= 2")
    ra = _ranks(a) - (len(a) + 1) / 2.0
    rb = _ranks(b) - (len(b) + 1) / 2.0
    den = math.sqrt(float(ra @ ra) * float(rb @ rb))
    return 0.0 if den == 0 else float(ra @ rb) / den


def band_positions(rng: np.random.Generator, n: int, dist: str) -> np.ndarray:
    """``n`` positions z in -1..+1 within a tolerance band.

    ``uniform``: uniform on -1..+1. ``normal``: normal with the band edge at +/-3 sigma
    (sigma = 1/3), truncated to the band by redrawing what falls outside ([P] the usual reading
    of a tolerance as +/-3 sigma for a centred process).
    """
    if dist == "uniform":
        return rng.uniform(-1.0, 1.0, n)
    if dist != "normal":
        raise BadValueError(f"unknown distribution {dist!r}; one of {', '.join(DISTRIBUTIONS)}")
    z = rng.normal(0.0, 1.0 / NORMAL_SIGMAS, n)
    bad = np.flatnonzero(np.abs(z) > 1.0)
    while len(bad):
        z[bad] = rng.normal(0.0, 1.0 / NORMAL_SIGMAS, len(bad))
        bad = bad[np.abs(z[bad]) > 1.0]
    return z


def margin_sensitivities(
    positions: Mapping[str, np.ndarray],
    margin: np.ndarray,
    failed: np.ndarray,
    tol: Tolerances,
    reservoir_tol: float,
    bleeder_tol: float,
) -> list[dict[str, Any]]:
    """Per drawn variable: Spearman's rank correlation of its band position with the unit's
    smallest margin (on the rules that tell units apart), and the share of units missing those
    rules in the bottom and top third of its band (frequency: the lowest and the highest of the
    set); strongest correlation first. Variables with no band are left out."""
    width = {
        "series_resistance_ohm": tol.r_tol,
        "bleeder_resistance_ohm": bleeder_tol,
        "zener_voltage_v": tol.zener_tol,
        "reservoir_f": reservoir_tol,
    }
    out = []
    for name, z in positions.items():
        w = tol.cap_tol if name.startswith("x_capac") else width.get(name, 1.0)
        if w == 0 or np.ptp(z) == 0:
            continue
        if name == "freq_hz":
            low_sel, high_sel = z == np.min(z), z == np.max(z)
        else:
            low_sel, high_sel = z < -1.0 / 3.0, z > 1.0 / 3.0
        rho = rank_correlation(z, margin) if np.ptp(margin) > 0 else 0.0
        out.append(
            {
                "parameter": name,
                "rank_correlation": rho,
                "miss_rate_low": float(np.mean(failed[low_sel])) if low_sel.any() else 0.0,
                "miss_rate_high": float(np.mean(failed[high_sel])) if high_sel.any() else 0.0,
            }
        )
    out.sort(key=lambda d: -abs(d["rank_correlation"]))
    return out
