"""Per-unit figures of the production yield (one job: what one drawn unit delivers and
endures): the exact available current of a unit (:func:`available_current`), the closed
form of that current calibrated on the band corners (:func:`calibrate_current`,
:class:`Calibration`), and the unit's stresses scaled from the exact worst case
(:func:`unit_stresses`). The run that draws the units is
:func:`selector.production_yield.production_yield`, which re-exports the public names.

Method and accuracy. The exact engine (one Newton shooting per circuit, ~1-2 ms) is used only to
calibrate the numpy closed forms (:mod:`selector.engine.closed_form`, R-corrected, within
0.63 % / 0.72 % of the exact solver uncalibrated). For the current criterion the ratio
``rho = exact / closed form`` is solved at the nominal point and at every corner of the band of
the drawn variables (2^k + 1 solves, k <= 6 variables with a non-zero band, per frequency) and
fitted by least squares with a model linear in each band position plus all pairwise products
(an exact interpolation on a 2-level factorial for the main effects and interactions). The
calibrated current is ``closed form x rho(z)``; the largest relative error at the solved points
is reported (``calibration.max_error``) and tests check random units against the exact solver
within 0.5 %. The per-unit stresses are the exact worst-case stresses of
:func:`selector.engine.analyse` scaled by the closed-form ratio between the unit and the corner
that produced them (exact at that corner; against an exact analysis of the unit itself within
0.5 %, see tests/test_production_yield.py); the surge and ripple figures (surge pulse, reservoir
ripple current, output ripple; the half-wave diode's average current, which is the load) stay at
their worst-case values: a worst-case miss there counts as a miss on every unit. (The worst case
is the largest over the corners the engine solves; a unit may pass it by a fraction of a per
cent: 0.5 % seen for the ripple current.)
"""

from __future__ import annotations

import dataclasses
import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from .engine import closed_form as cf
from .engine.circuit import Circuit
from .errors import OutOfRangeError

__all__ = [
    "Calibration",
    "ToleranceBand",
    "available_current",
    "calibrate_current",
    "unit_stresses",
]


def _unit_circuit(circuit: Circuit, c_f: float, r_ohm: float, rb_ohm: float, vz_v: float,
                  res_f: float) -> Circuit:  # fmt: skip
    return dataclasses.replace(
        circuit,
        x_capacitors_f=(c_f,),
        series_resistance_ohm=r_ohm,
        bleeder_resistance_ohm=rb_ohm,
        zener_voltage_v=vz_v,
        reservoir_f=res_f,
    )


def available_current(circuit: Circuit, mains_v: float, freq_hz: float) -> float:
    """Available DC current of one circuit at one mains [A], as ``dropper check`` reads it.

    The exact periodic steady state with the load: when the clamp still conducts the current
    into the bus; when the load pulls the bus out of regulation, the current into the bus held
    at the clamp (no-load solve), as :func:`selector.engine.analyse` does.
    """
    from .engine.steady_state import solve_steady_state

    st = solve_steady_state(circuit, mains_v, freq_hz)
    if st.zener_current_a > 1e-9 or (circuit.load.is_zero and circuit.regulator is None):
        return st.dc_current_a
    return solve_steady_state(circuit, mains_v, freq_hz, load_a=0.0, load_g=0.0).dc_current_a


@dataclass
class Calibration:
    """The fitted ratio exact / closed form for the current criterion, per frequency.

    ``variables``: the band variables of the fit (``x_capacitance_f``, ...); ``coefficients``
    per frequency: intercept, one per variable, one per pair (in ``itertools.combinations``
    order); ``points``: exact solves used; ``max_error``: largest relative error of the
    calibrated closed form at those points."""

    method: str
    variables: list[str]
    frequencies_hz: list[float]
    coefficients: dict[float, list[float]]
    points: int
    max_error: float
    closed_form_max_error: float


@dataclass(frozen=True)
class ToleranceBand:
    """One drawn variable: name, nominal, relative half-width (0: not drawn)."""

    name: str
    nominal: float
    tol: float


def _features(z: np.ndarray) -> np.ndarray:
    """Design matrix rows: 1, z_j, z_j z_k (j < k) for positions ``z`` of shape (m, k)."""
    m, k = z.shape
    cols = [np.ones(m)] + [z[:, j] for j in range(k)]
    cols += [z[:, a] * z[:, b] for a, b in itertools.combinations(range(k), 2)]
    return np.column_stack(cols)


