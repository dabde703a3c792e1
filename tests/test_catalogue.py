"""The built-in catalogue against outside references.

Outside sources, named at each check:
* IEC 60384-14 (safety subclasses X1/X2/X3, Y1..Y4; impulse figures; test voltage above 1 uF);
* generic resistor makers' data for power / limiting element voltage per size (DOMAIN.md
  table 5, "[S] generic") and the working-voltage definition U = min(sqrt(P*R), LEV);
* the `eseries` package (IEC 60063 tables) for the values every family must expand over;
* calculus: the I^2 t of a half sine is Ip^2 * T / 2.
Regression pins of the invented demo model (prices, areas) are kept apart at the end.
"""

from __future__ import annotations

import math
import tomllib

import eseries
import numpy as np
import pandas as pd
import pytest

from selector.catalogue import (
    KINDS,
    PART_COLUMNS,
    build,
    builtin_rows,
    diode_i2t,
    parts_frame,
    resistor_working_voltage,
    x_impulse_test_voltage,
    zener_impedance,
)
from selector.catalogue.build import load_resistor_sizes, load_subclasses
from selector.errors import OutOfRangeError
from selector.resources import catalogue_dir

# IEC 60384-14 [S]: peak impulse voltage in service (upper limit) and impulse test voltage Up
# (None: no impulse test) for C <= 1 uF.
IEC60384_14_X = {
    "X1": {"service_max_v": 4000.0, "service_min_v": 2500.0, "test_v": 4000.0},
    "X2": {"service_max_v": 2500.0, "service_min_v": None, "test_v": 2500.0},
    "X3": {"service_max_v": 1200.0, "service_min_v": None, "test_v": None},
}
# IEC 60384-14 [S]: Y subclasses, insulation and impulse test voltage (Y2 upper rated voltage [M])
IEC60384_14_Y = {
    "Y1": ("reinforced", 8000.0),
    "Y2": ("basic", 5000.0),
    "Y3": ("basic", None),
    "Y4": ("basic", 2500.0),
}
# generic makers' data [S generic] (DOMAIN.md table 5): power [W] and LEV [V] per size; where
# makers quote a range the catalogue keeps the lower, conservative figure.
GENERIC_RESISTOR_SIZES = {
    "0402": (1 / 16, 50.0),
    "0603": (1 / 10, 50.0),  # makers: 50-75 V
    "0805": (1 / 8, 150.0),
    "1206": (1 / 4, 200.0),
    "2010": (3 / 4, 200.0),
    "2512": (1.0, 200.0),
    "0204": (1 / 4, 200.0),
    "0207": (1 / 2, 300.0),  # makers: 1/2-1 W, 300-350 V
    "axial-0.25w": (1 / 4, 250.0),
    "axial-0.5w": (1 / 2, 300.0),
    "axial-1w": (1.0, 350.0),
    "axial-2w": (2.0, 500.0),
}

CONTRACT_COLUMNS = (
    "id code kind family description value tolerance mount package area_mm2 unit_price "
    "price_note supplier supplier_code stock rated_voltage_v rated_voltage_ac_v "
    "limiting_voltage_v power_w derate_start_c derate_end_c pulse_energy_j safety_class "
    "impulse_v dvdt_v_per_s humidity_grade vrrm_v if_av_a ifsm_a vf_v rs_ohm zz_ohm tj_max_c "
    "ripple_a temp_max_c i2t_a2s fusible"
).split()


@pytest.fixture(scope="module")
def frame(catalogue_url):
    from selector.catalogue import make_engine

    engine = make_engine(catalogue_url)
    try:
        yield parts_frame(engine)
    finally:
        engine.dispose()


def _families():
    out = []
    for path in sorted((catalogue_dir() / "families").glob("*.toml")):
        with path.open("rb") as fh:
            out.extend(tomllib.load(fh)["family"])
    return out


# --- IEC 60384-14 ----------------------------------------------------------------------------


