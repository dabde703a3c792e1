"""Start-up caches of the catalogue: the parts frame beside the SQLite file, the schema head read
from the migration files' text, and the data checksum kept under file stats.

The references each check is held against are outside the cache: the frame read from the
database by ``parts_frame`` (``pandas.testing.assert_frame_equal``), alembic's own head
revision, ``build.data_checksum`` reading the files, SQLAlchemy's URL parser, and the SQLite
file format's header (file change counter at offset 24, file format read/write versions 2 in
WAL mode; sqlite.org "Database File Format", the database header table). The demo stock list is
invented DEMO data (tests/data/demo_stock.csv). No check here is timed.
"""

from __future__ import annotations

import os
import shutil
import sqlite3
import subprocess
import sys
import threading
from pathlib import Path

import pandas as pd
import pytest
from pandas.testing import assert_frame_equal
from sqlalchemy import text, update
from sqlalchemy.engine import make_url

from selector.catalogue import build_catalogue, head_revision, make_engine, parts_frame
from selector.catalogue import frame_cache as FC
from selector.catalogue.build import data_checksum
from selector.catalogue.fingerprint import cached_data_checksum, quick_head_revision
from selector.catalogue.importer import import_stock
from selector.catalogue.models import Part
from selector.catalogue.paths import cache_dir, sqlite_file
from selector.resources import catalogue_dir

DEMO_CSV = Path(__file__).parent / "data" / "demo_stock.csv"
ROOT = Path(__file__).resolve().parent.parent


def _db_frame(url: str, stock_only: bool = False) -> pd.DataFrame:
    engine = make_engine(url)
    try:
        return parts_frame(engine, stock_only=stock_only)
    finally:
        engine.dispose()


def _file(url: str) -> Path:
    path = sqlite_file(url)
    assert path is not None
    return path


# ---------------------------------------------------------------------------------------------
# the parts frame cache


def test_second_read_comes_from_the_cache_and_equals_the_database(catalogue_copy_url):
    first = FC.read_catalogue_frame(catalogue_copy_url)
    assert not first.from_cache
    assert FC.cache_path(_file(catalogue_copy_url)).is_file()
    second = FC.read_catalogue_frame(catalogue_copy_url)
    assert second.from_cache
    reference = _db_frame(catalogue_copy_url)
    assert_frame_equal(first.frame, reference)
    assert_frame_equal(second.frame, reference)


def test_import_invalidates_and_stock_only_matches_the_query(catalogue_copy_url):
    FC.read_catalogue_frame(catalogue_copy_url)
    assert FC.read_catalogue_frame(catalogue_copy_url).from_cache
    engine = make_engine(catalogue_copy_url)
    try:
        result = import_stock(engine, DEMO_CSV, supplier="demo-shelf")
    finally:
        engine.dispose()
    assert result.accepted > 0
    after = FC.read_catalogue_frame(catalogue_copy_url)
    assert not after.from_cache
    assert (after.frame["source"] == "import:demo-shelf").sum() == result.accepted
    assert_frame_equal(after.frame, _db_frame(catalogue_copy_url))
    stock = FC.read_catalogue_frame(catalogue_copy_url, stock_only=True)
    assert stock.from_cache
    assert len(stock.frame) > 0
    assert_frame_equal(stock.frame, _db_frame(catalogue_copy_url, stock_only=True))


def test_a_ratings_change_without_new_rows_invalidates(catalogue_copy_url):
    before = FC.catalogue_frame(catalogue_copy_url)
    code = before["code"].iloc[0]
    engine = make_engine(catalogue_copy_url)
    try:
        with engine.begin() as conn:
            conn.execute(update(Part).where(Part.code == code).values(power_w=12.5))
    finally:
        engine.dispose()
    after = FC.read_catalogue_frame(catalogue_copy_url)
    assert not after.from_cache
    assert after.frame.loc[after.frame["code"] == code, "power_w"].tolist() == [12.5]
    assert_frame_equal(after.frame, _db_frame(catalogue_copy_url))


