"""Running the rule table on one analysed circuit: ``evaluate`` and ``summarise``.

``evaluate`` applies every applicable rule of ``RULES`` to every part of its role (and the
'whole' rules once) and returns one ``Finding`` each. A rating the part lacks or a stress the
analysis lacks gives a 'warn' finding, never a silent pass.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from typing import Any

from ..policy import Policy
from .parts import Finding, RatedPart
from .stresses import stresses_from_analysis
from .table import RULES, Rule


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
    return Finding(
        stress=stress,
        limit=limit,
        margin=margin,
        ok=ok,
        severity="pass" if ok else "fail",
        note=note,
        **common,
    )


def summarise(findings: Sequence[Finding]) -> dict[str, int]:
    """Counts of each severity: {'fail': n, 'warn': n, 'pass': n}."""
    counts = {"fail": 0, "warn": 0, "pass": 0}
    for finding in findings:
        counts[finding.severity] += 1
    return counts
