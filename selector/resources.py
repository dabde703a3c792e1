"""Where the package's data lives: the open catalogue files and the alembic migrations.

In a source checkout (or an editable install) they are the top-level ``catalogue/`` and
``migrations/`` folders; in a built wheel they are shipped as ``selector/_data/...``.
"""

from __future__ import annotations

from pathlib import Path

from .errors import CatalogueError

__all__ = ["catalogue_dir", "migrations_dir"]

_PACKAGE = Path(__file__).resolve().parent


def _find(name: str) -> Path:
    for candidate in (_PACKAGE.parent / name, _PACKAGE / "_data" / name):
        if candidate.is_dir():
            return candidate
    raise CatalogueError(f"the '{name}' data folder is missing from this installation")


def catalogue_dir() -> Path:
    """The folder holding the catalogue's data files (family templates, standards tables)."""
    return _find("catalogue")


def migrations_dir() -> Path:
    """The alembic script folder (env.py and versions/)."""
    return _find("migrations")
