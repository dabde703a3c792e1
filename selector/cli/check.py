"""`dropper check`: worst-case stresses and margins of a given set of values."""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from ..cautions import CAUTIONS
from ..errors import EXIT_FINDINGS
from ..units import format_value
from ._app import CreateOpt, app, catalogue_url, echo_cautions, print_json, to_jsonable
from ._circuit import (
    AmbientOpt,
    BleederOpt,
    BurstOpt,
    BurstPeriodOpt,
    BurstTimeOpt,
    CapLossOpt,
    CapOpt,
    CapTolOpt,
    DbOpt,
    DiodeDropOpt,
    DiodeROpt,
    DropoutOpt,
    FreqOpt,
    HarmonicsOpt,
    HumidityOpt,
    JsonOpt,
    LifeOpt,
    LoadOpt,
    LoadROpt,
    MainsOpt,
    MainsTolOpt,
    ProductClassOpt,
    ProfileOpt,
    QuiescentOpt,
    RegulatorOpt,
    ReservoirEsrOpt,
    ReservoirOpt,
    RTolOpt,
    SeriesROpt,
    StandbyLimitOpt,
    SurgeOpt,
    SwitchOnsOpt,
    TopologyOpt,
    VaristorOpt,
    VoutMaxOpt,
    VoutMinOpt,
    ZenerOpt,
    ZenerTolOpt,
    ZenerZOpt,
    circuit_from_options,
    conditions_from_options,
    describe_corner,
    describe_life,
    describe_mains,
    load_from_options,
    mains_from_options,
    standby_policy,
    tolerances_from_options,
)

if TYPE_CHECKING:
    from ..engine import Analysis