def calibrate_current(
    circuit: Circuit,
    bands: Sequence[ToleranceBand],
    mains_v: tuple[float, float],
    freqs: Sequence[float],
    draw_mains: bool,
) -> tuple[Calibration, Callable[[np.ndarray, np.ndarray, np.ndarray], np.ndarray]]:
    """Fit ``rho = exact / closed form`` on the band corners (see module docstring).

    ``bands`` are the current-criterion variables in the order x_capacitance_f (end-of-life),
    series_resistance_ohm, bleeder_resistance_ohm, zener_voltage_v, reservoir_f; ``mains_v`` the
    (criterion value, half-width) of the mains; returns the calibration record and
    ``predict(z_matrix, freq_array, closed_form_current) -> calibrated current``.
    """
    top = circuit.topology
    vf = circuit.diode_drop_v
    live = [b for b in bands if b.tol > 0]
    names = [b.name for b in live]
    v_mid, v_half = mains_v
    if draw_mains and v_half > 0:
        names.append("mains_v")
    k = len(names)
    corners = np.array(list(itertools.product((-1.0, 1.0), repeat=k)), ndmin=2).reshape(-1, k)
    points = np.vstack([np.zeros((1, k)), corners]) if k else np.zeros((1, 0))
    coefs: dict[float, np.ndarray] = {}
    worst_err = 0.0
    worst_cf_err = 0.0
    solves = 0
    by_name = {b.name: b for b in bands}
    for f in freqs:
        ratios = []
        for zrow in points:
            val = {b.name: b.nominal for b in bands}
            for j, name in enumerate(names):
                if name != "mains_v":
                    b = by_name[name]
                    val[name] = b.nominal * (1.0 + b.tol * zrow[j])
            v = v_mid + (v_half * zrow[names.index("mains_v")] if "mains_v" in names else 0.0)
            unit = _unit_circuit(
                circuit,
                val["x_capacitance_f"],
                val["series_resistance_ohm"],
                val["bleeder_resistance_ohm"],
                val["zener_voltage_v"],
                val["reservoir_f"],
            )
            exact = available_current(unit, v, f)
            approx = float(
                cf.dc_current(
                    top,
                    v,
                    val["x_capacitance_f"],
                    f,
                    val["zener_voltage_v"],
                    vf,
                    val["series_resistance_ohm"],
                )
            )
            solves += 1
            if approx <= 0:
                raise OutOfRangeError(
                    f"the clamp ({val['zener_voltage_v']:.3g} V) is above what the capacitor "
                    f"can swing at {v:.4g} V; no current to calibrate"
                )
            ratios.append(exact / approx)
        rho = np.array(ratios)
        worst_cf_err = max(worst_cf_err, float(np.max(np.abs(1.0 / rho - 1.0))))
        X = _features(points)
        # with fewer points than terms (k <= 1) lstsq gives the minimum-norm exact fit
        coef, *_ = np.linalg.lstsq(X, rho, rcond=None)
        fit = X @ coef
        worst_err = max(worst_err, float(np.max(np.abs(fit / rho - 1.0))))
        coefs[float(f)] = coef

    def predict(z: np.ndarray, freq: np.ndarray, approx: np.ndarray) -> np.ndarray:
        X = _features(z)
        out = np.empty_like(approx)
        for f, coef in coefs.items():
            sel = freq == f
            out[sel] = approx[sel] * (X[sel] @ coef)
        return out

    cal = Calibration(
        method=(
            "closed form x fitted ratio exact/closed form (linear in each band position plus "
            "pairwise products), solved at the nominal point and every band corner"
        ),
        variables=names,
        frequencies_hz=[float(f) for f in freqs],
        coefficients={f: [float(c) for c in coef] for f, coef in coefs.items()},
        points=solves,
        max_error=worst_err,
        closed_form_max_error=worst_cf_err,
    )
    return cal, predict


def _anchor(exact: float, g_unit: np.ndarray, g_corner: float) -> np.ndarray:
    """The exact worst-case stress scaled by the closed-form ratio unit / corner."""
    if not math.isfinite(exact) or g_corner == 0:
        return np.full(np.shape(g_unit), exact, dtype=float)
    return exact * (g_unit / g_corner)


