"""IEC 60063 preferred number series (E-series) and snapping to them, vectorised over numpy.

The tables are IEC 60063:2015, "Preferred number series for resistors and capacitors" [S], stored
as integer mantissas (two significant digits for E3-E24, three for E48-E192). They include the
values where the standard departs from round(10**(i/n)): in E24 the values 27 30 33 36 39 43 47 82
(the older, hand-rounded set), and in E192 the value 920 where the formula gives 919.

Snapping works on a logarithmic scale: "nearest" minimises |log(value / target)|, so in E3
the values 2.2 and 4.7 are equally far from sqrt(2.2 * 4.7). "up" is the smallest series value
>= target, "down" the largest <= target; a target already on the series maps to itself
(a relative slack of 1e-9 absorbs binary noise such as 4.700000000000001e-09).
"""

from __future__ import annotations

from typing import Final, Literal

import numpy as np
from numpy.typing import ArrayLike, NDArray

from .errors import BadValueError

__all__ = [
    "SERIES",
    "SERIES_TOLERANCE",
    "covering",
    "down",
    "mantissas",
    "nearest",
    "series_names",
    "snap",
    "up",
    "values_in_range",
]

#: IEC 60063:2015 tables [S]
SERIES: Final[dict[str, tuple[int, ...]]] = {
    "E3": (10, 22, 47),
    "E6": (10, 15, 22, 33, 47, 68),
    "E12": (10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82),
    "E24": (
        10,
        11,
        12,
        13,
        15,
        16,
        18,
        20,
        22,
        24,
        27,
        30,
        33,
        36,
        39,
        43,
        47,
        51,
        56,
        62,
        68,
        75,
        82,
        91,
    ),
    "E48": (
        100,
        105,
        110,
        115,
        121,
        127,
        133,
        140,
        147,
        154,
        162,
        169,
        178,
        187,
        196,
        205,
        215,
        226,
        237,
        249,
        261,
        274,
        287,
        301,
        316,
        332,
        348,
        365,
        383,
        402,
        422,
        442,
        464,
        487,
        511,
        536,
        562,
        590,
        619,
        649,
        681,
        715,
        750,
        787,
        825,
        866,
        909,
        953,
    ),
    "E96": (
        100,
        102,
        105,
        107,
        110,
        113,
        115,
        118,
        121,
        124,
        127,
        130,
        133,
        137,
        140,
        143,
        147,
        150,
        154,
        158,
        162,
        165,
        169,
        174,
        178,
        182,
        187,
        191,
        196,
        200,
        205,
        210,
        215,
        221,
        226,
        232,
        237,
        243,
        249,
        255,
        261,
        267,
        274,
        280,
        287,
        294,
        301,
        309,
        316,
        324,
        332,
        340,
        348,
        357,
        365,
        374,
        383,
        392,
        402,
        412,
        422,
        432,
        442,
        453,
        464,
        475,
        487,
        499,
        511,
        523,
        536,
        549,
        562,
        576,
        590,
        604,
        619,
        634,
        649,
        665,
        681,
        698,
        715,
        732,
        750,
        768,
        787,
        806,
        825,
        845,
        866,
        887,
        909,
        931,
        953,
        976,
    ),
    "E192": (
        100,
        101,
        102,
        104,
        105,
        106,
        107,
        109,
        110,
        111,
        113,
        114,
        115,
        117,
        118,
        120,
        121,
        123,
        124,
        126,
        127,
        129,
        130,
        132,
        133,
        135,
        137,
        138,
        140,
        142,
        143,
        145,
        147,
        149,
        150,
        152,
        154,
        156,
        158,
        160,
        162,
        164,
        165,
        167,
        169,
        172,
        174,
        176,
        178,
        180,
        182,
        184,
        187,
        189,
        191,
        193,
        196,
        198,
        200,
        203,
        205,
        208,
        210,
        213,
        215,
        218,
        221,
        223,
        226,
        229,
        232,
        234,
        237,
        240,
        243,
        246,
        249,
        252,
        255,
        258,
        261,
        264,
        267,
        271,
        274,
        277,
        280,
        284,
        287,
        291,
        294,
        298,
        301,
        305,
        309,
        312,
        316,
        320,
        324,
        328,
        332,
        336,
        340,
        344,
        348,
        352,
        357,
        361,
        365,
        370,
        374,
        379,
        383,
        388,
        392,
        397,
        402,
        407,
        412,
        417,
        422,
        427,
        432,
        437,
        442,
        448,
        453,
        459,
        464,
        470,
        475,
        481,
        487,
        493,
        499,
        505,
        511,
        517,
        523,
        530,
        536,
        542,
        549,
        556,
        562,
        569,
        576,
        583,
        590,
        597,
        604,
        612,
        619,
        626,
        634,
        642,
        649,
        657,
        665,
        673,
        681,
        690,
        698,
        706,
        715,
        723,
        732,
        741,
        750,
        759,
        768,
        777,
        787,
        796,
        806,
        816,
        825,
        835,
        845,
        856,
        866,
        876,
        887,
        898,
        909,
        920,
        931,
        942,
        953,
        965,
        976,
        988,
    ),
}

