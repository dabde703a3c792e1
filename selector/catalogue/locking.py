"""How dropper writes to a catalogue database, and when it may not.

* **Busy.** A SQLite connection waits up to :func:`busy_timeout_s` for another process's lock
  (``$DROPPER_BUSY_TIMEOUT``, default :data:`BUSY_TIMEOUT_S`). Every write goes through
  :func:`write_transaction`, which takes SQLite's write lock first (``BEGIN IMMEDIATE``) and
  retries within that bound; past it, :class:`~selector.errors.CatalogueBusyError` (exit 4)
  names the file. Nothing is written by a writer that gave up.
* **WAL.** A writable SQLite file is switched to WAL journal mode (persistent in the file):
  readers never block the writer and read the last commit made before they began, so a reader
  during an import or build sees the old catalogue or the new one, never a mix (SQLite
  documentation, "Write-Ahead Logging").
* **Read-only.** A file that cannot be written (the file, or its folder where SQLite makes its
  -wal/-shm/-journal files) is opened as a read-only URI, and every connection of a read-only
  engine sets ``PRAGMA query_only``: queries work, a write raises
  :class:`~selector.errors.ReadOnlyCatalogueError` (exit 2) naming the file.
* **Generation.** Each committed write counts up ``catalogue_meta.write_generation``, which the
  parts-frame cache keys on in WAL mode (:mod:`selector.catalogue.frame_cache`).

The engines themselves are made in one place, :func:`selector.catalogue.db.make_engine`.
"""

from __future__ import annotations

import math
import os
import sqlite3
import time
import weakref
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Final

from sqlalchemy import Connection, Engine, Integer, String, func, inspect
from sqlalchemy.exc import OperationalError

from ..errors import BadValueError, CatalogueBusyError, CatalogueError, ReadOnlyCatalogueError
from .models import CatalogueMeta

__all__ = [
    "BUSY_ENV_VAR",
    "BUSY_TIMEOUT_S",
    "WRITE_GENERATION_KEY",
    "busy_timeout_s",
    "engine_facts",
    "is_read_only",
    "read_only_error",
    "sqlite_problem",
    "write_transaction",
]

#: seconds a writer waits for another process's write lock before "catalogue busy" (exit 4);
#: ``$DROPPER_BUSY_TIMEOUT`` overrides it
BUSY_TIMEOUT_S: Final[float] = 60.0
BUSY_ENV_VAR: Final[str] = "DROPPER_BUSY_TIMEOUT"
#: catalogue_meta key counting committed dropper writes of a SQLite file (the frame cache's key
#: in WAL mode, where the file header's change counter does not move)
WRITE_GENERATION_KEY: Final[str] = "write_generation"
_RETRY_PAUSE_S: Final[float] = 0.05


def busy_timeout_s() -> float:
    """The busy timeout: ``$DROPPER_BUSY_TIMEOUT`` (seconds, 0-3600) or :data:`BUSY_TIMEOUT_S`."""
    text = os.environ.get(BUSY_ENV_VAR, "").strip()
    if not text:
        return BUSY_TIMEOUT_S
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not (math.isfinite(value) and 0.0 <= value <= 3600.0):
        raise BadValueError(f"{BUSY_ENV_VAR}={text!r}: give seconds between 0 and 3600, e.g. 60")
    return value


def sqlite_path(u: Any) -> Path | None:
    """The file of a SQLite URL (None for in-memory databases)."""
    database = u.database or ""
    if database in ("", ":memory:") or database.startswith("file::memory:"):
        return None
    if database.startswith("file:"):
        return Path(database[len("file:") :]).expanduser()
    return Path(database).expanduser()


def writable(path: Path) -> bool:
    """Whether dropper may write the SQLite file ``path``: the file (when it exists) and its
    folder (where SQLite makes its -wal, -shm or -journal files) are writable."""
    folder = path.parent
    if path.exists() and not os.access(path, os.W_OK):
        return False
    return not folder.exists() or os.access(folder, os.W_OK)


def _wal_file(path: Path) -> bool:
    """The file is in WAL mode (SQLite file format: read and write version bytes 18-19 are 2)."""
    try:
        with open(path, "rb") as fh:
            header = fh.read(20)
    except OSError:
        return False
    return len(header) == 20 and header[18:20] == b"\x02\x02"


def read_only_url(u: Any, path: Path) -> Any:
    """``u`` as a read-only SQLite URI. A WAL file in a folder where SQLite cannot make its
    -shm file is opened ``immutable`` (SQLite: WAL mode, read-only databases), which is safe
    only because no -wal file exists there: every commit is in the database file."""
    query = {"mode": "ro", "uri": "true"}
    wal = path.with_name(path.name + "-wal")
    if _wal_file(path) and not wal.exists() and not os.access(path.parent, os.W_OK):
        query["immutable"] = "1"
    return u.set(database=f"file:{path.absolute()}", query=query)


#: what make_engine knows of each engine (read-only, its file); weak, so engines still die
_FACTS: weakref.WeakKeyDictionary[Engine, dict[str, Any]] = weakref.WeakKeyDictionary()


def engine_facts(engine: Engine) -> dict[str, Any]:
    """What :func:`~selector.catalogue.db.make_engine` recorded about ``engine`` (a dict it
    fills: ``read_only``, ``file``); empty for engines made elsewhere."""
    return _FACTS.setdefault(engine, {})


