"""Ratings read from BOM text.

Outside references: IEC 60384-14 names the safety subclasses X1 X2 X3 and Y1..Y4 [S]; EIA RS-198
names the class-2 ceramic dielectrics X7R X5R Y5V Z5U (they are temperature characteristics, not
safety classes) [S]; IEC 60062 gives the letter-and-digit value code (4R7, 2k2) [S]. Package names
(0805, MELF 0207, DO-41, SOD-123, SMA = DO-214AC) are JEDEC/EIA outlines [S]. How a bare "63V" on
an electrolytic is read (DC) and an unmarked voltage on an X capacitor (AC) is common practice,
no source.
"""

from __future__ import annotations

import pytest

from selector.audit.ratings import kind_of, read_ratings
from selector.errors import BadValueError


@pytest.mark.parametrize(
    "ref, text, kind",
    [
        ("C1", "330n X2 305VAC", "x_capacitor"),
        ("C1", "330n X1/Y2 300VAC", "x_capacitor"),
        ("C4", "100n 50V X7R 0603", "ceramic_capacitor"),  # X7R: EIA dielectric, not X class
        ("C4", "1u 25V X5R", "ceramic_capacitor"),
        ("C4", "10n Y5V", "ceramic_capacitor"),  # Y5V: EIA dielectric, not Y class
        ("C1", "470n PET 400VDC", "film_capacitor"),
        ("C1", "470n PP 630V", "film_capacitor"),
        ("C1", "470n polyester 400VDC", "film_capacitor"),
        ("C1", "470n metallized polypropylene 630V", "film_capacitor"),
        ("C2", "470u 25V electrolytic", "electrolytic"),
        ("C2", "470u 25V", "capacitor"),
        ("R1", "47R 1W", "resistor"),
        ("F1", "T100mA", "fuse"),
        ("F2", "10R fusible resistor", "resistor"),
        ("D1", "Zener 5.1V", "zener"),
        ("ZD1", "5V1", "zener"),
        ("D2", "1N4007 1000V 1A", "diode"),
        ("BR1", "600V 0.5A", "bridge"),
        ("D5", "bridge rectifier 600V", "bridge"),
        ("D3", "LED red", "other"),
        # issue 11: a varistor across the line is audited (was 'other', ignored)
        ("RV1", "varistor 275VAC", "varistor"),
        ("MOV1", "275VAC 14 mm", "varistor"),
        ("RV2", "10k trimmer", "other"),  # RV without a varistor word: a trimmer, not audited
        ("U1", "MCU", "other"),
    ],
)
def test_kind_of(ref, text, kind):
    assert kind_of(ref, text) == kind


def test_x7r_is_never_read_as_a_safety_class():
    r = read_ratings("C3", "100n", "Ceramic capacitor 50V X7R")
    assert r.safety_class is None and r.dielectric == "class2_ceramic"
    assert r.rated_voltage_v == 50.0 and r.rated_voltage_ac_v is None


@pytest.mark.parametrize(
    "text, ac, dc",
    [
        ("X2 305VAC", 305.0, None),
        ("X2 275 V~", 275.0, None),
        ("X2 AC 250V", 250.0, None),
        ("X2 310 Vac", 310.0, None),
        ("X2 305VAC / 630VDC", 305.0, 630.0),
        ("X2 275V", 275.0, None),  # unmarked on a safety-class part: AC (common practice)
    ],
)
def test_ac_and_dc_told_apart_on_x_capacitors(text, ac, dc):
    r = read_ratings("C1", "220n", text)
    assert (r.rated_voltage_ac_v, r.rated_voltage_v) == (ac, dc)


@pytest.mark.parametrize(
    "ref, value, text, dc",
    [
        ("C2", "470u", "electrolytic 63V", 63.0),  # bare volts on an electrolytic: DC
        ("C1", "470n", "PET 400VDC", 400.0),
        ("C1", "470n", "PET 400 V=", 400.0),
        ("C5", "1n", "ceramic 1kV C0G", 1000.0),
    ],
)
def test_dc_ratings(ref, value, text, dc):
    r = read_ratings(ref, value, text)
    assert r.rated_voltage_v == dc and r.rated_voltage_ac_v is None


def test_unmarked_voltage_on_general_film_is_dc_and_noted():
    r = read_ratings("C1", "470n", "film capacitor 630V")
    assert r.rated_voltage_v == 630.0
    assert any("V DC" in n for n in r.notes)


@pytest.mark.parametrize(
    "text, watts",
    [
        ("0.25W", 0.25),
        ("1/4W", 0.25),
        ("1/4 W", 0.25),
        ("250mW", 0.25),
        ("2 W", 2.0),
        ("0.6W", 0.6),
    ],
)
def test_power_spellings(text, watts):
    assert read_ratings("R1", "47R", f"resistor {text}").power_w == pytest.approx(watts)


def test_power_column_bare_number_is_watts():
    assert read_ratings("R1", "47R", power="0.5").power_w == 0.5


@pytest.mark.parametrize(
    "ref, value, text, package, mount",
    [
        ("R1", "47R", "R_0805_2012Metric", "0805", "smd"),
        ("R1", "47R", "1206", "1206", "smd"),
        ("R1", "47R", "R_2512_6332Metric", "2512", "smd"),
        ("R1", "47R", "MELF 0207", "melf_0207", "smd"),
        ("R1", "47R", "MiniMELF", "melf_0204", "smd"),
        ("R1", "47R", "R_Axial_DIN0207_L6.3mm", "axial", "tht"),
        ("D1", "1N4007", "D_DO-41_SOD81_P10.16mm_Horizontal", "do41", "tht"),
        ("D1", "1N4148", "D_SOD-123", "sod123", "smd"),
        ("D1", "S1M", "D_SMA", "sma", "smd"),
        ("D1", "S1M", "DO-214AC", "sma", "smd"),
    ],
)
def test_packages(ref, value, text, package, mount):
    r = read_ratings(ref, value, "", text)
    assert (r.package, r.mount) == (package, mount)