def test_subclass_table_matches_iec60384_14():
    table = load_subclasses()
    for name, fig in IEC60384_14_X.items():  # IEC 60384-14 [S]
        row = table[name]
        assert row.service_impulse_max_v == fig["service_max_v"]
        assert row.service_impulse_min_v == fig["service_min_v"]
        assert row.impulse_test_v == fig["test_v"]
    for name, (insulation, test_v) in IEC60384_14_Y.items():  # IEC 60384-14 [S]
        assert table[name].insulation == insulation
        assert table[name].impulse_test_v == test_v
    assert table["Y1"].rated_ac_max_v == 500.0  # reinforced, <= 500 V [S]
    assert table["Y3"].rated_ac_min_v == 150.0 and table["Y3"].rated_ac_max_v == 250.0  # [S]
    assert table["Y4"].rated_ac_max_v == 150.0  # < 150 V [S]


def test_every_x_capacitor_agrees_with_iec60384_14(frame):
    x = frame[frame.kind == "x_capacitor"]
    assert len(x) > 0
    assert set(x.safety_class) <= set(IEC60384_14_X)
    for row in x.itertuples():
        fig = IEC60384_14_X[row.safety_class]  # IEC 60384-14 [S]
        assert row.impulse_v == fig["service_max_v"], row.code
        if fig["test_v"] is None:
            assert math.isnan(row.impulse_test_v), row.code
        else:
            c_uf = row.value / 1e-6
            # IEC 60384-14 [S]: Up for C <= 1 uF, Up / sqrt(C / 1 uF) above
            expected = fig["test_v"] if c_uf <= 1.0 else fig["test_v"] / math.sqrt(c_uf)
            assert row.impulse_test_v == pytest.approx(expected, abs=0.05), row.code
        assert row.rated_voltage_ac_v > 0 and row.humidity_grade in ("I", "II", "III")


def test_x2_rated_voltages_are_the_trades():
    # typical X2 rated voltages 275, 305, 310 V AC (DOMAIN.md table 5, [S])
    rows = [r for r in builtin_rows() if r["safety_class"] == "X2"]
    assert {r["rated_voltage_ac_v"] for r in rows} == {275.0, 305.0, 310.0}


def test_general_purpose_film_has_no_safety_class(frame):
    film = frame[frame.kind == "film_capacitor"]
    assert len(film) > 0
    assert film.safety_class.isna().all() and film.impulse_v.isna().all()
    assert set(film.rated_voltage_v) == {250.0, 400.0, 630.0}


def test_impulse_test_voltage_worked_example():
    # IEC 60384-14 [S]: X2, 2.2 uF -> 2500 / sqrt(2.2) = 1685.5 V; 470 nF keeps 2500 V
    assert x_impulse_test_voltage(2500.0, 2.2e-6) == pytest.approx(1685.5, abs=0.05)
    assert x_impulse_test_voltage(2500.0, 470e-9) == 2500.0
    with pytest.raises(OutOfRangeError):
        x_impulse_test_voltage(2500.0, 0.0)


# --- resistors ---------------------------------------------------------------------------------


def test_resistor_sizes_match_generic_data():
    sizes = load_resistor_sizes()
    for size, (power, lev) in GENERIC_RESISTOR_SIZES.items():  # [S generic]
        assert sizes[size].power_w == pytest.approx(power), size
        assert sizes[size].lev_v == lev, size
        # full power to 70 C, zero at 155 C [S generic]
        assert (sizes[size].derate_start_c, sizes[size].derate_end_c) == (70.0, 155.0)


def test_working_voltage_worked_example():
    # U = min(sqrt(P*R), LEV) (IEC 60115-1 rated voltage, [S generic]): 1206, 0.25 W, 200 V
    assert resistor_working_voltage(0.25, 100e3, 200.0) == pytest.approx(158.1, abs=0.05)
    assert resistor_working_voltage(0.25, 1e6, 200.0) == 200.0
    # critical resistance LEV^2 / P = 160 kohm: both limits meet there
    assert resistor_working_voltage(0.25, 160e3, 200.0) == pytest.approx(200.0)
    with pytest.raises(OutOfRangeError):
        resistor_working_voltage(0.25, -1.0, 200.0)


