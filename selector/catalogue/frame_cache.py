"""The parts frame of a SQLite catalogue, cached on disk beside the database file.

``dropper design`` and ``dropper audit`` read the whole catalogue as one pandas DataFrame
(:func:`selector.catalogue.query.parts_frame`). Making it costs more than reading it back: it
imports SQLAlchemy, checks the schema and converts every row. :func:`catalogue_frame` keeps the
frame in ``<database file>.frame.pkl`` and reads the database's state with the standard
library's ``sqlite3`` only, so a warm start imports neither SQLAlchemy nor alembic.

**File.** A magic line, the key (hex) on the second line, then the frame pickled by the standard
library. It is written through a temporary file and ``os.replace`` (never half-written; of two
concurrent writers the last one wins, and both wrote a whole, valid file), is private to its
owner (mode 0600), and is read only when owned by the current user and not writable by others
(a pickle can run code, so a planted file must not be loaded). Anything unreadable, foreign or
of another key is ignored and replaced by the next read from the database.

**Key.** SHA-256 over :data:`FRAME_VERSION`, the pandas version and the database's state, read
in one read transaction: schema revision, stored data checksum and build time
(``catalogue_meta``), ``count(*)`` and ``max(id)`` of ``parts``, the *file change counter* of the
SQLite header (bytes 24-27, which SQLite increments on every committed write in rollback-journal
mode: SQLite file format, database header), and the file's size, modification time and inode.
So any import, ratings change, rebuild, migration, or replacement of the file gives a new key.
While the state is read the transaction holds SQLite's shared lock, so no writer can commit in
between. A frame read through SQLAlchemy is stored only when the state read before and after it
is the same, so the stored frame belongs to its key.

**When the cache is not used.** The state must show the schema at the head revision
(:func:`~selector.catalogue.fingerprint.quick_head_revision`) and the stored data checksum equal
to the installed data files' (:func:`~selector.catalogue.fingerprint.cached_data_checksum`);
otherwise :func:`~selector.catalogue.db.open_catalogue` first migrates or rebuilds, as before.
Non-file SQLite URLs and other servers (PostgreSQL) are always read through SQLAlchemy,
without a cache.

**WAL mode** (dropper switches writable files to it, :mod:`selector.catalogue.locking`). The
header's change counter does not move on every commit there (SQLite file format: "might not be
incremented on each transaction in WAL mode"), and a writer may commit while the state is read.
The key then also holds ``catalogue_meta.write_generation``, which every dropper write counts
up in its own transaction (so the read transaction's snapshot gives a consistent value), and
the ``-wal`` file's size, modification time and 32-byte header (salts and checkpoint number),
which move with any commit, also one made by another program, until the next checkpoint
writes the pages into the database file (whose size and time then move). As before, a frame is
stored only when the state read before and after it is the same.

Bump :data:`FRAME_VERSION` whenever ``parts_frame`` changes what it returns.
"""

from __future__ import annotations

import hashlib
import json
import os
import pickle
import sqlite3
from dataclasses import astuple, dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Final

from ..outputs import write_atomic
from .fingerprint import cached_data_checksum, quick_head_revision
from .paths import resolve_url, sqlite_file

if TYPE_CHECKING:
    from collections.abc import Callable

    import pandas as pd

__all__ = ["CACHE_SUFFIX", "FRAME_VERSION", "FrameRead", "cache_path", "catalogue_frame"]

#: version of the cached frame's layout; bump it when ``query.parts_frame`` changes its output
FRAME_VERSION: Final[str] = "2"  # 2: rows as stored (stock as float), checked on read
#: the cache file is the database file's name plus this suffix
CACHE_SUFFIX: Final[str] = ".frame.pkl"
_MAGIC: Final[bytes] = b"dropper parts frame\n"
_SQLITE_MAGIC: Final[bytes] = b"SQLite format 3\x00"
_META_KEYS: Final[tuple[str, ...]] = ("data_checksum", "built_at", "write_generation")


@dataclass(frozen=True)
class FrameRead:
    """A parts frame and whether it came from the disk cache (``from_cache``)."""

    frame: pd.DataFrame
    from_cache: bool


