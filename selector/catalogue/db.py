"""Open, migrate and (re)build the catalogue database.

* :func:`resolve_url` picks the database: ``--db`` value, else ``$DROPPER_DB``, else the SQLite
  file ``catalogue.sqlite`` in the user's data folder (``$XDG_DATA_HOME/dropper`` or
  ``~/.local/share/dropper``). A value without ``://`` is a SQLite file path.
* The schema is made and changed only by the alembic migrations in ``migrations/``
  (:func:`migrate`), driven in process with a configuration built here (no ini file needed).
* :func:`open_catalogue` migrates to head and builds the built-in rows on first use, and rebuilds
  them (keeping imported rows, ``source != 'builtin'``) when the data files' checksum changed.
  Its checks are cheap when nothing changed: the stored revision is compared with the head read
  from the migration files' text and the checksum comes from a cache keyed by file stats
  (:mod:`selector.catalogue.fingerprint`); alembic and the builder are imported only when the
  schema or the data must change.
"""

from __future__ import annotations

import time
from collections.abc import Callable
from datetime import UTC, datetime
from typing import Any, Final

from sqlalchemy import (
    Connection,
    Engine,
    create_engine,
    delete,
    event,
    func,
    inspect,
    select,
    text,
)
from sqlalchemy.engine import make_url
from sqlalchemy.exc import ArgumentError, IntegrityError, SQLAlchemyError
from sqlalchemy.pool import StaticPool

from ..errors import CatalogueBusyError, CatalogueError, ReadOnlyCatalogueError
from ..resources import migrations_dir
from .fingerprint import cached_data_checksum, quick_head_revision
from .locking import (
    busy_timeout_s,
    engine_facts,
    is_read_only,
    on_connect_hook,
    read_only_error,
    read_only_url,
    sqlite_path,
    sqlite_problem,
    where,
    writable,
    write_transaction,
)
from .models import CatalogueMeta, Part
from .paths import ENV_VAR, default_path, mask_secrets, mask_url, resolve_url

__all__ = [
    "ENV_VAR",
    "Progress",
    "alembic_config",
    "build_catalogue",
    "current_revision",
    "default_path",
    "downgrade",
    "head_revision",
    "is_read_only",
    "make_engine",
    "migrate",
    "open_catalogue",
    "read_meta",
    "resolve_url",
    "safe_url",
    "write_transaction",
]

Progress = Callable[[int, int], None]
_CHUNK: Final[int] = 500
_VERSION_TABLE: Final[str] = "alembic_version"


def safe_url(url: str | Engine) -> str:
    """The URL with any password hidden (user info and query string, also when the URL cannot
    be parsed), for messages and output: :func:`selector.catalogue.paths.mask_url`."""
    return mask_url(url.url if isinstance(url, Engine) else url)


def _parse_url(url: str):
    """``make_url(url)``, or CatalogueError (exit 2) naming the URL with its password hidden.

    SQLAlchemy raises ArgumentError for text that is no URL and ValueError for a port that is
    not a number (``postgresql://u:pw@[::1/db`` reads ``:1`` as the port); neither message is
    shown as is, because both quote the URL with its password.
    """
    try:
        return make_url(url)
    except ArgumentError:
        problem = "expected dialect[+driver]://user:password@host:port/database or a file path"
    except (ValueError, TypeError) as exc:
        problem = mask_secrets(str(exc).replace(url, safe_url(url)))
        if "int()" in problem:
            problem = "the port is not a number (an IPv6 host goes in brackets: [::1]:5432)"
    raise CatalogueError(f"cannot read database URL {safe_url(url)}: {problem}") from None


