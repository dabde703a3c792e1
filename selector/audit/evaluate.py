"""The audit itself: a BOM, its roles and the circuit options -> findings from the shared rules.

Per board: read each line's ratings (:mod:`.ratings`, :mod:`.rated_parts`), assign roles
(:mod:`.roles`), fill a rating the line lacks from the best-matching catalogue family
(:mod:`.fill`, shown as "assumed from family ..."), build the engine's
:class:`~selector.engine.Circuit` from the BOM's values, analyse it at every corner
(:func:`selector.engine.analyse`) and run the rule engine that ``design`` uses
(:func:`selector.rules.evaluate`) (:mod:`.board`). Nothing here decides whether a part passes:
the rules do. This module reads the file, applies the roles the user gave and runs the boards.

The result's :meth:`AuditResult.to_dict` is the JSON document of ``dropper audit --json`` and
the hook a report writer calls (:func:`audit_result_dict`, :mod:`.results`).
"""

from __future__ import annotations

from collections.abc import Callable, Collection, Mapping
from pathlib import Path
from typing import Any

from ..errors import BadRowError, BadValueError
from .board import AuditSetup, audit_board
from .bom import BomPart, read_bom
from .corners import corner_text, corners_of
from .fill import CatalogueIndex, fill_from_catalogue
from .rated_parts import line_ratings, rated_part, rule_fields
from .ratings import Ratings
from .results import AuditFinding, AuditResult, BoardAudit, audit_result_dict
from .roles import infer_roles, load_roles_file

__all__ = [
    "AuditFinding",
    "CatalogueIndex",
    "AuditResult",
    "BoardAudit",
    "audit_bom",
    "audit_result_dict",
    "corner_text",
    "corners_of",
    "fill_from_catalogue",
    "rated_part",
]


def audit_bom(
    path: str | Path,
    *,
    mains: Any,
    conditions: Any,
    tolerances: Any,
    pinned_tolerances: Collection[str] = (),
    load: Any = None,
    regulator: Any = None,
    topology: str | None = None,
    policy: Any = None,
    sheet: str | None = None,
    encoding: str | None = None,
    columns: Mapping[str, str] | None = None,
    roles: Mapping[str, str] | None = None,
    roles_file: str | Path | None = None,
    catalogue: Any = None,
    circuit_defaults: Mapping[str, Any] | None = None,
    analyse: Callable[..., Any] | None = None,
    evaluate: Callable[..., Any] | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> AuditResult:
    """Audit a BOM file: one :class:`BoardAudit` per board (a ``Board`` column splits them).

    ``mains``, ``conditions``, ``tolerances``, ``load``, ``regulator`` are the engine's
    dataclasses (from the shared circuit options); ``topology`` None means "as the BOM shows"
    (a bridge part or four diodes: bridge; one diode: half-wave). ``roles`` maps designators
    (``"C1"`` or ``"BOARD:C1"``) to roles and wins over ``roles_file`` and inference.
    ``catalogue`` is a ``parts_frame`` DataFrame used to fill missing ratings (None: no fill).
    ``circuit_defaults`` gives engine values the BOM does not carry (``diode_drop_v``, ...).
    A tolerance the BOM states replaces the one in ``tolerances`` unless its name
    (``cap_tol``, ``r_tol``, ``zener_tol``) is in ``pinned_tolerances`` (the user set it).
    Identical boards are analysed once. ``analyse`` and ``evaluate`` replace
    :func:`selector.engine.analyse` and :func:`selector.rules.evaluate` (same signatures): a
    caller that needs the circuit, its tolerances and rated parts (``dropper yield``) wraps them.
    Raises BadRowError / BadValueError for bad input.
    """
    from ..engine import Circuit, Load
    from ..rules import evaluate as rules_evaluate

    if analyse is None:
        from ..engine import analyse as analyse_fn
    else:
        analyse_fn = analyse
    table = read_bom(path, sheet=sheet, encoding=encoding, columns=columns)
    common_file, per_board_file = ({}, {}) if roles_file is None else load_roles_file(roles_file)
    boards = table.boards
    for name in per_board_file:
        if name not in boards:
            raise BadValueError(
                f"roles file {roles_file}: board '{name}' is not in the BOM "
                f"(boards: {', '.join(b or '(unnamed)' for b in boards)})"
            )
    if "role" in table.column_map:
        from .roles import _role_name

        for line in table.parts:
            if line.role:
                try:
                    _role_name(line.role, "")
                except BadValueError as exc:
                    raise BadRowError(
                        table.path, line.row, table.column_map["role"], f"{line.ref}: {exc}"
                    ) from None
    cli = {ref.upper(): role_name for ref, role_name in (roles or {}).items()}
    if len(boards) > 1:
        everywhere = {line.ref.upper() for line in table.parts}
        for ref in list(common_file) + [k for k in cli if ":" not in k]:
            if ref not in everywhere:
                raise BadValueError(f"a role names {ref}, which no board of the BOM has")
    if catalogue is not None and not isinstance(catalogue, CatalogueIndex):
        catalogue = CatalogueIndex(catalogue)
    setup = AuditSetup(
        mains=mains,
        conditions=conditions,
        tolerances=tolerances,
        load=load or Load(),
        regulator=regulator,
        topology=topology,
        policy=policy,
        catalogue=catalogue,
        circuit_defaults=dict(circuit_defaults or {}),
        fields_by_role=rule_fields(),
        pinned=frozenset(pinned_tolerances),
        cache={},
        analyse=analyse_fn,
        circuit_cls=Circuit,
        rules_evaluate=evaluate or rules_evaluate,
    )
    ratings_memo: dict[Any, Ratings] = {}
    results: list[BoardAudit] = []
    by_board: dict[str, list[BomPart]] = {}
    for line in table.parts:
        by_board.setdefault(line.board, []).append(line)
    for i, board in enumerate(boards):
        parts = by_board[board]
        explicit: dict[str, str] = {}
        how: dict[str, str] = {}
        for source, mapping in (
            ("roles file", common_file),
            ("roles file", per_board_file.get(board, {})),
        ):
            for ref, role_name in mapping.items():
                explicit[ref] = role_name
                how[ref] = source
        for key, role_name in cli.items():
            key_board, sep, ref = key.rpartition(":")
            if not sep:
                explicit[key], how[key] = role_name, "given"
            elif key_board == board.upper():
                explicit[ref], how[ref] = role_name, "given"
        if explicit and len(boards) > 1:
            refs = {line.ref.upper() for line in parts}
            for ref in [ref for ref in explicit if ref not in refs]:
                explicit.pop(ref)  # a role for every board names a part this board lacks
        items = []
        for line in parts:
            given = explicit.get(line.ref.upper())
            if given is None and line.role:
                from .roles import _role_name

                given = _role_name(line.role)
            items.append((line, line_ratings(table, line, ratings_memo, given)))
        roles_map = infer_roles(board, items, explicit, explicit_how=how)
        results.append(audit_board(table, roles_map, setup))
        if progress is not None:
            progress(i + 1, len(boards))
    return AuditResult(table=table, boards=results)