#: the tolerance each series is associated with in IEC 60063:2015 [S] (E3 has none; 40 % is the
#: band its steps span, kept for "covering" only)
SERIES_TOLERANCE: Final[dict[str, float]] = {
    "E3": 0.40,
    "E6": 0.20,
    "E12": 0.10,
    "E24": 0.05,
    "E48": 0.02,
    "E96": 0.01,
    "E192": 0.005,
}

_SLACK = 1e-9
_Mode = Literal["nearest", "up", "down"]


def series_names() -> list[str]:
    """The series names, coarsest first."""
    return list(SERIES)


def _table(series: str) -> tuple[NDArray[np.float64], int]:
    key = series.strip().upper()
    if key not in SERIES:
        raise BadValueError(f"unknown series {series!r}; choose one of {', '.join(SERIES)}")
    mant = SERIES[key]
    digits = len(str(mant[0]))
    return np.asarray(mant + (10**digits,), dtype=np.float64), digits


def mantissas(series: str) -> tuple[float, ...]:
    """The series values in the decade [1, 10), e.g. E6 -> (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)."""
    table, digits = _table(series)
    return tuple(float(v) / 10 ** (digits - 1) for v in table[:-1])


_POW10 = 10.0 ** np.arange(0, 23)  # exact powers of ten (10**22 is the last exact double)


def _scale(mant_int: NDArray[np.float64], exp10: NDArray[np.int64]) -> NDArray[np.float64]:
    # multiply or divide by an exact power of ten so 68 * 10**-9 prints as 6.8e-08
    pos = np.clip(exp10, 0, 22)
    neg = np.clip(-exp10, 0, 22)
    return mant_int * _POW10[pos] / _POW10[neg]


def _prepare(values: ArrayLike) -> tuple[NDArray[np.float64], bool]:
    arr = np.asarray(values, dtype=np.float64)
    if not np.all(np.isfinite(arr) & (arr > 0)):
        bad = arr[~np.isfinite(arr) | (arr <= 0)].ravel()[0]
        raise BadValueError(f"cannot snap {bad!r}: preferred values are positive and finite")
    return arr, arr.ndim == 0


def _neighbours(arr: NDArray[np.float64], series: str, which: str):
    """Series neighbours of each value, found on the log scale: 'up', 'down' or 'nearest'."""
    table, digits = _table(series)
    log_table = np.log10(table) - (digits - 1)  # 0 .. 1 inclusive
    lg = np.log10(arr)
    decade = np.floor(lg)
    frac = lg - decade
    slack = _SLACK / np.log(10.0)
    exp10 = decade.astype(np.int64) - (digits - 1)
    if which in ("up", "nearest"):
        i_up = np.searchsorted(log_table, frac - slack, side="left")
    if which in ("down", "nearest"):
        # frac < slack: the value sits on (or just above) the decade's first entry
        i_down = np.searchsorted(log_table, frac + slack, side="right") - 1
        i_down = np.maximum(i_down, 0)
    if which == "up":
        idx = i_up
    elif which == "down":
        idx = i_down
    else:
        idx = np.where(log_table[i_up] - frac <= frac - log_table[i_down], i_up, i_down)
    return _scale(table[idx], exp10)


