"""A catalogue that is busy, locked or read-only (issue 12 item 6, issue 14 item 2).

Real processes (``subprocess``), never threads: SQLite's locks are per process. What is held
against an outside reference: SQLite's documented behaviour - WAL journal mode is persistent
and shows in the file header (read/write version bytes 18-19 are 2, sqlite.org "Database File
Format"); ``PRAGMA busy_timeout`` reads back in milliseconds and Python's
``sqlite3.connect(timeout=)`` sets it (Python docs, sqlite3); ``BEGIN IMMEDIATE`` takes the
write lock at once, so a second writer waits or gets SQLITE_BUSY "database is locked" (sqlite.org
"Transaction"); ``PRAGMA integrity_check`` answers ``ok`` for an undamaged file. Exit codes are
the project's contract (0 ok, 2 bad input, 4 catalogue busy; README "Exit codes"). Stock lists
are made from tests/data/demo_stock.csv: DEMO data, invented. No check here is timed; the
busy timeouts are set short (``DROPPER_BUSY_TIMEOUT``) only so that the tests end quickly.
"""

from __future__ import annotations

import csv
import hashlib
import json
import os
import shutil
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest
from sqlalchemy import select
from typer.testing import CliRunner

from selector.catalogue import locking, make_engine, open_catalogue
from selector.catalogue.models import Part
from selector.cli import app
from selector.errors import EXIT_BUSY, BadValueError

ROOT = Path(__file__).resolve().parent.parent
DEMO_CSV = Path(__file__).parent / "data" / "demo_stock.csv"
BUILTIN_PARTS = 3000  # what the session catalogue holds; checked against it in _builtin_count


def _env(**extra: str) -> dict[str, str]:
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    env.update(extra)
    return env


class _Result:
    def __init__(self, returncode: int, stdout: str, stderr: str) -> None:
        self.returncode, self.stdout, self.stderr = returncode, stdout, stderr


def _cli(*args: str, timeout_s: str | None = None) -> _Result:
    """Run dropper in this process (typer's CliRunner); ``timeout_s`` sets the busy timeout.
    The other side of each lock is always a separate process."""
    saved = os.environ.get("DROPPER_BUSY_TIMEOUT")
    if timeout_s is not None:
        os.environ["DROPPER_BUSY_TIMEOUT"] = timeout_s
    try:
        result = CliRunner().invoke(app, list(args))
    finally:
        if saved is None:
            os.environ.pop("DROPPER_BUSY_TIMEOUT", None)
        else:
            os.environ["DROPPER_BUSY_TIMEOUT"] = saved
    return _Result(result.exit_code, result.stdout, result.stderr)


def _popen(*args: str, timeout_s: str | None = None) -> subprocess.Popen:
    extra = {} if timeout_s is None else {"DROPPER_BUSY_TIMEOUT": timeout_s}
    return subprocess.Popen(
        [sys.executable, "-m", "selector.cli", *args],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        env=_env(**extra),
    )


def _file(url: str) -> Path:
    return Path(url.removeprefix("sqlite:///"))


class _LockHolder:
    """Another process holding SQLite's write lock (``BEGIN IMMEDIATE``) for ``seconds``."""

    def __init__(self, db_file: Path, seconds: float) -> None:
        code = textwrap.dedent(
            """
            import sqlite3, sys, time
            con = sqlite3.connect(sys.argv[1], isolation_level=None)
            con.execute("BEGIN IMMEDIATE")
            print("locked", flush=True)
            time.sleep(float(sys.argv[2]))
            con.execute("COMMIT")
            """
        )
        self.proc = subprocess.Popen(
            [sys.executable, "-c", code, str(db_file), str(seconds)],
            stdout=subprocess.PIPE,
            text=True,
        )
        assert self.proc.stdout is not None
        assert self.proc.stdout.readline().strip() == "locked"

    def wait(self) -> None:
        self.proc.communicate(timeout=60)
        assert self.proc.returncode == 0


