"""Command-line interface: a thin layer over the library (the only package that imports typer).

Each module in this package registers its commands on the one ``app``; ``main`` is the console
script ``dropper``.
"""

from __future__ import annotations

from importlib import import_module

from ._app import app

__all__ = ["app", "main"]

# command modules, in the order their commands appear in --help
_COMMAND_MODULES = (
    "snap",
    "parts",
    "parts_import",
    "parts_ratings",
    "check",
    "design",
    "audit",
    "yield_cmd",
)
for _name in _COMMAND_MODULES:
    import_module(f"{__name__}.{_name}")


def main() -> None:
    """Entry point of the ``dropper`` console script."""
    app()
