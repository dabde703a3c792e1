"""Production yield: the share of built units that meets the load and keeps every part within
its rating, with the part values drawn within their tolerance bands (DOMAIN.md section 10).

What is drawn (each unit independently, one NumPy generator seeded by ``seed``):

* each X capacitor ``C_i (1 + cap_tol z)``; the end-of-life loss is **not drawn**: it is applied
  as the fixed factor ``(1 - cap_loss)`` to the current criterion, because it is the end-of-life
  figure the unit must still meet the load with (the same figure the worst case uses). Stresses
  use the day-one capacitance (highest current), as the worst case does;
* the series resistance, the bleeder (each ``R (1 + r_tol z)``, the bleeder independently of the
  series resistor), the Zener voltage ``Vz (1 + zener_tol z)``, the reservoir
  ``C_res (1 + reservoir_tol z)``;
* with ``line="drawn"`` also the mains ``mid + half z`` over its band and the frequency, picked
  with equal weight from the set.

``z`` is the position in the band, -1..+1: ``dist="uniform"`` draws it uniformly;
``dist="normal"`` draws a normal distribution whose +/-3 sigma is the band edge (sigma = 1/3),
truncated to the band by redrawing the values outside it (0.27 % of the draws).

When a unit passes ([P] common practice, no source; DOMAIN.md section 10):

* ``line="band"`` (the default): the unit must work on every mains of its band, so the load is
  checked at the lowest line and the lowest frequency of the set (least current), the stresses
  at the highest line and the highest frequency;
* ``line="drawn"``: each unit is checked at its own drawn mains and frequency (a field view).

"Meets the load" is the rule ``whole.min_current`` with no policy margin: available DC current
(the exact engine's definition, :func:`available_current`) >= the load's average demand. With
catalogue parts (a BOM, ``parts``) every part rule of :mod:`selector.rules` runs on the
per-unit stresses too, with the policy's derating; ``whole.standby_power`` (a limit for the
product, not a part rating) and ``whole.burst_holdup`` are not yield criteria.

Method and accuracy. The exact engine (one Newton shooting per circuit, ~1-2 ms) is used only to
calibrate the numpy closed forms (:mod:`selector.engine.closed_form`, R-corrected, within
0.63 % / 0.72 % of the exact solver uncalibrated). For the current criterion the ratio
``rho = exact / closed form`` is solved at the nominal point and at every corner of the band of
the drawn variables (2^k + 1 solves, k <= 6 variables with a non-zero band, per frequency) and
fitted by least squares with a model linear in each band position plus all pairwise products
(an exact interpolation on a 2-level factorial for the main effects and interactions). The
calibrated current is ``closed form x rho(z)``; the largest relative error at the solved points
is reported (``calibration.max_error``) and tests check random units against the exact solver
within 0.5 %. The per-unit stresses are the exact worst-case stresses of
:func:`selector.engine.analyse` scaled by the closed-form ratio between the unit and the corner
that produced them (exact at that corner; against an exact analysis of the unit itself within
0.5 %, see tests/test_production_yield.py); the surge and ripple figures (surge pulse, reservoir
ripple current, output ripple; the half-wave diode's average current, which is the load) stay at
their worst-case values: a worst-case miss there counts as a miss on every unit. (The worst case
is the largest over the corners the engine solves; a unit may pass it by a fraction of a per
cent: 0.5 % seen for the ripple current.)

Confidence interval: Wilson's score interval (:func:`.yield_statistics.wilson_interval`).
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np

from .engine import closed_form as cf
from .engine.circuit import Circuit, Conditions, Mains, Tolerances
from .errors import BadValueError, OutOfRangeError
from .yield_statistics import (
    DISTRIBUTIONS,
    band_positions,
    margin_sensitivities,
    rank_correlation,
    wilson_interval,
)

__all__ = [
    "DISTRIBUTIONS",
    "LINE_MODES",
    "NOT_YIELD_RULES",
    "Calibration",
    "YieldResult",
    "BomDesign",
    "available_current",
    "band_positions",
    "bom_design",
    "production_yield",
    "rank_correlation",
    "unit_stresses",
    "wilson_interval",
]

LINE_MODES: Final[tuple[str, ...]] = ("band", "drawn")
#: whole-circuit rules that are not part of the yield (see module docstring)
NOT_YIELD_RULES: Final[frozenset[str]] = frozenset({"whole.standby_power", "whole.burst_holdup"})
#: reservoir tolerance when none is given: aluminium electrolytics are commonly +/-20 %
#: ([P] common practice, no source; the audit and the design solver use the same default)
RESERVOIR_TOL: Final[float] = 0.2
#: samples drawn and evaluated per block (progress is reported per block)
BLOCK: Final[int] = 50_000
MAX_SAMPLES: Final[int] = 10_000_000


# ---------------------------------------------------------------------------------------------
# the exact reference


def _unit_circuit(circuit: Circuit, c_f: float, r_ohm: float, rb_ohm: float, vz_v: float,
                  res_f: float) -> Circuit:  # fmt: skip
    return dataclasses.replace(
        circuit,
        x_capacitors_f=(c_f,),
        series_resistance_ohm=r_ohm,
        bleeder_resistance_ohm=rb_ohm,
        zener_voltage_v=vz_v,
        reservoir_f=res_f,
    )


def available_current(circuit: Circuit, mains_v: float, freq_hz: float) -> float:
    """Available DC current of one circuit at one mains [A], as ``dropper check`` reads it.

    The exact periodic steady state with the load: when the clamp still conducts the current
    into the bus; when the load pulls the bus out of regulation, the current into the bus held
    at the clamp (no-load solve), as :func:`selector.engine.analyse` does.
    """
    from .engine.steady_state import solve_steady_state

    st = solve_steady_state(circuit, mains_v, freq_hz)
    if st.zener_current_a > 1e-9 or (circuit.load.is_zero and circuit.regulator is None):
        return st.dc_current_a
    return solve_steady_state(circuit, mains_v, freq_hz, load_a=0.0, load_g=0.0).dc_current_a


# ---------------------------------------------------------------------------------------------
# a design from a BOM (the audit's reader, roles and circuit builder)


@dataclass
class BomDesign:
    """What the audit builds from a one-board BOM: the engine circuit, the tolerances (the
    BOM's where it states them), the rated parts by role, the rule context and the audit's
    notes; the reservoir tolerance is the one the audit assumed (its ``reservoir_min_f``)."""

    circuit: Circuit
    tolerances: Tolerances
    parts: dict[str, list[Any]]
    context: dict[str, Any]
    reservoir_tol: float
    notes: list[str]


def bom_design(path: Any, **audit_options: Any) -> BomDesign:
    """Read a BOM as ``dropper audit`` does (:func:`selector.audit.evaluate.audit_bom`, whose
    keyword options ``audit_options`` are) and return the design it describes.

    The audit's ``analyse`` and ``evaluate`` hooks hand over the circuit, the tolerances and
    the rated parts, so the yield sees exactly the parts, roles and ratings the audit judges.
    One board only: a BOM with a ``Board`` column naming several raises BadValueError.
    """
    from .audit.evaluate import audit_bom
    from .engine.analysis import analyse
    from .rules import evaluate

    seen: dict[str, Any] = {}

    def capture_analyse(circuit, mains, tol, conditions, *a, **kw):
        seen["tolerances"] = tol
        return analyse(circuit, mains, tol, conditions, *a, **kw)

    def capture_evaluate(parts_by_role, analysis, policy=None, **kw):
        seen["parts"] = {k: list(v) for k, v in parts_by_role.items()}
        seen["context"] = dict(kw.get("context") or {})
        return evaluate(parts_by_role, analysis, policy, **kw)

    result = audit_bom(path, analyse=capture_analyse, evaluate=capture_evaluate, **audit_options)
    if len(result.boards) != 1:
        names = ", ".join(b.board or "(unnamed)" for b in result.boards)
        raise BadValueError(f"{path}: a yield is for one board; this BOM has {names}")
    board = result.boards[0]
    circuit = board.circuit
    context = seen["context"]
    res_min = context.get("reservoir_min_f")
    res_tol = RESERVOIR_TOL if res_min is None else 1.0 - res_min / circuit.reservoir_f
    notes = list(result.table.notes) + list(board.roles.notes) + board.assumed + board.notes
    return BomDesign(
        circuit=circuit,
        tolerances=seen["tolerances"],
        parts=seen["parts"],
        context=context,
        reservoir_tol=max(0.0, round(float(res_tol), 12)),
        notes=notes,
    )


# ---------------------------------------------------------------------------------------------
# results


@dataclass
class Calibration:
    """The fitted ratio exact / closed form for the current criterion, per frequency.

    ``variables``: the band variables of the fit (``x_capacitance_f``, ...); ``coefficients``
    per frequency: intercept, one per variable, one per pair (in ``itertools.combinations``
    order); ``points``: exact solves used; ``max_error``: largest relative error of the
    calibrated closed form at those points."""

    method: str
    variables: list[str]
    frequencies_hz: list[float]
    coefficients: dict[float, list[float]]
    points: int
    max_error: float
    closed_form_max_error: float


@dataclass
class YieldResult:
    """A production-yield run (SI). ``to_dict`` gives the JSON document's figures.

    ``values`` holds the drawn unit values (arrays; not in the JSON), ``current_a`` the
    calibrated available current of each unit at its criterion point (``criterion_v``,
    ``criterion_hz``: arrays, constant in the band mode)."""

    samples: int
    seed: int
    dist: str
    line: str
    passed: int
    yield_fraction: float
    ci_low: float
    ci_high: float
    confidence: float
    demand_a: float
    misses_by_rule: dict[str, int]
    driver: dict[str, Any] | None
    sensitivities: list[dict[str, Any]]
    calibration: Calibration
    not_evaluated: list[str]
    notes: list[str]
    min_current_a: float
    criterion_mains_v: float | None
    criterion_freq_hz: float | None
    values: dict[str, np.ndarray] = field(repr=False, default_factory=dict)
    positions: dict[str, np.ndarray] = field(repr=False, default_factory=dict)
    current_a: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(0))
    criterion_v: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(0))
    criterion_hz: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(0))

    def to_dict(self) -> dict[str, Any]:
        """The JSON-ready figures (no per-unit arrays)."""
        out = {
            f.name: getattr(self, f.name)
            for f in dataclasses.fields(self)
            if f.name not in ("values", "positions", "current_a", "criterion_v", "criterion_hz")
        }
        cal = dataclasses.asdict(self.calibration)
        cal["coefficients"] = {str(k): v for k, v in cal["coefficients"].items()}
        out["calibration"] = cal
        return out


# ---------------------------------------------------------------------------------------------
# the run


@dataclass(frozen=True)
class _Band:
    """One drawn variable: name, nominal, relative half-width (0: not drawn)."""

    name: str
    nominal: float
    tol: float


def _check_inputs(samples: int, dist: str, line: str, reservoir_tol: float) -> None:
    if not isinstance(samples, (int, np.integer)) or not 1 <= samples <= MAX_SAMPLES:
        raise BadValueError(f"--samples: {samples!r} is not a whole number in 1..{MAX_SAMPLES}")
    if dist not in DISTRIBUTIONS:
        raise BadValueError(f"--dist: unknown {dist!r}; one of {', '.join(DISTRIBUTIONS)}")
    if line not in LINE_MODES:
        raise BadValueError(f"--line: unknown {line!r}; one of {', '.join(LINE_MODES)}")
    if not 0.0 <= reservoir_tol < 0.9:
        raise BadValueError(f"reservoir tolerance {reservoir_tol} outside 0..0.9")


def _demand(circuit: Circuit) -> float:
    """Average demand on the bus [A], as ``analyse`` takes it (burst averaged, regulator Iq)."""
    if circuit.regulator is not None:
        reg = circuit.regulator
        return circuit.load.average_demand_a(reg.output_v) + reg.quiescent_a
    return circuit.load.average_demand_a(circuit.bus_voltage_v)


def _features(z: np.ndarray) -> np.ndarray:
    """Design matrix rows: 1, z_j, z_j z_k (j < k) for positions ``z`` of shape (m, k)."""
    m, k = z.shape
    cols = [np.ones(m)] + [z[:, j] for j in range(k)]
    cols += [z[:, a] * z[:, b] for a, b in itertools.combinations(range(k), 2)]
    return np.column_stack(cols)


def _calibrate(
    circuit: Circuit,
    bands: Sequence[_Band],
    mains_v: tuple[float, float],
    freqs: Sequence[float],
    draw_mains: bool,
) -> tuple[Calibration, Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray]]:
    """Fit ``rho = exact / closed form`` on the band corners (see module docstring).

    ``bands`` are the current-criterion variables in the order x_capacitance_f (end-of-life),
    series_resistance_ohm, bleeder_resistance_ohm, zener_voltage_v, reservoir_f; ``mains_v`` the
    (criterion value, half-width) of the mains; returns the calibration record and
    ``predict(z_matrix, freq_array, closed_form_current) -> calibrated current``.
    """
    top = circuit.topology
    vf = circuit.diode_drop_v
    live = [b for b in bands if b.tol > 0]
    names = [b.name for b in live]
    v_mid, v_half = mains_v
    if draw_mains and v_half > 0:
        names.append("mains_v")
    k = len(names)
    corners = np.array(list(itertools.product((-1.0, 1.0), repeat=k)), ndmin=2).reshape(-1, k)
    points = np.vstack([np.zeros((1, k)), corners]) if k else np.zeros((1, 0))
    coefs: dict[float, np.ndarray] = {}
    worst_err = 0.0
    worst_cf_err = 0.0
    solves = 0
    by_name = {b.name: b for b in bands}
    for f in freqs:
        ratios = []
        for zrow in points:
            val = {b.name: b.nominal for b in bands}
            for j, name in enumerate(names):
                if name != "mains_v":
                    b = by_name[name]
                    val[name] = b.nominal * (1.0 + b.tol * zrow[j])
            v = v_mid + (v_half * zrow[names.index("mains_v")] if "mains_v" in names else 0.0)
            unit = _unit_circuit(
                circuit,
                val["x_capacitance_f"],
                val["series_resistance_ohm"],
                val["bleeder_resistance_ohm"],
                val["zener_voltage_v"],
                val["reservoir_f"],
            )
            exact = available_current(unit, v, f)
            approx = float(
                cf.dc_current(
                    top,
                    v,
                    val["x_capacitance_f"],
                    f,
                    val["zener_voltage_v"],
                    vf,
                    val["series_resistance_ohm"],
                )
            )
            solves += 1
            if approx <= 0:
                raise OutOfRangeError(
                    f"the clamp ({val['zener_voltage_v']:.3g} V) is above what the capacitor "
                    f"can swing at {v:.4g} V; no current to calibrate"
                )
            ratios.append(exact / approx)
        rho = np.array(ratios)
        worst_cf_err = max(worst_cf_err, float(np.max(np.abs(1.0 / rho - 1.0))))
        X = _features(points)
        # with fewer points than terms (k <= 1) lstsq gives the minimum-norm exact fit
        coef, *_ = np.linalg.lstsq(X, rho, rcond=None)
        fit = X @ coef
        worst_err = max(worst_err, float(np.max(np.abs(fit / rho - 1.0))))
        coefs[float(f)] = coef

    def predict(z: np.ndarray, freq: np.ndarray, approx: np.ndarray) -> np.ndarray:
        X = _features(z)
        out = np.empty_like(approx)
        for f, coef in coefs.items():
            sel = freq == f
            out[sel] = approx[sel] * (X[sel] @ coef)
        return out

    cal = Calibration(
        method=(
            "closed form x fitted ratio exact/closed form (linear in each band position plus "
            "pairwise products), solved at the nominal point and every band corner"
        ),
        variables=names,
        frequencies_hz=[float(f) for f in freqs],
        coefficients={f: [float(c) for c in coef] for f, coef in coefs.items()},
        points=solves,
        max_error=worst_err,
        closed_form_max_error=worst_cf_err,
    )
    return cal, predict


def _anchor(exact: float, g_unit: np.ndarray, g_corner: float) -> np.ndarray:
    """The exact worst-case stress scaled by the closed-form ratio unit / corner."""
    if not math.isfinite(exact) or g_corner == 0:
        return np.full(np.shape(g_unit), exact, dtype=float)
    return exact * (g_unit / g_corner)


def _unknown(v: Any) -> bool:
    return v is None or (isinstance(v, float) and math.isnan(v))


def production_yield(
    circuit: Circuit,
    mains: Mains,
    tolerances: Tolerances | None = None,
    conditions: Conditions | None = None,
    samples: int = 10_000,
    seed: int | None = None,
    dist: str = "uniform",
    *,
    line: str = "band",
    reservoir_tol: float = RESERVOIR_TOL,
    parts: Mapping[str, Sequence[Any]] | None = None,
    context: Mapping[str, Any] | None = None,
    policy: Any = None,
    progress: Callable[[int, int], None] | None = None,
) -> YieldResult:
    """Monte-Carlo production yield of ``circuit`` (module docstring: what is drawn, when a
    unit passes, the calibration and its accuracy).

    ``parts`` maps roles to :class:`selector.rules.RatedPart` lists (a BOM's parts; None: only
    the current criterion applies); ``context`` the audit's extra stress keys for them;
    ``policy`` the derating policy for the part rules. ``seed`` None draws a fresh seed, which
    the result reports so that the run can be repeated. Raises BadValueError for bad options,
    OutOfRangeError when the circuit is outside the engine's range.
    """
    from .policy import Policy
    from .rules import RULES

    tol = tolerances or Tolerances()
    cond = conditions or Conditions()
    pol = policy or Policy()
    _check_inputs(samples, dist, line, reservoir_tol)
    if seed is None:
        seed = int(np.random.SeedSequence().entropy % (2**32))
    if not isinstance(seed, (int, np.integer)) or seed < 0:
        raise BadValueError(f"--seed: {seed!r} is not a whole number >= 0")
    top = circuit.topology
    vf = circuit.diode_drop_v
    caps = circuit.x_capacitors_f
    c_total = circuit.x_capacitance_f
    loss = 1.0 - tol.cap_loss
    r0 = circuit.series_resistance_ohm
    rb0 = circuit.bleeder_resistance_ohm
    vz0 = circuit.zener_voltage_v
    cr0 = circuit.reservoir_f
    rb_tol = tol.r_tol if circuit.has_bleeder else 0.0
    freqs = tuple(sorted(set(mains.frequencies_hz)))
    low, high = mains.low_v, mains.high_v
    v_mid, v_half = 0.5 * (low + high), 0.5 * (high - low)
    draw_mains = line == "drawn"
    demand = _demand(circuit)

    # the current criterion's calibration (X capacitance at end of life)
    bands = [
        _Band("x_capacitance_f", c_total * loss, tol.cap_tol),
        _Band("series_resistance_ohm", r0, tol.r_tol),
        _Band("bleeder_resistance_ohm", rb0, rb_tol),
        _Band("zener_voltage_v", vz0, tol.zener_tol),
        _Band("reservoir_f", cr0, reservoir_tol),
    ]
    crit_freqs = freqs if draw_mains else (freqs[0],)
    cal, predict = _calibrate(
        circuit, bands, (v_mid, v_half) if draw_mains else (low, 0.0), crit_freqs, draw_mains
    )

    # part rules: the exact worst case, whose stresses the units' are scaled from
    rules = [r for r in RULES if r.id not in NOT_YIELD_RULES]
    evaluated: list[tuple[Any, Any]] = []  # (rule, part or None)
    not_evaluated: list[str] = []
    analysis = None
    s_worst: dict[str, Any] = {}
    if parts:
        from .engine.analysis import analyse
        from .rules import stresses_from_analysis

        analysis = analyse(circuit, mains, tol, cond)
        s_worst, _ = stresses_from_analysis(analysis, context)
        for rule in rules:
            if rule.role == "whole":
                continue
            for p in parts.get(rule.role, ()):
                if (
                    rule.role == "bleeder"
                    and not circuit.has_bleeder
                    and rule.id != ("bleeder.discharge")
                ):
                    continue
                if rule.applies is not None and not rule.applies(s_worst, p):
                    continue
                missing = [a for a in rule.ratings if _unknown(getattr(p, a, None))]
                if rule.id in ("x_cap.safety_class", "x_cap.impulse") and _unknown(p.safety_class):
                    missing = ["safety_class"]
                missing += [k for k in rule.stress_keys if _unknown(s_worst.get(k))]
                if missing:
                    not_evaluated.append(
                        f"{rule.id} ({p.ref or rule.role}): unknown {', '.join(missing)}"
                    )
                    continue
                evaluated.append((rule, p))
    current_rule = next(r for r in RULES if r.id == "whole.min_current")
    pol_current = dataclasses.replace(pol, load_margin=0.0)

    checks = [(current_rule, None, pol_current)] + [(rule, q, pol) for rule, q in evaluated]
    names = (
        ["x_capacitance_f"]
        if len(caps) == 1
        else [f"x_capacitor_{i + 1}_f" for i in range(len(caps))]
    )
    names += ["series_resistance_ohm", "bleeder_resistance_ohm", "zener_voltage_v", "reservoir_f"]
    if draw_mains:
        names += ["mains_v", "freq_hz"]

    def blocks():
        """The units block by block, always drawn the same way from ``seed``: per block the
        band positions, the values, the criterion point, the calibrated current and, per
        check, (rule id, ok, margin)."""
        rng = np.random.default_rng(seed)
        done = 0
        while done < samples:
            n = min(BLOCK, samples - done)
            zc = [band_positions(rng, n, dist) for _ in caps]
            z_r = band_positions(rng, n, dist)
            z_rb = band_positions(rng, n, dist)
            z_z = band_positions(rng, n, dist)
            z_cr = band_positions(rng, n, dist)
            if draw_mains:
                z_v = band_positions(rng, n, dist)
                f_unit = np.asarray(freqs, dtype=float)[rng.integers(0, len(freqs), n)]
                v_unit = v_mid + v_half * z_v
            else:
                z_v = np.zeros(n)
                f_unit = np.full(n, freqs[0])
                v_unit = np.full(n, low)
            c_each = [ci * (1.0 + tol.cap_tol * z) for ci, z in zip(caps, zc, strict=True)]
            c_day1 = np.sum(c_each, axis=0)
            r = r0 * (1.0 + tol.r_tol * z_r)
            rb = rb0 * (1.0 + rb_tol * z_rb) if circuit.has_bleeder else np.full(n, math.inf)
            vz = vz0 * (1.0 + tol.zener_tol * z_z)
            cr = cr0 * (1.0 + reservoir_tol * z_cr)
            # the capacitance's position in its band (several parts: of the total)
            z_ctot = (c_day1 / c_total - 1.0) / tol.cap_tol if tol.cap_tol > 0 else np.zeros(n)
            zmap = {
                "x_capacitance_f": z_ctot,
                "series_resistance_ohm": z_r,
                "bleeder_resistance_ohm": z_rb,
                "zener_voltage_v": z_z,
                "reservoir_f": z_cr,
                "mains_v": z_v,
            }
            zmat = np.column_stack([zmap[k] for k in cal.variables] + [np.zeros(n)])[:, :-1]
            approx = cf.dc_current(top, v_unit, c_day1 * loss, f_unit, vz, vf, r)
            i_avail = predict(zmat, f_unit, approx)
            s: dict[str, Any] = {"load_a": demand, "min_dc_current_a": i_avail}
            if evaluated:
                # stress line: the highest mains and frequency (band), or the unit's own (drawn)
                vs = v_unit if draw_mains else np.full(n, high)
                fs = f_unit if draw_mains else np.full(n, freqs[-1])
                s = unit_stresses(
                    s_worst, analysis, circuit, vs, v_unit, fs, c_day1, r, rb, vz, cr, i_avail,
                    demand,
                )  # fmt: skip
            results = []
            for rule, q, pl in checks:
                if rule.role == "series_resistor" and q.value is not None:
                    q = dataclasses.replace(q, value=q.value * (r / r0))
                stress, limit, m = rule.check(s, q, pl)
                ok = np.broadcast_to(np.asarray(stress <= limit), (n,))
                results.append((rule.id, ok, np.broadcast_to(np.asarray(m, dtype=float), (n,))))
            zs = [*zc, z_r, z_rb, z_z, z_cr] + ([z_v, f_unit] if draw_mains else [])
            vals = [*c_each, r, rb, vz, cr] + ([v_unit, f_unit] if draw_mains else [])
            yield dict(zip(names, zs, strict=True)), dict(zip(names, vals, strict=True)), (
                i_avail, v_unit, f_unit, results
            )  # fmt: skip
            done += n

    # pass one: misses per rule, pass or fail of each unit
    misses: dict[str, int] = dict.fromkeys((rule.id for rule, _, _ in checks), 0)
    pos: dict[str, list[np.ndarray]] = {k: [] for k in names}
    val: dict[str, list[np.ndarray]] = {k: [] for k in names}
    currents, crit_v, crit_f, fail_any = [], [], [], []
    done = 0
    for zs, vals, (i_avail, v_unit, f_unit, results) in blocks():
        bad = np.zeros(len(i_avail), dtype=bool)
        for rid, ok, _ in results:
            misses[rid] += int(np.count_nonzero(~ok))
            bad |= ~ok
        for k in names:
            pos[k].append(zs[k])
            val[k].append(vals[k])
        currents.append(i_avail)
        crit_v.append(v_unit)
        crit_f.append(f_unit)
        fail_any.append(bad)
        done += len(i_avail)
        if progress is not None:
            progress(done, 2 * samples)
    failed = np.concatenate(fail_any)
    positions = {k: np.concatenate(v) for k, v in pos.items()}
    values = {k: np.concatenate(v) for k, v in val.items()}
    passed = int(samples - np.count_nonzero(failed))
    lo, hi = wilson_interval(passed, samples)
    # pass two (the same units again): the driver is sought among the rules that miss some
    # units but not all; a rule that misses every unit does not depend on the draws
    always = [rid for rid, c in misses.items() if c == samples]
    telling = {rid for rid, c in misses.items() if 0 < c < samples}
    use = telling or set(misses)
    margins, fail_var = [], []
    for _, _, (i_avail, _, _, results) in blocks():
        worst = np.full(len(i_avail), np.inf)
        bad = np.zeros(len(i_avail), dtype=bool)
        for rid, ok, m in results:
            if rid in use:
                worst = np.minimum(worst, m)
                bad |= ~ok
        margins.append(worst)
        fail_var.append(bad)
        done += len(i_avail)
        if progress is not None:
            progress(done, 2 * samples)
    margin_all = np.concatenate(margins)
    sens = margin_sensitivities(
        positions, margin_all, np.concatenate(fail_var), tol, reservoir_tol, rb_tol
    )
    driver = sens[0] if (sens and telling) else None
    notes = [
        f"end-of-life X capacitance loss applied as a fixed {tol.cap_loss * 100:.3g} % "
        "(not drawn) to the current criterion",
        "normal draws: the tolerance band is +/-3 sigma, truncated to the band"
        if dist == "normal"
        else "uniform draws within each tolerance band",
    ]
    if draw_mains:
        notes.append("each unit is checked at its own drawn mains and frequency")
    else:
        notes.append(
            "load checked at the lowest line and frequency"
            + ("; stresses at the highest line and frequency" if parts else "")
        )
    if not parts:
        notes.append("values only (no catalogue parts): the load is the only criterion")
    if always:
        notes.append("miss on every unit (not a matter of tolerances): " + ", ".join(always))
    all_currents = np.concatenate(currents)
    return YieldResult(
        samples=samples,
        seed=int(seed),
        dist=dist,
        line=line,
        passed=passed,
        yield_fraction=passed / samples,
        ci_low=lo,
        ci_high=hi,
        confidence=0.95,
        demand_a=demand,
        misses_by_rule=misses,
        driver=driver,
        sensitivities=sens,
        calibration=cal,
        not_evaluated=not_evaluated,
        notes=notes,
        min_current_a=float(np.min(all_currents)),
        criterion_mains_v=None if draw_mains else low,
        criterion_freq_hz=None if draw_mains else freqs[0],
        values=values,
        positions=positions,
        current_a=all_currents,
        criterion_v=np.concatenate(crit_v),
        criterion_hz=np.concatenate(crit_f),
    )


def unit_stresses(
    s_worst: Mapping[str, Any],
    analysis: Any,
    circuit: Circuit,
    v: np.ndarray,
    v_fault: np.ndarray,
    f: np.ndarray,
    c: np.ndarray,
    r: np.ndarray,
    rb: np.ndarray,
    vz: np.ndarray,
    cr: np.ndarray,
    i_avail: np.ndarray,
    demand: float,
) -> dict[str, Any]:
    """Per-unit stresses: the exact worst case scaled by closed-form ratios (module docstring).

    ``s_worst`` are the flat stresses of ``analysis``
    (:func:`selector.rules.stresses_from_analysis`); each scaled key is
    ``exact worst x g(unit) / g(corner)`` with ``g`` the closed form of that quantity (Zener
    power, series-R power, line current, capacitor voltage, DC current, bus voltage; switch-on:
    C V^2, V / R, V^2 C / R, V / (R C); discharge: Rb C). Arrays of one length in, a stress
    mapping for :meth:`selector.rules.Rule.check` out. ``c`` is the day-one X capacitance;
    ``v``, ``f`` the stress line of each unit, ``v_fault`` the line at which a shorted X
    capacitor must open the fuse (the lowest, or the unit's)."""
    top = circuit.topology
    vf = circuit.diode_drop_v
    wc = analysis.worst_case
    s = dict(s_worst)

    def at(corner: Mapping[str, Any]) -> tuple[float, float, float, float, float]:
        return (
            float(corner["mains_v"]),
            float(corner["freq_hz"]),
            float(corner["cap_f"]),
            float(corner["r_ohm"]),
            float(corner.get("vz_v", circuit.zener_voltage_v)),
        )

    def line_rms(vv, cc, ff, rr):
        return cf.line_current_rms(vv, cc, ff, rr)

    def vcap(vv, cc, ff, rr):
        return cf.line_current_rms(vv, cc, ff, rr) * cf.reactance(cc, ff)

    def idc(vv, cc, ff, zz, rr):
        return cf.dc_current(top, vv, cc, ff, zz, vf, rr)

    V, F, C, R, Z = at(wc.max_zener_power_corner)
    s["max_zener_power_w"] = _anchor(
        wc.max_zener_power_w,
        cf.zener_power_no_load(top, v, c, f, vz, vf, r),
        float(cf.zener_power_no_load(top, V, C, F, Z, vf, R)),
    )
    V, F, C, R, Z = at(wc.max_series_r_power_corner)
    s["max_series_r_power_w"] = _anchor(
        wc.max_series_r_power_w,
        cf.series_r_power(v, c, f, r),
        float(cf.series_r_power(V, C, F, R)),
    )
    V, F, C, R, Z = at(wc.max_line_current_rms_corner)
    s["max_line_current_rms_a"] = _anchor(
        wc.max_line_current_rms_a, line_rms(v, c, f, r), float(line_rms(V, C, F, R))
    )
    if circuit.has_bleeder:
        k = wc.max_bleeder_power_corner
        V, F, C, R, Z = at(k)
        rb_c = float(k.get("bleeder_ohm", circuit.bleeder_resistance_ohm))
        s["max_bleeder_power_w"] = _anchor(
            wc.max_bleeder_power_w, vcap(v, c, f, r) ** 2 / rb, float(vcap(V, C, F, R)) ** 2 / rb_c
        )
    V, F, C, R, Z = at(wc.max_bleeder_voltage_corner)
    s["max_bleeder_voltage_v"] = _anchor(
        wc.max_bleeder_voltage_v, vcap(v, c, f, r), float(vcap(V, C, F, R))
    )
    V, F, C, R, Z = at(wc.max_output_voltage_corner)
    drop = vf if top == "half-wave" else 0.0  # the bus sits a diode drop below the Zener there
    s["max_output_voltage_v"] = _anchor(wc.max_output_voltage_v, vz - drop, Z - drop)
    V, F, C, R, Z = at(wc.max_dc_current_corner)
    i_unit = idc(v, c, f, vz, r)
    i_corner = float(idc(V, C, F, Z, R))
    if top == "bridge":
        # each bridge diode carries half the DC current; the half-wave diode carries the load
        # only (the Zener shunts the rest before it), so there the worst case stands
        s["max_rectifier_avg_current_a"] = _anchor(wc.max_rectifier_avg_current_a, i_unit, i_corner)
    # the ripple figures (reservoir ripple current, output ripple) are largest where the clamp
    # lets go, which no monotonic closed form tracks: they keep their worst-case values
    s["mains_max_v"] = v
    s["mains_min_v"] = v_fault
    s["max_rectifier_reverse_voltage_v"] = math.sqrt(2.0) * v
    # switch-on at the crest: energy ~ C, peak ~ V / R, I^2 t ~ V^2 C / R, dV/dt ~ V / (R C)
    ins = analysis.inrush
    V, F, C, R, Z = at(ins.corner)
    s["inrush_series_r_energy_j"] = _anchor(ins.series_r_energy_j, c * v * v, C * V * V)
    s["inrush_peak_current_a"] = _anchor(ins.peak_current_a, v / r, V / R)
    s["inrush_rectifier_peak_current_a"] = _anchor(ins.rectifier_peak_current_a, v / r, V / R)
    s["inrush_i2t_a2s"] = _anchor(ins.i2t_a2s, v * v * c / r, V * V * C / R)
    s["inrush_x_cap_dvdt_v_per_s"] = _anchor(ins.x_cap_dvdt_v_per_s, v / (r * c), V / (R * C))
    dis = analysis.discharge
    if circuit.has_bleeder and math.isfinite(dis.time_s):
        k = dis.corner
        s["discharge_time_s"] = _anchor(
            dis.time_s, rb * c, float(k.get("bleeder_ohm", rb[0])) * float(k["cap_f"])
        )
    # a shorted X capacitor leaves the unit's own series resistance across the line
    s["series_resistance_ohm"] = r
    s["min_dc_current_a"] = i_avail
    s["load_a"] = demand
    return s