def _stock_list(path: Path, price: str | None = None) -> Path:
    """The demo stock list, every price column set to ``price`` when given."""
    with DEMO_CSV.open(newline="", encoding="utf-8") as fh:
        rows = list(csv.reader(fh))
    header, body = rows[0], rows[1:]
    if price is not None:
        price_columns = [i for i, h in enumerate(header) if h.startswith("Price")]
        for row in body:
            for i in price_columns:
                row[i] = price
    with path.open("w", newline="", encoding="utf-8") as fh:
        csv.writer(fh).writerows([header, *body])
    return path


def _demo_rows() -> int:
    with DEMO_CSV.open(newline="", encoding="utf-8") as fh:
        return sum(1 for _ in csv.reader(fh)) - 1


def _count(db_file: Path, source: str) -> int:
    con = sqlite3.connect(f"{db_file.as_uri()}?mode=ro", uri=True)
    try:
        return con.execute("SELECT count(*) FROM parts WHERE source = ?", (source,)).fetchone()[0]
    finally:
        con.close()


def _integrity(db_file: Path) -> str:
    con = sqlite3.connect(db_file)
    try:
        return con.execute("PRAGMA integrity_check").fetchone()[0]
    finally:
        con.close()


def _one_error_line(stderr: str) -> str:
    lines = [line for line in stderr.splitlines() if line.strip()]
    assert len(lines) == 1 and lines[0].startswith("Error: "), stderr
    assert "Traceback" not in stderr
    return lines[0]


def test_builtin_count(catalogue_url):
    assert _count(_file(catalogue_url), "builtin") == BUILTIN_PARTS


# ---------------------------------------------------------------------------------------------
# item 1: WAL journal mode and a busy timeout


def test_a_writable_file_gets_wal_mode_and_the_busy_timeout(tmp_path, monkeypatch):
    monkeypatch.setenv("DROPPER_BUSY_TIMEOUT", "2.5")
    db_file = tmp_path / "new.sqlite"
    engine = make_engine(f"sqlite:///{db_file}")
    try:
        with engine.connect() as conn:
            assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
            assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == 2500  # ms
            assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
    finally:
        engine.dispose()
    # persistent in the file: SQLite file format, bytes 18-19 are 2 in WAL mode
    assert db_file.read_bytes()[18:20] == b"\x02\x02"


@pytest.mark.parametrize("text", ["soon", "-1", "nan", "inf", "1e9"])
def test_a_bad_busy_timeout_is_refused(monkeypatch, text):
    monkeypatch.setenv("DROPPER_BUSY_TIMEOUT", text)
    with pytest.raises(BadValueError, match="DROPPER_BUSY_TIMEOUT"):
        locking.busy_timeout_s()


def test_the_default_busy_timeout(monkeypatch):
    monkeypatch.delenv("DROPPER_BUSY_TIMEOUT", raising=False)
    assert locking.busy_timeout_s() == locking.BUSY_TIMEOUT_S == 60.0


# ---------------------------------------------------------------------------------------------
# item 2: writers wait, retry for a bounded time, then exit 4 naming the file


def test_an_import_waits_for_a_short_lock(catalogue_copy_url, tmp_path):
    db_file = _file(catalogue_copy_url)
    stock = _stock_list(tmp_path / "shelf.csv")
    holder = _LockHolder(db_file, 1.0)
    result = _cli("parts", "import", str(stock), "--db", str(db_file), timeout_s="20")
    holder.wait()
    assert result.returncode == 0, result.stderr
    assert _count(db_file, "import:shelf") == _demo_rows()


@pytest.mark.parametrize(
    "command",
    [["parts", "import", "STOCK"], ["parts", "build"], ["parts", "import", "STOCK", "--partial"]],
)
def test_a_writer_past_the_busy_timeout_exits_4_naming_the_file(
    catalogue_copy_url, tmp_path, command
):
    db_file = _file(catalogue_copy_url)
    stock = _stock_list(tmp_path / "shelf.csv")
    args = [str(stock) if a == "STOCK" else a for a in command]
    holder = _LockHolder(db_file, 2.5)
    try:
        result = _cli(*args, "--db", str(db_file), timeout_s="0.3")
    finally:
        holder.wait()
    assert result.returncode == EXIT_BUSY == 4
    line = _one_error_line(result.stderr)
    assert "catalogue busy" in line and str(db_file) in line and "nothing was written" in line
    assert _count(db_file, "import:shelf") == 0
    assert _integrity(db_file) == "ok"


