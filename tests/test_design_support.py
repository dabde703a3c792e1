"""Helpers for the design tests: a small catalogue and a closed-form stand-in for analyse().

The stand-in computes the same worst-case figures as the engine from the textbook closed forms of
DOMAIN.md section 2 (RC charging, reactance, clamped-bridge charge pump [S]) at every corner. It
lets the brute-force test enumerate thousands of part sets in seconds: that test checks the
*search* (the solver's optimum equals the brute-force optimum under one and the same evaluator),
while tests/test_design_engine.py checks designs against the real engine and ngspice.
"""

from __future__ import annotations

import itertools
import math
from dataclasses import dataclass
from types import SimpleNamespace

import numpy as np
import pandas as pd

from selector import rules as R
from selector.design import Requirement, objective_key
from selector.rules.life import life_context

SQ2 = math.sqrt(2.0)
NOTE = "demo price model, invented"


def _part(code, kind, family, value, price, area, mount="tht", **kw):
    row = {
        "code": code,
        "kind": kind,
        "family": family,
        "description": f"{family} {code}",
        "value": value,
        "tolerance": kw.pop("tolerance", 0.05),
        "mount": mount,
        "package": kw.pop("package", family),
        "area_mm2": area,
        "unit_price": price,
        "price_note": NOTE,
        "fusible": kw.pop("fusible", False),
    }
    row.update(kw)
    return row


def small_catalogue() -> pd.DataFrame:
    """A handful of parts of every kind (invented demo figures, plausible ratios)."""
    # rated DC voltage 560 V: the 275 VAC X2 rows of the built-in catalogue (invented demo data)
    x = dict(safety_class="X2", rated_voltage_ac_v=275.0, rated_voltage_v=560.0, impulse_v=2500.0,
             tolerance=0.2)  # fmt: skip
    res = dict(derate_start_c=70.0, derate_end_c=155.0)
    rows = [
        # humidity grades (IEC 60384-14 Amd 1): grade I does not last a 10-year life in the
        # end-of-life rule (Peck's model), grades II/III do
        _part(
            "X-100n",
            "x_capacitor",
            "x2",
            100e-9,
            0.05,
            100,
            dvdt_v_per_s=400e6,
            humidity_grade="III",
            **x,
        ),
        _part(
            "X-220n",
            "x_capacitor",
            "x2",
            220e-9,
            0.07,
            150,
            dvdt_v_per_s=250e6,
            humidity_grade="II",
            **x,
        ),
        _part(
            "X-220nI",
            "x_capacitor",
            "x2",
            220e-9,
            0.06,
            150,
            dvdt_v_per_s=250e6,
            humidity_grade="I",
            **x,
        ),
        _part(
            "X-470n",
            "x_capacitor",
            "x2",
            470e-9,
            0.11,
            270,
            dvdt_v_per_s=150e6,
            humidity_grade="III",
            **x,
        ),
        _part("F-470n", "film_capacitor", "pet", 470e-9, 0.03, 90, rated_voltage_ac_v=250.0),
        _part(
            "R-47",
            "resistor",
            "mo",
            47.0,
            0.02,
            60,
            power_w=1.0,
            limiting_voltage_v=350.0,
            pulse_energy_j=1.0,
            **res,
        ),
        _part(
            "R-150c",
            "resistor",
            "chip",
            150.0,
            0.003,
            8,
            mount="smd",
            power_w=0.25,
            limiting_voltage_v=200.0,
            pulse_energy_j=0.01,
            **res,
        ),
        _part(
            "RF-100",
            "resistor",
            "fusible",
            100.0,
            0.045,
            60,
            power_w=1.0,
            limiting_voltage_v=350.0,
            pulse_energy_j=0.5,
            fusible=True,
            **res,
        ),
        _part(
            "R-330k",
            "resistor",
            "chip",
            330e3,
            0.002,
            8,
            mount="smd",
            power_w=0.25,
            limiting_voltage_v=200.0,
            **res,
        ),
        _part(
            "R-1M",
            "resistor",
            "mf",
            1e6,
            0.006,
            20,
            power_w=0.25,
            limiting_voltage_v=250.0,
            tolerance=0.01,
            **res,
        ),
        _part(
            "BR-600",
            "bridge",
            "br",
            0.5,
            0.05,
            54,
            mount="smd",
            vrrm_v=600.0,
            if_av_a=0.5,
            ifsm_a=30.0,
            vf_v=0.75,
            rs_ohm=0.5,
        ),
        _part(
            "D-1000",
            "diode",
            "rect",
            1.0,
            0.012,
            32,
            vrrm_v=1000.0,
            if_av_a=1.0,
            ifsm_a=30.0,
            vf_v=0.75,
            rs_ohm=0.35,
        ),
    ]
    for v in (5.1, 12.0, 6.2):
        for pw, price, area, tag in ((0.5, 0.008, 9, "a"), (1.0, 0.02, 32, "b")):
            rows.append(
                _part(
                    f"Z{tag}-{v:g}",
                    "zener",
                    f"zener-{pw:g}w",
                    v,
                    price,
                    area,
                    power_w=pw,
                    derate_start_c=25.0 if pw < 1 else 50.0,
                    tj_max_c=150.0 if pw < 1 else 200.0,
                    vf_v=0.9,
                    zz_ohm=5.0,
                )
            )
    # rated lives: 2000 h at 105 C lasts at most 15 x 2000 = 30000 h (cap), short of 10 years
    for c, v, price, area, life_h in (
        (100e-6, 16.0, 0.02, 40, 2000.0),
        (100e-6, 25.0, 0.028, 45, 10000.0),
        (220e-6, 25.0, 0.03, 60, 10000.0),
    ):
        rows.append(
            _part(
                f"E-{c * 1e6:g}u-{v:g}",
                "electrolytic",
                "alu",
                c,
                price,
                area,
                tolerance=0.2,
                rated_voltage_v=v,
                ripple_a=0.2,
                temp_max_c=105.0,
                rated_life_h=life_h,
            )
        )
    for i_r, fam, k, price in (
        (0.1, "fast", 0.8, 0.04),
        (0.1, "slow", 8.0, 0.05),
        (0.5, "slow", 8.0, 0.05),
    ):
        rows.append(
            _part(
                f"F{fam}-{i_r:g}",
                "fuse",
                f"fuse-{fam}",
                i_r,
                price,
                200,
                i2t_a2s=k * i_r**2,
                rated_voltage_ac_v=250.0,
            )
        )
    df = pd.DataFrame(rows)
    df.insert(0, "id", range(1, len(df) + 1))
    return df


