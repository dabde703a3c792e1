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
        assert current_revision(engine) == head_revision() == "0008"
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
        assert current_revision(engine) == "0008"
        assert _tables(engine) == CATALOGUE_TABLES
    finally:
        engine.dispose()
    assert not (tmp_path / "not-this.sqlite").exists()


def _codes_migration():
    """The 0003 migration module itself (its mapping is what the upgrade applies)."""
    import importlib.util

    path = migrations_dir() / "versions" / "0003_part_codes_of_our_own.py"
    spec = importlib.util.spec_from_file_location("migration_0003", path)
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    return module


# Regression pins: codes the builder-1 catalogue made (they were the expected codes in this
# project's own tests before 0003) and the codes builder 2 makes for the same parts.
OLD_TO_NEW = [
    ("RC1206-4k7-J", "res.thick.1206.4k7.5pct"),
    ("RM0207-1M-F", "res.melf.0207.1M.1pct"),
    ("RMFA025-470k-F", "res.mfilm.0w25.470k.1pct"),
    ("RFU05W-10R-J", "res.fusible.0w5.10R.5pct"),
    ("XF2-305-330n-K", "xcap.x2.305vac.330n.10pct"),
    ("XF2H-310-470n-K", "xcap.x2humid.310vac.470n.10pct"),
    ("FPET-400-220n-K", "film.pet.400vdc.220n.10pct"),
    ("DRS1-1000", "diode.smd.1a.1000v"),
    ("BRM-600", "bridge.smd.0a5.600v"),
    ("ZD3-5V1", "zener.smd.3w.5v1.5pct"),
    ("EA105-100u-6V3", "elcap.105c.6v3.100u.20pct"),
    ("FT-100mA", "fuse.glass.slow.100ma"),
]


@pytest.mark.parametrize(("old", "new"), OLD_TO_NEW)
def test_code_mapping_pins(old, new):
    mig = _codes_migration()
    assert mig.new_code(old) == new
    assert mig.old_code(new) == old


def test_code_mapping_covers_every_builtin_code_both_ways():
    from selector.catalogue.build import builtin_rows

    mig = _codes_migration()
    # families added after 0003 never had an old code: the long-life electrolytics (0004) and
    # the varistors (kind added with 0006)
    codes = [
        row["code"]
        for row in builtin_rows()
        if not row["code"].startswith("elcap.105clong") and row["kind"] != "varistor"
    ]
    olds = [mig.old_code(c) for c in codes]
    assert None not in olds
    assert len(set(olds)) == len(codes)  # the old codes are unique too
    assert [mig.new_code(o) for o in olds] == codes
    # imported codes and unknown codes are not touched by either direction
    for other in ("S:shelf:RC0603-4K7-J", "KEEP-1", "res.thick", "RC0603-4k7-Q"):
        assert mig.new_code(other) is None and mig.old_code(other) is None


def test_builtin_codes_are_renamed_up_and_back_down(empty_db_url):
    from selector.catalogue.build import builtin_rows

    mig = _codes_migration()
    # the rows as they stood at 0002/0003: no long-life family, no varistors, no columns of
    # 0004 (rated life), 0006 (clamp current), 0007 (minimum order quantity) or 0008 (order
    # multiple)
    built = [
        {
            k: v
            for k, v in row.items()
            if k not in ("rated_life_h", "clamp_current_a", "min_order_qty", "order_multiple")
        }
        for row in builtin_rows()
        if not row["code"].startswith("elcap.105clong") and row["kind"] != "varistor"
    ]
    new_codes = sorted(row["code"] for row in built)
    engine = make_engine(empty_db_url)
    try:
        migrate(engine, "0002")
        # rows as a 0002 database holds them (no 0005 'withdrawn' column yet)
        old_rows = [
            {k: v for k, v in dict(row, code=mig.old_code(row["code"])).items() if k != "withdrawn"}
            for row in built
        ]
        imported = [
            _part("S:shelf:RC0603-4K7-J", source="import:shelf"),
            _part("S:shelf:res.thick.0603.4k7.5pct", source="import:shelf"),
        ]
        with engine.begin() as conn:
            conn.execute(Part.__table__.insert(), old_rows)
            conn.execute(Part.__table__.insert(), imported)
        old_codes = sorted(r["code"] for r in old_rows)

        def codes(source_is_builtin: bool) -> list[str]:
            cond = Part.source == "builtin" if source_is_builtin else Part.source != "builtin"
            with engine.connect() as conn:
                return sorted(conn.execute(select(Part.code).where(cond)).scalars())

        migrate(engine, "0003")
        assert codes(True) == new_codes
        assert codes(False) == sorted(p["code"] for p in imported)
        downgrade(engine, "0002")
        assert codes(True) == old_codes
        assert codes(False) == sorted(p["code"] for p in imported)
    finally:
        engine.dispose()