def test_first_use_past_the_busy_timeout_exits_4(tmp_path):
    db_file = tmp_path / "fresh.sqlite"
    holder = _LockHolder(db_file, 2.5)  # makes the (empty) file and locks it
    try:
        result = _cli("parts", "stats", "--db", str(db_file), timeout_s="0.3")
    finally:
        holder.wait()
    assert result.returncode == 4
    assert "catalogue busy" in _one_error_line(result.stderr)
    # afterwards the first use goes through
    assert _cli("parts", "stats", "--db", str(db_file)).returncode == 0


# ---------------------------------------------------------------------------------------------
# item 3: several first uses at once


def test_concurrent_first_uses_all_succeed_with_the_whole_catalogue(tmp_path):
    """Six processes start on a file that does not exist yet (``--create``: a missing ``--db``
    file is otherwise refused): one migrates and builds, the
    others wait for its write lock and then find the work done (the decision is taken again
    inside the lock); none sees a half-made schema or a partial build."""
    db_file = tmp_path / "first.sqlite"
    procs = [_popen("parts", "stats", "--json", "--create", "--db", str(db_file)) for _ in range(6)]
    outs = [p.communicate(timeout=180) for p in procs]
    assert [p.returncode for p in procs] == [0] * 6, [err for _, err in outs]
    counts = {json.loads(out)["sources"]["builtin"] for out, _ in outs}
    assert counts == {BUILTIN_PARTS}
    assert _integrity(db_file) == "ok"
    con = sqlite3.connect(db_file)
    try:
        assert len(con.execute("SELECT version_num FROM alembic_version").fetchall()) == 1
    finally:
        con.close()


# ---------------------------------------------------------------------------------------------
# item 4: a read-only catalogue serves queries; writing to it is exit 2 naming the file


def _read_only_urls(db_file: Path) -> list[str]:
    return [f"sqlite:///{db_file}?mode=ro", f"sqlite:///file:{db_file}?mode=ro&uri=true"]


@pytest.mark.parametrize("form", [0, 1])
def test_a_read_only_url_serves_queries(catalogue_copy_url, tmp_path, form):
    db_file = _file(catalogue_copy_url)
    before = _checksums(db_file)
    url = _read_only_urls(db_file)[form]
    found = _cli("parts", "find", "x2 330n", "--db", url, "--json")
    assert found.returncode == 0, found.stderr
    assert json.loads(found.stdout)["count"] > 0
    stats = _cli("parts", "stats", "--db", url, "--json")
    assert stats.returncode == 0 and json.loads(stats.stdout)["parts"] == BUILTIN_PARTS
    audit = _cli(
        "audit", str(ROOT / "tests" / "data" / "audit_vent_sound.csv"), "--freq", "50,60",
        "--db", url,
    )  # fmt: skip
    assert audit.returncode == 0, audit.stderr
    assert "mains potential" in audit.stdout  # the cautions, as on any catalogue
    if form == 0:  # one design is enough to show the solver reads a read-only file
        design = _cli("design", "--load", "12m", "--vout", "5.1", "--mains", "230", "--db", url)
        assert design.returncode == 0, design.stderr
        assert "mains potential" in design.stdout
    dry = _cli("parts", "import", str(_stock_list(tmp_path / "s.csv")), "--dry-run", "--db", url)
    assert dry.returncode == 0, dry.stderr
    assert "dry run: nothing written" in dry.stdout
    assert _checksums(db_file)[0] == before[0]  # the database file itself