@app.command()
def check(
    cap: CapOpt = None,
    topology: TopologyOpt = "bridge",
    mains: MainsOpt = "230",
    mains_tol: MainsTolOpt = "10",
    freq: FreqOpt = "50",
    harmonics: HarmonicsOpt = None,
    cap_tol: CapTolOpt = "10",
    cap_loss: CapLossOpt = None,
    series_r: SeriesROpt = "470",
    r_tol: RTolOpt = "5",
    bleeder: BleederOpt = "1M",
    zener: ZenerOpt = "12",
    zener_tol: ZenerTolOpt = "5",
    zener_z: ZenerZOpt = "0",
    reservoir: ReservoirOpt = "220u",
    reservoir_esr: ReservoirEsrOpt = None,
    load: LoadOpt = "0",
    load_r: LoadROpt = None,
    burst: BurstOpt = None,
    burst_time: BurstTimeOpt = None,
    burst_period: BurstPeriodOpt = None,
    regulator: RegulatorOpt = None,
    dropout: DropoutOpt = "1",
    quiescent: QuiescentOpt = "5m",
    diode_drop: DiodeDropOpt = "0.8",
    diode_r: DiodeROpt = "0.1",
    ambient: AmbientOpt = "40",
    life: LifeOpt = "10y",
    humidity: HumidityOpt = "60",
    switch_ons: SwitchOnsOpt = "30k",
    profile: ProfileOpt = "iec60335",
    surge: SurgeOpt = "1k",
    vout_max: VoutMaxOpt = None,
    vout_min: VoutMinOpt = None,
    standby_limit: StandbyLimitOpt = None,
    product_class: ProductClassOpt = None,
    varistor: VaristorOpt = None,
    json: JsonOpt = False,
    db: DbOpt = None,
    create: CreateOpt = False,
    report: Annotated[
        Path | None, typer.Option("--report", help="Also write an HTML report to this file.")
    ] = None,
) -> None:
    """Worst-case stresses, margins and transients of given values (exit 1: load not met at
    some corner, the discharge rule fails, the surge lifts the bus above --vout-max, a set
    standby limit is exceeded, or a rule of the --varistor part fails)."""
    from ..outputs import check_outputs

    check_outputs([("--report", report)])  # a missing folder is refused before any work
    circuit = circuit_from_options(
        cap,
        topology=topology,
        series_r=series_r,
        bleeder=bleeder,
        zener=zener,
        zener_z=zener_z,
        reservoir=reservoir,
        diode_drop=diode_drop,
        diode_r=diode_r,
        load=load_from_options(load, load_r, burst, burst_time, burst_period),
        regulator=regulator,
        dropout=dropout,
        quiescent=quiescent,
        reservoir_esr=reservoir_esr,
    )
    mov_row = None
    if varistor is not None:
        # the only part check takes from the catalogue (db: --db, else the default)
        import dataclasses

        from ..catalogue import catalogue_frame
        from ..catalogue.varistors import find_varistor, varistor_from_row

        mov_row = find_varistor(catalogue_frame(catalogue_url(db, create)), varistor)
        circuit = dataclasses.replace(circuit, varistor=varistor_from_row(mov_row))
    from ..engine import analyse
    from ..engine.distortion import mains_record

    supply = mains_from_options(mains, mains_tol, freq, harmonics)
    tolerances = tolerances_from_options(cap_tol, cap_loss, r_tol, zener_tol)
    conditions = conditions_from_options(
        ambient, profile, surge, vout_max, life, humidity, switch_ons, cap_loss, vout_min
    )
    result = analyse(circuit, supply, tolerances, conditions)
    from ..policy import Policy
    from ..rules import standby_record

    pol, limit_source = standby_policy(Policy(), standby_limit, product_class)
    standby = standby_record(result.worst_case.no_load_real_power_w, pol, limit_source)
    from ..rules import stresses_from_analysis
    from ..rules.life import life_context, life_record

    life_stresses, _ = stresses_from_analysis(
        result,
        {
            "ambient_c": conditions.ambient_c,
            "mains_max_v": supply.high_v,
            **life_context(conditions, tolerances.cap_loss),
        },
    )
    life_doc = life_record(life_stresses)
    mov_doc = None if mov_row is None else varistor_section(result, circuit, mov_row, supply)
    failures = check_failures(result, standby, mov_doc)
    ok = not failures
    doc = {
        "topology": result.topology,
        "ambient_c": result.ambient_c,
        "ok": ok,
        # every verdict that refuses the values, each {"rule": id, "reason": text}
        "failures": failures,
        "standby": standby,
        "life": life_doc,
        "mains": mains_record(supply),
        # the highest bus voltage the load tolerates (--vout-max; default 1.3 x bus, [P])
        "vout_max_v": conditions.vout_max(circuit),
        "vout_max_default": conditions.vout_max_v is None,
        # the lowest (--vout-min; default 0.9 x bus, [P])
        "vout_min_v": conditions.vout_min(circuit),
        "vout_min_default": conditions.vout_min_v is None,
        "nominal": result.nominal,
        "worst_case": result.worst_case,
        "inrush": result.inrush,
        "surge": result.surge,
        "discharge": result.discharge,
        "startup": result.startup,
        "holdup": result.holdup,
        "varistor": mov_doc,
        "cautions": list(CAUTIONS),
    }
    if report is not None:
        from ..report import write_report

        write_report(
            report, "check", to_jsonable(doc), circuit,
            mains=supply, tolerances=tolerances, conditions=conditions,
        )  # fmt: skip
    if json:
        print_json(doc)
    else:
        typer.echo(render_table(result, conditions.vout_max(circuit)))
        from .design import life_text

        typer.echo(describe_life(conditions))
        typer.echo("Life figures: " + life_text(life_doc))
        typer.echo(
            f"No-load power {format_value(standby['no_load_real_power_w'], 'W')}: "
            + ("" if standby["ok"] else "NOT ACCEPTED, ")
            + standby["note"]
            + (f" ({standby['source']})" if standby["source"] else "")
        )
        if mov_doc is not None:
            typer.echo(render_varistor(mov_doc))
        typer.echo(describe_mains(doc["mains"]))
        # the verdict comes after every block that feeds it, the cautions after the verdict
        typer.echo(render_verdict(result.topology, failures))
        echo_cautions()
    if not ok:
        raise typer.Exit(EXIT_FINDINGS)


def check_failures(result: Analysis, standby: dict, mov_doc: dict | None) -> list[dict]:
    """Every verdict that refuses the checked values, each ``{"rule", "reason"}``: the
    analysis's own (:attr:`selector.engine.Analysis.failures`: load, discharge, surge bus peak),
    the standby limit when one is set (``whole.standby_power``) and each failed rule of the
    --varistor part. ``check`` accepts the values only when the list is empty."""
    out = list(result.failures)
    if not standby["ok"]:
        out.append({"rule": "whole.standby_power", "reason": standby["note"]})
    if mov_doc is not None:
        for f in mov_doc["findings"]:
            if f.severity == "fail":
                out.append(
                    {
                        "rule": f.rule,
                        "reason": f"{_f(f.stress, f.unit)} against {_f(f.limit, f.unit)}",
                    }
                )
    return out


