"""Where the catalogue and its caches live; nothing here imports the database layer.

* :func:`resolve_url` picks the database: ``--db`` value, else ``$DROPPER_DB``, else the SQLite
  file ``catalogue.sqlite`` in the user's data folder (:func:`default_path`). A value without
  ``://`` is a SQLite file path.
* :func:`sqlite_file` tells whether a URL names a plain SQLite file (the only kind of database
  whose parts frame is cached on disk, see :mod:`selector.catalogue.frame_cache`).
* :func:`cache_dir` is the user's cache folder for dropper (``$XDG_CACHE_HOME/dropper``).

Kept apart from :mod:`selector.catalogue.db` so that a command whose catalogue is cached can
start without importing SQLAlchemy.
"""

from __future__ import annotations

import os
from pathlib import Path
from typing import Final

__all__ = ["ENV_VAR", "cache_dir", "default_path", "resolve_url", "sqlite_file"]

ENV_VAR: Final[str] = "DROPPER_DB"

# URL prefixes of a SQLite file with the standard library driver (sqlalchemy's default)
_SQLITE_PREFIXES: Final[tuple[str, ...]] = ("sqlite:///", "sqlite+pysqlite:///")


def default_path() -> Path:
    """The per-user catalogue file: ``$XDG_DATA_HOME/dropper/catalogue.sqlite`` (or under
    ``~/.local/share`` when XDG_DATA_HOME is unset)."""
    base = os.environ.get("XDG_DATA_HOME") or str(Path.home() / ".local" / "share")
    return Path(base) / "dropper" / "catalogue.sqlite"


def cache_dir() -> Path:
    """The per-user cache folder: ``$XDG_CACHE_HOME/dropper`` (or ``~/.cache/dropper``)."""
    base = os.environ.get("XDG_CACHE_HOME") or str(Path.home() / ".cache")
    return Path(base) / "dropper"


def resolve_url(db: str | None = None) -> str:
    """The SQLAlchemy URL of the catalogue.

    Order: ``db`` (a ``--db`` option), the DROPPER_DB environment variable, the per-user file
    (:func:`default_path`). A value without ``://`` is taken as a SQLite file path.

    >>> resolve_url("sqlite:///x.sqlite")
    'sqlite:///x.sqlite'
    """
    for candidate in (db, os.environ.get(ENV_VAR)):
        if candidate is not None and candidate.strip():
            text = candidate.strip()
            if "://" in text:
                return text
            return f"sqlite:///{Path(text).expanduser().resolve()}"
    return f"sqlite:///{default_path()}"


def sqlite_file(url: str) -> Path | None:
    """The file behind a SQLite file URL (absolute), or None for anything else.

    None also for in-memory databases, ``file:`` URIs and URLs with a query string or a
    percent sign, whose reading is left to SQLAlchemy: a cache may only be used where the file
    is certain.

    >>> sqlite_file("sqlite:////tmp/c.sqlite").as_posix()
    '/tmp/c.sqlite'
    >>> sqlite_file("postgresql://host/db") is None
    True
    """
    for prefix in _SQLITE_PREFIXES:
        if url.startswith(prefix):
            database = url[len(prefix) :]
            break
    else:
        return None
    if not database or database == ":memory:" or database.startswith("file:"):
        return None
    if any(ch in database for ch in "?%#"):
        return None
    return Path(database).absolute()
