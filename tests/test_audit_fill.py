"""Ratings a BOM line lacks, filled from the best-matching catalogue family ("assumed from
family ..."), or left unknown when nothing matches.

Outside references: the generic thick-film chip ratings of DOMAIN.md table 5 (0805: 1/8 W,
limiting element voltage 150 V; 1206: 1/4 W, 200 V) are makers' generic data [S]; the lowest
standard X2 rated voltage 275 V AC is from the list of typical X2 ratings (275/305/310/350 V AC)
[S]. The pulse-energy figures are the catalogue's demo model (invented) and are checked only as
"taken from that family, the most conservative row".
"""

from __future__ import annotations

import pytest

from selector.audit.evaluate import fill_from_catalogue
from selector.audit.ratings import read_ratings


@pytest.fixture(scope="module")
def frame(catalogue_url):
    from selector.catalogue import make_engine, parts_frame

    engine = make_engine(catalogue_url)
    try:
        yield parts_frame(engine)
    finally:
        engine.dispose()


def test_chip_0805_takes_the_generic_ratings(frame):
    r = read_ratings("R1", "47R", "Resistor, thick film chip, 5%", "R_0805_2012Metric")
    fam = fill_from_catalogue(r, ("power_w", "limiting_voltage_v", "pulse_energy_j"), frame)
    assert fam == "chip-thick-film"
    assert r.power_w == pytest.approx(0.125)  # 0805: 1/8 W, DOMAIN.md table 5 [S]
    assert r.limiting_voltage_v == pytest.approx(150.0)  # 0805: 150 V, DOMAIN.md table 5 [S]
    assert set(r.assumed) == {"power_w", "limiting_voltage_v", "pulse_energy_j"}


def test_stated_ratings_are_kept_and_only_gaps_filled(frame):
    r = read_ratings("R3", "470k", "Resistor, thick film, 1/4W, 200V", "R_1206_3216Metric")
    fill_from_catalogue(r, ("power_w", "limiting_voltage_v", "derate_end_c"), frame)
    assert (r.power_w, r.limiting_voltage_v) == (0.25, 200.0)
    assert "power_w" not in r.assumed and "limiting_voltage_v" not in r.assumed


def test_metal_oxide_family_is_chosen_by_words_and_power(frame):
    r = read_ratings("R1", "47R", "Resistor, metal oxide, 1W, 350V, 5%", "R_Axial_DIN0414")
    fam = fill_from_catalogue(r, ("pulse_energy_j",), frame)
    assert fam == "axial-metal-oxide"
    rows = frame[(frame.family == fam) & (frame.power_w == 1.0) & (frame.value == 47.0)]
    assert r.pulse_energy_j == pytest.approx(rows.pulse_energy_j.min())


def test_x2_without_voltage_takes_the_lowest_of_its_family(frame):
    r = read_ratings("C1", "220n", "Capacitor X2, metallized polypropylene")
    fam = fill_from_catalogue(r, ("rated_voltage_ac_v", "dvdt_v_per_s"), frame)
    assert fam is not None and fam.startswith("x2")
    assert r.rated_voltage_ac_v == pytest.approx(275.0)  # lowest common X2 rating [S]
    assert r.assumed["rated_voltage_ac_v"] == fam


def test_nothing_matches_leaves_the_rating_unknown(frame):
    r = read_ratings("R1", "47R", "")  # no package, no words: no family fits well enough
    assert fill_from_catalogue(r, ("power_w", "pulse_energy_j"), frame) is None
    assert r.power_w is None and r.assumed == {}


def test_safety_class_is_never_filled(frame):
    r = read_ratings("C1", "220n", "film capacitor 305VAC")
    fill_from_catalogue(r, ("safety_class", "dvdt_v_per_s"), frame)
    assert r.safety_class is None