def test_a_rebuild_invalidates(catalogue_copy_url):
    FC.catalogue_frame(catalogue_copy_url)
    build_catalogue(catalogue_copy_url)
    again = FC.read_catalogue_frame(catalogue_copy_url)
    assert not again.from_cache
    assert_frame_equal(again.frame, _db_frame(catalogue_copy_url))


def test_a_stale_data_checksum_goes_through_the_rebuild(catalogue_copy_url):
    rows = len(FC.catalogue_frame(catalogue_copy_url))
    engine = make_engine(catalogue_copy_url)
    try:
        with engine.begin() as conn:
            conn.execute(text("UPDATE catalogue_meta SET value='old' WHERE key='data_checksum'"))
            conn.execute(text("DELETE FROM parts WHERE id = (SELECT min(id) FROM parts)"))
    finally:
        engine.dispose()
    got = FC.read_catalogue_frame(catalogue_copy_url)
    assert not got.from_cache
    # open_catalogue rebuilt the built-in rows: the deleted one is back
    assert len(got.frame) == rows
    assert_frame_equal(got.frame, _db_frame(catalogue_copy_url))


@pytest.mark.parametrize(
    "damage",
    [
        b"",
        b"not a cache at all",
        b"dropper parts frame\n" + b"0" * 64 + b"\n",
        "truncated",
    ],
    ids=["empty", "garbage", "wrong-key", "truncated"],
)
def test_a_corrupt_cache_is_ignored_and_rewritten(catalogue_copy_url, damage):
    FC.catalogue_frame(catalogue_copy_url)
    path = FC.cache_path(_file(catalogue_copy_url))
    whole = path.read_bytes()
    damaged = whole[: len(whole) // 2] if damage == "truncated" else damage
    path.write_bytes(damaged)
    got = FC.read_catalogue_frame(catalogue_copy_url)
    assert not got.from_cache
    assert_frame_equal(got.frame, _db_frame(catalogue_copy_url))
    assert path.read_bytes() != damaged and path.stat().st_size == len(whole)
    assert FC.read_catalogue_frame(catalogue_copy_url).from_cache


@pytest.mark.skipif(not hasattr(os, "geteuid"), reason="no file owners on this system")
def test_a_cache_others_may_write_is_not_loaded(catalogue_copy_url):
    FC.catalogue_frame(catalogue_copy_url)
    path = FC.cache_path(_file(catalogue_copy_url))
    path.chmod(0o666)
    assert not FC.read_catalogue_frame(catalogue_copy_url).from_cache
    assert (path.stat().st_mode & 0o777) == 0o600  # replaced by a private file
    assert FC.read_catalogue_frame(catalogue_copy_url).from_cache


def test_concurrent_writers_never_leave_a_half_written_cache(catalogue_copy_url):
    """Writers race (os.replace of whole temporary files) while a reader loads in a loop: every
    load under the right key is a whole frame, and no temporary file is left behind."""
    FC.catalogue_frame(catalogue_copy_url)
    db_file = _file(catalogue_copy_url)
    path = FC.cache_path(db_file)
    state = FC._db_state(db_file)
    assert state is not None
    key = FC._key(state)
    frame = _db_frame(catalogue_copy_url)
    stop = threading.Event()
    bad: list[str] = []

    def write() -> None:
        for _ in range(15):
            FC._store(path, key, frame)

    def read() -> None:
        while not stop.is_set():
            got = FC._load(path, key)
            if got is None or len(got) != len(frame):
                bad.append("incomplete read")

    reader = threading.Thread(target=read)
    writers = [threading.Thread(target=write) for _ in range(3)]
    reader.start()
    for w in writers:
        w.start()
    for w in writers:
        w.join()
    stop.set()
    reader.join()
    assert bad == []
    assert_frame_equal(FC._load(path, key), frame)
    assert sorted(p.name for p in db_file.parent.iterdir() if p.name.endswith(".tmp")) == []


def test_concurrent_processes_agree(catalogue_copy_url):
    db_file = _file(catalogue_copy_url)
    code = (
        "import sys; from selector.catalogue.frame_cache import read_catalogue_frame as r; "
        "f = r(sys.argv[1]); print(len(f.frame))"
    )
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    procs = [
        subprocess.Popen(
            [sys.executable, "-c", code, catalogue_copy_url], stdout=subprocess.PIPE, env=env
        )
        for _ in range(3)
    ]
    outs = [p.communicate(timeout=120)[0].decode().strip() for p in procs]
    assert all(p.returncode == 0 for p in procs)
    expected = len(_db_frame(catalogue_copy_url))
    assert outs == [str(expected)] * 3
    got = FC.read_catalogue_frame(catalogue_copy_url)
    assert got.from_cache
    assert_frame_equal(got.frame, _db_frame(catalogue_copy_url))
    assert [p.name for p in db_file.parent.iterdir() if p.name.endswith(".tmp")] == []


def test_catalogue_files_are_in_wal_mode_and_cached(catalogue_copy_url):
    # SQLite file format: read and write version bytes (offsets 18, 19) are 2 in WAL mode
    assert _file(catalogue_copy_url).read_bytes()[18:20] == b"\x02\x02"
    first = FC.read_catalogue_frame(catalogue_copy_url)
    second = FC.read_catalogue_frame(catalogue_copy_url)
    assert not first.from_cache and second.from_cache
    assert_frame_equal(second.frame, _db_frame(catalogue_copy_url))


def test_wal_commit_by_another_program_invalidates(catalogue_copy_url):
    """A commit that dropper did not make (no write_generation count) still changes the key:
    while it sits in the -wal file (SQLite: a commit appends frames to the WAL), and after the
    checkpoint has copied it into the database file."""
    db_file = _file(catalogue_copy_url)
    assert FC.read_catalogue_frame(catalogue_copy_url).from_cache is False
    other = sqlite3.connect(db_file)
    try:
        other.execute("UPDATE parts SET unit_price = 9.5 WHERE id = 1")
        other.commit()
        assert db_file.with_name(db_file.name + "-wal").stat().st_size > 0
        got = FC.read_catalogue_frame(catalogue_copy_url)
        assert not got.from_cache
        assert got.frame.loc[got.frame["id"] == 1, "unit_price"].item() == 9.5
    finally:
        other.close()  # the last connection: checkpoint into the database file
    got = FC.read_catalogue_frame(catalogue_copy_url)
    assert got.frame.loc[got.frame["id"] == 1, "unit_price"].item() == 9.5
    assert_frame_equal(got.frame, _db_frame(catalogue_copy_url))


def test_header_change_counter_moves_on_every_commit(catalogue_copy_url):
    """In rollback-journal mode, the SQLite header's file change counter (offset 24,
    big-endian) - the cache's guard against updates that change no row count - increments on a
    committed write (sqlite.org "Database File Format")."""
    db_file = _file(catalogue_copy_url)
    con = sqlite3.connect(db_file)
    try:
        assert con.execute("PRAGMA journal_mode=DELETE").fetchone()[0] == "delete"
        state = FC._db_state(db_file)
        assert state is not None and state.wal is None
        assert state.change_counter == int.from_bytes(db_file.read_bytes()[24:28], "big")
        con.execute("UPDATE parts SET stock = 7 WHERE id = 1")
        con.commit()
    finally:
        con.close()
    after = FC._db_state(db_file)
    assert after is not None and after.change_counter > state.change_counter


def test_in_memory_and_missing_files_are_not_cached(tmp_path):
    frame = FC.read_catalogue_frame("sqlite://")
    assert not frame.from_cache and len(frame.frame) > 0
    url = f"sqlite:///{tmp_path / 'new.sqlite'}"
    first = FC.read_catalogue_frame(url)  # first use: built, then cached
    assert not first.from_cache
    assert FC.read_catalogue_frame(url).from_cache


def test_warm_read_imports_neither_sqlalchemy_nor_alembic(catalogue_copy_url):
    FC.catalogue_frame(catalogue_copy_url)
    code = (
        "import sys; from selector.catalogue import catalogue_frame; "
        "catalogue_frame(sys.argv[1]); "
        "print(','.join(m for m in ('sqlalchemy', 'alembic') if m in sys.modules))"
    )
    out = subprocess.run(
        [sys.executable, "-c", code, catalogue_copy_url],
        capture_output=True,
        text=True,
        check=True,
        env={**os.environ, "PYTHONPATH": str(ROOT)},
    )
    assert out.stdout.strip() == ""


def test_design_command_uses_the_cache(catalogue_copy_url):
    from typer.testing import CliRunner

    from selector.cli import app

    args = ["design", "--load", "10m", "--vout", "5.1", "--json", "--db", catalogue_copy_url]
    first = CliRunner().invoke(app, args)
    path = FC.cache_path(_file(catalogue_copy_url))
    assert first.exit_code == 0 and path.is_file()
    stamp = path.stat().st_mtime_ns
    second = CliRunner().invoke(app, args)
    assert second.exit_code == 0
    assert second.output == first.output
    assert path.stat().st_mtime_ns == stamp  # read, not rewritten


# ---------------------------------------------------------------------------------------------
# cheap start-up checks


def test_quick_head_is_alembics_head():
    assert quick_head_revision() == head_revision()


def _migration(folder: Path, rev: str, down: str | None) -> None:
    down_text = "None" if down is None else repr(down)
    (folder / f"{rev}_x.py").write_text(
        f'"""x"""\nrevision: str = {rev!r}\ndown_revision: str | None = {down_text}\n'
    )


def test_quick_head_refuses_what_it_cannot_decide(tmp_path):
    _migration(tmp_path, "a1", None)
    _migration(tmp_path, "b2", "a1")
    assert quick_head_revision(tmp_path) == "b2"
    _migration(tmp_path, "c3", "a1")  # two heads: a branch
    assert quick_head_revision(tmp_path) is None
    (tmp_path / "c3_x.py").write_text("revision = make_id()\ndown_revision = 'b2'\n")
    assert quick_head_revision(tmp_path) is None


def test_cached_data_checksum_follows_the_files(tmp_path):
    assert cached_data_checksum() == data_checksum()
    store = cache_dir() / "data-checksum.json"
    assert store.is_file()
    root = tmp_path / "catalogue"
    shutil.copytree(catalogue_dir(), root)
    assert cached_data_checksum(root) == data_checksum(root) == data_checksum()
    toml = next(root.rglob("*.toml"))
    toml.write_text(toml.read_text() + "\n# a changed file\n")
    assert cached_data_checksum(root) == data_checksum(root) != data_checksum()
    store.write_text("{not json")
    assert cached_data_checksum(root) == data_checksum(root)


@pytest.mark.parametrize(
    "url",
    [
        "sqlite:////tmp/a/catalogue.sqlite",
        "sqlite:///relative/catalogue.sqlite",
        "sqlite+pysqlite:////tmp/b.sqlite",
    ],
)
def test_sqlite_file_agrees_with_sqlalchemy(url):
    assert sqlite_file(url) == Path(make_url(url).database).absolute()


@pytest.mark.parametrize(
    "url",
    [
        "sqlite://",
        "sqlite:///:memory:",
        "sqlite:///file:x?mode=memory&uri=true",
        "sqlite:////tmp/a%20b.sqlite",
        "postgresql://user@host/db",
    ],
)
def test_sqlite_file_declines_other_urls(url):
    assert sqlite_file(url) is None
