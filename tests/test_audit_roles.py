"""Role inference, explicit roles and roles files.

The inference follows the trade's circuit (DOMAIN.md section 2): the film / X capacitor in the
line, a low-value resistor in series with it, a high-value bleeder across it, a Zener clamp, a
bridge or a single diode, a reservoir electrolytic. The 100 kohm split between series resistor
and bleeder is common practice, no source.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from selector.audit.bom import read_bom
from selector.audit.ratings import read_ratings
from selector.audit.roles import infer_roles, load_roles_file, parse_role_options
from selector.errors import BadValueError

DATA = Path(__file__).parent / "data"


def _items(path):
    t = read_bom(path)
    return [
        (p, read_ratings(p.ref, p.value, p.description, p.package, p.voltage, p.power, p.tolerance))
        for p in t.parts
    ]


def _csv(tmp_path, rows: str):
    p = tmp_path / "b.csv"
    p.write_text("Ref,Value,Description\n" + rows, encoding="utf-8")
    return _items(p)


def _roles(rm):
    return {a.part.ref: a.role for a in rm.parts}


def test_sound_demo_bom_roles_are_inferred_and_shown():
    rm = infer_roles("", _items(DATA / "audit_vent_sound.csv"))
    assert _roles(rm) == {
        "F1": "fuse",
        "R1": "series_resistor",
        "R2": "series_resistor",
        "C1": "x_capacitor",
        "R3": "bleeder",
        "R4": "bleeder",
        "R5": "bleeder",
        "BR1": "rectifier",
        "D1": "zener",
        "C2": "reservoir",
        "C3": "other",  # ceramic X7R decoupling: load side
        "U1": "other",
    }
    assert rm.topology == "bridge"
    assert all(a.how == "inferred" for a in rm.parts)
    assert any(n.startswith("bleeder: R3, R4, R5") for n in rm.notes)


def test_general_purpose_film_is_still_the_x_capacitor():
    rm = infer_roles("", _items(DATA / "audit_vent_fault_film.csv"))
    assert _roles(rm)["C1"] == "x_capacitor"


def test_single_diode_means_half_wave(tmp_path):
    items = _csv(
        tmp_path,
        "C1,220n,X2 305VAC\nR1,100R,metal oxide 1W\nR2,1M,1206\nD1,1N4007,diode 1000V 1A\n"
        "D2,5V1,Zener 1W\nC2,470u,electrolytic 16V\n",
    )
    rm = infer_roles("", items)
    assert rm.topology == "half-wave" and _roles(rm)["D1"] == "rectifier"


def test_four_diodes_make_a_bridge(tmp_path):
    items = _csv(
        tmp_path,
        "C1,220n,X2 305VAC\nR1,100R,metal oxide 1W\nD1-D4,1N4007,diode 1000V 1A\n"
        "D5,12V,Zener 1W\nC2,470u,electrolytic 25V\n",
    )
    rm = infer_roles("", items)
    assert rm.topology == "bridge"
    assert [a.part.ref for a in rm.by_role("rectifier")] == ["D1", "D2", "D3", "D4"]


def test_ambiguous_series_resistors_name_refs_and_the_fix(tmp_path):
    items = _csv(
        tmp_path,
        "C1,220n,X2 305VAC\nR1,100R,metal oxide 1W\nR7,1k,resistor 0603 1/10W\n"
        "BR1,600V 0.5A,bridge\n"
        "D1,12V,Zener 1W\nC2,470u,electrolytic 25V\n",
    )
    with pytest.raises(BadValueError) as info:
        infer_roles("", items)
    msg = str(info.value)
    assert "R1 (100 Ω" in msg and "R7 (1 kΩ 0603" in msg
    assert "--role R1=series_resistor" in msg and "--role R7=other" in msg


def test_explicit_role_resolves_the_ambiguity(tmp_path):
    items = _csv(
        tmp_path,
        "C1,220n,X2 305VAC\nR1,100R,metal oxide 1W\nR7,1k,resistor 0603 1/10W\n"
        "BR1,600V 0.5A,bridge\n"
        "D1,12V,Zener 1W\nC2,470u,electrolytic 25V\n",
    )
    rm = infer_roles("", items, parse_role_options(["R7=other"]))
    assert _roles(rm)["R1"] == "series_resistor"
    assert next(a for a in rm.parts if a.part.ref == "R7").how == "given"


def test_two_reservoir_values_are_ambiguous(tmp_path):
    items = _csv(
        tmp_path,
        "C1,220n,X2 305VAC\nR1,100R,metal oxide 1W\nBR1,600V 0.5A,bridge\nD1,12V,Zener 1W\n"
        "C2,470u,electrolytic 25V\nC5,10u,electrolytic 10V\n",
    )
    with pytest.raises(BadValueError, match="which electrolytic is the reservoir: C2.*C5"):
        infer_roles("", items)


def test_fusible_series_resistor_also_serves_as_fuse(tmp_path):
    items = _csv(
        tmp_path,
        "C1,220n,X2 305VAC\nR1,47R,fusible 0.5W\nBR1,600V 0.5A,bridge\nD1,12V,Zener 1W\n"
        "C2,470u,electrolytic 25V\n",
    )
    rm = infer_roles("", items)
    assert [a.part.ref for a in rm.by_role("fuse")] == ["R1"]
    assert [a.part.ref for a in rm.by_role("series_resistor")] == ["R1"]


def test_role_options_parse_and_reject():
    assert parse_role_options(["c1=x_capacitor", "R4=ignore", "A:R2=bleeder"]) == {
        "C1": "x_capacitor",
        "R4": "other",
        "A:R2": "bleeder",
    }
    with pytest.raises(BadValueError, match="REF=ROLE"):
        parse_role_options(["C1"])
    with pytest.raises(BadValueError, match="did you mean 'bleeder'"):
        parse_role_options(["R3=bleder"])


def test_role_for_a_ref_not_in_the_bom(tmp_path):
    items = _csv(tmp_path, "C1,220n,X2 305VAC\n")
    with pytest.raises(BadValueError, match="R9, which is not in the BOM"):
        infer_roles("", items, {"R9": "bleeder"})


def test_roles_file(tmp_path):
    p = tmp_path / "roles.toml"
    p.write_text(
        '[roles]\nC1 = "x_capacitor"\nr7 = "other"\n\n[boards."vent-2".roles]\nR9 = "bleeder"\n',
        encoding="utf-8",
    )
    common, boards = load_roles_file(p)
    assert common == {"C1": "x_capacitor", "R7": "other"}
    assert boards == {"vent-2": {"R9": "bleeder"}}


@pytest.mark.parametrize(
    "text, message",
    [
        ('[roles]\nC1 = "x_cap_thing"\n', "unknown role"),
        ("[roles]\nC1 = 3\n", "must be a string"),
        ("[parts]\n", "unknown table"),
        ("[roles\n", "not valid"),
    ],
)
def test_bad_roles_files(tmp_path, text, message):
    p = tmp_path / "roles.toml"
    p.write_text(text, encoding="utf-8")
    with pytest.raises(BadValueError, match=message):
        load_roles_file(p)
