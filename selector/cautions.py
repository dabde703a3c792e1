"""Safety cautions printed with every output that proposes or accepts a design.

Wording is this project's own; the facts are common practice for non-isolated mains supplies
(DOMAIN.md section 8). Short, at the end, never hidden.
"""

from __future__ import annotations

from typing import Final

__all__ = ["CAUTIONS", "cautions_block"]

CAUTIONS: Final[tuple[str, ...]] = (
    "NOT ISOLATED: every node of this supply, the DC output and the load included, sits at "
    "mains potential. Touching any of it can kill.",
    "Live and neutral can be swapped by any plug or socket: treat both mains wires, and the "
    "output, as live.",
    "Build it into a closed enclosure with creepage and clearance distances rated for mains; "
    "nothing the user can touch may connect to the circuit.",
    "Fuse the supply (or use a fusible resistor) so that a shorted X capacitor or rectifier "
    "cannot start a fire.",
    "Power it on the bench only through an isolating transformer; probe it with that in place.",
    "These figures support engineering judgement; they do not replace it. Local electrical "
    "codes, the product's safety standard and a licensed, qualified person have the last word.",
)


def cautions_block() -> str:
    """The cautions as a short plain-text block for terminal output."""
    lines = ["Safety cautions:"] + [f"  ! {text}" for text in CAUTIONS]
    return "\n".join(lines)
