"""Distorted mains: outside references named at each check (textbook phasor law, Fourier series
of a triangle wave, the THD definition), then the engine's handling of the harmonics."""

from __future__ import annotations

import math

import numpy as np
import pytest

from selector.engine import Circuit, Conditions, Load, Mains, Tolerances, analyse
from selector.engine import distortion as dist
from selector.engine.circuit import EN50160_HARMONICS, Harmonic
from selector.engine.pwl import Mode, PwlSystem
from selector.engine.steady_state import solve_steady_state
from selector.errors import OutOfRangeError

EN = EN50160_HARMONICS  # 3rd 5 %, 5th 6 %, 7th 5 % [M]


def _fourier(trace_t, weights, values, omega_h) -> complex:
    """Complex amplitude of the component at ``omega_h`` over whole periods (quadrature with
    the trace's own Simpson weights): ``(2 / T) integral x(t) exp(-j w_h t) dt``."""
    span = weights.sum()
    return complex(2.0 / span * np.dot(weights, values * np.exp(-1j * omega_h * trace_t)))


@pytest.mark.parametrize("r_ohm", [0.0, 470.0, 2200.0])
def test_series_rc_harmonic_current_is_the_phasor_law(r_ohm: float) -> None:
    """A capacitor (in series with R, no clamp) on the distorted mains: the line current's
    harmonic h has amplitude ``h w C V_h / sqrt(1 + (h w R C)^2)`` - the phasor law of a series
    RC, any circuits textbook [S]; for R = 0 exactly I_h = h w C V_h (DOMAIN.md section 10)."""
    c, f, v1 = 330e-9, 50.0, 230.0
    r = max(r_ohm, 1e-3)
    vpk = math.sqrt(2) * v1
    w = 2 * math.pi * f
    tones = dist.tones(vpk, w, EN)
    rc = r * c

    def build(key):
        # v_c' = (u - v_c) / (R C); the second state is an idle decay; output: i = (u - v_c) / R
        return Mode(key, (-1 / rc, 0, 1 / rc, 0), (0, -1, 0, 0), [(-1 / r, 0, 1 / r, 0)], [], tones)

    system = PwlSystem(build, ("i",), vpk, f, volt_scale=vpk, tones=tones)
    x, key, _, _ = system.run(0, (0.0, 0.0), 0.0, 40 / f)  # many time constants: periodic
    _, _, _, tr = system.run(key, x, 40 / f, 41 / f, collect=True, quad_dt=1 / f / 4000)
    for order, frac in [(1, 1.0)] + [(h.order, h.fraction) for h in EN]:
        amp = abs(_fourier(tr.t, tr.w, tr.out["i"], order * w))
        wh = order * w
        expected = wh * c * frac * vpk / math.sqrt(1 + (wh * r * c) ** 2)
        assert amp == pytest.approx(expected, rel=1e-6)


def test_thd_definition_against_a_sampled_wave() -> None:
    """THD = sqrt(sum_h V_h^2) / V_1 (IEC 61000-2-2 / EN 50160 definition [M]) read off the
    discrete Fourier transform of the sampled wave equals the function's value."""
    hs = (Harmonic(3, 0.05, 30.0), Harmonic(5, 0.06), Harmonic(2, 0.02, 200.0))
    n = 1024
    y = dist.waveform(np.arange(n) * 2 * math.pi / n, hs)
    spec = np.abs(np.fft.rfft(y)) * 2 / n
    thd_fft = math.sqrt(float(np.sum(spec[2:41] ** 2))) / spec[1]
    assert thd_fft == pytest.approx(dist.thd(hs), rel=1e-9)
    assert Mains(230, harmonics=hs).thd == pytest.approx(thd_fft, rel=1e-9)
    # the docstring example: 5 %, 6 %, 5 % -> 9.27 %
    assert dist.thd(EN) == pytest.approx(0.0927, abs=5e-5)