def unit_stresses(
    s_worst: Mapping[str, Any],
    analysis: Any,
    circuit: Circuit,
    v: np.ndarray,
    v_fault: np.ndarray,
    f: np.ndarray,
    c: np.ndarray,
    r: np.ndarray,
    rb: np.ndarray,
    vz: np.ndarray,
    cr: np.ndarray,
    i_avail: np.ndarray,
    demand: float,
) -> dict[str, Any]:
    """Per-unit stresses: the exact worst case scaled by closed-form ratios (module docstring).

    ``s_worst`` are the flat stresses of ``analysis``
    (:func:`selector.rules.stresses_from_analysis`); each scaled key is
    ``exact worst x g(unit) / g(corner)`` with ``g`` the closed form of that quantity (Zener
    power, series-R power, line current, capacitor voltage, DC current, bus voltage; switch-on:
    C V^2, V / R, V^2 C / R, V / (R C); discharge: Rb C). Arrays of one length in, a stress
    mapping for :meth:`selector.rules.Rule.check` out. ``c`` is the day-one X capacitance;
    ``v``, ``f`` the stress line of each unit, ``v_fault`` the line at which a shorted X
    capacitor must open the fuse (the lowest, or the unit's)."""
    top = circuit.topology
    vf = circuit.diode_drop_v
    wc = analysis.worst_case
    s = dict(s_worst)

    def at(corner: Mapping[str, Any]) -> tuple[float, float, float, float, float]:
        return (
            float(corner["mains_v"]),
            float(corner["freq_hz"]),
            float(corner["cap_f"]),
            float(corner["r_ohm"]),
            float(corner.get("vz_v", circuit.zener_voltage_v)),
        )

    def line_rms(vv, cc, ff, rr):
        return cf.line_current_rms(vv, cc, ff, rr)

    def vcap(vv, cc, ff, rr):
        return cf.line_current_rms(vv, cc, ff, rr) * cf.reactance(cc, ff)

    def idc(vv, cc, ff, zz, rr):
        return cf.dc_current(top, vv, cc, ff, zz, vf, rr)

    V, F, C, R, Z = at(wc.max_zener_power_corner)
    s["max_zener_power_w"] = _anchor(
        wc.max_zener_power_w,
        cf.zener_power_no_load(top, v, c, f, vz, vf, r),
        float(cf.zener_power_no_load(top, V, C, F, Z, vf, R)),
    )
    V, F, C, R, Z = at(wc.max_series_r_power_corner)
    s["max_series_r_power_w"] = _anchor(
        wc.max_series_r_power_w,
        cf.series_r_power(v, c, f, r),
        float(cf.series_r_power(V, C, F, R)),
    )
    V, F, C, R, Z = at(wc.max_line_current_rms_corner)
    s["max_line_current_rms_a"] = _anchor(
        wc.max_line_current_rms_a, line_rms(v, c, f, r), float(line_rms(V, C, F, R))
    )
    if circuit.has_bleeder:
        k = wc.max_bleeder_power_corner
        V, F, C, R, Z = at(k)
        rb_c = float(k.get("bleeder_ohm", circuit.bleeder_resistance_ohm))
        s["max_bleeder_power_w"] = _anchor(
            wc.max_bleeder_power_w, vcap(v, c, f, r) ** 2 / rb, float(vcap(V, C, F, R)) ** 2 / rb_c
        )
    V, F, C, R, Z = at(wc.max_bleeder_voltage_corner)
    s["max_bleeder_voltage_v"] = _anchor(
        wc.max_bleeder_voltage_v, vcap(v, c, f, r), float(vcap(V, C, F, R))
    )
    V, F, C, R, Z = at(wc.max_output_voltage_corner)
    drop = vf if top == "half-wave" else 0.0  # the bus sits a diode drop below the Zener there
    s["max_output_voltage_v"] = _anchor(wc.max_output_voltage_v, vz - drop, Z - drop)
    V, F, C, R, Z = at(wc.max_dc_current_corner)
    i_unit = idc(v, c, f, vz, r)
    i_corner = float(idc(V, C, F, Z, R))
    if top == "bridge":
        # each bridge diode carries half the DC current; the half-wave diode carries the load
        # only (the Zener shunts the rest before it), so there the worst case stands
        s["max_rectifier_avg_current_a"] = _anchor(wc.max_rectifier_avg_current_a, i_unit, i_corner)
    # the ripple figures (reservoir ripple current, output ripple) are largest where the clamp
    # lets go, which no monotonic closed form tracks: they keep their worst-case values
    s["mains_max_v"] = v
    s["mains_min_v"] = v_fault
    s["max_rectifier_reverse_voltage_v"] = math.sqrt(2.0) * v
    # switch-on at the crest: energy ~ C, peak ~ V / R, I^2 t ~ V^2 C / R, dV/dt ~ V / (R C)
    ins = analysis.inrush
    V, F, C, R, Z = at(ins.corner)
    s["inrush_series_r_energy_j"] = _anchor(ins.series_r_energy_j, c * v * v, C * V * V)
    s["inrush_peak_current_a"] = _anchor(ins.peak_current_a, v / r, V / R)
    s["inrush_rectifier_peak_current_a"] = _anchor(ins.rectifier_peak_current_a, v / r, V / R)
    s["inrush_i2t_a2s"] = _anchor(ins.i2t_a2s, v * v * c / r, V * V * C / R)
    # dV/dt and k0 peak at the lowest capacitance: their own corner when the engine names one
    V, F, C, R, Z = at(ins.x_cap_corner or ins.corner)
    s["inrush_x_cap_dvdt_v_per_s"] = _anchor(ins.x_cap_dvdt_v_per_s, v / (r * c), V / (R * C))
    # k0 = 2 I^2t / C^2 ~ V^2 / (R C)
    s["inrush_x_cap_k0_v2_per_s"] = _anchor(ins.x_cap_k0_v2_per_s, v * v / (r * c), V * V / (R * C))
    dis = analysis.discharge
    if circuit.has_bleeder and math.isfinite(dis.time_s):
        k = dis.corner
        s["discharge_time_s"] = _anchor(
            dis.time_s, rb * c, float(k.get("bleeder_ohm", rb[0])) * float(k["cap_f"])
        )
    # a shorted X capacitor leaves the unit's own series resistance across the line
    s["series_resistance_ohm"] = r
    s["min_dc_current_a"] = i_avail
    s["load_a"] = demand
    return s
