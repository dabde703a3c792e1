"""What the user asks for and what the solver returns: ``Requirement``, ``Design``,
``DesignPart``, and the objective key.

The objective is lexicographic (the field named by ``minimize`` first, then the others in the
order price, area, count) and packed into one int64 (``objective_key``) so that the key of a set
is the sum of the keys of its parts: the search adds and compares integers only. Each field keeps
its sum within its bits as long as a set costs < 1342 (price unit 1e-5), covers < 167,772 mm^2
(0.01 mm^2) and has < 64 parts.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np

from .. import rules as R
from ..errors import BadValueError
from ..rules.life import life_context

#: IEC 60335-1 22.5: capacitors <= 0.1 uF need no discharge [S]
DISCHARGE_EXEMPT_F: Final[float] = 0.1e-6


PROFILE_LIMITS: Final[dict[str, tuple[float, float, bool]]] = {
    # profile: (limit V, allowed s, time-constant rule)
    "iec60335": (34.0, 1.0, False),  # IEC 60335-1 22.5 [S]
    "iec62368": (60.0, 2.0, False),  # IEC 62368-1 5.5.2.2: 2 s [S], 60 V ES1 [M]
    "iec60950": (1.0, 1.0, True),  # IEC 60950-1 2.1.1.7: R C <= 1 s [S]
}


SQRT2: Final[float] = math.sqrt(2.0)


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
            raise BadValueError(f"--load: the load current must be > 0 A, got {self.load_a}")
        if not self.vout_v > 0:
            raise BadValueError(f"--vout: the output voltage must be > 0 V, got {self.vout_v}")
        if self.topology not in ("bridge", "half-wave", "any"):
            raise BadValueError(
                f"unknown topology '{self.topology}'; valid: bridge, half-wave, any"
            )
        if self.minimize not in OBJECTIVES:
            raise BadValueError(
                f"unknown objective '{self.minimize}'; valid: {', '.join(OBJECTIVES)}"
            )
        if self.top < 1:
            raise BadValueError(f"--top must be >= 1, got {self.top}")
        if self.smd_only and self.tht_only:
            raise BadValueError("--smd-only and --tht-only exclude each other")
        if self.burst_current_a > 0 and not (0 < self.burst_duration_s < self.burst_period_s):
            raise BadValueError("--burst: a burst needs 0 < duration < period (e.g. 30m/5ms/1s)")


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
    #: the supplier of an imported part (None for a built-in one)
    supplier: str | None = None
    #: every rating and model figure of the catalogue row that the rules and the engine read
    #: (names of ``selector.audit.ratings.STATED_FIELDS``), written to the BOM's Ratings column
    rule_ratings: dict[str, Any] = field(default_factory=dict)


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
    #: the life section (selector.rules.life.life_record)
    life: dict[str, Any] = field(default_factory=dict)


OBJECTIVES: Final[tuple[str, ...]] = ("price", "area", "count")


PRICE_SCALE: Final[float] = 1e5
AREA_SCALE: Final[float] = 100.0


KEY_BITS = {"price": 27, "area": 24, "count": 6}


def objective_key(price: Any, area: Any, count: Any, minimize: str = "price") -> Any:
    """Lexicographic objective packed into int64: the chosen field first, the others after.

    price in 1e-5 units (< 1342 per set), area in 0.01 mm^2 (< 167,772 mm^2), count < 64;
    sums of keys are keys of sums as long as the totals stay in range.
    """
    p = np.rint(np.asarray(price, dtype=float) * PRICE_SCALE).astype(np.int64)
    a = np.rint(np.asarray(area, dtype=float) * AREA_SCALE).astype(np.int64)
    c = np.asarray(count).astype(np.int64)
    fields_ = {"price": p, "area": a, "count": c}
    order = [minimize] + [k for k in ("price", "area", "count") if k != minimize]
    key = np.zeros(np.broadcast(p, a, c).shape, dtype=np.int64)
    for name in order:
        key = (key << KEY_BITS[name]) + fields_[name]
    return key


def context_scalars(req: Requirement) -> dict[str, float]:
    m = req.mains
    return {
        "mains_max_v": float(m.high_v),
        "mains_min_v": float(m.low_v),
        "ambient_c": float(req.conditions.ambient_c),
        "surge_level_v": float(req.conditions.surge_v),
        **life_context(req.conditions, req.cap_loss),
    }


def bus_demand(req: Requirement) -> tuple[float, float]:
    """(average bus demand [A], bus demand during a burst [A])."""
    base = req.load_a + (req.regulator_quiescent_a if req.regulator else 0.0)
    avg = base
    peak = base
    if req.burst_current_a > 0:
        avg = base + req.burst_current_a * req.burst_duration_s / req.burst_period_s
        peak = base + req.burst_current_a
    return avg, peak