@dataclass(frozen=True)
class _State:
    revision: str
    data_checksum: str | None
    built_at: str | None
    parts: int
    max_id: int | None
    change_counter: int
    size: int
    mtime_ns: int
    inode: int
    generation: str | None = None
    wal: str | None = None  # WAL mode: the -wal file's size, mtime and header (hex)


def cache_path(db_file: Path | str) -> Path:
    """The cache file of the SQLite database ``db_file``: beside it, named ``<name>.frame.pkl``."""
    p = Path(db_file)
    return p.with_name(p.name + CACHE_SUFFIX)


def _db_state(db_file: Path) -> _State | None:
    """The database's state (see the module doc), or None when it cannot be read this way."""
    try:
        con = sqlite3.connect(f"{db_file.as_uri()}?mode=ro", uri=True, isolation_level=None)
    except (sqlite3.Error, ValueError):
        return None
    try:
        wal_mode = str(con.execute("PRAGMA journal_mode").fetchone()[0]).lower() == "wal"
        con.execute("BEGIN")
        revisions = con.execute("SELECT version_num FROM alembic_version").fetchall()
        # the shared lock is held from here to COMMIT: no writer can change the file meanwhile
        with open(db_file, "rb") as fh:
            header = fh.read(100)
            st = os.fstat(fh.fileno())
        marks = ",".join("?" * len(_META_KEYS))
        meta = dict(
            con.execute(
                f"SELECT key, value FROM catalogue_meta WHERE key IN ({marks})", _META_KEYS
            ).fetchall()
        )
        parts, max_id = con.execute("SELECT count(*), max(id) FROM parts").fetchone()
        wal = _wal_state(db_file) if wal_mode else None
        con.execute("COMMIT")
    except (sqlite3.Error, OSError):
        return None
    finally:
        con.close()
    if len(revisions) != 1 or len(header) < 100 or not header.startswith(_SQLITE_MAGIC):
        return None
    return _State(
        revision=str(revisions[0][0]),
        data_checksum=meta.get("data_checksum"),
        built_at=meta.get("built_at"),
        parts=int(parts),
        max_id=None if max_id is None else int(max_id),
        change_counter=int.from_bytes(header[24:28], "big"),
        size=st.st_size,
        mtime_ns=st.st_mtime_ns,
        inode=st.st_ino,
        generation=meta.get("write_generation"),
        wal=wal,
    )


def _wal_state(db_file: Path) -> str:
    """The -wal file's size, modification time and header, as text; "" when there is none or
    it is empty (an empty WAL holds no commit: SQLite leaves one behind a read-only reader)."""
    wal = db_file.with_name(db_file.name + "-wal")
    try:
        with open(wal, "rb") as fh:
            st = os.fstat(fh.fileno())
            header = fh.read(32)
    except FileNotFoundError:
        return ""
    if st.st_size == 0:
        return ""
    return f"{st.st_size}:{st.st_mtime_ns}:{header.hex()}"


def _key(state: _State) -> str:
    import pandas as pd

    text = json.dumps([FRAME_VERSION, pd.__version__, *astuple(state)])
    return hashlib.sha256(text.encode()).hexdigest()


def _trusted(st: os.stat_result) -> bool:
    geteuid = getattr(os, "geteuid", None)
    if geteuid is None:  # no owners to compare (Windows)
        return True
    return st.st_uid == geteuid() and not st.st_mode & 0o022


def _load(path: Path, key: str) -> pd.DataFrame | None:
    import pandas as pd

    try:
        with open(path, "rb") as fh:
            if not _trusted(os.fstat(fh.fileno())):
                return None
            if fh.readline() != _MAGIC or fh.readline().rstrip(b"\n") != key.encode():
                return None
            frame = pickle.load(fh)
    except Exception:  # noqa: BLE001 - a broken cache of any kind only means: read the database
        return None
    return frame if isinstance(frame, pd.DataFrame) else None