def test_every_resistor_working_voltage(frame):
    r = frame[frame.kind == "resistor"]
    expected = np.minimum(np.sqrt(r.power_w * r.value), r.limiting_voltage_v)  # [S generic]
    np.testing.assert_allclose(r.rated_voltage_v, expected, rtol=1e-4)
    for row in r.itertuples():
        if row.package in GENERIC_RESISTOR_SIZES:
            power, lev = GENERIC_RESISTOR_SIZES[row.package]
            assert (row.power_w, row.limiting_voltage_v) == (pytest.approx(power), lev)
    assert (r.pulse_energy_j > 0).all()
    assert r[r.family == "axial-fusible"].fusible.all()
    assert not r[r.family != "axial-fusible"].fusible.any()


# --- counts per family, against the eseries package (IEC 60063) -------------------------------


def _eseries_count(series: str, low: float, high: float) -> int:

    key = getattr(eseries.ESeries, series)
    return len(list(eseries.erange(key, low * (1 - 1e-9), high * (1 + 1e-9))))


def _expected_count(fam: dict) -> int:
    from selector.units import parse_value

    unit = {
        "x_capacitor": "F",
        "film_capacitor": "F",
        "electrolytic": "F",
        "resistor": "ohm",
        "zener": "V",
    }
    kind = fam["kind"]
    if kind in ("diode", "bridge"):
        return len(fam["vrrm"])
    if kind in ("fuse", "varistor"):
        return len(fam["ratings"])
    n = _eseries_count(
        fam["series"], parse_value(fam["min"], unit[kind]), parse_value(fam["max"], unit[kind])
    )
    if kind in ("x_capacitor", "film_capacitor"):
        return n * len(fam["voltage"]) * len(fam["tolerances"])
    if kind == "resistor":
        return n * len(fam["size"])
    if kind == "electrolytic":
        return n * len(fam["voltages"])
    return n


def test_counts_per_family_follow_the_templates(frame):
    families = _families()
    counts = frame.groupby("family").size().to_dict()
    assert set(counts) == {f["name"] for f in families}
    for fam in families:
        assert counts[fam["name"]] == _expected_count(fam), fam["name"]
    assert 2000 <= len(frame) <= 5000  # "a few thousand parts"


def test_values_are_iec60063_values(frame):
    # every value of a series-expanded family lies on its E-series (eseries package, IEC 60063)
    for fam in _families():
        if "series" not in fam:
            continue
        values = frame.loc[frame.family == fam["name"], "value"].to_numpy()
        key = getattr(eseries.ESeries, fam["series"])
        nearest = np.array([eseries.find_nearest(key, v) for v in values])
        np.testing.assert_allclose(values, nearest, rtol=1e-9, err_msg=fam["name"])


def test_x_capacitor_values_span_10n_to_4u7(frame):
    x2 = frame[frame.family == "x2-film"]
    assert x2.value.min() == pytest.approx(10e-9) and x2.value.max() == pytest.approx(4.7e-6)
    assert set(x2.tolerance) == {0.1, 0.2}  # IEC 60062 letters K and M


def test_zeners_cover_e24_and_the_power_classes(frame):
    z = frame[frame.kind == "zener"]
    # E24 voltages 2.4-47 V (eseries, IEC 60063), classes 0.5/1/3/5 W (DOMAIN.md table 5)
    e24 = [v for v in eseries.erange(eseries.ESeries.E24, 2.39, 47.1)]
    for power in (0.5, 1.0, 3.0, 5.0):
        vz = sorted(z[z.power_w == power].value)
        np.testing.assert_allclose(vz, e24, rtol=1e-9)
    assert (z.tolerance == 0.05).all()
    assert (z.derate_end_c == z.tj_max_c).all() and z.tj_max_c.between(150, 200).all()


