"""`dropper audit`: a finished BOM against the stresses its circuit puts on each part.

``bom`` reads the file (CSV, TSV, XLSX; header spellings mapped by rapidfuzz; grouped references
expanded), ``ratings`` reads each line's ratings from its text, ``roles`` decides which part does
which job, ``evaluate`` runs the engine and the shared rule engine (``selector.rules``).
"""

from __future__ import annotations

from .bom import BomPart, BomTable, expand_refs, map_headers, read_bom
from .ratings import Ratings, kind_of, read_ratings
from .roles import AUDIT_ROLES, RoleMap, infer_roles, load_roles_file, parse_role_options

__all__ = [
    "AUDIT_ROLES",
    "AuditResult",
    "audit_bom",
    "audit_result_dict",
    "BomPart",
    "BomTable",
    "Ratings",
    "RoleMap",
    "expand_refs",
    "infer_roles",
    "kind_of",
    "load_roles_file",
    "map_headers",
    "parse_role_options",
    "read_bom",
    "read_ratings",
]


def __getattr__(name: str):
    # the evaluation imports the engine and the rules: loaded on first use only
    if name in ("AuditResult", "audit_bom", "audit_result_dict"):
        from . import evaluate

        return getattr(evaluate, name)
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
