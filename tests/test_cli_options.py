"""One parser per option: the shared circuit options read and refuse alike in check, design,
audit and yield (selector/cli/_circuit.py), and every refusal is one line naming the option.

These check the command surface (exit codes of the contract: 2 bad input), not physics.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from selector.cli import app
from selector.cli._circuit import parse_burst, parse_cap_loss

DATA = Path(__file__).parent / "data"
runner = CliRunner()

#: the minimal valid invocation of each command sharing the circuit options
COMMANDS = {
    "check": ["check", "--cap", "330n", "--load", "10m"],
    "audit": ["audit", str(DATA / "audit_vent_sound.csv"), "--load", "10m"],
    "yield": ["yield", "--cap", "330n", "--load", "10m", "--samples", "200"],
    "design": ["design", "--vout", "5.1", "--load", "10m"],
}


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_burst_reads_the_same_in_both_forms():
    assert parse_burst("30m/5ms/1s") == parse_burst("30m", "5ms", "1s") == (0.03, 0.005, 1.0)
    assert parse_burst(None) == (0.0, 0.0, 0.0)
    assert parse_cap_loss("10") == pytest.approx(0.1) and parse_cap_loss("10 %") == 0.1


@pytest.mark.parametrize(
    "option, value, named",
    [
        ("--cap-loss", "100", "--cap-loss"),
        ("--cap-loss", "nan", "--cap-loss"),
        ("--mains-tol", "-5", "--mains-tol"),
        ("--mains", "1e999", "--mains"),
        ("--load", "1e999", "--load"),
        ("--ambient", "nan", "--ambient"),
        ("--ambient", "900", "--ambient"),
        ("--ambient", "-300", "--ambient"),
        ("--surge", "inf", "--surge"),
        ("--freq", "1e-320", "--freq"),
        ("--burst", "30m/5ms", "--burst"),
        ("--burst", "1e999/5ms/1s", "--burst"),
    ],
)
@pytest.mark.parametrize("command", sorted(COMMANDS))
def test_shared_options_refuse_alike(command, option, value, named, catalogue_url):
    r = invoke(*COMMANDS[command], "--db", catalogue_url, option, value)
    assert r.exit_code == 2, (command, r.output, r.stderr)
    lines = r.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ") and named in lines[0]


@pytest.mark.parametrize("command", ["check", "audit"])
def test_burst_in_one_value_works_outside_design(command, catalogue_url):
    """issue 14: `--burst 30m/5ms/1s` worked in design but exited 2 in check and audit."""
    r = invoke(*COMMANDS[command], "--db", catalogue_url, "--burst", "30m/5ms/1s")
    assert r.exit_code in (0, 1), r.stderr
