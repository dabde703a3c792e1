"""Closed forms: textbook figures (outside references named at each check) and their error
against the exact periodic solution (the table in selector/engine/closed_form.py)."""

from __future__ import annotations

import itertools
import math

import numpy as np
import pytest

from selector.engine import Circuit, solve_steady_state
from selector.engine import closed_form as cf
from selector.errors import OutOfRangeError


def test_reactance_of_70n1_at_50hz() -> None:
    # common practice, no source: 70.1 nF at 50 Hz is about 45.4 kohm
    assert float(cf.reactance(70.1e-9, 50.0)) == pytest.approx(45.4e3, rel=2e-3)


def test_reactance_textbook_formula() -> None:
    # X_C = 1 / (2 pi f C), any circuits textbook: 1 uF at 50 Hz = 3183.1 ohm
    assert float(cf.reactance(1e-6, 50.0)) == pytest.approx(3183.1, abs=0.1)


def test_closed_forms_broadcast() -> None:
    c = np.array([[100e-9], [330e-9], [1e-6]])
    f = np.array([50.0, 60.0])
    i = cf.dc_current_bridge(230.0, c, f, 12.0, 0.8, 470.0)
    assert i.shape == (3, 2)
    assert np.all(np.diff(i, axis=0) > 0) and np.all(np.diff(i, axis=1) > 0)


def test_bridge_rectified_average_limit() -> None:
    # DOMAIN.md 2: for Vo' << Vpk, 4 f C Vpk equals the rectified average 0.9 Vrms 2 pi f C
    # (0.9 = 2 sqrt(2) / pi, the rectified mean of a sine, any textbook)
    i = float(cf.dc_current_bridge(230.0, 330e-9, 50.0, 0.0, 0.0))
    assert i == pytest.approx(2 * math.sqrt(2) / math.pi * 230 * 2 * math.pi * 50 * 330e-9)


def test_docstring_examples() -> None:
    assert float(cf.dc_current_bridge(230, 330e-9, 50, 12, 0.8)) == pytest.approx(20.57e-3, 1e-3)
    assert float(cf.dc_current_half_wave(230, 330e-9, 50, 12, 0.8)) == pytest.approx(10.52e-3, 1e-3)
    assert float(cf.line_current_rms(230, 330e-9, 50, 470)) == pytest.approx(23.8e-3, rel=2e-3)
    assert float(cf.inrush_peak_current(253, 470)) == pytest.approx(0.761, rel=1e-3)
    assert float(cf.switch_on_energy(330e-9, 325.3)) == pytest.approx(17.46e-3, rel=1e-3)
    assert float(cf.discharge_time(357.8, 34, 1e6, 330e-9)) == pytest.approx(0.777, rel=1e-3)


def test_rc_discharge_textbook() -> None:
    # RC discharge V = V0 exp(-t/RC), any textbook: after one time constant 36.8 % remains
    t = float(cf.discharge_time(100.0, 100.0 * math.exp(-1), 1e6, 1e-6))
    assert t == pytest.approx(1.0, rel=1e-12)


def test_charging_energy_textbook() -> None:
    # energy lost charging C from a step V through any R is 0.5 C V^2 (any textbook);
    # I^2 t = V^2 C / (2 R) is its value divided by R
    assert float(cf.switch_on_energy(1e-6, 100.0)) == pytest.approx(5e-3)
    assert float(cf.inrush_i2t(1e-6, 100.0, 100.0)) * 100.0 == pytest.approx(5e-3)


def test_startup_never_when_load_takes_all() -> None:
    assert math.isinf(float(cf.startup_time(220e-6, 12, 0.01, 0.02)))
    assert float(cf.startup_time(220e-6, 12, 0.02, 0.01)) == pytest.approx(0.264)


#: documented bounds (module docstring of closed_form): measured maxima, rounded up
BOUNDS = {"bridge_r0": 0.09, "bridge": 0.01, "half-wave": 0.01, "line_rms": 0.11}
GRID = list(
    itertools.product(
        (230.0, 120.0), (50.0, 60.0), (100e-9, 330e-9, 1e-6), (47.0, 220.0, 1000.0), (5.1, 24.0)
    )
)


def _errors() -> dict[str, float]:
    worst = dict.fromkeys(BOUNDS, 0.0)
    for v, f, c, r, vz in GRID:
        if 2 * math.pi * f * r * c > 0.4:  # beyond the useful range (R eats the crest)
            continue
        for top in ("bridge", "half-wave"):
            circ = Circuit(
                topology=top,
                x_capacitors_f=(c,),
                series_resistance_ohm=r,
                zener_voltage_v=vz,
                reservoir_f=470e-6,
            )
            st = solve_steady_state(circ, v, f)
            i = float(cf.dc_current(top, v, c, f, vz, 0.8, r))
            worst[top] = max(worst[top], abs(i / st.dc_current_a - 1))
            if top == "bridge":
                i0 = float(cf.dc_current_bridge(v, c, f, vz, 0.8))
                worst["bridge_r0"] = max(worst["bridge_r0"], abs(i0 / st.dc_current_a - 1))
                il = float(cf.line_current_rms(v, c, f, r))
                worst["line_rms"] = max(worst["line_rms"], abs(il / st.line_current_rms_a - 1))
    return worst