def make_engine(url: str, read_only: bool = False) -> Engine:
    """An engine for ``url`` (a plain path is a SQLite file).

    For a SQLite file: the folder is created; foreign keys are switched on; a busy timeout
    (:func:`busy_timeout_s`) makes a connection wait for another process's lock; a writable
    file is switched to WAL journal mode; a file that cannot be written (file or folder
    read-only, or ``read_only=True``) is opened read-only and every connection refuses writes
    (``PRAGMA query_only``), see :func:`is_read_only`. An in-memory database keeps one shared
    connection."""
    url = resolve_url(url)
    u = _parse_url(url)
    kwargs: dict[str, Any] = {}
    sqlite = u.get_backend_name() == "sqlite"
    path = sqlite_path(u) if sqlite else None
    if sqlite and path is None:
        kwargs = {"poolclass": StaticPool, "connect_args": {"check_same_thread": False}}
    elif sqlite and path is not None:
        if u.query.get("mode") == "ro" or (read_only and not path.exists()) or not writable(path):
            # asked for, or a file we cannot write: SQLite's read-only URI (which also never
            # creates a missing file)
            read_only = True
            if not (u.database or "").startswith("file:"):
                u = read_only_url(u, path)
        if not read_only:
            path.parent.mkdir(parents=True, exist_ok=True)
        kwargs = {"connect_args": {"timeout": busy_timeout_s()}}
    try:
        engine = create_engine(u, **kwargs)
    except (ArgumentError, ImportError) as exc:
        problem = mask_secrets(str(exc))
        raise CatalogueError(f"cannot open catalogue {safe_url(url)}: {problem}") from None
    facts = engine_facts(engine)
    facts["read_only"] = bool(sqlite and path is not None and read_only)
    if path is not None:
        facts["file"] = str(path.absolute())
    if sqlite:
        on_connect = on_connect_hook(facts["read_only"], path is not None)
        event.listen(engine, "connect", on_connect)
    return engine


def alembic_config(connection: Any = None):
    """An alembic Config for ``migrations/`` built in code (``connection`` handed to env.py)."""
    from alembic.config import Config

    cfg = Config()
    cfg.set_main_option("script_location", str(migrations_dir()).replace("%", "%%"))
    if connection is not None:
        cfg.attributes["connection"] = connection
    return cfg


def head_revision() -> str:
    """The newest migration's revision id."""
    from alembic.script import ScriptDirectory

    head = ScriptDirectory.from_config(alembic_config()).get_current_head()
    if head is None:
        raise CatalogueError("the migrations folder holds no revision")
    return head


def current_revision(engine: Engine | Connection) -> str | None:
    """The database's alembic revision (None for an empty database).

    Read from alembic's ``alembic_version`` table directly (importing alembic costs more than
    the whole query); only a table with several rows (branches, which dropper does not make)
    is handed to alembic, which refuses it. ``engine`` may be an open connection (a write
    transaction reads its own view).
    """
    if isinstance(engine, Connection):
        return _revision_on(engine)
    with engine.connect() as conn:
        return _revision_on(conn)


def _revision_on(conn: Connection) -> str | None:
    if not inspect(conn).has_table(_VERSION_TABLE):
        return None
    rows = conn.execute(text(f"SELECT version_num FROM {_VERSION_TABLE}")).scalars().all()
    if len(rows) <= 1:
        return rows[0] if rows else None
    from alembic.runtime.migration import MigrationContext

    return MigrationContext.configure(conn).get_current_revision()


def _alembic(conn: Connection, engine: Engine, action: str, revision: str) -> None:
    """Run alembic's ``action`` on ``conn``, already inside a write transaction."""
    from alembic import command
    from alembic.util import CommandError

    try:
        getattr(command, action)(alembic_config(conn), revision)
    except CommandError as exc:
        raise CatalogueError(f"cannot migrate {safe_url(engine)}: {exc}") from None


def _run(engine: Engine, action: str, revision: str) -> None:
    # a batch migration rebuilds a table (create copy, drop, rename); with foreign keys on,
    # the drop would cascade into price_breaks, hence foreign_keys=False
    try:
        with write_transaction(engine, "the migration", foreign_keys=False) as conn:
            _alembic(conn, engine, action, revision)
    except (CatalogueBusyError, ReadOnlyCatalogueError):
        raise
    except SQLAlchemyError as exc:
        raise CatalogueError(f"cannot migrate {safe_url(engine)}: {_reason(exc)}") from None


