"""The rule engine shared by `dropper design` and `dropper audit`.

Each rule is one pure function ``(stresses, part, policy) -> (stress, limit)`` in SI units that
works on floats and on numpy arrays alike (the design solver screens whole candidate arrays with
the same functions the auditor reports with). A rule passes when ``stress <= limit``; its margin
is ``(limit - stress) / limit`` (the fraction of the limit left; negative = violated). For rules
of the form "rating >= requirement" the requirement is the stress and the rating the limit.

``evaluate(parts_by_role, analysis, policy)`` runs every registered rule on one analysed circuit
and returns ``Finding`` records. A rating the part lacks gives a 'warn' finding ("rating
unknown"), never a silent pass. Sources: DOMAIN.md section 4 and 5; marks [S] checked in a
published source, [M] from memory, [P] common practice, no source.

Modules: ``parts`` (RatedPart, Finding, roles), ``limits`` (margin, derating, discharge time),
one module of stress-and-limit functions per role group (``x_capacitor``, ``resistors``,
``semiconductors``, ``reservoir``, ``fuse``, ``whole``), ``table`` (the Rule record and the
RULES table), ``stresses`` (analysis -> flat stresses and corners), ``evaluation`` (evaluate,
summarise).

Adding a rule: write a function ``name_of_stress_vs_limit(stresses, part, policy) ->
(stress, limit)`` in its role's module, using only numpy operations on the stress keys and the
part's attributes (``RatedPart``), then add one entry to ``RULES`` in ``table.py``; add a
worked-example test in tests/test_rules.py.
"""

from __future__ import annotations

from .evaluation import blocking, evaluate, standby_note, standby_record, summarise
from .limits import (
    RESISTOR_GENERIC_DERATING_C,
    ZENER_GENERIC_DERATING_C,
    derated_power,
    discharge_time,
    margin,
)
from .parts import (
    ARRANGEMENTS,
    ROLES,
    X_CLASS_IMPULSE_V,
    Finding,
    RatedPart,
    fuse_time_lag_of_text,
    is_iec60384_14_class,
    rated_part_from_row,
    x_class_impulse_v,
)
from .stresses import stresses_from_analysis
from .table import RULES, X_CAP_IEC60384_14_KEY, Rule, rules_for

__all__ = [
    "ARRANGEMENTS",
    "RESISTOR_GENERIC_DERATING_C",
    "ROLES",
    "RULES",
    "X_CAP_IEC60384_14_KEY",
    "X_CLASS_IMPULSE_V",
    "ZENER_GENERIC_DERATING_C",
    "Finding",
    "RatedPart",
    "Rule",
    "derated_power",
    "discharge_time",
    "evaluate",
    "fuse_time_lag_of_text",
    "is_iec60384_14_class",
    "margin",
    "rated_part_from_row",
    "rules_for",
    "stresses_from_analysis",
    "blocking",
    "standby_note",
    "standby_record",
    "summarise",
    "x_class_impulse_v",
]
