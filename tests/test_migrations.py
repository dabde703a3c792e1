"""Alembic migrations: empty -> head, down and up again with data in the tables.

Outside reference: alembic's own autogenerate comparison (``compare_metadata``) checks that the
migrated schema equals the SQLAlchemy models; the command-line ``alembic`` tool runs
``migrations/alembic.ini``.
"""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest
from sqlalchemy import inspect, select, text

from selector.catalogue import current_revision, downgrade, head_revision, make_engine, migrate
from selector.catalogue.models import Base, Part, PriceBreak, Supplier
from selector.resources import migrations_dir

CATALOGUE_TABLES = {"parts", "catalogue_meta", "suppliers", "price_breaks"}


def _tables(engine) -> set[str]:
    return set(inspect(engine).get_table_names()) - {"alembic_version"}


def _part(code: str, **extra) -> dict:
    row = {
        "code": code,
        "kind": "resistor",
        "family": "shelf",
        "description": "test row",
        "value": 2200.0,
        "fusible": False,
        "source": "import:test",
    }
    row.update(extra)
    return row


def test_empty_to_head_creates_the_tables(empty_db_url):
    engine = make_engine(empty_db_url)
    try:
        assert current_revision(engine) is None
        migrate(engine)
        assert current_revision(engine) == head_revision() == "0002"
        assert _tables(engine) == CATALOGUE_TABLES
    finally:
        engine.dispose()


def test_migrated_schema_equals_the_models(migrated_engine):
    from alembic.autogenerate import compare_metadata
    from alembic.runtime.migration import MigrationContext

    with migrated_engine.connect() as conn:
        ctx = MigrationContext.configure(conn, opts={"compare_type": True})
        diff = compare_metadata(ctx, Base.metadata)
    assert diff == []


def test_rows_survive_the_second_migration_down_and_up(empty_db_url):
    engine = make_engine(empty_db_url)
    try:
        migrate(engine, "0001")
        with engine.begin() as conn:
            conn.execute(
                Part.__table__.insert(), [_part("KEEP-1", stock=None), _part("KEEP-2", stock=5)]
            )
            conn.execute(Supplier.__table__.insert(), [{"name": "shelf"}])
            part_id = conn.execute(select(Part.id).where(Part.code == "KEEP-1")).scalar_one()
            conn.execute(
                PriceBreak.__table__.insert(),
                [{"part_id": part_id, "min_qty": 100, "unit_price": 0.01}],
            )
        migrate(engine)  # 0001 -> 0002 adds columns; rows stay, new columns are empty
        with engine.connect() as conn:
            rows = conn.execute(select(Part.code, Part.stock, Part.pitch_mm)).all()
        assert sorted(rows) == [("KEEP-1", None, None), ("KEEP-2", 5, None)]
        with engine.begin() as conn:
            conn.execute(Part.__table__.update().values(pitch_mm=7.5))
        downgrade(engine, "0001")  # batch mode rebuilds the table on SQLite
        assert "pitch_mm" not in {c["name"] for c in inspect(engine).get_columns("parts")}
        with engine.connect() as conn:
            assert conn.execute(text("SELECT count(*) FROM parts")).scalar_one() == 2
            # the table rebuild must not cascade into price_breaks
            assert conn.execute(text("SELECT count(*) FROM price_breaks")).scalar_one() == 1
        migrate(engine)
        with engine.connect() as conn:
            codes = conn.execute(select(Part.code).order_by(Part.code)).scalars().all()
            breaks = conn.execute(select(PriceBreak.min_qty)).scalars().all()
        assert codes == ["KEEP-1", "KEEP-2"] and breaks == [100]
    finally:
        engine.dispose()


def test_down_to_base_removes_every_table_and_up_again_works(migrated_engine):
    with migrated_engine.begin() as conn:
        conn.execute(Part.__table__.insert(), [_part("GONE-1")])
    downgrade(migrated_engine, "base")
    assert _tables(migrated_engine) == set()
    assert current_revision(migrated_engine) is None
    migrate(migrated_engine)
    assert _tables(migrated_engine) == CATALOGUE_TABLES
    with migrated_engine.begin() as conn:
        conn.execute(Part.__table__.insert(), [_part("NEW-1")])
        assert conn.execute(select(Part.code)).scalars().all() == ["NEW-1"]


def test_price_breaks_follow_their_part(migrated_engine):
    with migrated_engine.begin() as conn:
        conn.execute(Part.__table__.insert(), [_part("P-1")])
        pid = conn.execute(select(Part.id)).scalar_one()
        conn.execute(
            PriceBreak.__table__.insert(), [{"part_id": pid, "min_qty": 1, "unit_price": 0.2}]
        )
        conn.execute(Part.__table__.delete())
        assert conn.execute(text("SELECT count(*) FROM price_breaks")).scalar_one() == 0


def test_in_memory_database_migrates(memory_engine):
    assert _tables(memory_engine) == CATALOGUE_TABLES


@pytest.mark.skipif(
    subprocess.run([sys.executable, "-c", "import alembic.config"]).returncode != 0,
    reason="alembic command line not importable",
)
def test_alembic_command_line_with_the_ini_file(tmp_path: Path):
    ini = migrations_dir() / "alembic.ini"
    db = tmp_path / "cli.sqlite"
    env = {**os.environ, "DROPPER_DB": str(tmp_path / "not-this.sqlite")}
    base = [sys.executable, "-m", "alembic", "-c", str(ini), "-x", f"db=sqlite:///{db}"]
    done = subprocess.run(
        [*base, "upgrade", "head"], capture_output=True, text=True, env=env, timeout=120
    )
    assert done.returncode == 0, done.stderr
    engine = make_engine(f"sqlite:///{db}")
    try:
        assert current_revision(engine) == "0002"
        assert _tables(engine) == CATALOGUE_TABLES
    finally:
        engine.dispose()
    assert not (tmp_path / "not-this.sqlite").exists()