def is_read_only(engine: Engine) -> bool:
    """Whether ``engine`` was opened read-only (:func:`make_engine`)."""
    return bool(engine_facts(engine).get("read_only"))


def on_connect_hook(read_only: bool, wal: bool):
    def on_connect(dbapi_conn: Any, _record: Any) -> None:
        cur = dbapi_conn.cursor()
        try:
            cur.execute("PRAGMA foreign_keys=ON")
            if read_only:
                # every write fails ("attempt to write a readonly database"), so a read-only
                # command provably writes nothing, not even a migration
                cur.execute("PRAGMA query_only=ON")
            elif wal and str(cur.execute("PRAGMA journal_mode").fetchone()[0]).lower() != "wal":
                # WAL: readers never block the writer and see the last commit before they began
                # (SQLite, "Write-Ahead Logging"); persistent in the file, so done once
                try:
                    cur.execute("PRAGMA journal_mode=WAL")
                except sqlite3.OperationalError:
                    pass  # another process holds a lock; the next connection tries again
        finally:
            cur.close()

    return on_connect


def where(engine: Engine) -> str:
    """The catalogue named for messages: its file, else its URL without password."""
    file = engine_facts(engine).get("file")
    return str(file) if file else engine.url.render_as_string(hide_password=True)


def sqlite_problem(exc: BaseException, engine: Engine, what: str) -> CatalogueError | None:
    """The dropper error for a SQLite "locked"/"busy" or "read-only" failure, else None."""
    text = str(getattr(exc, "orig", None) or exc).lower()
    if (
        "database is locked" in text
        or "database is busy" in text
        or "database table is locked" in text
    ):
        return CatalogueBusyError(
            f"catalogue busy: {where(engine)} stayed locked by another process for "
            f"{busy_timeout_s():g} s, so {what} could not start; nothing was written. Try again "
            f"when the other import or build has finished (or raise {BUSY_ENV_VAR})"
        )
    if "readonly database" in text or "read-only" in text:
        return read_only_error(engine, what)
    return None


def read_only_error(engine: Engine, what: str) -> ReadOnlyCatalogueError:
    return ReadOnlyCatalogueError(
        f"catalogue {where(engine)} is read-only (the file or its folder cannot be written), "
        f"so {what} cannot write to it; it still serves design, check, audit and parts queries. "
        "Copy it to a writable place or use another --db"
    )


def _begin_immediate(conn: Any, engine: Engine, what: str) -> None:
    """Take SQLite's write lock now (``BEGIN IMMEDIATE``), retrying while another process
    holds it, for at most the busy timeout in all; then :class:`CatalogueBusyError`.

    Taking the lock first means a writer never has to upgrade a read snapshot, which SQLite
    refuses at once in WAL mode (SQLITE_BUSY_SNAPSHOT) instead of waiting."""
    deadline = time.monotonic() + busy_timeout_s()
    while True:
        try:
            conn.exec_driver_sql("BEGIN IMMEDIATE")
            return
        except OperationalError as exc:
            conn.rollback()
            problem = sqlite_problem(exc, engine, what)
            if not isinstance(problem, CatalogueBusyError):
                raise problem or exc from None
            if time.monotonic() >= deadline:
                raise problem from None
            time.sleep(_RETRY_PAUSE_S)


def _bump_generation(conn: Any) -> None:
    table = CatalogueMeta.__table__
    if not inspect(conn).has_table(CatalogueMeta.__tablename__):
        return
    done = conn.execute(
        table.update()
        .where(table.c.key == WRITE_GENERATION_KEY)
        .values(value=func.cast(func.cast(table.c.value, Integer) + 1, String))
    )
    if done.rowcount == 0:
        conn.execute(table.insert().values(key=WRITE_GENERATION_KEY, value="1"))


@contextmanager
def write_transaction(
    engine: Engine, what: str, *, foreign_keys: bool = True
) -> Iterator[Connection]:
    """One write transaction on the catalogue: the one way dropper writes to it.

    On SQLite the write lock is taken first (:func:`_begin_immediate`: bounded retry, then
    exit 4 "catalogue busy"); the commit also counts up ``catalogue_meta.write_generation``. A
    read-only catalogue raises :class:`ReadOnlyCatalogueError` (exit 2) before anything is
    tried. ``foreign_keys=False`` switches SQLite's foreign keys off for the transaction (the
    pragma only works outside one; batch migrations need it). An exception rolls back.
    ``what`` names the job in messages ("the import", "the build")."""
    if is_read_only(engine):
        raise read_only_error(engine, what)
    sqlite = engine.dialect.name == "sqlite"
    try:
        with engine.connect() as conn:
            if sqlite and not foreign_keys:
                conn.exec_driver_sql("PRAGMA foreign_keys=OFF")
                conn.commit()
            try:
                if sqlite:
                    _begin_immediate(conn, engine, what)
                else:
                    conn.begin()
                try:
                    yield conn
                    if sqlite:
                        _bump_generation(conn)
                    conn.commit()
                except BaseException:
                    conn.rollback()
                    raise
            finally:
                if sqlite and not foreign_keys:
                    conn.exec_driver_sql("PRAGMA foreign_keys=ON")
                    conn.commit()
    except OperationalError as exc:
        problem = sqlite_problem(exc, engine, what) if sqlite else None
        if problem is None:
            raise
        raise problem from None
