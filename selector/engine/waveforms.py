"""Waveforms for plots: two mains cycles in periodic steady state, and the switch-on current."""

from __future__ import annotations

import numpy as np

from .circuit import Circuit, Harmonic
from .distortion import waveform_peak
from .steady_state import build_system, solve_steady_state

__all__ = ["switch_on_waveform", "waveforms"]


def waveforms(
    circuit: Circuit,
    mains_v: float,
    freq_hz: float,
    loaded: bool = True,
    cycles: int = 2,
    harmonics: tuple[Harmonic, ...] = (),
) -> dict[str, np.ndarray]:
    """Steady-state waveforms over ``cycles`` mains cycles at one corner (SI arrays), on a
    distorted mains when ``harmonics`` are given.

    Keys: ``t_s``, ``mains_v``, ``line_current_a``, ``output_voltage_v``, ``x_cap_voltage_v``,
    ``zener_current_a``, ``load_current_a``.
    """
    kw = {} if loaded else {"load_a": 0.0, "load_g": 0.0}
    st = solve_steady_state(circuit, mains_v, freq_hz, keep_trace=True, harmonics=harmonics, **kw)
    tr = st.trace
    assert tr is not None
    period = 1.0 / freq_hz
    t = np.concatenate([tr.t + k * period for k in range(cycles)])

    def rep(name: str) -> np.ndarray:
        return np.tile(tr.out[name], cycles)

    return {
        "t_s": t,
        "mains_v": rep("u"),
        "line_current_a": rep("i_line"),
        "output_voltage_v": rep("v_o"),
        "x_cap_voltage_v": rep("v_c"),
        "zener_current_a": rep("i_z"),
        "load_current_a": rep("i_load"),
    }


def switch_on_waveform(
    circuit: Circuit,
    mains_v: float,
    freq_hz: float,
    duration_s: float | None = None,
    harmonics: tuple[Harmonic, ...] = (),
) -> dict[str, np.ndarray]:
    """Switch-on at the crest with everything discharged: ``t_s`` from the switching instant,
    ``line_current_a``, ``output_voltage_v``, ``x_cap_voltage_v`` (default: two cycles). With
    ``harmonics``, at the distorted wave's crest."""
    system = build_system(circuit, mains_v, freq_hz, harmonics=harmonics)
    t0 = system.period / 4.0
    if harmonics:
        t0 = waveform_peak(harmonics)[1] / system.omega
    span = duration_s if duration_s is not None else 2.0 * system.period
    tau = circuit.series_resistance_ohm * circuit.x_capacitance_f
    _, _, _, tr = system.run(
        (0, 0, 0),
        (0.0, 0.0),
        t0,
        t0 + span,
        collect=True,
        quad_dt=min(system.period / 400, tau / 10),
    )
    assert tr is not None
    return {
        "t_s": tr.t - t0,
        "line_current_a": tr.out["i_line"],
        "output_voltage_v": tr.out["v_o"],
        "x_cap_voltage_v": tr.out["v_c"],
    }