# ---------------------------------------------------------------------------------------------
# closed-form stand-in for selector.engine.analyse


@dataclass
class _Sec(SimpleNamespace):
    pass


def _standin_surge(loop, circuit, mains, cond, c_max, r_min):
    """The loop model's surge (what the design screen bounds) plus the whole-circuit figures
    (Zener, rectifier, fuse, bus, X-capacitor total) of the engine's generator model at one
    corner: high line, highest frequency, +C, -R, nominal Zener voltage."""
    from selector.engine.analysis import Corner, surge_through_circuit

    k = Corner(
        mains.high_v,
        max(mains.frequencies_hz),
        c_max,
        r_min,
        circuit.bleeder_resistance_ohm,
        circuit.zener_voltage_v,
    )
    whole = surge_through_circuit(circuit, [k], cond.surge_v, cond.vout_max(circuit))
    for name in (
        "zener_peak_current_a",
        "zener_pulse_energy_j",
        "zener_peak_power_w",
        "rectifier_peak_current_a",
        "rectifier_i2t_a2s",
        "fuse_i2t_a2s",
        "bus_peak_v",
        "x_cap_peak_total_v",
        "vout_max_v",
    ):
        setattr(loop, name, getattr(whole, name))
    return loop


def standin_analyse(circuit, mains, tol, cond):
    """Worst case over corners from closed forms (DOMAIN.md section 2 [S])."""
    f_set = mains.frequencies_hz
    v_set = (mains.low_v, mains.high_v)
    c = circuit.x_capacitance_f
    c_set = (c * (1 - tol.cap_tol) * (1 - tol.cap_loss), c * (1 + tol.cap_tol))
    r = circuit.series_resistance_ohm
    r_set = (r * (1 - tol.r_tol), r * (1 + tol.r_tol))
    vz = circuit.zener_voltage_v
    z_set = (vz * (1 - tol.zener_tol), vz * (1 + tol.zener_tol))
    vf = circuit.diode_drop_v
    rb = circuit.bleeder_resistance_ohm
    corners = []
    for v, f, cc, rr, zz in itertools.product(v_set, f_set, c_set, r_set, z_set):
        w = 2 * math.pi * f
        vpk = SQ2 * v
        att = 1 / math.sqrt(1 + (w * rr * cc) ** 2)
        if circuit.topology == "bridge":
            i = 0.98 * 4 * f * cc * max(vpk - zz - 2 * vf, 0) * att
            pz = zz * i + circuit.zener_impedance_ohm * i * i
        else:
            i = f * cc * max(2 * vpk - zz - 2 * vf, 0) * att
            pz = zz * i + 0.9 * i + circuit.zener_impedance_ohm * i * i
        irms = v * w * cc * att
        corners.append((i, pz, irms**2 * rr, irms, (v, f, cc, rr, zz)))
    imin = min(corners, key=lambda t: t[0])
    pzmax = max(corners, key=lambda t: t[1])
    prmax = max(corners, key=lambda t: t[2])
    irmax = max(corners, key=lambda t: t[3])
    demand = circuit.bus_demand_a()
    vpk_hi = SQ2 * mains.high_v
    c_max, r_min = c_set[1], r_set[0]
    i_hi = max(t[0] for t in corners)
    wc = SimpleNamespace(
        min_dc_current_a=imin[0],
        min_dc_current_a_corner=str(imin[4]),
        max_dc_current_a=i_hi,
        max_zener_power_w=pzmax[1],
        max_zener_power_w_corner=str(pzmax[4]),
        max_zener_current_a=i_hi,
        max_series_r_power_w=prmax[2],
        max_bleeder_power_w=mains.high_v**2 / (rb * (1 - tol.r_tol)),
        max_bleeder_voltage_v=vpk_hi,
        max_x_cap_voltage_v=mains.high_v,
        max_line_voltage_v=mains.high_v,
        max_output_voltage_v=z_set[1] + circuit.zener_impedance_ohm * i_hi,
        max_rectifier_avg_current_a=i_hi / 2 if circuit.topology == "bridge" else i_hi,
        max_rectifier_peak_current_a=vpk_hi / r_min,
        max_rectifier_reverse_voltage_v=vpk_hi,
        max_line_current_rms_a=irmax[3],
        max_reservoir_ripple_current_a=0.5 * i_hi,
        # stand-in ripple: the load fed by the reservoir for a quarter cycle (C dV = I dt)
        max_output_ripple_v=demand / (4 * min(f_set) * circuit.reservoir_f),
        # stand-in trough: the clamp at its low tolerance less a quarter of that droop (the
        # rectified current feeds the load for most of the cycle; the engine's trough for
        # 12 mA into 100 uF is 4.81 V against a 4.85 V clamp)
        min_output_voltage_v=z_set[0] - demand / (16 * min(f_set) * circuit.reservoir_f),
        vout_min_v=cond.vout_min(circuit),
        no_load_real_power_w=pzmax[1] + prmax[2] + mains.nominal_v**2 / rb,
        load_met=imin[0] >= demand,
        load_margin_a=imin[0] - demand,
    )
    # switch-on after a re-plug at the opposite crest: the step is the crest plus the residual
    # the discharge profile allows (the engine's own formula), RC charging from a step [S]
    from selector.engine.transients import replug_residual_v

    tau_slow = rb * (1 + tol.r_tol) * c_max
    v_on = vpk_hi + replug_residual_v(cond.profile, vpk_hi, c, tau_slow, cond.replug_delay_s)
    ipk = v_on / r_min
    inrush = SimpleNamespace(
        peak_current_a=ipk,
        series_r_energy_j=0.5 * c_max * v_on**2,
        i2t_a2s=v_on**2 * c_max / (2 * r_min),
        x_cap_dvdt_v_per_s=ipk / c_max,
        x_cap_k0_v2_per_s=v_on**2 / (r_min * c_max),
        rectifier_peak_current_a=ipk,
        duration_s=r_min * c_max,
    )
    # surge: the engine's own closed-form surge model at the engine's corner (+C, -R)
    from selector.engine.transients import surge as engine_surge

    corner_circ = circuit.with_values(x_capacitors_f=(c_max,), series_resistance_ohm=r_min)
    surge = (
        _standin_surge(
            engine_surge(corner_circ, cond.surge_v, {}), circuit, mains, cond, c_max, r_min
        )
        if cond.surge_v > 0
        else SimpleNamespace(
            level_v=0.0,
            peak_current_a=0.0,
            series_r_energy_j=0.0,
            series_r_peak_voltage_v=0.0,
            x_cap_voltage_step_v=0.0,
            x_cap_dvdt_v_per_s=0.0,
        )
    )
    tau = rb * (1 + tol.r_tol) * c_max
    exempt = cond.profile == "iec60335" and c <= 0.1e-6
    t = tau * math.log(vpk_hi / 34.0)
    discharge = SimpleNamespace(
        profile=cond.profile,
        limit_v=34.0,
        time_s=t,
        allowed_s=1.0,
        time_constant_s=tau,
        ok=exempt or t <= 1.0,
        exempt=exempt,
    )
    return SimpleNamespace(
        nominal=None,
        worst_case=wc,
        inrush=inrush,
        surge=surge,
        discharge=discharge,
        startup=SimpleNamespace(time_s=0.1),
    )


