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
from pathlib import Path
from typing import Any, Final

from sqlalchemy import Engine, create_engine, delete, event, func, inspect, select, text
from sqlalchemy.engine import make_url
from sqlalchemy.exc import ArgumentError, IntegrityError, SQLAlchemyError
from sqlalchemy.pool import StaticPool

from ..errors import CatalogueError
from ..resources import migrations_dir
from .fingerprint import cached_data_checksum, quick_head_revision
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
    "make_engine",
    "migrate",
    "open_catalogue",
    "read_meta",
    "resolve_url",
    "safe_url",
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


def _sqlite_on_connect(dbapi_conn: Any, _record: Any) -> None:
    cur = dbapi_conn.cursor()
    cur.execute("PRAGMA foreign_keys=ON")
    cur.close()


def make_engine(url: str) -> Engine:
    """An engine for ``url`` (a plain path is a SQLite file). For SQLite files the folder is
    created; foreign keys are switched on; an in-memory database keeps one shared connection."""
    url = resolve_url(url)
    u = _parse_url(url)
    kwargs: dict[str, Any] = {}
    if u.get_backend_name() == "sqlite":
        database = u.database or ""
        if database in ("", ":memory:") or database.startswith("file::memory:"):
            kwargs = {"poolclass": StaticPool, "connect_args": {"check_same_thread": False}}
        else:
            Path(database).expanduser().parent.mkdir(parents=True, exist_ok=True)
    try:
        engine = create_engine(u, **kwargs)
    except (ArgumentError, ImportError) as exc:
        problem = mask_secrets(str(exc))
        raise CatalogueError(f"cannot open catalogue {safe_url(url)}: {problem}") from None
    if u.get_backend_name() == "sqlite":
        event.listen(engine, "connect", _sqlite_on_connect)
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


def current_revision(engine: Engine) -> str | None:
    """The database's alembic revision (None for an empty database).

    Read from alembic's ``alembic_version`` table directly (importing alembic costs more than
    the whole query); only a table with several rows (branches, which dropper does not make)
    is handed to alembic, which refuses it.
    """
    with engine.connect() as conn:
        if not inspect(conn).has_table(_VERSION_TABLE):
            return None
        rows = conn.execute(text(f"SELECT version_num FROM {_VERSION_TABLE}")).scalars().all()
        if len(rows) <= 1:
            return rows[0] if rows else None
        from alembic.runtime.migration import MigrationContext

        return MigrationContext.configure(conn).get_current_revision()


def _run(engine: Engine, action: str, revision: str) -> None:
    from alembic import command
    from alembic.util import CommandError

    sqlite = engine.dialect.name == "sqlite"
    try:
        with engine.connect() as conn:
            if sqlite:
                # a batch migration rebuilds a table (create copy, drop, rename); with foreign
                # keys on, the drop would cascade into price_breaks. The pragma only takes
                # effect outside a transaction, so set it before alembic begins one.
                conn.exec_driver_sql("PRAGMA foreign_keys=OFF")
                conn.commit()
            try:
                with conn.begin():
                    getattr(command, action)(alembic_config(conn), revision)
            finally:
                if sqlite:
                    conn.exec_driver_sql("PRAGMA foreign_keys=ON")
                    conn.commit()
    except CommandError as exc:
        raise CatalogueError(f"cannot migrate {safe_url(engine)}: {exc}") from None
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


def _ensure_schema(engine: Engine) -> None:
    current = current_revision(engine)
    if current is not None and current == quick_head_revision():
        return
    head = head_revision()
    if current == head:
        return
    if current is not None:
        from alembic.script import ScriptDirectory

        script = ScriptDirectory.from_config(alembic_config())
        known = {rev.revision for rev in script.walk_revisions()}
        if current not in known:
            raise CatalogueError(
                f"catalogue {safe_url(engine)} has schema revision {current!r}, unknown to this "
                f"dropper (newest known: {head!r}); upgrade dropper or use another --db"
            )
    elif inspect(engine).has_table(Part.__tablename__):
        raise CatalogueError(
            f"{safe_url(engine)} has a 'parts' table not made by dropper's migrations; "
            "use another --db"
        )
    migrate(engine, "head")


def _rebuild(engine: Engine, checksum: str, progress: Progress | None) -> dict[str, Any]:
    from .build import builtin_rows, load_price_model

    started = time.perf_counter()
    rows = builtin_rows()  # validates every data file before the database is touched
    total = len(rows)
    if progress is not None:
        progress(0, total)
    table = Part.__table__
    try:
        with engine.begin() as conn:
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


def _engine_of(url: str | Engine | None) -> Engine:
    if isinstance(url, Engine):
        return url
    return make_engine(resolve_url(url))


def open_catalogue(url: str | Engine | None = None, progress: Progress | None = None) -> Engine:
    """An engine on the catalogue at ``url`` (see :func:`resolve_url`), ready to query.

    Migrates the schema to head; builds the built-in parts on first use and rebuilds them when
    the data files changed (their checksum differs from the one stored at the last build).
    Imported rows (``source != 'builtin'``) are kept. Raises CatalogueError when the database
    cannot be opened or carries an unknown schema.
    """
    engine = _engine_of(url)
    try:
        _ensure_schema(engine)
        checksum = cached_data_checksum()
        if read_meta(engine).get("data_checksum") != checksum:
            _rebuild(engine, checksum, progress)
    except SQLAlchemyError as exc:
        raise CatalogueError(f"cannot open catalogue {safe_url(engine)}: {_reason(exc)}") from None
    return engine


def build_catalogue(url: str | Engine | None = None, progress: Progress | None = None) -> dict:
    """(Re)build the built-in parts at ``url`` now, whatever the stored checksum says.

    Returns a summary: ``url`` (password hidden), ``builtin_parts``, ``imported_parts``,
    ``data_checksum``, ``built_at`` (UTC, ISO 8601), ``build_time_s``, ``price_note``.
    """
    engine = _engine_of(url)
    try:
        _ensure_schema(engine)
        from .build import data_checksum

        return _rebuild(engine, data_checksum(), progress)
    except SQLAlchemyError as exc:
        raise CatalogueError(f"cannot open catalogue {safe_url(engine)}: {_reason(exc)}") from None
    finally:
        if not isinstance(url, Engine):
            engine.dispose()