def migrate(engine: Engine, revision: str = "head") -> None:
    """Upgrade the schema to ``revision`` (alembic, batch mode on SQLite)."""
    _run(engine, "upgrade", revision)


def downgrade(engine: Engine, revision: str = "base") -> None:
    """Downgrade the schema to ``revision`` (``base`` drops every catalogue table)."""
    _run(engine, "downgrade", revision)


def _reason(exc: SQLAlchemyError) -> str:
    orig = getattr(exc, "orig", None)
    return mask_secrets(str(orig if orig is not None else exc).splitlines()[0])


def read_meta(engine: Engine) -> dict[str, str]:
    """The catalogue_meta table as a dict (empty when the table is missing)."""
    with engine.connect() as conn:
        if not inspect(conn).has_table(CatalogueMeta.__tablename__):
            return {}
        rows = conn.execute(select(CatalogueMeta.key, CatalogueMeta.value)).all()
    return {k: v for k, v in rows}


def _unknown_revision(engine: Engine, current: str, head: str) -> CatalogueError | None:
    from alembic.script import ScriptDirectory

    script = ScriptDirectory.from_config(alembic_config())
    known = {rev.revision for rev in script.walk_revisions()}
    if current in known:
        return None
    return CatalogueError(
        f"catalogue {safe_url(engine)} has schema revision {current!r}, unknown to this "
        f"dropper (newest known: {head!r}); upgrade dropper or use another --db"
    )


def _ensure_schema(engine: Engine) -> None:
    """Migrate to head when needed. The decision is taken again inside the write lock, so of
    several processes starting at once on a new file one migrates and the others find the
    schema made (each migration is one transaction: nobody sees half of it)."""
    current = current_revision(engine)
    if current is not None and current == quick_head_revision():
        return
    head = head_revision()
    if current == head:
        return
    if is_read_only(engine):
        if current is not None and (problem := _unknown_revision(engine, current, head)):
            raise problem
        state = "holds no catalogue" if current is None else f"has schema {current!r}"
        raise ReadOnlyCatalogueError(
            f"catalogue {where(engine)} is read-only and {state}; it needs the migration to "
            f"{head!r}, which cannot be written. Open it once where it is writable (any "
            "dropper command) or use another --db"
        )
    with write_transaction(engine, "the migration", foreign_keys=False) as conn:
        current = _revision_on(conn)
        if current == head:
            return
        if current is not None:
            if problem := _unknown_revision(engine, current, head):
                raise problem
        elif inspect(conn).has_table(Part.__tablename__):
            raise CatalogueError(
                f"{safe_url(engine)} has a 'parts' table not made by dropper's migrations; "
                "use another --db"
            )
        _alembic(conn, engine, "upgrade", "head")


def _stored_checksum(conn: Connection) -> str | None:
    stmt = select(CatalogueMeta.value).where(CatalogueMeta.key == "data_checksum")
    return conn.execute(stmt).scalar_one_or_none()


