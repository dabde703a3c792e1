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

from selector.errors import EXIT_BAD_INPUT, BadValueError, OutputWriteError
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


# All-or-nothing renames (issue 14: "a command writes all of its outputs or none"). The
# mechanism rests on POSIX.1-2017 rename(): an existing new name is replaced atomically within
# one file system (readers see the old file or the new one), and link(): a second name keeps
# the old file. These tests make the second rename fail after the first succeeded.
OLD_BYTES = b"Ref,Value\r\nC1,330n\r\n\xef\xbb\xbf\x00 old bytes\n"


def _stage_two(first: Path, second: Path) -> Outputs:
    out = Outputs()
    out.write(first, "new first", newline="")
    out.write(second, b"new second")
    return out


@pytest.mark.parametrize("first_existed", [True, False])
@pytest.mark.parametrize("how", ["hard link", "copy"])
def test_a_failed_second_rename_puts_the_first_target_back(
    tmp_path, first_existed, how, monkeypatch
):
    left, right = tmp_path / "left", tmp_path / "right"
    left.mkdir()
    right.mkdir()
    first, second = left / "bom.csv", right / "report.html"
    if first_existed:
        first.write_bytes(OLD_BYTES)
    if how == "copy":  # a file system without hard links: the old file is kept as a copy

        def no_links(*args, **kwargs):
            raise PermissionError(1, "Operation not permitted")

        monkeypatch.setattr(os, "link", no_links)
    out = _stage_two(first, second)
    second.mkdir()  # the second target became a folder after staging: its rename must fail
    with pytest.raises(OutputWriteError) as caught:
        out.commit()
    assert caught.value.exit_code == EXIT_BAD_INPUT and isinstance(caught.value, OSError)
    assert str(caught.value).startswith(f"cannot write {second}: Is a directory")
    assert "put back" in str(caught.value)
    if first_existed:
        assert first.read_bytes() == OLD_BYTES  # byte for byte
    else:
        assert not first.exists()
    assert _files(left) == (["bom.csv"] if first_existed else [])  # no .tmp, no .old
    assert _files(right) == ["report.html"] and _files(second) == []


def test_permission_denied_on_the_second_rename_names_that_file(tmp_path, monkeypatch):
    first, second = tmp_path / "b.csv", tmp_path / "r.html"
    first.write_bytes(OLD_BYTES)
    second.write_bytes(b"old report")
    out = _stage_two(first, second)
    real_replace = os.replace

    def refuse_the_report(src, dst):
        if Path(dst) == second and str(src).endswith(".tmp"):
            raise PermissionError(13, "Permission denied", str(src), None, str(dst))
        return real_replace(src, dst)

    monkeypatch.setattr(os, "replace", refuse_the_report)
    with pytest.raises(OutputWriteError, match=f"^cannot write {second}: Permission denied"):
        out.commit()
    assert first.read_bytes() == OLD_BYTES and second.read_bytes() == b"old report"
    assert _files(tmp_path) == ["b.csv", "r.html"]


def test_a_successful_commit_over_old_files_keeps_no_old_names(tmp_path):
    first, second = tmp_path / "b.csv", tmp_path / "r.html"
    first.write_bytes(OLD_BYTES)
    os.symlink("b.csv", second)  # a link as target: the link is replaced, not its file
    _stage_two(first, second).commit()
    assert first.read_bytes() == b"new first" and second.read_bytes() == b"new second"
    assert not second.is_symlink()
    assert _files(tmp_path) == ["b.csv", "r.html"]


@pytest.mark.parametrize("bom_existed", [True, False])
def test_design_leaves_the_bom_as_it_was_when_the_report_cannot_be_renamed(
    tmp_path, catalogue_url, monkeypatch, bom_existed
):
    """issue 14: a command writes all of its outputs or none, also when the last rename fails."""
    import selector.report as report_module

    bom, report = tmp_path / "b.csv", tmp_path / "r.html"
    if bom_existed:
        bom.write_bytes(OLD_BYTES)
    real_write_report = report_module.write_report

    def stage_then_block(path, *args, **kwargs):
        staged = real_write_report(path, *args, **kwargs)
        Path(path).mkdir()  # another process made a folder there after the checks
        return staged

    monkeypatch.setattr(report_module, "write_report", stage_then_block)
    r = runner.invoke(
        app(), [*DESIGN, "--bom", str(bom), "--report", str(report), "--db", catalogue_url]
    )
    assert r.exit_code == 2, r.output
    # one error line (after the progress line), naming the report
    errors = [line for line in r.stderr.splitlines() if line.startswith("Error:")]
    assert len(errors) == 1 and r.stderr.endswith(errors[0] + "\n")
    assert errors[0].startswith(f"Error: cannot write {report}: Is a directory; the other")
    if bom_existed:
        assert bom.read_bytes() == OLD_BYTES
    assert _files(tmp_path) == (["b.csv", "r.html"] if bom_existed else ["r.html"])
    assert _files(report) == []


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
