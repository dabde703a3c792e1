"""The audit end to end on demo BOMs (invented data) of a 230 V greenhouse-vent timer board:
the sound design passes, each planted fault is found by the rule that should find it.

Each case names the rule's source and, where the figure is a textbook one, checks the stress
against the closed form:

* highest mains crest Vpk = sqrt(2) x Vrms x 1.1 (230 V +10 % -> 357.8 V) [S: definition of rms];
* switch-on energy in the series resistance 0.5 x C x Vpk^2 (RC charging from a step, any circuits
  textbook) [S];
* X capacitor class: IEC 60384-14 subclasses X1/X2/X3 [S]; 0805 chip limiting element voltage
  150 V (generic makers' data, DOMAIN.md table 5) [S]; discharge: IEC 60335-1 22.5 (34 V after
  1 s, C <= 0.1 uF exempt) [S]; the derating fractions are the policy's defaults [P].
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest

from selector.audit.evaluate import audit_bom
from selector.engine import Conditions, Mains, Tolerances
from selector.errors import BadRowError, BadValueError

DATA = Path(__file__).parent / "data"


@pytest.fixture(scope="module")
def catalogue(catalogue_url):
    from selector.catalogue import make_engine, parts_frame

    engine = make_engine(catalogue_url)
    try:
        yield parts_frame(engine)
    finally:
        engine.dispose()


def run(name, catalogue, mains=230.0, freqs=(50.0, 60.0), **kw):
    return audit_bom(
        DATA / name,
        mains=Mains(mains, 0.10, tuple(freqs)),
        conditions=kw.pop("conditions", Conditions()),
        tolerances=Tolerances(),
        catalogue=catalogue,
        **kw,
    )


def fails(result):
    return {(f.rule, f.ref) for f in result.findings if f.severity == "fail"}


def finding(result, rule):
    return next(f for f in result.findings if f.rule == rule)


def test_sound_design_has_no_failure(catalogue):
    r = run("audit_vent_sound.csv", catalogue)
    assert fails(r) == set()
    assert r.summary["pass"] > 15
    b = r.boards[0]
    assert b.circuit.topology == "bridge"
    assert b.circuit.x_capacitance_f == pytest.approx(220e-9)
    assert b.circuit.series_resistance_ohm == pytest.approx(112.0)  # R1 + R2 in series
    assert b.circuit.bleeder_resistance_ohm == pytest.approx(1.41e6)  # R3 + R4 + R5
    # every rule of every audited role ran: nothing silently skipped
    rules = {f.rule for f in r.findings}
    for rule in (
        "x_cap.safety_class",
        "x_cap.ac_voltage",
        "series_r.switch_on_energy",
        "bleeder.discharge",
        "bleeder.voltage",
        "rectifier.vrrm",
        "zener.power",
        "reservoir.voltage",
        "fuse.inrush_i2t",
    ):
        assert rule in rules


def test_general_purpose_film_across_the_mains(catalogue):
    # IEC 60384-14: only an X1/X2/X3 capacitor may sit across the mains [S]
    r = run("audit_vent_fault_film.csv", catalogue)
    assert ("x_cap.safety_class", "C1") in fails(r)
    f = finding(r, "x_cap.safety_class")
    assert "60384-14" in f.source


def test_single_0805_bleeder_at_230_v(catalogue):
    # one chip carries the whole X-capacitor voltage. With the bus clamped the capacitor swings
    # between +/-(Vpk - Vo'), Vpk = 230 * 1.1 * sqrt(2) = 357.8 V, Vo' = Vz * 1.05 + 2 * 0.8 V
    # (DOMAIN.md section 2, derived from charge balance) -> 343.6 V; limit 0805 LEV 150 V [S]
    # x 0.8 policy [P] = 120 V
    r = run("audit_vent_fault_bleeder0805.csv", catalogue)
    assert ("bleeder.voltage", "R3") in fails(r)
    f = finding(r, "bleeder.voltage")
    vpk = 230 * 1.1 * math.sqrt(2)
    assert f.stress == pytest.approx(vpk - (12 * 1.05 + 2 * 0.8), rel=0.01)
    assert f.rating == pytest.approx(150 * 0.8)
    # one 0805 also takes the X capacitor's whole surge peak (charge + step at 1 kV, several
    # hundred V) against 150 V x 2 x 0.8 = 240 V: bleeder.surge_voltage fails too
    assert {rule for rule, _ in fails(r)} == {"bleeder.voltage", "bleeder.surge_voltage"}


def test_half_watt_zener_fails_only_with_60_hz_in_the_set(catalogue):
    # zero-load Zener power rises with frequency (I = 4 f C (Vpk - Vo'), DOMAIN.md section 2)
    at50 = run("audit_vent_fault_zener60.csv", catalogue, freqs=(50.0,))
    assert ("zener.power", "D1") not in fails(at50)
    both = run("audit_vent_fault_zener60.csv", catalogue, freqs=(50.0, 60.0))
    assert ("zener.power", "D1") in fails(both)
    f = finding(both, "zener.power")
    assert "60" in (f.corner or "")
    # the rating is 0.5 W derated 25 -> 150 C at 40 C ambient, times 0.5 policy [P]
    assert f.rating == pytest.approx(0.5 * (150 - 40) / (150 - 25) * 0.5, rel=1e-6)


def test_chip_series_resistor_cannot_take_the_switch_on_pulse(catalogue):
    r = run("audit_vent_fault_chip_series.csv", catalogue)
    assert ("series_r.switch_on_energy", "R1, R2") in fails(r)
    f = finding(r, "series_r.switch_on_energy")
    # 0.5 C V^2 with C at +10 %, shared by two equal resistors [S]; the step V is the crest of
    # 253 V plus the residual after a re-plug at the opposite crest 0.2 s later that IEC 60335-1
    # 22.5 allows (34 V after 1 s [S], RC decay: Vpk (34 / Vpk)^0.2 = 223.5 V)
    vpk = 253 * math.sqrt(2)
    e = 0.5 * 220e-9 * 1.1 * (vpk + vpk * (34 / vpk) ** 0.2) ** 2 / 2
    assert f.stress == pytest.approx(e, rel=0.05)
    assert "energy 0.5 C V^2" in f.source


def test_reservoir_too_close_to_its_rated_voltage(catalogue):
    # 15 V Zener (+5 %) on a 16 V electrolytic: 15.75 V > 16 V x 0.8 [P]
    r = run("audit_vent_fault_reservoir.csv", catalogue)
    assert ("reservoir.voltage", "C2") in fails(r)
    f = finding(r, "reservoir.voltage")
    assert f.rating == pytest.approx(16 * 0.8)
    assert f.stress >= 15 * 1.05 - 0.01


def test_250_vac_x2_on_240_v_plus_10_percent(catalogue):
    # 240 V + 10 % = 264 V rms above a 250 V AC rating [P]
    r = run("audit_vent_fault_x2_250.tsv", catalogue, mains=240.0)
    assert ("x_cap.ac_voltage", "C1") in fails(r)
    f = finding(r, "x_cap.ac_voltage")
    assert (f.stress, f.rating) == (pytest.approx(264.0), pytest.approx(250.0))


def test_missing_bleeder_with_more_than_100_nf(catalogue):
    # IEC 60335-1 22.5: C > 0.1 uF must fall to 34 V within 1 s [S]; nothing discharges it
    r = run("audit_vent_fault_no_bleeder.xlsx", catalogue)
    assert ("bleeder.discharge", None) in fails(r)
    f = finding(r, "bleeder.discharge")
    assert "60335-1" in f.source and "no bleeder fitted" in f.note


def test_many_faults_at_once_each_by_its_rule(catalogue):
    r = run("audit_vent_faulty.csv", catalogue)
    got = fails(r)
    for expected in (
        ("x_cap.safety_class", "C1"),
        ("bleeder.voltage", "R3"),
        ("series_r.switch_on_energy", "R1, R2"),
        ("zener.power", "D1"),
        ("reservoir.voltage", "C2"),
    ):
        assert expected in got


def test_explicit_role_and_roles_file(catalogue, tmp_path):
    roles = tmp_path / "roles.toml"
    roles.write_text('[roles]\nC3 = "other"\nU1 = "other"\n', encoding="utf-8")
    r = run("audit_vent_sound.csv", catalogue, roles_file=roles, roles={"D1": "zener"})
    how = {a.part.ref: a.how for a in r.boards[0].roles.parts}
    assert how["C3"] == "roles file" and how["D1"] == "given"
    assert how["C1"] == "inferred"


def test_assumed_ratings_are_reported(catalogue):
    r = run("audit_vent_fault_chip_series.csv", catalogue)
    assert any(
        a.startswith("R1, R2: ") and "assumed from family chip-thick-film" in a
        for a in r.boards[0].assumed
    )


def test_unknown_rating_warns_never_passes_silently(tmp_path):
    # no catalogue: nothing can be assumed, so every rule needing an absent rating warns
    r = audit_bom(
        DATA / "audit_vent_fault_chip_series.csv",
        mains=Mains(230.0, 0.10, (50.0,)),
        conditions=Conditions(),
        tolerances=Tolerances(),
        catalogue=None,
    )
    warn = {f.rule for f in r.findings if f.severity == "warn" and f.ref == "R1, R2"}
    assert "series_r.switch_on_energy" in warn and "series_r.power" in warn


def test_unreadable_value_names_file_row_and_column(tmp_path):
    p = tmp_path / "bad.csv"
    p.write_text(
        "Ref,Value,Description\nC1,220n,X2 305VAC\nR1,4x7,metal oxide 1W\n", encoding="utf-8"
    )
    with pytest.raises(BadRowError) as info:
        audit_bom(p, mains=Mains(), conditions=Conditions(), tolerances=Tolerances())
    assert (info.value.row, info.value.column) == (3, "Value")
    assert "R1" in str(info.value) and "4x7" in str(info.value)


def test_no_zener_is_a_clear_error(tmp_path):
    p = tmp_path / "nz.csv"
    p.write_text(
        "Ref,Value,Description\nC1,220n,X2 305VAC\nR1,47R,metal oxide 1W\nBR1,600V 0.5A,bridge\n"
        "C2,470u,electrolytic 25V\n",
        encoding="utf-8",
    )
    with pytest.raises(BadValueError, match="no zener.*--role REF=zener"):
        audit_bom(p, mains=Mains(), conditions=Conditions(), tolerances=Tolerances())


def test_boards_are_audited_apart_with_their_own_roles(catalogue, tmp_path):
    src = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8").splitlines()[1:]
    rows = [src[0].replace("Reference", "Board,Reference", 1)]
    for board in ("A", "B"):
        rows += [f"{board},{line}" for line in src[1:]]
    rows.append("B,R8,1,1k,resistor 1/10W,R_0603_1608Metric,DEMO")
    p = tmp_path / "boards.csv"
    p.write_text("\n".join(rows) + "\n", encoding="utf-8")
    roles = tmp_path / "roles.toml"
    roles.write_text('[boards.B.roles]\nR8 = "other"\n', encoding="utf-8")
    r = run(p, catalogue, roles_file=roles)
    assert [b.board for b in r.boards] == ["A", "B"]
    assert fails(r) == set()
    assert {f.board for f in r.findings} == {"A", "B"}


def test_json_document_shape(catalogue):
    doc = run("audit_vent_faulty.csv", catalogue).to_dict()
    assert set(doc) >= {"findings", "summary", "column_map", "roles", "cautions"}
    f = doc["findings"][0]
    assert set(f) >= {
        "ref",
        "role",
        "rule",
        "stress",
        "rating",
        "unit",
        "margin",
        "severity",
        "source",
        "corner",
    }
    assert doc["findings"][0]["severity"] == "fail"  # failures first
    assert doc["summary"]["fail"] == sum(1 for x in doc["findings"] if x["severity"] == "fail")
    assert doc["column_map"]["ref"] == "Reference"
    assert doc["cautions"]


@pytest.mark.parametrize(
    "description, severity",
    [
        # IEC 60384-14: an X1/Y2 part carries the X1 subclass [S]
        ("Capacitor X1/Y2, 300VAC, 10%", "pass"),
        # a Y-only part is not an X subclass: the class rule fails it [S]
        ("Capacitor Y2, 300VAC, 10%", "fail"),
        # nothing says what it is: unknown, a warning, never a silent pass
        ("Capacitor 300VAC, 10%", "warn"),
    ],
)
def test_x_capacitor_class_from_text(catalogue, tmp_path, description, severity):
    text = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8")
    old = '"Capacitor X2, metallized polypropylene, 305VAC, 10%, humidity grade IIIB"'
    assert old in text
    p = tmp_path / "bom.csv"
    p.write_text(text.replace(old, f'"{description}"'), encoding="utf-8")
    r = run(p, catalogue)
    assert finding(r, "x_cap.safety_class").severity == severity


def test_half_wave_inferred_from_one_diode(catalogue, tmp_path):
    p = tmp_path / "hw.csv"
    p.write_text(
        "Ref,Value,Description,Footprint\n"
        'F1,T50mA,"fuse, time-lag, 250VAC",\n'
        'R1,100R,"metal oxide 2W 350V 5%",axial\n'
        'C1,330n,"X2 305VAC 10%",\n'
        'R2-R4,680k,"thick film 1206 1/4W 200V",1206\n'
        'D1,1N4007,"rectifier diode 1000V 1A IFSM 30A",DO-41\n'
        'D2,5V1,"Zener 1W 5%",DO-41\n'
        'C2,220u,"electrolytic 10V 105C",radial\n',
        encoding="utf-8",
    )
    r = run(p, catalogue, freqs=(50.0,))
    assert r.boards[0].circuit.topology == "half-wave"
    assert {a.part.ref for a in r.boards[0].roles.by_role("rectifier")} == {"D1"}
    assert "rectifier.vrrm" in {f.rule for f in r.findings}


def test_unequal_bleeders_share_the_voltage_by_resistance(catalogue, tmp_path):
    # a series string divides the voltage in proportion to resistance (Ohm's law) [S]
    text = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8")
    old = (
        'R3-R5,3,470k,"Resistor, metal film, 1/2W, 300V, 1%",'
        "R_Axial_DIN0207_L6.3mm_D2.5mm_P10.16mm_Horizontal,DEMO-R470K"
    )
    new = (
        'R3,1,330k,"Resistor, thick film, 1/4W, 200V, 1%",R_1206_3216Metric,DEMO-R330K\n'
        'R4-R5,2,560k,"Resistor, thick film, 1/4W, 200V, 1%",R_1206_3216Metric,DEMO-R560K'
    )
    p = tmp_path / "bom.csv"
    p.write_text(text.replace(old, new), encoding="utf-8")
    r = run(p, catalogue)
    volts = {f.ref: f.stress for f in r.findings if f.rule == "bleeder.voltage"}
    total = 330e3 + 2 * 560e3
    # per element: 330 k of 1.45 M against 560 k of 1.45 M
    assert volts["R3"] / volts["R4, R5"] == pytest.approx(330e3 / 560e3, rel=1e-9)
    assert r.boards[0].circuit.bleeder_resistance_ohm == pytest.approx(total)


def test_fusible_series_resistor_serves_as_the_fuse(catalogue, tmp_path):
    text = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8")
    lines = [ln for ln in text.splitlines() if not ln.startswith("F1,")]
    old = '"R1, R2",2,56R,"Resistor, metal oxide, 1W, 350V, 5%",R_Axial_DIN0414,DEMO-MO56'
    new = '"R1, R2",2,56R,"Resistor, fusible, 0.5W, 250V, 5%",R_Axial_DIN0207,DEMO-FU56'
    p = tmp_path / "bom.csv"
    p.write_text("\n".join(lines).replace(old, new) + "\n", encoding="utf-8")
    r = run(p, catalogue)
    rules = {f.rule for f in r.findings if f.ref == "R1, R2"}
    assert "fuse.fusible_opens_on_short" in rules and "series_r.power" in rules
    assert "fuse.fitted" not in {f.rule for f in r.findings}


def test_role_given_to_a_line_read_as_another_kind(catalogue, tmp_path):
    # "D1 5V1 SOD-123" (no word Zener): read as a Zener once the user names its role
    text = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8")
    old = 'D1,1,12V,"Zener diode 12V 1W 5%",D_SMA,DEMO-Z12-1W'
    p = tmp_path / "bom.csv"
    p.write_text(text.replace(old, 'D1,1,12V,"1W 5%",D_SMA,DEMO-Z12-1W'), encoding="utf-8")
    r = run(p, catalogue, roles={"D1": "zener"})
    assert r.boards[0].circuit.zener_voltage_v == pytest.approx(12.0)
    # a role that the line cannot carry: the value does not read as the role needs
    with pytest.raises(BadRowError, match=r"row 4, column 'Value': R1: .*capacitance"):
        run("audit_vent_sound.csv", catalogue, roles={"R1": "x_capacitor", "C1": "other"})


def test_other_role_skips_reading_the_line(catalogue, tmp_path):
    text = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8")
    p = tmp_path / "bom.csv"
    p.write_text(text.replace("C3,1,100n,", "C3,1,104,"), encoding="utf-8")
    with pytest.raises(BadRowError, match="three-digit code"):
        run(p, catalogue)
    assert fails(run(p, catalogue, roles={"C3": "other"})) == set()


def test_fuse_against_a_shorted_x2_capacitor_is_a_warning_only(catalogue):
    # IEC 60335-1 19.11.2 does not apply a short circuit to a capacitor complying with
    # IEC 60384-14 [M] from memory (DOMAIN.md section 10): a T250mA fuse behind 2 x 220 ohm
    # cannot clear a shorted X capacitor (fault 207 V / 440 ohm = 0.47 A < 2 x 0.25 A), which
    # for a sound X2 part is a warning citing the exemption, not a failure
    r = run("audit_vent_fuse_x2.csv", catalogue)
    assert fails(r) == set()
    f = finding(r, "fuse.opens_on_short")
    assert f.severity == "warn" and "IEC 60384-14" in f.note and "19.11.2" in f.note
    assert f.rating == pytest.approx(207.0 / (440 * 1.05), rel=0.01)  # low line, R at +5 %
    # the same BOM with a general-purpose film capacitor: the fuse rule stays a failure
    r = run("audit_vent_fuse_film.csv", catalogue)
    assert ("fuse.opens_on_short", "F1") in fails(r)
    assert ("x_cap.safety_class", "C1") in fails(r)


@pytest.mark.parametrize(
    "description, grade, assumed",
    [
        # the line states its grade (IEC 60384-14 Amd 1): read, nothing assumed
        ("Capacitor X2, 305VAC, 10%, humidity grade IIIB", "IIIB", None),
        # the line names a catalogue family: its grade, reported as assumed from that family
        ("Capacitor X2 305VAC 10% x2-film-humid", "III", "humidity_grade assumed from family"),
        # neither: grade I (the least robust), and the audit says so in an assumption line
        ("Capacitor X2, metallized polypropylene, 305VAC, 10%", "I", "taken as grade I"),
    ],
)
def test_x_capacitor_humidity_grade_from_line_family_or_assumed(
    catalogue, tmp_path, description, grade, assumed
):
    text = (DATA / "audit_vent_sound.csv").read_text(encoding="utf-8")
    old = '"Capacitor X2, metallized polypropylene, 305VAC, 10%, humidity grade IIIB"'
    p = tmp_path / "bom.csv"
    p.write_text(text.replace(old, f'"{description}"'), encoding="utf-8")
    r = run(p, catalogue)
    notes = [a for a in r.boards[0].assumed if a.startswith("C1: ")]
    life_note = " ".join(r.boards[0].life["notes"])
    assert f"grade {grade}" in life_note
    if assumed is None:
        assert not any("humidity" in a for a in notes)
    else:
        assert any(assumed in a for a in notes), notes
