"""dropper: parts selection, worst-case checking and BOM auditing for capacitive-dropper
(transformerless, non-isolated) mains power supplies.

The library works in SI floats; ``selector.units`` reads and prints engineering notation at the
edges, ``selector.cli`` is the command line.
"""

from __future__ import annotations

__version__ = "0.1.0"
__all__ = ["__version__"]
