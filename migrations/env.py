"""Alembic environment of the dropper catalogue.

dropper runs it in process (selector.catalogue.db.migrate) and hands over an open connection in
``config.attributes["connection"]``; from the command line (migrations/alembic.ini) it opens the
database named by ``-x db=URL``, ``sqlalchemy.url``, DROPPER_DB or the user's catalogue file.
Batch mode is on so that column changes also work on SQLite (which rebuilds the table).
"""

from __future__ import annotations

from logging.config import fileConfig

from alembic import context
from sqlalchemy import create_engine

from selector.catalogue.models import Base

config = context.config
target_metadata = Base.metadata


def _url() -> str:
    from selector.catalogue.db import resolve_url

    x_db = context.get_x_argument(as_dictionary=True).get("db")
    return resolve_url(x_db or config.get_main_option("sqlalchemy.url") or None)


def _configure_and_run(connection) -> None:
    context.configure(
        connection=connection,
        target_metadata=target_metadata,
        render_as_batch=True,
        compare_type=True,
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_offline() -> None:
    context.configure(
        url=_url(),
        target_metadata=target_metadata,
        literal_binds=True,
        render_as_batch=True,
        dialect_opts={"paramstyle": "named"},
    )
    with context.begin_transaction():
        context.run_migrations()


def run_migrations_online() -> None:
    connection = config.attributes.get("connection")
    if connection is not None:
        _configure_and_run(connection)
        return
    if config.config_file_name is not None:
        fileConfig(config.config_file_name, disable_existing_loggers=False)
    engine = create_engine(_url())
    try:
        with engine.begin() as conn:
            _configure_and_run(conn)
    finally:
        engine.dispose()


if context.is_offline_mode():
    run_migrations_offline()
else:
    run_migrations_online()