# ---------------------------------------------------------------------------------------------
# brute force over the whole search space


def brute_force(df: pd.DataFrame, req: Requirement, policy, analyse=standin_analyse):
    """Minimum objective key over every combination of the search space (issue 4 item 2)."""
    from selector.engine.circuit import Circuit, Load, Tolerances

    rows = df.to_dict("records")
    by = {k: [r for r in rows if r["kind"] == k] for k in set(df["kind"])}
    xcaps = by.get("x_capacitor", [])
    xopts = [(a,) for a in xcaps] + [(a, b) for i, a in enumerate(xcaps) for b in xcaps[i:]]
    res = by.get("resistor", [])
    # series resistance: one part, two equal, or two different parts in series (issue 13)
    ropts = [(r,) for r in res if r["value"] <= 1e5]
    ropts += [(r, r) for r in res if 2 * r["value"] <= 1e5]
    ropts += [
        (a, b) for i, a in enumerate(res) for b in res[i + 1 :] if a["value"] + b["value"] <= 1e5
    ]
    bopts = [(r, q) for r in res for q in (1, 2, 3) if r["value"] * q >= 1e3]
    zeners = by.get("zener", [])
    diodes = by.get("diode", [])

    def zener_options(top):
        if req.zener_v:
            vz0 = req.zener_v
        else:
            drop = max(d["vf_v"] for d in diodes) if top == "half-wave" and diodes else 0.0
            above = [z["value"] for z in zeners if z["value"] >= req.vout_v + drop - 1e-9]
            if not above:
                return []
            vz0 = min(above)
        zopts = [((z,), z["value"]) for z in zeners if math.isclose(z["value"], vz0, rel_tol=1e-3)]
        halves = sorted({z["value"] for z in zeners if vz0 <= 2 * z["value"] <= 1.05 * vz0})
        if halves:
            zopts += [((z, z), 2 * z["value"]) for z in zeners if z["value"] == halves[0]]
        return zopts

    caps = by.get("electrolytic", [])
    fuses = by.get("fuse", [])
    tops = ("bridge", "half-wave") if req.topology == "any" else (req.topology,)
    best = None
    mz = req.minimize
    s_ctx = {
        "mains_max_v": req.mains.high_v,
        "mains_min_v": req.mains.low_v,
        "ambient_c": req.conditions.ambient_c,
        "surge_level_v": req.conditions.surge_v,
        "load_a": req.load_a,
        # target life, humidity, switch-ons for the life rules (as the solver's context)
        **life_context(req.conditions, req.cap_loss),
    }
    cache = {}
    for top in tops:
        rects = (
            [((b,), "single") for b in by.get("bridge", [])]
            + [((d,) * 4, "bridge") for d in by.get("diode", [])]
            if top == "bridge"
            else [((d,), "single") for d in by.get("diode", [])]
        )
        for xo, rs_, (br, bq), (rect, _rarr), (zs, vz), cap in itertools.product(
            xopts, ropts, bopts, rects, zener_options(top), caps
        ):
            r_total = sum(r["value"] for r in rs_)
            base = list(xo) + list(rs_) + [br] * bq + list(rect) + list(zs) + [cap]
            ck = (
                top,
                tuple(x["code"] for x in xo),
                tuple(r["code"] for r in rs_),
                br["code"],
                bq,
                rect[0]["code"],
                vz,
                zs[0]["code"],
                cap["code"],
            )
            xt = sum(x["value"] * x["tolerance"] for x in xo) / sum(x["value"] for x in xo)
            rtol = max([r["tolerance"] for r in rs_] + [br["tolerance"]])
            # memo by electrical values: equal values give the same analysis
            ek = (
                top,
                tuple(x["value"] for x in xo),
                xt,
                r_total,
                br["value"] * bq,
                rtol,
                rect[0]["vf_v"],
                rect[0]["rs_ohm"],
                vz,
                zs[0]["zz_ohm"] * len(zs),
                zs[0]["tolerance"],
                cap["value"],
                cap["tolerance"],
                max(r["tolerance"] for r in rs_),
            )
            ctx = dict(
                s_ctx,
                series_resistance_ohm=r_total * (1 + max(r["tolerance"] for r in rs_)),
                zener_voltage_v=vz,
                reservoir_min_f=cap["value"] * (1 - cap["tolerance"]),
            )
            if ek not in cache:
                circ = Circuit(
                    topology=top,
                    x_capacitors_f=tuple(x["value"] for x in xo),
                    series_resistance_ohm=r_total,
                    bleeder_resistance_ohm=br["value"] * bq,
                    diode_drop_v=rect[0]["vf_v"],
                    diode_resistance_ohm=rect[0]["rs_ohm"],
                    zener_voltage_v=vz,
                    zener_impedance_ohm=zs[0]["zz_ohm"] * len(zs),
                    reservoir_f=cap["value"],
                    load=Load(current_a=req.load_a),
                )
                tol = Tolerances(
                    cap_tol=xt, cap_loss=req.cap_loss, r_tol=rtol, zener_tol=zs[0]["tolerance"]
                )
                an = analyse(circ, req.mains, tol, req.conditions)
                sc = R.stresses_from_analysis(an, ctx)
                # the 'whole' rules need no part: most combinations stop here
                whole_ok = not R.blocking(
                    R.evaluate({}, None, policy, stresses=sc[0], corners=sc[1])
                )
                cache[ek] = (sc, whole_ok)
            (s_an, c_an), whole_ok = cache[ek]
            if not whole_ok:
                continue
            parts = {
                "x_capacitor": _x_parts(xo),
                "series_resistor": _series_parts(rs_),
                "bleeder": _rp(br, "bleeder", bq, "series"),
                "rectifier": _rp(rect[0], "rectifier", len(rect), "single"),
                "zener": _rp(zs[0], "zener", len(zs), "series"),
                "reservoir": _rp(cap, "reservoir", 1, "single"),
            }
            common = R.evaluate(parts, None, policy, stresses=s_an, corners=c_an)
            if R.blocking(common):
                continue
            # the fuse rules see whether the X capacitor is of an IEC 60384-14 class (their
            # waiver), as evaluate() sets it when the X capacitor is among the parts
            s_fuse = {
                **s_an,
                R.X_CAP_IEC60384_14_KEY: all(R.is_iec60384_14_class(x["safety_class"]) for x in xo),
            }
            fuse_choices = [(f, R.rated_part_from_row(f, "fuse")) for f in fuses]
            fusible = [p for p in _series_list(rs_) if p.fusible]
            if fusible:
                import dataclasses

                fuse_choices.append((None, dataclasses.replace(fusible[0], role="fuse")))
            for frow, fpart in fuse_choices:
                ff = R.evaluate({"fuse": fpart}, None, policy, stresses=s_fuse, corners=c_an)
                if R.blocking(ff):
                    continue
                allp = base + ([frow] if frow is not None else [])
                key = int(
                    objective_key(
                        sum(p["unit_price"] for p in allp),
                        sum(p["area_mm2"] for p in allp),
                        len(allp),
                        mz,
                    )
                )
                if best is None or key < best[0]:
                    best = (key, ck, frow["code"] if frow else None)
    return best


