"""Running the rule table on one analysed circuit: ``evaluate`` and ``summarise``.

``evaluate`` applies every applicable rule of ``RULES`` to every part of its role (and the
'whole' rules once) and returns one ``Finding`` each. A rating the part lacks or a stress the
analysis lacks gives a 'warn' finding, never a silent pass.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any, Final

from ..policy import COMMON_STANDBY_LIMIT_W, Policy
from .fuse import fuse_pulse_fraction, pulse_curve_fraction
from .life import EOL_LOSS_KEY, EOL_NOTE_KEY, end_of_life_loss
from .parts import Finding, RatedPart, is_iec60384_14_class
from .resistors import RESISTOR_PULSE_CURVE
from .stresses import stresses_from_analysis
from .table import RULES, X_CAP_IEC60384_14_KEY, Rule


def _missing(value: Any) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def evaluate(
    parts_by_role: Mapping[str, RatedPart | Sequence[RatedPart]],
    analysis: Any,
    policy: Policy | None = None,
    *,
    context: Mapping[str, Any] | None = None,
    stresses: Mapping[str, Any] | None = None,
    corners: Mapping[str, str] | None = None,
) -> list[Finding]:
    """Every applicable rule on every part: one Finding each.

    ``parts_by_role`` maps a role to one RatedPart or a list of them (the auditor's several
    designators); the 'whole' rules run once. ``analysis`` is an engine Analysis (or None when
    ``stresses`` is given); ``context`` carries what the analysis does not (see
    ``stresses_from_analysis``). Missing ratings give 'warn' findings; a stress the analysis
    lacks gives a 'warn' finding "stress not computed"; a stress or limit that comes out
    infinite or NaN gives a 'fail' finding "cannot evaluate", never a pass.
    """
    policy = policy or Policy()
    if stresses is None:
        stress_values, corner_texts = stresses_from_analysis(analysis, context)
    else:
        stress_values = dict(stresses)
        if context:
            stress_values.update(context)
        corner_texts = {}
    if corners:
        corner_texts.update(corners)
    x_caps = parts_by_role.get("x_capacitor")
    if x_caps is not None and X_CAP_IEC60384_14_KEY not in stress_values:
        group = [x_caps] if isinstance(x_caps, RatedPart) else list(x_caps)
        stress_values[X_CAP_IEC60384_14_KEY] = bool(group) and all(
            is_iec60384_14_class(p.safety_class) for p in group
        )
        needed = ("target_life_h", "ambient_c", "humidity", "mains_max_v")
        if group and EOL_LOSS_KEY not in stress_values and all(k in stress_values for k in needed):
            loss, note = end_of_life_loss(group, stress_values)
            stress_values[EOL_LOSS_KEY], stress_values[EOL_NOTE_KEY] = loss, note
    findings: list[Finding] = []
    for rule in RULES:
        if rule.role == "whole":
            groups: Sequence[RatedPart | None] = [None]
        else:
            got = parts_by_role.get(rule.role)
            if got is None:
                continue
            groups = [got] if isinstance(got, RatedPart) else list(got)
        for part in groups:
            if rule.applies is not None and not rule.applies(stress_values, part):
                continue
            findings.append(_finding(rule, stress_values, corner_texts, part, policy))
    return findings


def _finding(
    rule: Rule,
    stresses: Mapping[str, Any],
    corners: Mapping[str, str],
    part: RatedPart | None,
    policy: Policy,
) -> Finding:
    """One rule on one part (None for the 'whole' rules)."""
    corner_key = rule.corner_key or (rule.stress_keys[0] if rule.stress_keys else None)
    corner = corners.get(corner_key) if corner_key else None
    common = dict(
        rule=rule.id,
        part=rule.role,
        unit=rule.unit,
        source=rule.source,
        corner=corner or None,
        ref=part.ref if part is not None else None,
        description=rule.description,
    )
    missing_ratings = [
        name for name in rule.ratings if part is not None and _missing(getattr(part, name))
    ]
    if part is not None and rule.id in {"x_cap.safety_class", "x_cap.impulse"}:
        if _missing(part.safety_class):
            missing_ratings = ["safety_class"]
    missing_stresses = [key for key in rule.stress_keys if _missing(stresses.get(key))]
    if missing_ratings or missing_stresses:
        note = (
            f"rating unknown: {', '.join(missing_ratings)}"
            if missing_ratings
            else f"stress not computed: {', '.join(missing_stresses)}"
        )
        return Finding(
            stress=None, limit=None, margin=None, ok=False, severity="warn", note=note, **common
        )
    stress, limit, margin = rule.check(stresses, part, policy)
    stress, limit, margin = float(stress), float(limit), float(margin)
    # Rule.check gives an infinite limit only for "no limit set" (an infinite rating comes back
    # NaN, "cannot evaluate" below)
    if math.isinf(limit) and math.isfinite(stress):  # a rule whose limit is optional
        note = ""
        limit_out, margin_out = None, None
        if rule.id == "whole.standby_power":
            note = standby_note(stress)
        else:
            note = "no limit set"
        return Finding(
            stress=stress, limit=limit_out, margin=margin_out, ok=True, severity="pass",
            note=note, **common,
        )  # fmt: skip
    if not (math.isfinite(stress) and math.isfinite(limit) and math.isfinite(margin)):
        # an infinite rating or a stress the engine could not compute: never a pass
        return Finding(
            stress=stress if math.isfinite(stress) else None,
            limit=limit if math.isfinite(limit) else None,
            margin=None,
            ok=False,
            severity="fail",
            note="cannot evaluate: "
            + ("stress" if not math.isfinite(stress) else "limit")
            + " is not a finite number",
            **common,
        )
    ok = bool(stress <= limit)
    note = ""
    if rule.id == "bleeder.discharge" and bool(stresses.get("discharge_exempt")):
        note = "exempt under the profile"
    if rule.id == "x_cap.safety_class" and part is not None:
        note = f"class {part.safety_class}" + ("" if ok else " is not an X subclass")
    if rule.id in PULSE_COUNT_RULES and part is not None:
        note = pulse_count_note(rule.id, float(stresses["switch_ons"]), part)
    if rule.id == "whole.end_of_life_current":
        note = f"loss {float(stresses[EOL_LOSS_KEY]):.1%} ({stresses.get(EOL_NOTE_KEY, '')})"
    waiver = rule.waiver(stresses) if (not ok and rule.waiver is not None) else None
    if waiver:
        return Finding(
            stress=stress, limit=limit, margin=margin, ok=False, severity="warn",
            note=waiver, waived=True, **common,
        )  # fmt: skip
    return Finding(
        stress=stress,
        limit=limit,
        margin=margin,
        ok=ok,
        severity="pass" if ok else "fail",
        note=note,
        **common,
    )


#: rules whose limit is derated for the pulse count (``switch_ons``)
PULSE_COUNT_RULES: Final[frozenset[str]] = frozenset(
    {"fuse.inrush_i2t", "series_r.switch_on_energy"}
)


def pulse_count_note(rule_id: str, switch_ons: float, part: RatedPart) -> str:
    """The derating a pulse-count rule applied, for its finding.

    Example: fuse.inrush_i2t, 30000 switch-ons, a fuse of unstated type -> '30000 switch-ons:
    0.257 of the melting I^2t (type not stated: taken as fast-acting)'.
    """
    if rule_id == "fuse.inrush_i2t":
        lag = part.fuse_time_lag
        fraction = float(fuse_pulse_fraction(switch_ons, lag))
        kinds = {1.0: "time-lag", 0.0: "fast-acting"}
        kind = kinds.get(lag, "type not stated: taken as fast-acting")
        return f"{switch_ons:.0f} switch-ons: {fraction:.3g} of the melting I^2t ({kind})"
    fraction = float(pulse_curve_fraction(RESISTOR_PULSE_CURVE, switch_ons))
    return f"{switch_ons:.0f} switch-ons: {fraction:.3g} of the single-pulse energy"


def blocking(findings: Sequence[Finding]) -> list[Finding]:
    """The findings that refuse a design: every failure and every warning, except a waived
    one (a rule's waiver, e.g. the fuse against a shorted IEC 60384-14 X capacitor)."""
    return [f for f in findings if f.severity != "pass" and not f.waived]


def standby_note(no_load_w: float) -> str:
    """The note beside the no-load power when no standby limit is set: the figure against the
    common 0.5 W off/standby limit (EU Regulation 2023/826 [S]).

    Example: 0.62 W -> 'no standby limit set (--standby-limit, --product-class); 0.62 W is
    above the common 0.5 W limit (EU 2023/826)'.
    """
    where = "within" if no_load_w <= COMMON_STANDBY_LIMIT_W else "above"
    return (
        f"no standby limit set (--standby-limit, --product-class); {no_load_w:.3g} W is {where} "
        f"the common {COMMON_STANDBY_LIMIT_W:g} W limit (EU 2023/826)"
    )


def standby_record(no_load_w: float, policy: Policy, source: str | None = None) -> dict:
    """The no-load power against the policy's standby limit (None: no limit) as a record:
    ``no_load_real_power_w``, ``standby_limit_w``, ``ok``, ``note``, ``source`` of the limit.

    Example: 0.906 W, no limit -> ok True, note '... above the common 0.5 W limit ...';
    0.906 W against 0.5 W -> ok False.
    """
    lim = policy.standby_limit_w
    if lim is None:
        return dict(
            no_load_real_power_w=no_load_w, standby_limit_w=None, ok=True,
            note=standby_note(no_load_w), source=None,
        )  # fmt: skip
    ok = bool(no_load_w <= lim)
    return dict(
        no_load_real_power_w=no_load_w,
        standby_limit_w=float(lim),
        ok=ok,
        note=f"{no_load_w:.3g} W {'within' if ok else 'above'} the standby limit {lim:g} W",
        source=source,
    )


def summarise(findings: Sequence[Finding]) -> dict[str, int]:
    """Counts of each severity: {'fail': n, 'warn': n, 'pass': n}."""
    counts = {"fail": 0, "warn": 0, "pass": 0}
    for finding in findings:
        counts[finding.severity] += 1
    return counts