@pytest.mark.parametrize(
    "command, what",
    [
        (["parts", "build"], "the catalogue build"),
        (["parts", "import", "STOCK"], "the import"),
    ],
)
def test_writing_to_a_read_only_catalogue_is_exit_2(catalogue_copy_url, tmp_path, command, what):
    db_file = _file(catalogue_copy_url)
    stock = _stock_list(tmp_path / "shelf.csv")
    args = [str(stock) if a == "STOCK" else a for a in command]
    result = _cli(*args, "--db", _read_only_urls(db_file)[0])
    assert result.returncode == 2
    line = _one_error_line(result.stderr)
    assert str(db_file) in line and "is read-only" in line and what in line
    assert _count(db_file, "import:shelf") == 0


def test_a_read_only_new_file_is_not_created(tmp_path):
    db_file = tmp_path / "missing.sqlite"
    result = _cli("parts", "stats", "--db", f"sqlite:///{db_file}?mode=ro")
    assert result.returncode == 2
    _one_error_line(result.stderr)
    assert not db_file.exists()


def test_a_file_or_folder_without_write_permission_is_opened_read_only(
    catalogue_copy_url, monkeypatch
):
    """The detection itself (os.access says no); as root the permission bits are not
    enforced, so the answer of os.access is what is simulated here."""
    db_file = _file(catalogue_copy_url)
    assert db_file.read_bytes()[18:20] == b"\x02\x02"  # WAL
    monkeypatch.setattr(locking.os, "access", lambda path, mode: False)
    engine = open_catalogue(f"sqlite:///{db_file}")
    try:
        assert locking.is_read_only(engine)
        # WAL file, no -wal file and a folder SQLite cannot write its -shm into: immutable
        assert engine.url.query.get("mode") == "ro" and engine.url.query.get("immutable") == "1"
        with engine.connect() as conn:
            assert len(conn.execute(select(Part.id)).all()) == BUILTIN_PARTS
    finally:
        engine.dispose()


@pytest.mark.skipif(
    not hasattr(os, "geteuid") or os.geteuid() == 0,
    reason="permission bits do not bind root; the detection is tested with os.access above",
)
def test_a_catalogue_without_write_permission_serves_and_refuses(catalogue_copy_url, tmp_path):
    db_file = _file(catalogue_copy_url)
    folder = tmp_path / "ro"
    folder.mkdir()
    target = folder / "catalogue.sqlite"
    shutil.copyfile(db_file, target)
    target.chmod(0o444)
    folder.chmod(0o555)
    try:
        assert _cli("parts", "find", "x2 330n", "--db", str(target)).returncode == 0
        result = _cli("parts", "build", "--db", str(target))
        assert result.returncode == 2
        assert "is read-only" in _one_error_line(result.stderr)
    finally:
        folder.chmod(0o755)


# ---------------------------------------------------------------------------------------------
# item 5: --dry-run never writes


def _checksums(db_file: Path) -> list[str | None]:
    out = []
    for suffix in ("", "-wal", "-shm"):
        path = db_file.with_name(db_file.name + suffix)
        out.append(hashlib.sha256(path.read_bytes()).hexdigest() if path.exists() else None)
    return out


def test_dry_run_leaves_the_database_and_its_wal_and_shm_unchanged(catalogue_copy_url, tmp_path):
    db_file = _file(catalogue_copy_url)
    full = _stock_list(tmp_path / "shelf.csv")
    assert _cli("parts", "import", str(full), "--db", str(db_file)).returncode == 0
    shorter = tmp_path / "shelf-short.csv"
    lines = full.read_text(encoding="utf-8").splitlines(keepends=True)
    shorter.write_text("".join(lines[:-3]), encoding="utf-8")  # would withdraw 3 rows
    before = _checksums(db_file)
    for stock, supplier in ((shorter, "shelf"), (full, "newcomer"), (full, "shelf")):
        result = _cli(
            "parts", "import", str(stock), "--supplier", supplier, "--dry-run", "--json",
            "--db", str(db_file),
        )  # fmt: skip
        assert result.returncode == 0, result.stderr
        doc = json.loads(result.stdout)
        assert doc["dry_run"] and not doc["written"]
        assert _checksums(db_file) == before
    assert doc["unchanged"] == _demo_rows()
    assert _count(db_file, "import:newcomer") == 0