def render_verdict(topology: str, failures: list[dict]) -> str:
    """The closing verdict line: ACCEPTED, or NOT ACCEPTED with each failure and its rule."""
    if not failures:
        return f"\n{topology} dropper: ACCEPTED"
    reasons = "; ".join(f"{f['reason']} ({f['rule']})" for f in failures)
    return f"\n{topology} dropper: NOT ACCEPTED: {reasons}"


def varistor_section(result: Analysis, circuit, row: dict, supply) -> dict:
    """The --varistor part: its clamp model, its ratings and the varistor rules (the same
    rule table as design and audit, ``selector.rules`` role ``varistor``)."""
    from ..rules import evaluate, rated_part_from_row

    mov = circuit.varistor
    part = rated_part_from_row(row, "varistor")
    findings = [
        f
        for f in evaluate({"varistor": part}, result, context={"mains_max_v": supply.high_v})
        if f.part == "varistor"
    ]
    return {
        "code": mov.code,
        "description": row.get("description"),
        "varistor_voltage_v": mov.v_1ma_v,
        "clamp_voltage_v": mov.clamp_v,
        "clamp_current_a": mov.clamp_a,
        "alpha": mov.alpha,
        "continuous_ac_v": mov.continuous_ac_v,
        "energy_rating_j": mov.energy_j,
        "peak_current_rating_a": mov.peak_current_a,
        "model": "I = 1 mA (V / V1mA)^alpha through V1mA and the clamping point (power law [M])",
        "findings": findings,
        "ok": all(f.severity != "fail" for f in findings),
    }


def render_varistor(doc: dict) -> str:
    """The --varistor part and its rules, one line each."""
    lines = [
        "",
        f"Varistor across the line: {doc['code']} ({_f(doc['varistor_voltage_v'], 'V')} at 1 mA, "
        f"{_f(doc['clamp_voltage_v'], 'V')} at {_f(doc['clamp_current_a'], 'A')}, "
        f"alpha {doc['alpha']:.1f})",
    ]
    for f in doc["findings"]:
        if f.stress is None:
            lines.append(f"  {f.rule:<28} WARN  {f.note}")
            continue
        verdict = "ok  " if f.ok else "FAIL"
        lines.append(
            f"  {f.rule:<28} {verdict}  {_f(f.stress, f.unit)} against {_f(f.limit, f.unit)}"
            + (f"  ({f.corner})" if f.corner else "")
        )
    return "\n".join(lines)


def _f(value: float | None, unit: str) -> str:
    if value is None:
        return "-"
    if isinstance(value, float) and math.isinf(value):
        return "never"
    return format_value(value, unit)


def _surge_corner(rec: dict) -> str:
    sign = "+" if rec.get("polarity", 1) > 0 else "-"
    return f"{describe_corner(rec)} {rec['phase_deg']:g}° {sign}"


