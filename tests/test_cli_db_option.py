"""A mistyped ``--db`` is loud (issue 14): a SQLite file that does not exist is refused with
exit 2, naming the path and the nearest existing file, unless the command is ``parts build``
or carries ``--create``. Without ``--db`` ($DROPPER_DB or the per-user file) the first use still
builds the catalogue (``test_cli_parts.test_default_database_comes_from_the_environment``).

These check the command surface (exit codes of the contract), not physics.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from typer.testing import CliRunner

from selector.catalogue.paths import missing_file, nearest_file
from selector.cli import app

DATA = Path(__file__).parent / "data"
runner = CliRunner()

#: every command that reads the catalogue, with the least it needs to reach the catalogue
COMMANDS = {
    "parts find": ["parts", "find", "x2"],
    "parts stats": ["parts", "stats"],
    "parts import": ["parts", "import", str(DATA / "demo_stock.csv"), "--supplier", "s"],
    "design": ["design", "--vout", "5.1", "--load", "10m"],
    "audit": ["audit", str(DATA / "audit_vent_sound.csv"), "--load", "10m"],
    "yield": ["yield", "--bom", str(DATA / "audit_vent_sound.csv"), "--load", "10m"],
    "check": ["check", "--cap", "330n", "--load", "10m", "--varistor", "430"],
}


@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_missing_db_file_is_refused(command, tmp_path, catalogue_url):
    real = tmp_path / "catalogue.sqlite"
    shutil.copyfile(catalogue_url.removeprefix("sqlite:///"), real)
    typo = tmp_path / "catalouge.sqlite"
    r = runner.invoke(app, [*COMMANDS[command], "--db", str(typo)])
    assert r.exit_code == 2, (r.stdout, r.stderr)
    lines = r.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith(f"Error: --db {typo}: no catalogue file {typo}")
    assert f"(nearest existing file: {real})" in lines[0] and "--create" in lines[0]
    assert not typo.exists()


def test_missing_folder_is_named(tmp_path):
    url = f"sqlite:///{tmp_path / 'nowhere' / 'c.sqlite'}"
    r = runner.invoke(app, ["parts", "stats", "--db", url])
    assert r.exit_code == 2
    assert f"(the folder {tmp_path / 'nowhere'} does not exist)" in r.stderr
    assert not (tmp_path / "nowhere").exists()


@pytest.mark.parametrize("command", [["parts", "build"], ["parts", "stats", "--create"]])
def test_build_and_create_make_a_new_catalogue(command, tmp_path):
    path = tmp_path / "new.sqlite"
    r = runner.invoke(app, [*command, "--json", "--db", str(path)])
    assert r.exit_code == 0, r.stderr
    assert path.exists()
    # once made, other commands open it without --create
    assert runner.invoke(app, ["parts", "find", "x2", "--db", str(path)]).exit_code == 0


def test_import_with_create_into_a_new_catalogue(tmp_path):
    path = tmp_path / "shop.sqlite"
    args = ["parts", "import", str(DATA / "demo_stock.csv"), "--supplier", "s", "--db", str(path)]
    assert runner.invoke(app, args).exit_code == 2 and not path.exists()
    r = runner.invoke(app, [*args, "--create"])
    assert r.exit_code in (0, 1), r.stderr
    assert path.exists()


def test_non_file_urls_are_not_checked():
    assert missing_file("sqlite://") is None
    assert missing_file("postgresql://me@host/db") is None
    assert missing_file("sqlite:///file:x?mode=memory&uri=true") is None


def test_nearest_file_prefers_database_files(tmp_path):
    for name in ("catalogue.sqlite", "catalogue.txt", "other.db"):
        (tmp_path / name).write_text("")
    assert nearest_file(tmp_path / "catalog.sqlite") == tmp_path / "catalogue.sqlite"
    assert nearest_file(tmp_path / "zzzzzzzz") is None