def _rebuild(
    engine: Engine, checksum: str, progress: Progress | None, force: bool = True
) -> dict[str, Any] | None:
    """Replace the built-in rows in one write transaction (readers see the old rows or the
    new ones, never a mix). ``force=False``: skip (return None) when the stored checksum,
    read inside the write lock, already equals ``checksum`` (another process built first)."""
    from .build import builtin_rows, load_price_model

    started = time.perf_counter()
    rows = builtin_rows()  # validates every data file before the database is touched
    total = len(rows)
    table = Part.__table__
    try:
        with write_transaction(engine, "the catalogue build") as conn:
            if not force and _stored_checksum(conn) == checksum:
                return None
            if progress is not None:
                progress(0, total)
            conn.execute(delete(table).where(table.c.source == "builtin"))
            for start in range(0, total, _CHUNK):
                conn.execute(table.insert(), rows[start : start + _CHUNK])
                if progress is not None:
                    progress(min(start + _CHUNK, total), total)
            built_at = datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")
            meta = {
                "data_checksum": checksum,
                "built_at": built_at,
                "builtin_parts": str(total),
                "price_model": load_price_model().label,
            }
            conn.execute(delete(CatalogueMeta).where(CatalogueMeta.key.in_(list(meta))))
            conn.execute(
                CatalogueMeta.__table__.insert(),
                [{"key": k, "value": v} for k, v in meta.items()],
            )
            imported = conn.execute(
                select(func.count()).select_from(table).where(table.c.source != "builtin")
            ).scalar_one()
    except IntegrityError as exc:
        raise CatalogueError(
            f"cannot build the built-in catalogue in {safe_url(engine)}: {_reason(exc)} "
            "(an imported part may use a built-in code)"
        ) from None
    except SQLAlchemyError as exc:
        msg = f"cannot build the catalogue in {safe_url(engine)}: {_reason(exc)}"
        raise CatalogueError(msg) from None
    return {
        "url": safe_url(engine),
        "builtin_parts": total,
        "imported_parts": int(imported),
        "data_checksum": checksum,
        "built_at": built_at,
        "build_time_s": round(time.perf_counter() - started, 4),
        "price_note": meta["price_model"],
    }


def _engine_of(url: str | Engine | None, read_only: bool = False) -> Engine:
    if isinstance(url, Engine):
        return url
    return make_engine(resolve_url(url), read_only=read_only)


def open_catalogue(
    url: str | Engine | None = None, progress: Progress | None = None, read_only: bool = False
) -> Engine:
    """An engine on the catalogue at ``url`` (see :func:`resolve_url`), ready to query.

    Migrates the schema to head; builds the built-in parts on first use and rebuilds them when
    the data files changed (their checksum differs from the one stored at the last build).
    Imported rows (``source != 'builtin'``) are kept. Of several processes doing this at once
    one writes and the others wait for it and find the work done (busy timeout; past it,
    :class:`CatalogueBusyError`). A read-only catalogue (``read_only=True``, or a file or
    folder that cannot be written) is served as it is: never migrated (an old schema raises
    :class:`ReadOnlyCatalogueError`) and never rebuilt (built-in rows of older data files
    stay). Raises CatalogueError when the database cannot be opened or carries an unknown
    schema.
    """
    engine = _engine_of(url, read_only)
    try:
        _ensure_schema(engine)
        checksum = cached_data_checksum()
        if not is_read_only(engine) and read_meta(engine).get("data_checksum") != checksum:
            _rebuild(engine, checksum, progress, force=False)
    except SQLAlchemyError as exc:
        problem = sqlite_problem(exc, engine, "opening it") if _is_sqlite(engine) else None
        if problem is not None:
            raise problem from None
        raise CatalogueError(f"cannot open catalogue {safe_url(engine)}: {_reason(exc)}") from None
    return engine


def _is_sqlite(engine: Engine) -> bool:
    return engine.dialect.name == "sqlite"


def build_catalogue(url: str | Engine | None = None, progress: Progress | None = None) -> dict:
    """(Re)build the built-in parts at ``url`` now, whatever the stored checksum says.

    Returns a summary: ``url`` (password hidden), ``builtin_parts``, ``imported_parts``,
    ``data_checksum``, ``built_at`` (UTC, ISO 8601), ``build_time_s``, ``price_note``.
    Raises :class:`ReadOnlyCatalogueError` for a read-only file, :class:`CatalogueBusyError`
    when another writer holds it past the busy timeout.
    """
    engine = _engine_of(url)
    try:
        if is_read_only(engine):
            raise read_only_error(engine, "the catalogue build")
        _ensure_schema(engine)
        from .build import data_checksum

        summary = _rebuild(engine, data_checksum(), progress)
        assert summary is not None  # force=True always builds
        return summary
    except SQLAlchemyError as exc:
        problem = sqlite_problem(exc, engine, "the build") if _is_sqlite(engine) else None
        if problem is not None:
            raise problem from None
        raise CatalogueError(f"cannot open catalogue {safe_url(engine)}: {_reason(exc)}") from None
    finally:
        if not isinstance(url, Engine):
            engine.dispose()
