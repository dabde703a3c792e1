"""Output files (issue 14): never over an input, all of a command's outputs or none, the user's
umask, no temporary file left behind (also on SIGTERM). The one writer is selector/outputs.py.

These check the command surface and file handling, not physics.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from selector.errors import BadValueError
from selector.outputs import Outputs, check_outputs, write_atomic

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).parent / "data"
runner = CliRunner()
DESIGN = ["design", "--load", "8m", "--vout", "5.1", "--mains", "230", "--freq", "50"]


def _files(folder: Path) -> list[str]:
    return sorted(p.name for p in folder.iterdir())


def test_audit_report_over_its_bom_is_refused(tmp_path, catalogue_url):
    """issue 14: `audit x.csv --report x.csv` overwrote the input with the report (exit 0)."""
    bom = tmp_path / "x.csv"
    bom.write_bytes((DATA / "audit_vent_sound.csv").read_bytes())
    before = bom.read_bytes()
    link = tmp_path / "link.html"
    link.symlink_to(bom)
    for report in (bom, link, tmp_path / "." / "x.csv"):
        r = runner.invoke(
            app(),
            ["audit", str(bom), "--load", "10m", "--report", str(report), "--db", catalogue_url],
        )
        assert r.exit_code == 2, r.stderr
        assert r.stderr.startswith(f"Error: --report {report} is the input BOM; refusing")
        assert bom.read_bytes() == before
    assert _files(tmp_path) == ["link.html", "x.csv"]


def test_design_bom_not_written_when_report_folder_is_missing(tmp_path, catalogue_url):
    """issue 14: `design --bom b.csv --report /nonexistent/r.html` exited 2 but had already
    written the BOM."""
    bom, report = tmp_path / "b.csv", tmp_path / "nowhere" / "r.html"
    r = runner.invoke(
        app(), [*DESIGN, "--bom", str(bom), "--report", str(report), "--db", catalogue_url]
    )
    assert r.exit_code == 2
    assert r.stderr == f"Error: --report {report}: the folder {report.parent} does not exist\n"
    assert _files(tmp_path) == []


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (["--bom", "{d}/same.csv", "--report", "{d}/same.csv"], "is also --bom"),
        (["--bom", "{d}"], "is a folder"),
        (["--report", "{d}/p.toml", "--policy", "{d}/p.toml"], "is the input --policy"),
    ],
)
def test_design_output_paths_refused(tmp_path, catalogue_url, args, message):
    (tmp_path / "p.toml").write_text("load_margin = 0.2\n", encoding="utf-8")
    args = [a.format(d=tmp_path) for a in args]
    r = runner.invoke(app(), [*DESIGN, *args, "--db", catalogue_url])
    assert r.exit_code == 2 and message in r.stderr, r.stderr
    assert _files(tmp_path) == ["p.toml"]


def test_design_writes_both_outputs_or_none(tmp_path, catalogue_url, monkeypatch):
    bom, report = tmp_path / "b.csv", tmp_path / "r.html"
    import selector.report.html as html

    def broken(*args, **kwargs):
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(html, "render_report", broken)
    args = [*DESIGN, "--bom", str(bom), "--report", str(report), "--db", catalogue_url]
    r = runner.invoke(app(), args)
    assert r.exit_code == 2 and "No space left on device" in r.stderr
    assert _files(tmp_path) == []  # no BOM, no report, no temporary file
    monkeypatch.undo()
    r = runner.invoke(app(), args)
    assert r.exit_code == 0, r.stderr
    assert _files(tmp_path) == ["b.csv", "r.html"]


def test_outputs_all_or_nothing_and_nothing_left():
    import tempfile

    folder = Path(tempfile.mkdtemp())
    (folder / "a.txt").write_text("old", encoding="utf-8")
    with pytest.raises(RuntimeError):
        with Outputs() as out:
            out.write(folder / "a.txt", "new")
            out.write(folder / "b.txt", b"bytes")
            raise RuntimeError("a failure after both were staged")
    assert _files(folder) == ["a.txt"] and (folder / "a.txt").read_text() == "old"
    with Outputs() as out:
        out.write(folder / "a.txt", "new")
        out.write(folder / "b.txt", b"bytes")
        assert len(_files(folder)) == 3  # a.txt and two hidden staged files, b.txt not yet
    assert _files(folder) == ["a.txt", "b.txt"] and (folder / "a.txt").read_text() == "new"


@pytest.mark.parametrize("umask", [0o022, 0o077, 0o002])
def test_new_files_honour_the_umask(tmp_path, umask):
    old = os.umask(umask)
    try:
        user = write_atomic(tmp_path / "report.html", "<p>x</p>")
        cache = write_atomic(tmp_path / "c" / "frame.pkl", b"x", private=True, make_folder=True)
    finally:
        os.umask(old)
    assert user.stat().st_mode & 0o777 == 0o666 & ~umask
    assert cache.stat().st_mode & 0o777 == 0o600


def test_check_outputs_same_file_through_a_hard_link(tmp_path):
    a = tmp_path / "a.csv"
    a.write_text("x", encoding="utf-8")
    os.link(a, tmp_path / "b.csv")
    with pytest.raises(BadValueError, match="is the input BOM"):
        check_outputs([("--report", tmp_path / "b.csv")], [("BOM", a)])
    check_outputs([("--report", tmp_path / "c.csv")], [("BOM", a), ("--roles", None)])


_STAGE_AND_WAIT = """
import signal, sys, time
from selector.outputs import Outputs
# a run under nohup inherits SIGHUP ignored, which Outputs rightly keeps: start from the default
signal.signal(signal.SIGHUP, signal.SIG_DFL)
out = Outputs()
out.write(sys.argv[1] + "/bom.csv", "a,b\\n")
out.write(sys.argv[1] + "/report.html", "<p>x</p>" * 1000)
print("staged", flush=True)
time.sleep(60)
"""


@pytest.mark.parametrize("signum", [signal.SIGTERM, signal.SIGHUP])
def test_temporary_files_removed_on_sigterm(tmp_path, signum):
    """issue 14: a killed --report left a hidden temporary file."""
    env = {**os.environ, "PYTHONPATH": str(ROOT)}
    proc = subprocess.Popen(
        [sys.executable, "-c", _STAGE_AND_WAIT, str(tmp_path)],
        stdout=subprocess.PIPE,
        text=True,
        env=env,
    )
    try:
        assert proc.stdout.readline().strip() == "staged"
        assert len(_files(tmp_path)) == 2  # the two hidden temporary files
        proc.send_signal(signum)
        assert proc.wait(timeout=30) == -signum  # still reported as killed by the signal
    finally:
        proc.kill()
        proc.wait()
    assert _files(tmp_path) == []


def app():
    from selector.cli import app as the_app

    return the_app