def _surge_rows(s) -> list[tuple[str, str, str, str]]:
    """Surge through the whole circuit: each stress with its corner, phase and polarity."""
    c = s.corners
    lvl = format_value(s.level_v, "V")
    out = [
        (f"Surge {lvl} peak current", "", _f(s.peak_current_a, "A"), "peak_current_a"),
        ("Surge peak voltage on R", "", _f(s.series_r_peak_voltage_v, "V"), "peak_current_a"),
        ("Surge energy in R", "", _f(s.series_r_energy_j, "J"), "series_r_energy_j"),
        ("Surge X cap step", "", _f(s.x_cap_voltage_step_v, "V"), "x_cap_voltage_step_v"),
        ("Surge X cap total peak", "", _f(s.x_cap_peak_total_v, "V"), "x_cap_peak_total_v"),
        ("Surge X cap dV/dt", "", _f(s.x_cap_dvdt_v_per_s, "V/s"), "x_cap_dvdt_v_per_s"),
        ("Surge Zener peak", "", _f(s.zener_peak_current_a, "A"), "zener_peak_current_a"),
        ("Surge Zener energy", "", _f(s.zener_pulse_energy_j, "J"), "zener_pulse_energy_j"),
        ("Surge Zener peak power", "", _f(s.zener_peak_power_w, "W"), "zener_peak_power_w"),
        (
            "Surge rectifier peak",
            "",
            _f(s.rectifier_peak_current_a, "A"),
            "rectifier_peak_current_a",
        ),
        ("Surge rectifier I²t", "", f"{s.rectifier_i2t_a2s:.3g} A²s", "rectifier_i2t_a2s"),
        ("Surge fuse I²t", "", f"{s.fuse_i2t_a2s:.3g} A²s", "fuse_i2t_a2s"),
        ("Surge bus peak", "", _f(s.bus_peak_v, "V"), "bus_peak_v"),
    ]
    if s.varistor_peak_current_a is not None:
        out += [
            ("Surge line peak (varistor)", "", _f(s.line_peak_v, "V"), "line_peak_v"),
            (
                "Surge varistor peak",
                "",
                _f(s.varistor_peak_current_a, "A"),
                "varistor_peak_current_a",
            ),
            ("Surge varistor energy", "", _f(s.varistor_energy_j, "J"), "varistor_energy_j"),
        ]
    rows = [(a, b, v, _surge_corner(c[key])) for a, b, v, key in out]
    rows.append(
        (
            "Surge model ESR / Zener slope",
            "",
            f"{_f(s.reservoir_esr_ohm, 'ohm')} / {_f(s.zener_slope_ohm, 'ohm')}",
            "defaults 0.3 Ω / 1 Ω when not given (common practice)",
        )
    )
    verdict = "ok" if s.bus_ok else "EXCEEDED"
    rows.append(
        (
            "Bus limit (--vout-max)",
            "",
            _f(s.vout_max_v, "V"),
            f"{verdict}; "
            + (
                "default 1.3 x bus voltage (common practice)"
                if s.vout_max_default
                else "given with --vout-max"
            ),
        )
    )
    return rows