def _triangle(max_order: int = 39) -> tuple[Harmonic, ...]:
    """Fourier series of a triangle wave, any textbook [S]:
    tri(t) = 8/pi^2 sum_{k>=0} (-1)^k sin((2k+1) w t) / (2k+1)^2 -> harmonics 1/h^2 of the
    fundamental, sign (-1)^k as a phase of 0 or 180 deg."""
    out = []
    for k in range(1, (max_order - 1) // 2 + 1):
        h = 2 * k + 1
        out.append(Harmonic(h, 1.0 / h**2, 180.0 if k % 2 else 0.0))
    return tuple(out)


def test_triangle_wave_thd_and_crest() -> None:
    """Textbook figures of a triangle wave: THD = sqrt(pi^4 / 96 - 1) = 12.11 %, crest over the
    fundamental's crest = pi^2 / 8 = 1.2337 (its Fourier series above) [S]. The series is cut
    at the 39th; the crest's tail is below sum_{h>=41, odd} 1/h^2 < 1/80."""
    tri = _triangle()
    assert dist.thd(tri) == pytest.approx(math.sqrt(math.pi**4 / 96 - 1), rel=1e-4)
    assert math.sqrt(math.pi**4 / 96 - 1) == pytest.approx(0.1211, abs=1e-4)
    peak, angle = dist.waveform_peak(tri)
    assert math.pi**2 / 8 - 1 / 80 < peak <= math.pi**2 / 8
    assert angle == pytest.approx(math.pi / 2, abs=1e-6) or angle == pytest.approx(
        3 * math.pi / 2, abs=1e-6
    )


def test_crest_of_simple_waves() -> None:
    # a sine: crest 1 at 90 deg; a 5th of 6 % in phase at the crest: 1.06 (sin(5 pi/2) = 1)
    assert dist.waveform_peak(()) == pytest.approx((1.0, math.pi / 2))
    assert dist.waveform_peak((Harmonic(5, 0.06),)) == pytest.approx((1.06, math.pi / 2))
    # the EN 50160 profile at phase 0 is flat-topped: the crest is below the sine's
    assert dist.waveform_peak(EN)[0] < 1.0
    assert Mains(230, harmonics=EN).crest_factor == dist.waveform_peak(EN)[0]


@pytest.mark.parametrize(
    "make",
    [
        lambda: Harmonic(1, 0.05),
        lambda: Harmonic(41, 0.01),
        lambda: Harmonic(5, 0.5),
        lambda: Harmonic(5, -0.01),
        lambda: Mains(230, harmonics=(Harmonic(5, 0.06), Harmonic(5, 0.01))),
    ],
)
def test_bad_harmonics_raise(make) -> None:
    with pytest.raises(OutOfRangeError):
        make()


def _circuit(top: str = "bridge", **kw) -> Circuit:
    base = dict(
        topology=top,
        x_capacitors_f=(330e-9,),
        series_resistance_ohm=470.0,
        zener_voltage_v=12.0,
        reservoir_f=220e-6,
        load=Load(current_a=0.008),
    )
    base.update(kw)
    return Circuit(**base)


def test_half_cycle_symmetry_equals_full_cycle() -> None:
    """Odd harmonics keep u(t + T/2) = -u(t), so the bridge's half-cycle shooting must give the
    full-cycle answer: a negligible 2nd harmonic (1e-9) forces the full cycle (both within the
    solver's acceptance of 3e-4 of the crest on the state, hence 1e-5 here)."""
    odd = EN
    forced = (*EN, Harmonic(2, 1e-9))
    a = solve_steady_state(_circuit(), 230, 50, harmonics=odd)
    b = solve_steady_state(_circuit(), 230, 50, harmonics=forced)
    assert a.dc_current_a == pytest.approx(b.dc_current_a, rel=1e-5)
    assert a.zener_power_w == pytest.approx(b.zener_power_w, rel=1e-5)
    assert a.line_current_rms_a == pytest.approx(b.line_current_rms_a, rel=1e-5)


@pytest.mark.parametrize("top", ["bridge", "half-wave"])
def test_analysis_takes_the_worse_of_distorted_and_sine(top: str) -> None:
    c = _circuit(top)
    sine = analyse(c, Mains(230, 0.1, (50.0,)), Tolerances(), Conditions())
    dist_a = analyse(c, Mains(230, 0.1, (50.0,), harmonics=EN), Tolerances(), Conditions())
    ws, wd = sine.worst_case, dist_a.worst_case
    # harmonics raise the line current (h w C V_h): rms and series-R power grow
    assert wd.max_line_current_rms_a > 1.05 * ws.max_line_current_rms_a
    assert wd.max_series_r_power_w > 1.1 * ws.max_series_r_power_w
    assert wd.max_line_current_rms_corner["thd"] == pytest.approx(dist.thd(EN))
    # the flat-topped profile lowers the crest: the sine stays the Zener-power corner
    assert wd.max_zener_power_w == pytest.approx(ws.max_zener_power_w, rel=1e-9)
    assert wd.max_zener_power_corner["thd"] == 0.0
    assert wd.min_dc_current_a < ws.min_dc_current_a
    assert wd.max_rectifier_reverse_voltage_v == pytest.approx(math.sqrt(2) * 253)
    # the nominal figures are those of the given (distorted) mains
    assert dist_a.nominal.line_current_rms_a > sine.nominal.line_current_rms_a


def test_peaking_harmonics_raise_crest_stresses() -> None:
    """A 5th in phase with the crest raises the crest by 6 %: reverse voltage, discharge start
    and the switch-on peak follow it."""
    c = _circuit()
    peaky = (Harmonic(5, 0.06),)
    sine = analyse(c, Mains(230, 0.1, (50.0,)), Tolerances(), Conditions())
    a = analyse(c, Mains(230, 0.1, (50.0,), harmonics=peaky), Tolerances(), Conditions())
    assert a.worst_case.max_rectifier_reverse_voltage_v == pytest.approx(math.sqrt(2) * 253 * 1.06)
    assert a.discharge.start_v == pytest.approx(math.sqrt(2) * 253 * 1.06)
    assert a.inrush.peak_current_a > 1.04 * sine.inrush.peak_current_a
    assert a.worst_case.max_zener_power_w > sine.worst_case.max_zener_power_w


def test_no_harmonics_is_the_sine() -> None:
    """Regression: an empty harmonic tuple gives exactly the sine's solve."""
    a = solve_steady_state(_circuit(), 230, 50)
    b = solve_steady_state(_circuit(), 230, 50, harmonics=())
    assert a == b
    assert Mains(230).crest_factor == 1.0 and Mains(230).thd == 0.0


def test_report_waveforms_follow_the_corner_wave() -> None:
    """The report plots a corner on the wave it was found on: a corner with ``thd`` > 0 uses the
    document's harmonics, whose line current carries h w C V_h (a higher crest here)."""
    from selector.engine.distortion import mains_record
    from selector.report.figures import engine_waveforms

    c = _circuit()
    corner = {"mains_v": 230.0, "freq_hz": 50.0, "cap_f": 330e-9, "r_ohm": 470.0, "vz_v": 12.0}
    doc_d = {
        "mains": mains_record(Mains(230, harmonics=EN)),
        "worst_case": {"max_line_current_rms_corner": {**corner, "thd": dist.thd(EN)}},
    }
    doc_s = {"worst_case": {"max_line_current_rms_corner": corner}}
    title = "Line current over two mains cycles"
    (_, [tr_d]) = engine_waveforms(c, doc_d)[title]
    (_, [tr_s]) = engine_waveforms(c, doc_s)[title]
    assert "THD 9.27 %" in tr_d.label
    st = solve_steady_state(c, 230, 50, harmonics=EN)
    # (the plot samples the cycle on its own grid: the sampled crest agrees to 0.1 %)
    assert float(np.max(np.abs(tr_d.y))) == pytest.approx(st.line_current_peak_a, rel=1e-3)
    assert float(np.max(np.abs(tr_d.y))) > 1.3 * float(np.max(np.abs(tr_s.y)))