def test_error_table() -> None:
    """The closed forms stay within the documented bounds of the exact solution over the
    useful range (230/120 V, 50/60 Hz, 100 nF..1 uF, 47 ohm..1 kohm, w R C <= 0.4, 5.1..24 V)."""
    worst = _errors()
    for name, bound in BOUNDS.items():
        assert worst[name] <= bound, (name, worst[name])


@pytest.mark.parametrize(
    "call",
    [
        lambda: cf.reactance(0.0, 50.0),
        lambda: cf.reactance(330e-9, -50.0),
        lambda: cf.dc_current_bridge(230, np.array([330e-9, 0.0]), 50, 12),
        lambda: cf.dc_current_half_wave(230, 330e-9, 50, 12, 0.8, -1.0),
    ],
)
def test_out_of_range_raises(call) -> None:
    with pytest.raises(OutOfRangeError):
        call()


# spectra for the distorted bounds: EN 50160 individual limits of the 3rd/5th/7th [M]; the same
# with phases that raise the crest; a mixed one with an even order and higher orders
SPECTRA = {
    "en50160": ((3, 0.05, 0.0), (5, 0.06, 0.0), (7, 0.05, 0.0)),
    "peaking": ((3, 0.05, 180.0), (5, 0.06, 0.0), (7, 0.05, 180.0)),
    "mixed": ((2, 0.02, 0.0), (5, 0.06, 90.0), (11, 0.035, 0.0), (13, 0.03, 45.0)),
}


def test_distorted_bounds() -> None:
    """On a distorted mains the closed-form bounds bracket the exact solution (documented in
    the module docstring of closed_form; 1 % to spare on each): DC current within
    [lo, hi] of dc_current_bounds, line rms between (1 - Vo'/Vpk) x and 1 x the phasor
    root-sum-square."""
    from selector.engine.circuit import Harmonic

    for spectrum in SPECTRA.values():
        hs = tuple(Harmonic(h, a, ph) for h, a, ph in spectrum)
        for v, f, c, r, vz in GRID:
            if 2 * math.pi * f * r * c > 0.4:
                continue
            for top in ("bridge", "half-wave"):
                circ = Circuit(
                    topology=top,
                    x_capacitors_f=(c,),
                    series_resistance_ohm=r,
                    zener_voltage_v=vz,
                    reservoir_f=470e-6,
                )
                st = solve_steady_state(circ, v, f, harmonics=hs)
                lo, hi = cf.dc_current_bounds(top, v, c, f, vz, 0.8, r, hs)
                assert float(lo) * 0.99 <= st.dc_current_a <= float(hi) * 1.01
                il = float(cf.line_current_rms_distorted(v, c, f, r, hs))
                vo = vz + 1.6 if top == "bridge" else vz
                fac = 1 - vo / (math.sqrt(2) * v)
                assert il * fac * 0.99 <= st.line_current_rms_a <= il * 1.01


def test_distorted_docstring_examples() -> None:
    from selector.engine.circuit import EN50160_HARMONICS as EN

    assert cf.harmonic_crest_bounds(EN) == pytest.approx((0.84, 1.80))
    lo, hi = cf.dc_current_bounds("bridge", 230, 330e-9, 50, 12, 0.8, 0.0, EN)
    assert (float(lo), float(hi)) == pytest.approx((17.14e-3, 37.74e-3), rel=1e-3)
    assert float(cf.line_current_rms_distorted(230, 330e-9, 50, 470, EN)) == pytest.approx(
        26.28e-3, rel=1e-3
    )
    # no harmonics: the sine forms
    assert cf.dc_current_bounds("half-wave", 230, 330e-9, 50, 12) == pytest.approx(
        (cf.dc_current_half_wave(230, 330e-9, 50, 12),) * 2
    )


def test_harmonic_current_grows_with_order_textbook() -> None:
    """R = 0: each harmonic's current is h w C V_h (capacitor phasor law, any textbook [S];
    DOMAIN.md section 10): a 7th of 5 % alone adds 35 % of the fundamental current."""
    i1 = float(cf.line_current_rms(230, 330e-9, 50))
    i = float(cf.line_current_rms_distorted(230, 330e-9, 50, 0.0, ((7, 0.05),)))
    assert i == pytest.approx(i1 * math.sqrt(1 + 0.35**2), rel=1e-12)
