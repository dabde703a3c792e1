"""One board of a BOM audited: the one place where the engine's ``Circuit`` is built from a BOM.

Per board: the parts grouped by role, missing ratings filled from the catalogue, the circuit's
values taken from the BOM (X capacitance = sum of the X capacitors in parallel; series
resistance = sum of the series resistors; bleeder = sum of the bleeder string, none fitted:
infinite; Zener voltage = sum of the Zeners in series; reservoir = sum of the reservoirs in
parallel), stated tolerances replacing the option defaults, the circuit analysed at every corner,
the shared rules run on the parts, and their findings turned into :class:`AuditFinding` records.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any, Final

from ..errors import BadRowError, BadValueError, OutOfRangeError
from ..rules.life import life_context
from .bom import BomTable
from .corners import corners_of
from .fill import fill_from_catalogue, humidity_grade_from_family
from .rated_parts import ARRANGEMENT, equal_groups, rated_part
from .results import AuditFinding, BoardAudit
from .roles import Assigned, RoleMap

#: reservoir tolerance when the BOM states none (aluminium electrolytics are commonly +/-20 %,
#: common practice, no source; the design solver uses the same default)
_RESERVOIR_TOL: Final[float] = 0.2

#: roles every board must have, and how the error names them
_REQUIRED_ROLES: Final[tuple[tuple[str, str], ...]] = (
    ("x_capacitor", "an X capacitor"),
    ("series_resistor", "a series resistor"),
    ("zener", "a Zener"),
    ("reservoir", "a reservoir electrolytic"),
)


@dataclass
class AuditSetup:
    """What every board of one audit shares: the circuit options, the policy, the catalogue,
    the engine and rule entry points, and the cache that lets equal boards be analysed once."""

    mains: Any
    conditions: Any
    tolerances: Any
    load: Any
    regulator: Any
    topology: str | None
    policy: Any
    catalogue: Any
    circuit_defaults: dict[str, Any]
    fields_by_role: dict[str, tuple[str, ...]]
    pinned: frozenset[str]
    cache: dict[Any, Any]
    analyse: Callable[..., Any]
    circuit_cls: Callable[..., Any]
    rules_evaluate: Callable[..., Any]


@dataclass(frozen=True)
class _BomValues:
    """The circuit values a board's BOM gives (SI)."""

    x_capacitors_f: tuple[float, ...]
    series_resistance_ohm: float
    bleeder_resistance_ohm: float
    zener_voltage_v: float
    reservoir_f: float


def _where(table: BomTable, board: str) -> str:
    return f"{table.path}" + (f", board '{board}'" if board else "")


def audit_board(table: BomTable, role_map: RoleMap, setup: AuditSetup) -> BoardAudit:
    """Audit one board whose roles are assigned: its circuit, analysis and findings."""
    board = role_map.board
    where = _where(table, board)
    notes: list[str] = []
    by_role = _parts_by_role(role_map, where)
    assumed = _fill_missing_ratings(by_role, setup)
    values = _bom_values(table, by_role)
    circuit, tolerances = _circuit(values, by_role, role_map, setup, where, notes)
    analysis_key = (circuit, setup.mains, tolerances, setup.conditions)
    analysis = setup.cache.get(analysis_key)
    if analysis is None:
        analysis = setup.analyse(circuit, setup.mains, tolerances, setup.conditions)
        setup.cache[analysis_key] = analysis
    parts_by_role, placeholder_bleeder = _rule_parts(by_role, notes)
    context = _rule_context(values, by_role, setup, tolerances)
    # equal boards (same circuit, same parts, same refs) are evaluated once
    memo_key = (
        analysis_key,
        tuple((role, tuple(parts)) for role, parts in sorted(parts_by_role.items())),
        setup.policy,
        tuple(sorted(context.items())),
    )
    rule_findings = setup.cache.get(memo_key)
    if rule_findings is None:
        rule_findings = setup.rules_evaluate(
            parts_by_role, analysis, setup.policy, context=context, corners=corners_of(analysis)
        )
        setup.cache[memo_key] = rule_findings
    findings = _audit_findings(board, rule_findings, placeholder_bleeder, "fuse" in by_role)
    from ..rules import stresses_from_analysis
    from ..rules.life import life_record

    life = life_record(stresses_from_analysis(analysis, context)[0], parts_by_role)
    return BoardAudit(board, role_map, circuit, findings, assumed=assumed, notes=notes, life=life)


