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