def up(values: ArrayLike, series: str = "E12") -> NDArray[np.float64] | float:
    """Smallest series value >= each target.

    >>> float(up(4.42e3, "E12"))
    4700.0
    """
    arr, scalar = _prepare(values)
    out = _neighbours(arr, series, "up")
    return float(out) if scalar else out


def down(values: ArrayLike, series: str = "E12") -> NDArray[np.float64] | float:
    """Largest series value <= each target.

    >>> float(down(70.1e-9, "E12"))
    6.8e-08
    """
    arr, scalar = _prepare(values)
    out = _neighbours(arr, series, "down")
    return float(out) if scalar else out


def nearest(values: ArrayLike, series: str = "E12") -> NDArray[np.float64] | float:
    """Series value with the smallest |log(value / target)|; a tie goes up.

    >>> float(nearest(70.1e-9, "E12"))
    6.8e-08
    """
    arr, scalar = _prepare(values)
    out = _neighbours(arr, series, "nearest")
    return float(out) if scalar else out


def snap(values: ArrayLike, series: str = "E12", mode: _Mode = "nearest"):
    """Dispatch to :func:`nearest`, :func:`up` or :func:`down` by name."""
    funcs = {"nearest": nearest, "up": up, "down": down}
    if mode not in funcs:
        raise BadValueError(f"unknown mode {mode!r}; choose one of {', '.join(funcs)}")
    return funcs[mode](values, series)


def values_in_range(low: float, high: float, series: str = "E12") -> NDArray[np.float64]:
    """Every series value v with low <= v <= high, ascending.

    >>> values_in_range(1e3, 2e3, "E6").tolist()
    [1000.0, 1500.0]
    """
    if not (0 < low <= high) or not np.isfinite(high):
        raise BadValueError(f"bad range {low!r}..{high!r}: need 0 < low <= high")
    table, digits = _table(series)
    d0 = int(np.floor(np.log10(low))) - 1
    d1 = int(np.floor(np.log10(high))) + 1
    decades = np.arange(d0, d1 + 1)
    mant = table[:-1]
    exp10 = (decades[:, None] - (digits - 1)) * np.ones_like(mant, dtype=np.int64)
    grid = _scale(np.broadcast_to(mant, exp10.shape), exp10).ravel()
    keep = (grid >= low * (1 - _SLACK)) & (grid <= high * (1 + _SLACK))
    return grid[keep]


def covering(
    values: ArrayLike,
    series: str = "E12",
    tolerance: float | None = None,
    direction: Literal["up", "down"] = "up",
) -> NDArray[np.float64] | float:
    """The series value whose whole tolerance band lies on the wanted side of the target.

    ``direction="up"``: the smallest v with v * (1 - tol) >= target (a part guaranteed to be at
    least the target); ``"down"``: the largest v with v * (1 + tol) <= target. ``tolerance``
    defaults to the series' own (E12 -> 10 %).

    >>> float(covering(100.0, "E12", 0.10, "up"))
    120.0
    """
    _table(series)  # validates the name
    tol = SERIES_TOLERANCE[series.strip().upper()] if tolerance is None else float(tolerance)
    if not 0 <= tol < 1:
        raise BadValueError(f"tolerance {tol!r} must be a fraction in [0, 1)")
    arr, scalar = _prepare(values)
    if direction == "up":
        out = up(arr / (1 - tol), series)
    elif direction == "down":
        out = down(arr / (1 + tol), series)
    else:
        raise BadValueError(f"unknown direction {direction!r}; choose 'up' or 'down'")
    out = np.asarray(out)
    return float(out) if scalar else out