def _parts_by_role(role_map: RoleMap, where: str) -> dict[str, list[Assigned]]:
    """The board's parts by role (a resistor that is also the fuse in both); raises when a role
    the stresses need is missing."""
    by_role: dict[str, list[Assigned]] = {}
    for assigned in role_map.parts:
        if assigned.role != "other":
            by_role.setdefault(assigned.role, []).append(assigned)
    for assigned in role_map.parts:
        if assigned.also_fuse:
            by_role.setdefault("fuse", []).append(assigned)
    for need, what in _REQUIRED_ROLES:
        if need not in by_role:
            raise BadValueError(
                f"{where}: found no {need} ({what}); the audit needs one to compute the "
                f"stresses. Name it with --role REF={need}"
            )
    return by_role


def _fill_missing_ratings(by_role: dict[str, list[Assigned]], setup: AuditSetup) -> list[str]:
    """Fill each part's missing ratings from the catalogue; one note per family used."""
    assumed_refs: dict[str, list[str]] = {}
    seen: set[int] = set()
    for role, group in by_role.items():
        wanted = setup.fields_by_role.get(role, ())
        for assigned in group:
            if id(assigned.ratings) in seen:
                continue
            seen.add(id(assigned.ratings))
            families = [fill_from_catalogue(assigned.ratings, wanted, setup.catalogue)]
            if role == "x_capacitor" and assigned.ratings.humidity_grade is None:
                families.append(_x_cap_humidity_grade(assigned, setup, assumed_refs))
            for family in dict.fromkeys(f for f in families if f):
                assumed = assigned.ratings.assumed
                fields = ", ".join(sorted(k for k, v in assumed.items() if v == family))
                assumed_refs.setdefault(f"{fields} assumed from family {family}", []).append(
                    assigned.part.ref
                )
    return [f"{', '.join(refs)}: {text}" for text, refs in assumed_refs.items()]


#: the assumption line of an X capacitor whose line states no humidity grade and names no family
NO_GRADE_NOTE: Final[str] = (
    "no humidity grade stated and no catalogue family named: taken as grade I (the least "
    "robust of IEC 60384-14 Amd 1) for the end-of-life capacitance loss"
)


def _x_cap_humidity_grade(
    assigned: Assigned, setup: AuditSetup, assumed_refs: dict[str, list[str]]
) -> str | None:
    """The humidity grade of an X-capacitor line that states none: from the family its text
    names (returns that family), else an assumption line that grade I is taken (returns None)."""
    text = " ".join(str(t) for t in (assigned.part.value, assigned.part.description) if t)
    family = humidity_grade_from_family(assigned.ratings, text, setup.catalogue)
    if family is None:
        assumed_refs.setdefault(NO_GRADE_NOTE, []).append(assigned.part.ref)
    return family


def _bom_values(table: BomTable, by_role: dict[str, list[Assigned]]) -> _BomValues:
    """The circuit values from the BOM; raises when a part the circuit needs has no value."""
    for role in ("x_capacitor", "series_resistor", "bleeder", "zener", "reservoir"):
        for assigned in by_role.get(role, []):
            if assigned.ratings.value is None:
                raise BadRowError(
                    table.path,
                    assigned.part.row,
                    table.column_map.get("value"),
                    f"{assigned.part.ref} has the role {role} but its line gives no value for it",
                )
    bleeders = by_role.get("bleeder", [])
    return _BomValues(
        x_capacitors_f=tuple(a.ratings.value for a in by_role["x_capacitor"]),
        series_resistance_ohm=sum(a.ratings.value for a in by_role["series_resistor"]),
        bleeder_resistance_ohm=sum(a.ratings.value for a in bleeders) if bleeders else math.inf,
        zener_voltage_v=sum(a.ratings.value for a in by_role["zener"]),
        reservoir_f=sum(a.ratings.value for a in by_role["reservoir"]),
    )


def _bom_tolerances(by_role: dict[str, list[Assigned]], setup: AuditSetup, notes: list[str]) -> Any:
    """The option tolerances with those the BOM states (and the user did not pin) put in."""
    tolerances = setup.tolerances
    changes: dict[str, float] = {}

    def stated(group: Sequence[Assigned]) -> list[tuple[float, float | None]]:
        return [(a.ratings.value or 0.0, a.ratings.tolerance) for a in group]

    if "cap_tol" not in setup.pinned:
        # all parallel parts at +t_i: the total moves by sum(C_i t_i) / sum(C_i)
        pairs = stated(by_role["x_capacitor"])
        if all(tol is not None for _, tol in pairs):
            changes["cap_tol"] = sum(c * tol for c, tol in pairs) / sum(c for c, _ in pairs)  # type: ignore[operator]
    if "r_tol" not in setup.pinned:
        # the engine's r_tol covers the series resistors and the bleeder
        tols = [tol for _, tol in stated(by_role["series_resistor"] + by_role.get("bleeder", []))]
        if tols:
            changes["r_tol"] = max(tol if tol is not None else tolerances.r_tol for tol in tols)
    if "zener_tol" not in setup.pinned:
        tols = [tol for _, tol in stated(by_role["zener"]) if tol is not None]
        if tols:
            changes["zener_tol"] = max(tols)
    changes = {
        name: value
        for name, value in changes.items()
        if abs(value - getattr(tolerances, name)) > 1e-12
    }
    if changes:
        tolerances = dataclasses.replace(tolerances, **changes)
        notes.append(
            "tolerances from the BOM: "
            + ", ".join(f"{name} {value * 100:.3g} %" for name, value in changes.items())
        )
    return tolerances


