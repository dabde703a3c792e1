"""The design solver: the cheapest (or smallest) compliant part set for a dropper requirement."""

from __future__ import annotations

from .bounds import CURRENT_SLACK, SCREEN_SLACK
from .requirement import Design, DesignPart, Requirement, objective_key
from .result import bom_rows, design_to_dict, write_bom
from .search import design

__all__ = [
    "CURRENT_SLACK",
    "SCREEN_SLACK",
    "Design",
    "DesignPart",
    "Requirement",
    "bom_rows",
    "design",
    "design_to_dict",
    "objective_key",
    "write_bom",
]