_RP: dict = {}


def _rp(row, role, qty, arrangement):
    key = (row["code"], role, qty)
    if key not in _RP:
        arr = arrangement if qty > 1 else "single"
        if role == "rectifier":
            arr = "single"
        _RP[key] = R.rated_part_from_row(row, role, qty=qty, arrangement=arr)
    return _RP[key]


def _series_list(rs_):
    """Each element of a series option with its share R_i / R_total (one entry for equal)."""
    if len(rs_) == 1 or rs_[0]["code"] == rs_[1]["code"]:
        arr = "series" if len(rs_) == 2 else "single"
        return [R.rated_part_from_row(rs_[0], "series_resistor", qty=len(rs_), arrangement=arr)]
    total = sum(r["value"] for r in rs_)
    return [R.rated_part_from_row(r, "series_resistor", share=r["value"] / total) for r in rs_]


def _series_parts(rs_):
    parts = _series_list(rs_)
    return parts[0] if len(parts) == 1 else parts


def _x_parts(xo):
    if len(xo) == 1:
        return R.rated_part_from_row(xo[0], "x_capacitor")
    if xo[0]["code"] == xo[1]["code"]:
        return R.rated_part_from_row(xo[0], "x_capacitor", qty=2, arrangement="parallel")
    return [R.rated_part_from_row(x, "x_capacitor") for x in xo]


