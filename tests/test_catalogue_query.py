"""Catalogue queries: free-text search, filters, statistics (behaviour of our own code)."""

from __future__ import annotations

import pytest

from selector.catalogue import KINDS, builtin_rows, catalogue_stats, check_kind, find_parts
from selector.errors import BadValueError


def test_x2_330n_305_ranks_the_305_vac_x2_first(catalogue_engine):
    found = find_parts(catalogue_engine, "x2 330n 305")
    top = found[0]
    assert top["kind"] == "x_capacitor" and top["safety_class"] == "X2"
    assert top["value"] == pytest.approx(330e-9) and top["rated_voltage_ac_v"] == 305.0
    # every 305 VAC match sorts before any other voltage
    volts = [p["rated_voltage_ac_v"] for p in found]
    first_other = next(i for i, v in enumerate(volts) if v != 305.0)
    assert set(volts[:first_other]) == {305.0} and 305.0 not in volts[first_other:]
    assert all(p["value"] == pytest.approx(330e-9) and p["safety_class"] == "X2" for p in found)


def test_voltage_with_unit_ranks_the_exact_rating_first(catalogue_engine):
    found = find_parts(catalogue_engine, "330n x2 310vac", limit=50)
    assert all(p["rated_voltage_ac_v"] >= 310.0 for p in found)
    assert found[0]["rated_voltage_ac_v"] == 310.0 and found[0]["value"] == pytest.approx(330e-9)
    film = find_parts(catalogue_engine, "polyester 100n 400vdc", limit=50)
    assert {p["rated_voltage_v"] for p in film} == {400.0, 630.0}
    assert film[0]["rated_voltage_v"] == 400.0


def test_class_word_filters(catalogue_engine):
    found = find_parts(catalogue_engine, "x1", limit=500)
    assert found and {p["safety_class"] for p in found} == {"X1"}


def test_value_tokens_are_read_per_kind(catalogue_engine):
    found = find_parts(catalogue_engine, "4k7", limit=100)
    assert found and {p["value"] for p in found} == {4700.0}
    assert {p["kind"] for p in found} == {"resistor"}
    # 4M7 is 4.7 mF for a capacitor but 4.7 Mohm for a resistor (units.py M/m rule)
    ohms = find_parts(catalogue_engine, "4M7 resistor", limit=100)
    assert ohms and {p["value"] for p in ohms} == {4.7e6}
    farads = find_parts(catalogue_engine, "100uF", limit=100)
    assert farads and all(p["value"] == pytest.approx(100e-6) for p in farads)
    assert {p["kind"] for p in farads} == {"electrolytic"}


def test_voltage_and_power_tokens(catalogue_engine):
    found = find_parts(catalogue_engine, "zener 12V 1W", limit=50)
    assert {p["value"] for p in found} == {12.0}
    assert {p["power_w"] for p in found} == {1.0, 3.0, 5.0}
    elcos = find_parts(catalogue_engine, "470u 25V", limit=100)
    assert elcos and all(p["rated_voltage_v"] >= 25.0 for p in elcos)


def test_fuzzy_words_and_cutoff(catalogue_engine):
    found = find_parts(catalogue_engine, "polyester", limit=500)
    assert found and {p["family"] for p in found} == {"pet-film"}
    assert find_parts(catalogue_engine, "qqqzzz") == []


def test_filters_kind_value_voltage_power(catalogue_engine):
    found = find_parts(
        catalogue_engine, kind="resistor", value="100k", min_voltage=300, min_power="1W", limit=50
    )
    assert found
    for p in found:
        assert p["kind"] == "resistor" and p["value"] == 100e3
        assert p["power_w"] >= 1.0 and p["rated_voltage_v"] >= 300.0
    assert find_parts(catalogue_engine, kind="bridge", limit=10)[0]["unit_price"] == 0.05


def test_limit_and_sorting(catalogue_engine):
    found = find_parts(catalogue_engine, kind="fuse", limit=3)
    assert len(found) == 3
    prices = [p["unit_price"] for p in found]
    assert prices == sorted(prices)
    with pytest.raises(BadValueError):
        find_parts(catalogue_engine, limit=0)


def test_result_rows_carry_units(catalogue_engine):
    (p,) = find_parts(catalogue_engine, "res.thick.1206.4k7.5pct", limit=1)
    assert p["code"] == "res.thick.1206.4k7.5pct" and p["value_unit"] == "ohm" and "score" in p


def test_unknown_kind_names_the_nearest():
    with pytest.raises(BadValueError) as info:
        check_kind("zenr")
    text = str(info.value)
    assert "did you mean 'zener'?" in text
    assert all(k in text for k in KINDS)


def test_unreadable_value_is_bad_input(catalogue_engine):
    with pytest.raises(BadValueError):
        find_parts(catalogue_engine, value="abc")


def test_stats_counts(catalogue_engine):
    stats = catalogue_stats(catalogue_engine)
    n = len(builtin_rows())
    assert stats["parts"] == n == sum(stats["kinds"].values())
    assert sum(f["parts"] for f in stats["families"]) == n
    assert list(stats["kinds"]) == list(KINDS)
    assert stats["sources"] == {"builtin": n}
    assert stats["price_notes"] == {"demo price model, invented": n}
    assert stats["price_model"] == "demo price model, invented"
    assert stats["schema_revision"] == "0008"
