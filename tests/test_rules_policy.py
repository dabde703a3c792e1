"""Derating policy: defaults from DOMAIN.md section 4 and TOML overrides with clear errors."""

from __future__ import annotations

import math

import pytest

from selector.errors import BadValueError
from selector.policy import Policy, load_policy, product_class_limit, standby_bound_w


def test_defaults_match_domain_section_4():
    p = Policy()
    assert p.series_r_power_fraction == 0.6  # [P] DOMAIN.md section 4
    assert p.limiting_voltage_fraction == 0.8  # [P]
    assert p.zener_power_fraction == 0.5  # [P]
    assert p.reservoir_voltage_fraction == 0.8  # rated >= Vz_max / 0.8 [P]
    # no standby limit by default: it applies only to products with a standby mode
    # (EU Regulation 2023/826, DOMAIN.md section 10)
    assert p.standby_limit_w is None


def test_product_class_presets_domain_section_10():
    # EU Regulation 2023/826: off/standby 0.5 W (2025), off 0.3 W (2027) [S]; with a display
    # ~0.8 W and networked standby ~2 W [M] from memory (DOMAIN.md section 10)
    assert product_class_limit("standby")[0] == 0.5
    assert product_class_limit("off-mode-2027")[0] == 0.3
    lim, src = product_class_limit("standby-display")
    assert lim == 0.8 and "[M]" in src
    lim, src = product_class_limit("Network_Standby")
    assert lim == 2.0 and "[M]" in src
    assert product_class_limit("always-on")[0] is None
    with pytest.raises(BadValueError, match="one of always-on, standby"):
        product_class_limit("fridge")
    assert standby_bound_w(Policy()) == math.inf
    assert standby_bound_w(Policy(standby_limit_w=0.5)) == 0.5


def test_toml_override(tmp_path):
    f = tmp_path / "strict.toml"
    f.write_text("series_r_power_fraction = 0.5\nload_margin = 0.2\n", encoding="utf-8")
    p = load_policy(f)
    assert p.series_r_power_fraction == 0.5 and p.load_margin == 0.2
    assert p.zener_power_fraction == 0.5
    assert load_policy(None) == Policy()


def test_bad_key_names_file_key_and_valid_keys(tmp_path):
    f = tmp_path / "bad.toml"
    f.write_text("zener_power_fractoin = 0.4\n", encoding="utf-8")
    with pytest.raises(BadValueError) as exc:
        load_policy(f)
    msg = str(exc.value)
    assert str(f) in msg and "zener_power_fractoin" in msg
    assert "did you mean 'zener_power_fraction'" in msg and "valid keys:" in msg


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("zener_power_fraction = 1.5", "fraction in"),
        ("standby_limit_w = -1", "> 0"),
        ('load_margin = "ten"', "finite number"),
        ("load_margin = [", "not valid TOML"),
    ],
)
def test_bad_values(tmp_path, text, match):
    f = tmp_path / "p.toml"
    f.write_text(text + "\n", encoding="utf-8")
    with pytest.raises(BadValueError, match=match):
        load_policy(f)


def test_missing_file(tmp_path):
    with pytest.raises(BadValueError, match="does not exist"):
        load_policy(tmp_path / "nope.toml")


# issue 14: every policy-file error names the file, and the line and key where there is one
@pytest.mark.parametrize(
    ("content", "expected"),
    [
        (b"# strict\n\nzener_power_fraction = 1.5\n", ", line 3: key 'zener_power_fraction' is"),
        (b'load_margin = "20%"\n', ", line 1: key 'load_margin' must be a finite number"),
        (b"load_margin = 1" + b"0" * 400 + b"\n", ", line 1: key 'load_margin' must be a finite"),
        (b"load_margin = inf\n", ", line 1: key 'load_margin' must be a finite number"),
        (b"load_margin = nan\n", ", line 1: key 'load_margin' must be a finite number"),
        (b"x = 1\n'load_margn' = 0.2\n", ", line 1: unknown key 'x'"),
        (b"[limits]\nload_margin = 0.2\n", ", line 1: table [limits] is not allowed"),
        (b"load_margin = 0.2\nload_margin = 0.3\n", ": not valid TOML (Cannot overwrite"),
        (b"load_margin = 0.2\n\xff\xfe\n", ": not UTF-8 text (byte 0xff at offset 18)"),
        (b"\xef\xbb\xbfload_margin = -1\n", ", line 1: key 'load_margin' must be >= 0"),
    ],
)
def test_policy_errors_name_file_line_and_key(tmp_path, content, expected):
    f = tmp_path / "site.toml"
    f.write_bytes(content)
    with pytest.raises(BadValueError) as exc:
        load_policy(f)
    assert str(exc.value).startswith(f"policy file {f}{expected}"), str(exc.value)


def test_policy_folder_is_bad_input(tmp_path):
    with pytest.raises(BadValueError, match=f"policy file {tmp_path}: cannot be read"):
        load_policy(tmp_path)


@pytest.mark.parametrize(
    "content", [b"load_margin = 1" + b"0" * 400 + b"\n", b"\xff\n", b"[t]\n", b"a = [\n"]
)
def test_policy_errors_exit_2_in_one_line(tmp_path, content):
    from typer.testing import CliRunner

    from selector.cli import app

    f = tmp_path / "site.toml"
    f.write_bytes(content)
    # design reads the policy before it opens the catalogue, so no --db is needed
    r = CliRunner().invoke(app, ["design", "--load", "10m", "--vout", "5.1", "--policy", str(f)])
    assert r.exit_code == 2, r.stderr
    assert r.stderr.startswith(f"Error: policy file {f}") and r.stderr.count("\n") == 1