def _model_parameters(by_role: dict[str, list[Assigned]], setup: AuditSetup) -> dict[str, Any]:
    """Rectifier and Zener model parameters: the option when given, else the parts' own (BOM or
    catalogue family), else (absent here) the engine's defaults."""
    model = dict(setup.circuit_defaults)
    rectifiers = by_role.get("rectifier", [])
    if "diode_drop_v" not in model:
        drops = [a.ratings.vf_v for a in rectifiers if a.ratings.vf_v is not None]
        if drops:
            model["diode_drop_v"] = max(drops)
    if "diode_resistance_ohm" not in model:
        resistances = [a.ratings.rs_ohm for a in rectifiers if a.ratings.rs_ohm is not None]
        if resistances:
            model["diode_resistance_ohm"] = max(resistances)
    if "zener_impedance_ohm" not in model:
        impedances = [a.ratings.zz_ohm for a in by_role["zener"]]
        if impedances and all(z is not None for z in impedances):
            model["zener_impedance_ohm"] = sum(impedances)  # type: ignore[arg-type]
    return model


def _circuit(
    values: _BomValues,
    by_role: dict[str, list[Assigned]],
    role_map: RoleMap,
    setup: AuditSetup,
    where: str,
    notes: list[str],
) -> tuple[Any, Any]:
    """The engine's Circuit from the BOM's values, and the tolerances to analyse it with."""
    topology = setup.topology or role_map.topology
    if topology is None:
        raise BadValueError(
            f"{where}: found no rectifier (bridge or diodes); name it with --role REF=rectifier "
            "or give --topology"
        )
    if role_map.topology is not None and setup.topology and setup.topology != role_map.topology:
        notes.append(f"--topology {setup.topology} used; the BOM looks {role_map.topology}")
    tolerances = _bom_tolerances(by_role, setup, notes)
    model = _model_parameters(by_role, setup)
    varistor = _varistor(by_role, where, notes)
    if varistor is not None:
        model["varistor"] = varistor
    try:
        circuit = setup.circuit_cls(
            topology=topology,
            x_capacitors_f=values.x_capacitors_f,
            series_resistance_ohm=values.series_resistance_ohm,
            bleeder_resistance_ohm=values.bleeder_resistance_ohm,
            zener_voltage_v=values.zener_voltage_v,
            reservoir_f=values.reservoir_f,
            load=setup.load,
            regulator=setup.regulator,
            **model,
        )
    except OutOfRangeError as exc:
        raise BadValueError(
            f"{where}: the BOM's values are outside the engine's range: {exc}"
        ) from None
    return circuit, tolerances


def _varistor(by_role: dict[str, list[Assigned]], where: str, notes: list[str]) -> Any:
    """The engine's clamp model of the board's varistor across the line
    (:class:`selector.engine.varistor.Varistor`) from its line and the catalogue fill, or None
    when there is none or its clamp figures are unknown (a note says so; the varistor rules
    then warn). Raises when several varistors sit in the varistor role."""
    group = by_role.get("varistor", [])
    if not group:
        return None
    if len(group) > 1:
        raise BadValueError(
            f"{where}: several varistors ({', '.join(a.part.ref for a in group)}); the audit "
            f"models one across the line: name the others with --role {group[1].part.ref}=other"
        )
    a = group[0]
    r = a.ratings
    if r.value is None or r.limiting_voltage_v is None or r.clamp_current_a is None:
        notes.append(
            f"{a.part.ref}: varistor without its clamp figures (voltage at 1 mA, clamping "
            "voltage at a current) and no catalogue family like it: the surge is analysed "
            "without it"
        )
        return None
    from ..engine.varistor import Varistor

    try:
        return Varistor(
            v_1ma_v=r.value,
            clamp_v=r.limiting_voltage_v,
            clamp_a=r.clamp_current_a,
            continuous_ac_v=r.rated_voltage_ac_v,
            energy_j=r.pulse_energy_j,
            peak_current_a=r.ifsm_a,
            code=a.part.ref,
        )
    except OutOfRangeError as exc:
        raise BadValueError(f"{where}: varistor {a.part.ref}: {exc}") from None