def design_key(d, minimize="price") -> int:
    return int(objective_key(d.total_price, d.total_area_mm2, d.part_count, minimize))


__all__ = ["brute_force", "design_key", "small_catalogue", "standin_analyse"]
_ = np


# --- distinct_pairs against numpy's own row de-duplication (np.unique with axis=0) ---


def test_distinct_pairs_matches_numpy_unique_rows():
    """Reference: numpy.unique(axis=0, return_inverse=True), the general-purpose library the
    faster helper replaces; random columns with many repeats and a few NaN."""
    from selector.design.lookups import distinct_pairs

    rng = np.random.default_rng(7)
    for n in (0, 1, 5, 1000):
        a = rng.choice([1.0, 2.2, 4.7, 10.0, np.nan], n)
        b = rng.choice([0.01, 0.05, 0.1], n)
        ua, ub, inv = distinct_pairs(a, b)
        ref = np.unique(np.column_stack([a, b]), axis=0) if n else np.zeros((0, 2))
        # numpy keeps NaN rows apart; compare on the finite rows and the NaN count separately
        fin = ~np.isnan(ref[:, 0])
        got = np.column_stack([ua, ub])
        np.testing.assert_array_equal(got[~np.isnan(ua)], ref[fin])
        np.testing.assert_array_equal(ua[inv], a)
        np.testing.assert_array_equal(ub[inv], b)
        # NaN equals NaN here: one row per distinct b among the NaN rows
        assert np.isnan(ua).sum() == len(set(b[np.isnan(a)].tolist()))
