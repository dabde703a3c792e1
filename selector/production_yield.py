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

Method and accuracy: :mod:`selector.yield_model` (the calibration of the closed forms
against the exact engine, the per-unit stresses and their accuracy).

Confidence interval: Wilson's score interval (:func:`.yield_statistics.wilson_interval`).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Final

import numpy as np

from .engine import closed_form as cf
from .engine.circuit import Circuit, Conditions, Mains, Tolerances
from .errors import BadValueError
from .yield_model import (
    Calibration,
    ToleranceBand,
    available_current,
    calibrate_current,
    unit_stresses,
)
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
        ToleranceBand("x_capacitance_f", c_total * loss, tol.cap_tol),
        ToleranceBand("series_resistance_ohm", r0, tol.r_tol),
        ToleranceBand("bleeder_resistance_ohm", rb0, rb_tol),
        ToleranceBand("zener_voltage_v", vz0, tol.zener_tol),
        ToleranceBand("reservoir_f", cr0, reservoir_tol),
    ]
    crit_freqs = freqs if draw_mains else (freqs[0],)
    cal, predict = calibrate_current(
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
