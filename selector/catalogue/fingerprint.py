"""Cheap checks made at every start: the schema head and the data checksum, without the heavy
modules that compute them exactly.

* :func:`quick_head_revision` reads the newest migration's id from the text of
  ``migrations/versions/*.py`` (the ``revision`` and ``down_revision`` assignments), instead of
  loading alembic's script directory (which imports alembic and every migration). It returns
  None when the files do not give exactly one head, so callers fall back to alembic.
* :func:`cached_data_checksum` returns :func:`selector.catalogue.build.data_checksum` remembered
  in ``$XDG_CACHE_HOME/dropper/data-checksum.json`` under the size, modification time and inode
  of every file below the data folder and of ``build.py`` (which holds ``BUILDER_VERSION``).
  A change to any of them recomputes it; so does an unreadable cache. The stat key is a
  superset of the files the checksum reads, so it can only recompute too often, never keep a
  stale value (unless a file is rewritten within one timestamp tick at the same size and inode).

Neither imports SQLAlchemy, alembic or numpy.
"""

from __future__ import annotations

import json
import re
from pathlib import Path
from typing import Any, Final

from ..outputs import write_atomic
from ..resources import catalogue_dir, migrations_dir
from .paths import cache_dir

__all__ = ["cached_data_checksum", "quick_head_revision"]

_REVISION = re.compile(r"^revision(?:\s*:\s*[^=]+)?\s*=\s*['\"]([^'\"]+)['\"]\s*$", re.M)
_DOWN = re.compile(r"^down_revision(?:\s*:\s*[^=]+)?\s*=\s*(.+?)\s*$", re.M)
_QUOTED = re.compile(r"['\"]([^'\"]+)['\"]")
_BUILD_PY: Final[Path] = Path(__file__).with_name("build.py")
_CHECKSUM_FILE: Final[str] = "data-checksum.json"
#: data folders remembered at most (several checkouts or installations share one cache)
_MAX_ROOTS: Final[int] = 8


def quick_head_revision(versions: Path | str | None = None) -> str | None:
    """The one revision no other migration names as its ``down_revision``, read from the text
    of the version files in ``versions`` (default: ``migrations/versions``); None when a file
    cannot be read this way or there is not exactly one head (let alembic decide then).

    >>> quick_head_revision() is None or isinstance(quick_head_revision(), str)
    True
    """
    folder = Path(versions) if versions is not None else migrations_dir() / "versions"
    revisions: set[str] = set()
    downs: set[str] = set()
    try:
        files = sorted(folder.glob("*.py"))
        for path in files:
            text = path.read_text(encoding="utf-8")
            revs = _REVISION.findall(text)
            down = _DOWN.findall(text)
            if len(revs) != 1 or len(down) != 1:
                return None
            revisions.add(revs[0])
            if down[0] != "None":
                named = _QUOTED.findall(down[0])
                if not named:
                    return None
                downs.update(named)
    except (OSError, UnicodeError):
        return None
    heads = revisions - downs
    if len(heads) != 1 or not downs <= revisions:
        return None
    return next(iter(heads))


def _stat_key(path: Path) -> list[Any]:
    st = path.stat()
    return [st.st_size, st.st_mtime_ns, st.st_ino]


def _data_stats(base: Path) -> dict[str, Any]:
    files = sorted(p for p in base.rglob("*") if p.is_file())
    return {
        "files": [[p.relative_to(base).as_posix(), *_stat_key(p)] for p in files],
        "builder": _stat_key(_BUILD_PY),
    }


def cached_data_checksum(root: Path | str | None = None) -> str:
    """:func:`selector.catalogue.build.data_checksum` of ``root`` (default: the installed data
    folder), taken from the user's cache while no file below ``root`` and not ``build.py`` has
    changed size, modification time or inode; computed (and remembered) otherwise."""
    base = Path(root) if root is not None else catalogue_dir()
    key = str(base.resolve())
    store = cache_dir() / _CHECKSUM_FILE
    try:
        stats = _data_stats(base)
    except OSError:
        stats = None
    entries: dict[str, Any] = {}
    if stats is not None:
        try:
            loaded = json.loads(store.read_text(encoding="utf-8"))
            if isinstance(loaded, dict):
                entries = loaded
        except (OSError, ValueError):
            entries = {}
        entry = entries.get(key)
        if isinstance(entry, dict) and entry.get("stats") == stats:
            checksum = entry.get("checksum")
            if isinstance(checksum, str):
                return checksum
    from .build import data_checksum

    checksum = data_checksum(base)
    if stats is not None:
        entries.pop(key, None)
        while len(entries) >= _MAX_ROOTS:
            entries.pop(next(iter(entries)))
        entries[key] = {"stats": stats, "checksum": checksum}
        try:
            write_atomic(
                store, json.dumps(entries, indent=1).encode(), private=True, make_folder=True
            )
        except OSError:
            pass  # a cache folder we cannot write only costs the checksum next time
    return checksum
