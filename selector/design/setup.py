"""The search set-up of one request: the filtered catalogue and every role's candidate table.

``prepare`` builds the tables once per request (see ``candidates`` and ``series``) and drops the
options whose role-intrinsic rules fail at the request's mains and ambient; the Zener options
are grouped by (topology, effective Zener voltage).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np
import pandas as pd

from .. import rules as R
from ..errors import BadValueError, InfeasibleError
from ..policy import Policy
from ..rules.life import end_of_life_loss
from .candidates import (
    OptionTable,
    concat_options,
    keep_best_per_signature,
    numeric_column,
    options_of_parts,
    rule_by_id,
)
from .requirement import Requirement, context_scalars
from .series import SeriesElements, series_options


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
    #: the resistors that unequal series pairs are made of (ro grows by them)
    series_elements: SeriesElements | None = None
    #: catalogue rows as dicts, filled on first use by ``verify.catalogue_row``
    row_cache: dict[int, dict[str, Any]] = field(default_factory=dict)
    #: rated parts of the options used so far (``verify.rated_option`` and the X / series
    #: ones), by role and catalogue rows (and arrangement): a part never changes in a search
    part_cache: dict[tuple, Any] = field(default_factory=dict)
    analyse: Callable[..., Any] | None = None
    #: engine.analysis.min_dc_current when ``analyse`` is the engine's (quick rejection)
    min_current: Callable[..., float] | None = None
    #: engine.analysis.surge_lower_bounds likewise
    surge_bounds: Callable[..., dict[str, float]] | None = None
    #: engine.analysis.surge_lower_bounds_many: the same for a batch (verify.prefetch_surge_bounds)
    surge_bounds_many: Callable[..., list[dict[str, float]]] | None = None
    stats: dict[str, Any] | None = None
    last_exact: Any = None
    #: stress / limit of each surge rule that failed the last quick precheck (verify)
    last_excess: dict[str, float] = field(default_factory=dict)


def memoised(fn: Callable[..., Any]) -> Callable[..., Any]:
    """``fn`` with its results kept per argument tuple, for the engine's pure functions.

    Many grid points build the same circuit: parts of equal value, tolerance and model (an X2
    and an X3 capacitor of one value, two series options of one total) differ only in their
    ratings, which the engine never reads. The engine's functions depend on their arguments
    alone (frozen dataclasses, compared field by field), so a repeated call returns the very
    same result; unhashable arguments are passed through uncached.
    """
    cache: dict[Any, Any] = {}

    def call(*args: Any) -> Any:
        try:
            hit = cache.get(args, _MISSING)
        except TypeError:
            return fn(*args)
        if hit is _MISSING:
            hit = cache[args] = fn(*args)
        return hit

    call.cache = cache  # type: ignore[attr-defined]
    return call


_MISSING = object()


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


#: columns that tell two X options apart in the rules (``keep_best_per_signature``): the
#: end-of-life loss too, so a less humidity-robust part never stands for a robust one
X_SIGNATURE: Final[tuple[str, ...]] = (
    "value",
    "tolerance",
    "dvdt_v_per_s",
    "rated_voltage_v",
    "x_eol_loss",
)


def x_part_end_of_life_loss(row: Any, s0: dict[str, Any]) -> float:
    """The part's capacitance loss at the end of the target life, the figure
    ``whole.end_of_life_current`` uses for it (``rules.life.end_of_life_loss``: the
    ``--cap-loss`` override, else Peck's model from its humidity grade at the ambient, humidity
    and highest mains). A total loss (>= 1) fails that rule whatever else is chosen, so such a
    part is dropped (a necessary condition: nothing feasible is dropped); the others carry it
    as the option attribute ``x_eol_loss`` for the screen (``screen_x_and_series_rules``)."""
    if "end_of_life_loss_override" in s0:
        return float(s0["end_of_life_loss_override"])
    part = R.rated_part_from_row(row, "x_capacitor")
    loss, _ = end_of_life_loss([part], s0)
    return float(loss)


def prepare(df_all: pd.DataFrame, req: Requirement, policy: Policy) -> SearchSetup:
    df = filter_frame(df_all, req)
    k = req.top
    mz = req.minimize
    s0 = context_scalars(req)
    # X capacitors: only parts of an X subclass that pass the role-intrinsic rules
    xi = rows_of_kind(df, ["x_capacitor"])
    losses = np.array([x_part_end_of_life_loss(df.iloc[int(i)], s0) for i in xi], dtype=float)
    xi = xi[losses < 1.0]
    xs = options_of_parts(df, xi, "x_capacitor", mz, [1], "single")
    xs.attrs["x_eol_loss"] = losses[losses < 1.0]
    if len(xs):
        ns = xs.ns()
        okm = np.ones(len(xs), dtype=bool)
        for rid in ("x_cap.safety_class", "x_cap.ac_voltage", "x_cap.impulse"):
            st, lim, _ = rule_by_id(rid).check(s0, ns, policy)
            okm &= np.asarray(st <= lim)
        xs = xs.take(np.flatnonzero(okm))
    xs = keep_best_per_signature(xs, X_SIGNATURE, k)
    xo = xs  # pairs join later, within the capacitance window and the cost budget
    # series resistance: one resistor, two equal, or two different ones in series (a fusible
    # one with a plain one, or two plain), up to the largest total that can still meet the load
    ri = rows_of_kind(df, ["resistor"])
    rv = numeric_column(df, "value")[ri]
    ri_s = ri[(rv >= 0.5) & (rv <= 1e5)]
    ro, series_elements = series_options(df, ri_s, mz, float(req.conditions.ambient_c), k)
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
        keep = np.asarray(st <= lim)
        # the life rule with no ripple (core = ambient): a necessary condition, since ripple
        # only heats the core and shortens the life; an unknown rated life never passes
        st, lim, _ = rule_by_id("reservoir.life").check(
            {**s0, "max_reservoir_ripple_current_a": 0.0}, co.ns(), policy
        )
        life_ok = np.asarray(st <= lim) & ~np.isnan(np.asarray(lim, dtype=float))
        if keep.any() and not (keep & life_ok).any():
            raise InfeasibleError(
                "blocked by rule reservoir.life: no reservoir in the catalogue lasts the target "
                f"life of {s0['target_life_h']:.0f}"
                f" h at {s0['ambient_c']:g} C (10-degree rule, at most 15 x its rated life)",
                rule="reservoir.life",
                relaxation="a shorter --life, a lower --ambient, or a long-life 105 C family",
            )
        co = co.take(np.flatnonzero(keep & life_ok))
    # fuses
    fi = rows_of_kind(df, ["fuse"])
    fo = options_of_parts(df, fi, "fuse", mz, [1], "single")
    return SearchSetup(
        req, policy, df, xo, ro, bo, rect, zo, co, fo, tops, bus_need, xs, series_elements
    )