def render_table(a: Analysis, vout_max_v: float | None = None) -> str:
    """The human report: one aligned table (quantity, nominal, worst, corner); the verdict is
    :func:`render_verdict`, printed after every other block."""
    n, w, i, s, d = a.nominal, a.worst_case, a.inrush, a.surge, a.discharge
    rows: list[tuple[str, str, str, str]] = [
        (
            "DC current, least",
            _f(n.dc_current_a, "A"),
            _f(w.min_dc_current_a, "A"),
            describe_corner(w.min_dc_current_corner),
        ),
        (
            "DC current, most",
            "",
            _f(w.max_dc_current_a, "A"),
            describe_corner(w.max_dc_current_corner),
        ),
        ("Load demand (average)", _f(n.load_current_a, "A"), _f(w.load_demand_a, "A"), ""),
        ("Load margin", "", _f(w.load_margin_a, "A"), "met" if w.load_met else "NOT MET"),
        (
            "Zener power",
            _f(n.zener_power_w, "W"),
            _f(w.max_zener_power_w, "W"),
            describe_corner(w.max_zener_power_corner),
        ),
        (
            "Zener current",
            _f(n.zener_current_a, "A"),
            _f(w.max_zener_current_a, "A"),
            describe_corner(w.max_zener_current_corner),
        ),
        (
            "Output voltage, most",
            _f(n.output_voltage_v, "V"),
            _f(w.max_output_voltage_v, "V"),
            describe_corner(w.max_output_voltage_corner),
        ),
        (
            "Output voltage, least",
            "",
            _f(w.min_output_voltage_v, "V"),
            describe_corner(w.min_output_voltage_corner),
        ),
        ("Output ripple p-p", _f(n.ripple_v, "V"), "", ""),
        (
            "Line current rms",
            _f(n.line_current_rms_a, "A"),
            _f(w.max_line_current_rms_a, "A"),
            describe_corner(w.max_line_current_rms_corner),
        ),
        (
            "Series R power",
            _f(n.series_r_power_w, "W"),
            _f(w.max_series_r_power_w, "W"),
            describe_corner(w.max_series_r_power_corner),
        ),
        (
            "Bleeder power",
            _f(n.bleeder_power_w, "W"),
            _f(w.max_bleeder_power_w, "W"),
            describe_corner(w.max_bleeder_power_corner),
        ),
        (
            "Bleeder peak voltage",
            "",
            _f(w.max_bleeder_voltage_v, "V"),
            describe_corner(w.max_bleeder_voltage_corner),
        ),
        (
            "X capacitor voltage rms",
            "",
            _f(w.max_x_cap_voltage_v, "V"),
            describe_corner(w.max_x_cap_voltage_corner),
        ),
        (
            "Rectifier avg / peak",
            "",
            f"{_f(w.max_rectifier_avg_current_a, 'A')} / {_f(w.max_rectifier_peak_current_a, 'A')}",
            describe_corner(w.rectifier_corner),
        ),
        (
            "Reservoir ripple current",
            "",
            _f(w.max_reservoir_ripple_current_a, "A"),
            describe_corner(w.max_reservoir_ripple_current_corner),
        ),
        (
            "Real power",
            _f(n.real_power_w, "W"),
            _f(w.no_load_real_power_w, "W"),
            describe_corner(w.no_load_real_power_corner),
        ),
        (
            "Reactive / apparent",
            f"{_f(n.reactive_power_var, 'var')} / {_f(n.apparent_power_va, 'VA')}",
            "",
            "",
        ),
        ("Power factor", f"{n.power_factor:.3f}", "", ""),
    ]
    if w.max_regulator_power_w is not None:
        rows += [
            ("Regulator power", _f(n.regulator_power_w, "W"), _f(w.max_regulator_power_w, "W"), ""),
            (
                "Regulator headroom",
                "",
                _f(w.min_regulator_headroom_v, "V"),
                "ok" if w.regulator_ok else "DROPS OUT",
            ),
        ]
    ic = describe_corner(i.corner)
    if i.replug_delay_s is not None:
        ic += (
            f", re-plugged at the opposite crest after {format_value(i.replug_delay_s, 's')}"
            f" ({_f(i.replug_residual_v, 'V')} left on the X cap)"
        )
    rows += [
        ("Switch-on peak current", "", _f(i.peak_current_a, "A"), ic),
        ("Switch-on energy in R", "", _f(i.series_r_energy_j, "J"), ic),
        ("Switch-on I²t", "", f"{i.i2t_a2s:.3g} A²s", ic),
        ("Switch-on X cap dV/dt", "", _f(i.x_cap_dvdt_v_per_s, "V/s"), ic),
        ("Switch-on X cap k0", "", f"{i.x_cap_k0_v2_per_s:.3g} V²/s", ic),
    ]
    if s.peak_current_a is not None and s.corners is None:
        sc = f"{format_value(s.level_v, 'V')} IEC 61000-4-5, 2 Ω"
        rows += [
            ("Surge peak current", "", _f(s.peak_current_a, "A"), sc),
            ("Surge peak voltage on R", "", _f(s.series_r_peak_voltage_v, "V"), sc),
            ("Surge energy in R", "", _f(s.series_r_energy_j, "J"), sc),
            ("Surge step on X cap", "", _f(s.x_cap_voltage_step_v, "V"), sc),
        ]
    elif s.corners is not None:
        rows += _surge_rows(s)
    if s.corners is None and vout_max_v is not None:
        rows.append(
            (
                "Bus limit (--vout-max)",
                "",
                _f(vout_max_v, "V"),
                "no surge analysed (default 1.3 x bus voltage, common practice)",
            )
        )
    dis_note = "exempt (C <= 0.1 µF)" if d.exempt else ("ok" if d.ok else "FAILS")
    rows += [
        (
            f"Discharge to {format_value(d.limit_v, 'V')}",
            "",
            _f(d.time_s, "s"),
            f"allowed {format_value(d.allowed_s, 's')}: {dis_note}",
        ),
        (
            "Start-up to regulation",
            "",
            _f(a.startup.time_s, "s"),
            describe_corner(a.startup.corner),
        ),
    ]
    if a.holdup is not None:
        h = a.holdup
        rows.append(
            (
                "Burst droop",
                "",
                _f(h.droop_v, "V"),
                f"allowed {format_value(h.allowed_droop_v, 'V')}: " + ("ok" if h.ok else "FAILS"),
            )
        )
    head = ("quantity", "nominal", "worst", "worst corner / note")
    widths = [max(len(r[k]) for r in [head, *rows]) for k in range(3)]
    lines = [f"{head[0]:<{widths[0]}}  {head[1]:>{widths[1]}}  {head[2]:>{widths[2]}}  {head[3]}"]
    lines.append("-" * (sum(widths) + 6 + len(head[3])))
    for r in rows:
        lines.append(f"{r[0]:<{widths[0]}}  {r[1]:>{widths[1]}}  {r[2]:>{widths[2]}}  {r[3]}")
    return "\n".join(lines)