def test_class_words():
    assert read_ratings("R1", "47R", "metal oxide 2W").technology == "metal_oxide"
    assert read_ratings("R1", "47R", "wirewound 3W").technology == "wirewound"
    assert read_ratings("R1", "10R", "fusible 0.5W").fusible is True
    # the trade's generic dielectric words (IEC 60384-2 polyester / PET, IEC 60384-16 PP) [M]
    for text, dielectric in (
        ("PP film 630V", "pp"),
        ("metallized polypropylene 630V", "pp"),
        ("polyester 400V", "pet"),
        ("PET film 400V", "pet"),
        ("polyethylene terephthalate 400V", "pet"),
    ):
        assert read_ratings("C1", "470n", text).dielectric == dielectric, text
    z = read_ratings("D1", "5V1", "glass Zener 0.5W")
    assert "glass" in z.words and z.package == "do35"
    assert read_ratings("C1", "100n", "safety X2 305VAC").words == ["X2", "safety"]


def test_x1y2_keeps_both_classes():
    assert read_ratings("C1", "4n7", "X1Y2 300VAC").safety_class == "X1Y2"
    assert read_ratings("C1", "4n7", "X1/Y2 300VAC").safety_class == "X1Y2"


@pytest.mark.parametrize(
    "ref, value, text, expected",
    [
        ("R1", "4R7", "", 4.7),  # IEC 60062 code
        ("R1", "2k2", "", 2200.0),
        ("R1", "470 kΩ", "", 470e3),
        ("C1", "0.47UF", "", 0.47e-6),  # distributor upper case
        ("C1", "", "CAP FILM 0.47UF 305VAC X2", 0.47e-6),  # value only in the description
        ("R1", "", "RES 0805 470R 5%", 470.0),  # the package code is not read as the value
        ("D1", "5V1", "Zener", 5.1),
        ("D1", "BZX-C12", "Zener 12V 0.5W", 12.0),
        ("F1", "T100mA", "fuse", 0.1),
        ("F1", "100mAT", "fuse", 0.1),
    ],
)
def test_values(ref, value, text, expected):
    assert read_ratings(ref, value, text).value == pytest.approx(expected)


def test_tolerance_from_text_and_column():
    assert read_ratings("C1", "220n", "X2 305VAC 10%").tolerance == pytest.approx(0.10)
    assert read_ratings("C1", "220n", "X2 305VAC ±20 %").tolerance == pytest.approx(0.20)
    assert read_ratings("R1", "47R", "", tolerance="J").tolerance == pytest.approx(0.05)


def test_diode_and_bridge_ratings():
    b = read_ratings("BR1", "bridge", "Bridge rectifier 600V 0.5A IFSM 30A")
    assert (b.vrrm_v, b.if_av_a, b.ifsm_a) == (600.0, 0.5, 30.0)


def test_fuse_i2t_and_electrolytic_temperature():
    assert read_ratings("F1", "T100mA", "I2t 0.5A2s").i2t_a2s == 0.5
    assert read_ratings("C2", "470u", "electrolytic 25V 105°C").temp_max_c == 105.0


@pytest.mark.parametrize(
    "ref, value, text, column, message",
    [
        ("R1", "abc", "", "value", "cannot read 'abc' as a resistance"),
        ("C1", "", "", "value", "empty"),
        ("C1", "104", "", "value", "three-digit code"),
        ("R1", "-47", "", "value", "not a positive"),
    ],
)
def test_unreadable_values_name_the_column(ref, value, text, column, message):
    with pytest.raises(BadValueError, match=message) as info:
        read_ratings(ref, value, text)
    assert str(info.value).startswith(column + ":")


def test_unreadable_rating_columns():
    with pytest.raises(BadValueError, match="^voltage:"):
        read_ratings("C1", "220n", voltage="lots")
    with pytest.raises(BadValueError, match="^power:"):
        read_ratings("R1", "47R", power="big")
    with pytest.raises(BadValueError, match="^tolerance:"):
        read_ratings("R1", "47R", tolerance="Q")


def test_other_parts_are_not_read():
    assert read_ratings("U1", "whatever", "MCU").value is None


def test_varistor_line_figures():
    # the built-in catalogue's own description form (invented demo figures, labelled so in
    # catalogue/families/varistors.toml): every figure read through selector.units
    r = read_ratings(
        "RV1",
        "",
        "metal oxide varistor, 14 mm disc, radial, 275 VAC, 430 V at 1 mA, 710 V at 50 A, 80 J",
    )
    assert r.kind == "varistor" and r.package == "disc 14 mm"
    assert (r.value, r.rated_voltage_ac_v) == (430.0, 275.0)
    assert (r.limiting_voltage_v, r.clamp_current_a, r.pulse_energy_j) == (710.0, 50.0, 80.0)
    assert r.ifsm_a is None  # not on the line: filled from the catalogue family
    # an unmarked voltage is the continuous AC rating (common practice, no source), noted
    r = read_ratings("RV1", "varistor 275V", "disc 7 mm 17J 1.2kA")
    assert (r.rated_voltage_ac_v, r.pulse_energy_j, r.ifsm_a) == (275.0, 17.0, 1200.0)
    assert r.value is None and any("read as V AC" in n for n in r.notes)