def test_0006_adds_and_removes_the_varistor_clamp_current(tmp_path: Path):
    # the varistor's clamping-current column (migration 0006) goes up and down with the schema
    engine = make_engine(f"sqlite:///{tmp_path / 'mov.sqlite'}")
    try:
        migrate(engine, "0006")
        cols = {c["name"] for c in inspect(engine).get_columns("parts")}
        assert "clamp_current_a" in cols
        downgrade(engine, "0003")
        cols = {c["name"] for c in inspect(engine).get_columns("parts")}
        assert "clamp_current_a" not in cols
    finally:
        engine.dispose()


def test_0007_keeps_rows_and_their_minimum_order_quantity_up_and_down(tmp_path: Path):
    # the minimum order quantity (migration 0007) goes up and down with imported rows in place
    engine = make_engine(f"sqlite:///{tmp_path / 'moq.sqlite'}")
    try:
        migrate(engine, "0006")
        with engine.begin() as conn:
            conn.execute(Part.__table__.insert().values(**{
                k: v for k, v in _part("S:t:A1").items()
            }))  # fmt: skip
        migrate(engine, "0007")
        with engine.begin() as conn:
            assert conn.execute(select(Part.min_order_qty)).scalar_one() is None
            conn.execute(Part.__table__.update().values(min_order_qty=5000))
        downgrade(engine, "0006")
        assert "min_order_qty" not in {c["name"] for c in inspect(engine).get_columns("parts")}
        with engine.connect() as conn:
            assert conn.execute(text("select code from parts")).scalars().all() == ["S:t:A1"]
        migrate(engine, "0007")
        with engine.connect() as conn:
            assert conn.execute(select(Part.code, Part.min_order_qty)).all() == [("S:t:A1", None)]
    finally:
        engine.dispose()


def test_0008_keeps_rows_and_their_order_multiple_up_and_down(tmp_path: Path):
    # the order multiple (migration 0008) goes up and down with imported rows and their
    # minimum order quantity (0007) in place
    engine = make_engine(f"sqlite:///{tmp_path / 'reel.sqlite'}")
    try:
        migrate(engine, "0007")
        with engine.begin() as conn:
            # only the columns a 0007 table has (created_at and fusible take their defaults)
            conn.execute(Part.__table__.insert().values(**_part("S:t:A1", min_order_qty=5000)))
        migrate(engine)
        with engine.begin() as conn:
            got = conn.execute(select(Part.min_order_qty, Part.order_multiple)).one()
            assert tuple(got) == (5000, None)
            conn.execute(Part.__table__.update().values(order_multiple=4000))
        downgrade(engine, "0007")
        assert "order_multiple" not in {c["name"] for c in inspect(engine).get_columns("parts")}
        with engine.connect() as conn:
            kept = conn.execute(text("select code, min_order_qty from parts")).all()
        assert [tuple(row) for row in kept] == [("S:t:A1", 5000)]
        migrate(engine)
        with engine.connect() as conn:
            got = conn.execute(select(Part.code, Part.min_order_qty, Part.order_multiple)).all()
        assert [tuple(row) for row in got] == [("S:t:A1", 5000, None)]
    finally:
        engine.dispose()


def test_a_catalogue_made_before_0008_opens_and_prices_its_imports(catalogue_copy_url):
    # a built catalogue with an imported row, taken back to 0007 (the schema a catalogue file
    # of the previous release has), is opened as any command opens it: migrated to head, the
    # row and its MOQ kept, no order multiple, and priced as before (5000 x 0.04 / 1000 = 0.2)
    import pandas as pd

    from selector.catalogue import open_catalogue, parts_frame
    from selector.catalogue.pricing import price_at_build

    engine = make_engine(catalogue_copy_url)
    try:
        downgrade(engine, "0007")
        with engine.begin() as conn:
            conn.execute(Part.__table__.insert().values(
                **_part("S:old:Z1", kind="zener", family="zener-1w", value=12.0,
                        source="import:old", supplier="old", supplier_code="Z1",
                        unit_price=0.04, tolerance=0.05, min_order_qty=5000)
            ))  # fmt: skip
        assert current_revision(engine) == "0007"
    finally:
        engine.dispose()
    opened = open_catalogue(catalogue_copy_url)
    try:
        assert current_revision(opened) == head_revision() == "0008"
        frame = parts_frame(opened, stock_only=True)
        row = frame.set_index("code").loc["S:old:Z1"]
        assert row["min_order_qty"] == 5000 and pd.isna(row["order_multiple"])
        priced = price_at_build(frame, catalogue_copy_url, 1000).set_index("code")
        assert priced.at["S:old:Z1", "unit_price"] == pytest.approx(0.2)
        assert priced.at["S:old:Z1", "price_note"].endswith("the cost counts all 5,000")
    finally:
        opened.dispose()