# ---------------------------------------------------------------------------------------------
# item 6: importers and readers at once


def test_four_importers_at_once_all_finish_and_nothing_is_lost(catalogue_copy_url, tmp_path):
    db_file = _file(catalogue_copy_url)
    stock = _stock_list(tmp_path / "list.csv")
    suppliers = ["north", "south", "east", "north"]  # 'north' twice at once: one list, once
    procs = [
        _popen("parts", "import", str(stock), "--supplier", s, "--json", "--db", str(db_file))
        for s in suppliers
    ]
    outs = [p.communicate(timeout=180) for p in procs]
    codes = [p.returncode for p in procs]
    assert set(codes) <= {0, 4}, [err for _, err in outs]
    # with the default busy timeout (60 s) nobody should have had to give up
    assert codes == [0, 0, 0, 0], [err for _, err in outs]
    for s in set(suppliers):
        assert _count(db_file, f"import:{s}") == _demo_rows()
    assert _count(db_file, "builtin") == BUILTIN_PARTS
    assert _integrity(db_file) == "ok"


READER = textwrap.dedent(
    """
    import json, sys, time
    from pathlib import Path
    from selector.catalogue import make_engine, parts_frame
    engine = make_engine(sys.argv[1])
    stop = Path(sys.argv[2])
    seen, reads = set(), 0
    print("ready", flush=True)
    while not stop.exists() or reads < 2:
        frame = parts_frame(engine, checked=False)
        builtin = int((frame["source"] == "builtin").sum())
        prices = sorted(set(frame.loc[frame["source"] == "import:flip", "unit_price"].round(6)))
        seen.add(json.dumps([builtin, prices]))
        reads += 1
    engine.dispose()
    print(json.dumps({"reads": reads, "seen": sorted(seen)}))
    """
)
WRITER = textwrap.dedent(
    """
    import sys
    from selector.catalogue import build_catalogue, make_engine
    from selector.catalogue.importer import import_stock
    url, low, high = sys.argv[1:4]
    for step in ("build", high, "build", low, "build", high):
        if step == "build":
            build_catalogue(url)
        else:
            engine = make_engine(url)
            assert import_stock(engine, step, "flip").written
            engine.dispose()
    """
)


def test_a_reader_during_writers_sees_the_old_or_the_new_catalogue(catalogue_copy_url, tmp_path):
    """While another process rebuilds the built-in rows three times (delete and re-insert,
    3000 rows in chunks of 500) and re-imports a list three times with every price changed, a
    reader reading the whole parts table again and again always sees 3000 built-in rows and
    one price for the whole list, and it sees both prices (so it did read between writes)."""
    db_file = _file(catalogue_copy_url)
    url = f"sqlite:///{db_file}"
    low = _stock_list(tmp_path / "low.csv", price="0.5")
    high = _stock_list(tmp_path / "high.csv", price="0.75")
    first = _cli("parts", "import", str(low), "--supplier", "flip", "--db", str(db_file))
    assert first.returncode == 0, first.stderr
    stop = tmp_path / "stop"
    reader = subprocess.Popen(
        [sys.executable, "-c", READER, url, str(stop)],
        stdout=subprocess.PIPE,
        text=True,
        env=_env(),
    )
    assert reader.stdout is not None and reader.stdout.readline().strip() == "ready"
    writer = subprocess.run(
        [sys.executable, "-c", WRITER, url, str(low), str(high)],
        capture_output=True,
        text=True,
        env=_env(),
        timeout=180,
    )
    stop.touch()
    out = json.loads(reader.communicate(timeout=60)[0].strip().splitlines()[-1])
    assert writer.returncode == 0, writer.stderr
    assert reader.returncode == 0
    seen = [json.loads(text) for text in out["seen"]]
    assert {builtin for builtin, _ in seen} == {BUILTIN_PARTS}
    assert sorted(prices for _, prices in seen) == [[0.5], [0.75]]
    assert _integrity(db_file) == "ok"