def _rule_parts(
    by_role: dict[str, list[Assigned]], notes: list[str]
) -> tuple[dict[str, list], bool]:
    """The rule engine's RatedParts by role (a resistor's share of its string's stress by its
    value), and whether a placeholder stands in for a missing bleeder."""
    parts_by_role: dict[str, list] = {}
    series_total = sum(a.ratings.value or 0.0 for a in by_role.get("series_resistor", []))
    for role, group in by_role.items():
        total = sum(a.ratings.value or 0.0 for a in group)
        rated = []
        for members in equal_groups(group):
            if role in ("series_resistor", "bleeder") and total > 0:
                share = sum(a.ratings.value or 0.0 for a in members) / total
            elif (
                role == "fuse"
                and series_total > 0
                and any(members[0] is a for a in by_role.get("series_resistor", []))
            ):
                # a fusible series resistor serving as the fuse carries its share of the series
                # string's fault power, as in the design solver (R_i / R_total)
                share = sum(a.ratings.value or 0.0 for a in members) / series_total
            else:
                share = 1.0
            rated.append(rated_part(role, members, share, ARRANGEMENT[role]))
        parts_by_role[role] = rated
    if "bleeder" in parts_by_role:
        return parts_by_role, False
    from ..rules import RatedPart

    parts_by_role["bleeder"] = [RatedPart(role="bleeder", ref=None, description="none fitted")]
    notes.append("no bleeder fitted (no resistor >= 100 kohm); the discharge rule decides")
    return parts_by_role, True


def _rule_context(
    values: _BomValues, by_role: dict[str, list[Assigned]], setup: AuditSetup, tolerances: Any
) -> dict[str, Any]:
    """The context keys the rules need beyond the analysis, computed the same way as the
    design solver passes them."""
    load = setup.load
    reservoir_tol = max(
        (a.ratings.tolerance for a in by_role["reservoir"] if a.ratings.tolerance is not None),
        default=_RESERVOIR_TOL,
    )
    average_a = load.current_a + (setup.regulator.quiescent_a if setup.regulator else 0.0)
    if load.burst_current_a > 0 and load.burst_period_s > 0:
        average_a += load.burst_current_a * load.burst_duration_s / load.burst_period_s
    context = {
        "mains_max_v": float(setup.mains.high_v),
        "mains_min_v": float(setup.mains.low_v),
        "ambient_c": float(setup.conditions.ambient_c),
        "surge_level_v": float(setup.conditions.surge_v),
        **life_context(setup.conditions, tolerances.cap_loss),
        "load_a": average_a,
        # fault current with a shorted X capacitor: series resistance at its upper tolerance
        "series_resistance_ohm": values.series_resistance_ohm * (1 + tolerances.r_tol),
        "zener_voltage_v": values.zener_voltage_v,
        "reservoir_min_f": values.reservoir_f * (1 - reservoir_tol),
    }
    if load.burst_current_a > 0:
        context["burst_current_a"] = (
            load.burst_current_a
            + average_a
            - (load.burst_current_a * load.burst_duration_s / load.burst_period_s)
        )
        context["burst_duration_s"] = load.burst_duration_s
    return context


def _audit_findings(
    board: str, rule_findings: Sequence[Any], placeholder_bleeder: bool, fuse_fitted: bool
) -> list[AuditFinding]:
    """The rule engine's findings as the audit reports them, plus a warning for a missing fuse."""
    findings: list[AuditFinding] = []
    for finding in rule_findings:
        if (
            placeholder_bleeder
            and finding.part == "bleeder"
            and finding.rule != "bleeder.discharge"
        ):
            continue
        note = finding.note
        if placeholder_bleeder and finding.rule == "bleeder.discharge":
            note = (note + "; " if note else "") + "no bleeder fitted"
        findings.append(
            AuditFinding(
                board=board,
                ref=finding.ref,
                role=finding.part,
                rule=finding.rule,
                stress=finding.stress,
                rating=finding.limit,
                unit=finding.unit,
                margin=finding.margin,
                severity=finding.severity,
                source=finding.source,
                corner=finding.corner,
                note=note,
                description=finding.description,
            )
        )
    if not fuse_fitted:
        findings.append(
            AuditFinding(
                board=board,
                ref=None,
                role="fuse",
                rule="fuse.fitted",
                stress=None,
                rating=None,
                unit="",
                margin=None,
                severity="warn",
                source="[P] common practice, no source",
                corner=None,
                note="no fuse or fusible resistor found in the BOM",
                description="a fuse (or a fusible series resistor) protects against a shorted "
                "X capacitor or rectifier",
            )
        )
    return findings
