"""What an audit returns: findings per board, and the JSON document made from them.

``AuditFinding`` is one rule on one part as the audit reports it, ``BoardAudit`` one board,
``AuditResult`` the whole file; ``audit_result_dict`` is the ``dropper audit --json`` document
and the report writer's input.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any, Final

from ..cautions import CAUTIONS
from .bom import BomTable
from .roles import RoleMap


@dataclass(frozen=True)
class AuditFinding:
    """One rule on one part (or the whole circuit), as the audit reports it (SI units)."""

    board: str
    ref: str | None
    role: str
    rule: str
    stress: float | None
    rating: float | None
    unit: str
    margin: float | None
    severity: str
    source: str
    corner: str | None
    note: str = ""
    description: str = ""


@dataclass
class BoardAudit:
    """One board: its roles, the circuit built from it, its findings."""

    board: str
    roles: RoleMap
    circuit: Any
    findings: list[AuditFinding]
    assumed: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    #: the life section (selector.rules.life.life_record)
    life: dict[str, Any] = field(default_factory=dict)


@dataclass
class AuditResult:
    """Everything the audit found, board by board; ``to_dict`` gives the JSON document."""

    table: BomTable
    boards: list[BoardAudit]
    notes: list[str] = field(default_factory=list)

    @property
    def findings(self) -> list[AuditFinding]:
        return [finding for board in self.boards for finding in board.findings]

    @property
    def summary(self) -> dict[str, int]:
        counts = {"fail": 0, "warn": 0, "pass": 0}
        for finding in self.findings:
            counts[finding.severity] += 1
        return counts

    def to_dict(self) -> dict[str, Any]:
        return audit_result_dict(self)


def audit_result_dict(result: AuditResult) -> dict[str, Any]:
    """The audit as one JSON-ready dict (SI numbers): the ``--json`` document and the report
    writer's input. Keys: ``file``, ``sheet``, ``column_map`` (field -> header),
    ``ignored_columns``, ``roles`` (one entry per part), ``boards`` (circuit values per board),
    ``findings``, ``summary`` {fail, warn, pass}, ``notes``, ``cautions``."""
    table = result.table
    roles = []
    boards = []
    for board in result.boards:
        for assigned in board.roles.parts:
            ratings = assigned.ratings
            line = assigned.part
            roles.append(
                {
                    "board": board.board,
                    "ref": line.ref,
                    "row": line.row,
                    "role": assigned.role + ("+fuse" if assigned.also_fuse else ""),
                    "how": assigned.how,
                    "kind": ratings.kind,
                    "value": ratings.value,
                    "value_unit": _VALUE_UNIT.get(ratings.kind),
                    "text": " ".join(text for text in (line.value, line.description) if text),
                    "mpn": line.mpn,
                    "assumed": dict(ratings.assumed),
                }
            )
        circuit = board.circuit
        boards.append(
            {
                "board": board.board,
                "topology": getattr(circuit, "topology", None),
                "x_capacitance_f": getattr(circuit, "x_capacitance_f", None),
                "series_resistance_ohm": getattr(circuit, "series_resistance_ohm", None),
                "bleeder_resistance_ohm": getattr(circuit, "bleeder_resistance_ohm", None),
                "zener_voltage_v": getattr(circuit, "zener_voltage_v", None),
                "reservoir_f": getattr(circuit, "reservoir_f", None),
                "inferred": list(board.roles.notes),
                "assumed": list(board.assumed),
                "notes": list(board.notes),
                "life": board.life,
            }
        )
    findings = [dataclasses.asdict(finding) for finding in _ordered(result.findings)]
    return {
        "file": table.path,
        "sheet": table.sheet,
        "encoding": table.encoding,
        "column_map": dict(table.column_map),
        "ignored_columns": list(table.ignored_columns),
        "roles": roles,
        "boards": boards,
        "findings": findings,
        "summary": result.summary,
        "life": result.boards[0].life if result.boards else None,
        "notes": list(table.notes) + list(result.notes),
        "cautions": list(CAUTIONS),
    }


_SEVERITY_ORDER: Final[dict[str, int]] = {"fail": 0, "warn": 1, "pass": 2}
_VALUE_UNIT: Final[dict[str, str]] = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "ceramic_capacitor": "F",
    "capacitor": "F",
    "electrolytic": "F",
    "resistor": "ohm",
    "zener": "V",
    "fuse": "A",
}


def _ordered(findings: Sequence[AuditFinding]) -> list[AuditFinding]:
    """Failures first, then warnings, then passes (stable within each)."""
    return sorted(findings, key=lambda finding: _SEVERITY_ORDER[finding.severity])