def _store(path: Path, key: str, frame: pd.DataFrame) -> None:
    data = _MAGIC + key.encode() + b"\n" + pickle.dumps(frame, protocol=pickle.HIGHEST_PROTOCOL)
    try:
        write_atomic(path, data, private=True, make_folder=True)  # a cache: owner only
    except OSError:
        pass  # a folder we cannot write to only costs the database read next time


def _cached(db_file: Path) -> pd.DataFrame | None:
    state = _db_state(db_file)
    if state is None or state.revision != quick_head_revision():
        return None
    if state.data_checksum != cached_data_checksum():
        return None
    return _load(cache_path(db_file), _key(state))


def stock_selection(frame: pd.DataFrame, stock_only: bool, min_stock: int | None = None):
    """The rows design may use: every row that is not withdrawn; with ``stock_only`` only the
    rows of imported lists (``source`` ``import:...``, with or without a stock count); with
    ``min_stock`` (``--in-stock`` at the build quantity) only those whose stock count, where the
    list gives one, is >= ``min_stock``. Index reset."""
    keep = ~frame["withdrawn"].astype(bool).to_numpy()
    if stock_only or min_stock is not None:
        keep &= frame["source"].astype(str).str.startswith("import:").to_numpy()
    if min_stock is not None:
        stock = frame["stock"]
        keep &= (stock.isna() | stock.ge(min_stock).fillna(False)).to_numpy(dtype=bool)
    if keep.all():
        return frame.reset_index(drop=True)
    return frame[keep].reset_index(drop=True)


def _select(frame: pd.DataFrame, stock_only: bool, min_stock: int | None = None) -> pd.DataFrame:
    return stock_selection(frame, stock_only, min_stock)


def read_catalogue_frame(
    url: str | None = None,
    *,
    stock_only: bool = False,
    progress: Callable[[int, int], None] | None = None,
    min_stock: int | None = None,
) -> FrameRead:
    """:func:`catalogue_frame`, telling whether the frame came from the cache."""
    from .row_ranges import drop_unusable_rows

    url = resolve_url(url)
    db_file = sqlite_file(url)
    if db_file is not None:
        frame = _cached(db_file)
        if frame is not None:
            return FrameRead(
                drop_unusable_rows(_select(frame, stock_only, min_stock)), from_cache=True
            )
    from .db import open_catalogue
    from .query import parts_frame

    engine = open_catalogue(url, progress)
    try:
        if db_file is None:
            return FrameRead(
                parts_frame(engine, stock_only=stock_only, min_stock=min_stock), from_cache=False
            )
        # closing the pool's connections checkpoints a WAL that the first-use build (or a
        # migration) just filled, so the key below is the one the next start will read
        engine.dispose()
        before = _db_state(db_file)
        # the cache holds the rows as stored; the range check runs on every read, so a
        # change of selector.ranges never meets a stale cache
        frame = parts_frame(engine, checked=False)
        if before is not None and _db_state(db_file) == before:
            _store(cache_path(db_file), _key(before), frame)
    finally:
        engine.dispose()
    return FrameRead(drop_unusable_rows(_select(frame, stock_only, min_stock)), from_cache=False)


def catalogue_frame(
    url: str | None = None,
    *,
    stock_only: bool = False,
    progress: Callable[[int, int], None] | None = None,
    min_stock: int | None = None,
) -> pd.DataFrame:
    """``parts_frame(open_catalogue(url), stock_only=stock_only)``, served from the disk cache
    beside a SQLite file when the database has not changed since the cache was written.

    ``url``: as for :func:`~selector.catalogue.paths.resolve_url` (None: ``$DROPPER_DB`` or the
    user's file). ``progress`` is handed to ``open_catalogue`` (a first-use build). The frame is
    equal (``pandas.testing.assert_frame_equal``) to the one read from the database.
    ``stock_only`` / ``min_stock``: see :func:`~selector.catalogue.query.stock_selection`
    (withdrawn rows are never in the frame). Raises CatalogueError as ``open_catalogue`` does.
    """
    return read_catalogue_frame(
        url, stock_only=stock_only, progress=progress, min_stock=min_stock
    ).frame