def test_electrolytics_span_e6_and_voltages(frame):
    e = frame[frame.kind == "electrolytic"]
    assert set(e.rated_voltage_v) == {6.3, 10.0, 16.0, 25.0, 35.0, 50.0, 63.0}
    assert set(e.temp_max_c) == {85.0, 105.0}
    assert e.value.min() == pytest.approx(10e-6) and e.value.max() == pytest.approx(2.2e-3)


def test_diodes_bridges_fuses(frame):
    d = frame[frame.kind == "diode"]
    assert set(d.vrrm_v) == {400.0, 600.0, 1000.0} and (d.ifsm_a == 30.0).all()
    # I^2 t of a half sine: Ip^2 * T / 2 (calculus), T = 8.3 ms
    np.testing.assert_allclose(d.i2t_a2s, d.ifsm_a**2 * 8.3e-3 / 2, rtol=1e-3)
    assert set(frame[frame.kind == "bridge"].package) == {"MB-size", "DB-size"}
    f = frame[frame.kind == "fuse"]
    assert f.value.min() == pytest.approx(0.05) and f.value.max() == pytest.approx(2.0)
    assert (f.i2t_a2s > 0).all()


def test_diode_i2t_worked_example():
    # 30 A half sine of 8.3 ms: 30^2 * 0.0083 / 2 = 3.735 A^2 s (integral of sin^2)
    assert diode_i2t(30.0) == pytest.approx(3.735)
    with pytest.raises(OutOfRangeError):
        diode_i2t(30.0, 0.1)


def test_zener_impedance_demo_model():
    # demo model [P, invented]: 3.5 ohm at 6.8 V, (27.2 / 6.8) ** 1.5 = 8 -> 28 ohm
    assert zener_impedance(27.2, 3.5) == pytest.approx(28.0)
    assert zener_impedance(3.4, 3.5) == pytest.approx(3.5 * 2**1.5)
    with pytest.raises(OutOfRangeError):
        zener_impedance(0.5, 3.5)


# --- the frame's shape (contract with the solver and the auditor) -------------------------------


def test_frame_has_the_contract_columns(frame):
    assert list(frame.columns) == list(PART_COLUMNS)
    assert set(CONTRACT_COLUMNS) <= set(frame.columns)  # DEVELOPERS.md "Catalogue"
    assert set(frame.kind) == set(KINDS)
    for col in ("value", "unit_price", "area_mm2", "rated_voltage_v", "impulse_v"):
        assert frame[col].dtype == np.float64
    assert frame.fusible.dtype == bool
    assert frame.code.is_unique


def test_parts_frame_filters(catalogue_engine):
    z = parts_frame(catalogue_engine, kinds=["zener", "fuse"])
    assert set(z.kind) == {"zener", "fuse"}
    assert parts_frame(catalogue_engine, kinds="bridge").shape[0] == 4
    assert parts_frame(catalogue_engine, stock_only=True).empty  # built-in rows have no stock
    assert isinstance(z, pd.DataFrame)


# --- demo price and area model (invented: regression pins, no outside source) -----------------


def test_price_model_is_labelled_invented(frame):
    assert (frame.price_note == "demo price model, invented").all()
    assert (frame.unit_price > 0).all() and (frame.area_mm2 > 0).all()
    text = (catalogue_dir() / "price_model.toml").read_text()
    assert "demo price model, invented" in text


def test_price_pins():
    rows = {r["code"]: r for r in builtin_rows()}
    assert rows["xcap.x2.305vac.330n.10pct"]["unit_price"] == pytest.approx(0.1141, abs=1e-4)
    assert rows["res.thick.1206.4k7.5pct"]["unit_price"] == 0.0025
    assert rows["res.thick.1206.4k7.5pct"]["area_mm2"] == pytest.approx(3.2 * 1.6 * 1.6, abs=0.01)


def test_builder_module_names_its_version():
    assert build.BUILDER_VERSION
