"""Derating policy: defaults from DOMAIN.md section 4 and TOML overrides with clear errors."""

from __future__ import annotations

import pytest

from selector.errors import BadValueError
from selector.policy import Policy, load_policy


def test_defaults_match_domain_section_4():
    p = Policy()
    assert p.series_r_power_fraction == 0.6  # [P] DOMAIN.md section 4
    assert p.limiting_voltage_fraction == 0.8  # [P]
    assert p.zener_power_fraction == 0.5  # [P]
    assert p.reservoir_voltage_fraction == 0.8  # rated >= Vz_max / 0.8 [P]
    assert p.standby_limit_w == 0.5  # EU Regulation 2023/826 [S]


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
