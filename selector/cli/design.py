"""`dropper design`: the cheapest (or smallest) compliant part set for a load, with its reasons."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from ..cautions import CAUTIONS
from ..errors import BadValueError
from ..units import format_value
from ._app import (
    CreateOpt,
    app,
    catalogue_url,
    echo_cautions,
    print_json,
    to_jsonable,
    warn_skipped_parts,
)
from ._circuit import (
    AmbientOpt,
    BurstOpt,
    BurstPeriodOpt,
    BurstTimeOpt,
    CapLossOpt,
    DbOpt,
    DropoutOpt,
    FreqOpt,
    HarmonicsOpt,
    HumidityOpt,
    JsonOpt,
    LifeOpt,
    LoadOpt,
    MainsOpt,
    MainsTolOpt,
    ProductClassOpt,
    ProfileOpt,
    QuiescentOpt,
    RegulatorOpt,
    StandbyLimitOpt,
    SurgeOpt,
    SwitchOnsOpt,
    VoutMaxOpt,
    VoutMinOpt,
    ZenerOpt,
    conditions_from_options,
    describe_life,
    describe_mains,
    mains_from_options,
    option_value,
    parse_burst,
    parse_cap_loss,
    parse_topology,
    standby_policy,
)
from .parts import _Bar

# --topology of design also takes 'any' (check's takes one topology), hence its own help text
DesignTopologyOpt = Annotated[
    str, typer.Option("--topology", help="bridge, half-wave, or any (the solver picks).")
]


@app.command()
def design(
    load: LoadOpt = "10m",
    vout: Annotated[
        str | None,
        typer.Option("--vout", help="Output voltage, V (5.1); the regulator's with --regulator."),
    ] = None,
    topology: DesignTopologyOpt = "bridge",
    mains: MainsOpt = "230",
    mains_tol: MainsTolOpt = "10",
    freq: FreqOpt = "50",
    harmonics: HarmonicsOpt = None,
    cap_loss: CapLossOpt = None,
    ambient: AmbientOpt = "40",
    life: LifeOpt = "10y",
    humidity: HumidityOpt = "60",
    switch_ons: SwitchOnsOpt = "30k",
    profile: ProfileOpt = "iec60335",
    surge: SurgeOpt = "1k",
    vout_max: VoutMaxOpt = None,
    vout_min: VoutMinOpt = None,
    zener: ZenerOpt = None,  # type: ignore[assignment]
    regulator: RegulatorOpt = None,
    dropout: DropoutOpt = "1",
    quiescent: QuiescentOpt = "5m",
    burst: BurstOpt = None,
    burst_time: BurstTimeOpt = None,
    burst_period: BurstPeriodOpt = None,
    policy: Annotated[
        Path | None,
        typer.Option("--policy", help="TOML file overriding derating limits (see docs)."),
    ] = None,
    standby_limit: StandbyLimitOpt = None,
    product_class: ProductClassOpt = None,
    minimize: Annotated[
        str, typer.Option("--minimize", help="price, area or count (ties broken by the others).")
    ] = "price",
    top: Annotated[int, typer.Option("--top", help="How many ranked sets to show.")] = 1,
    smd_only: Annotated[bool, typer.Option("--smd-only", help="Surface-mount parts only.")] = False,
    tht_only: Annotated[bool, typer.Option("--tht-only", help="Through-hole parts only.")] = False,
    exclude: Annotated[
        list[str] | None,
        typer.Option("--exclude", help="Leave out a catalogue family (repeatable)."),
    ] = None,
    stock_only: Annotated[
        bool,
        typer.Option("--stock-only", help="Only parts from imported stock lists (not withdrawn)."),
    ] = False,
    in_stock: Annotated[
        bool,
        typer.Option(
            "--in-stock",
            help="As --stock-only, and a part whose list gives a stock count needs "
            ">= --build-qty pieces.",
        ),
    ] = False,
    build_qty: Annotated[
        int,
        typer.Option(
            "--build-qty",
            help="Units to build: imported parts are priced at their price break for this many "
            "(a minimum order above it is paid in full); --in-stock needs this many on hand.",
            min=1,
        ),
    ] = 1000,
    bom: Annotated[
        Path | None, typer.Option("--bom", help="Write the best set as a BOM CSV here.")
    ] = None,
    time_limit: Annotated[
        str | None,
        typer.Option(
            "--time-limit",
            help="Stop the search after this long (30s, 2m) and say which bound is still "
            "open; without it the search runs until the optimum is proven.",
        ),
    ] = None,
    json: JsonOpt = False,
    db: DbOpt = None,
    create: CreateOpt = False,
    report: Annotated[
        Path | None, typer.Option("--report", help="Also write an HTML report to this file.")
    ] = None,
) -> None:
    """The cheapest (or smallest) set of catalogue parts that holds at every worst case, with
    every rule's margin and source; exit 1 with the blocking rule when nothing fits.

    --burst takes current/duration/period in one value (30m/5ms/1s), or a current with
    --burst-time and --burst-period.
    """
    from .. import design as D
    from ..catalogue import catalogue_frame
    from ..catalogue.pricing import price_at_build
    from ..engine.distortion import mains_record
    from ..outputs import Outputs, check_outputs
    from ..policy import load_policy

    # refused before any work: an output over an input, two outputs on one file, no folder
    check_outputs([("--bom", bom), ("--report", report)], [("--policy", policy)])
    pol, standby_source = standby_policy(load_policy(policy), standby_limit, product_class)
    reg_v = option_value(regulator, "V", "--regulator") if regulator else None
    if vout is None and reg_v is None:
        raise BadValueError("give the output voltage with --vout (e.g. --vout 5.1)")
    vout_v = option_value(vout, "V", "--vout") if vout is not None else reg_v
    if reg_v is not None and vout is not None and abs(reg_v - vout_v) > 1e-9:
        raise BadValueError("--regulator and --vout disagree: the regulator's output is --vout")
    b_i, b_t, b_p = parse_burst(burst, burst_time, burst_period)
    top_name = parse_topology(topology, extra=("any",))
    req = D.Requirement(
        load_a=option_value(load, "A", "--load"),
        vout_v=vout_v,
        mains=mains_from_options(mains, mains_tol, freq, harmonics),
        conditions=conditions_from_options(
            ambient, profile, surge, vout_max, life, humidity, switch_ons, cap_loss, vout_min
        ),
        cap_loss=parse_cap_loss(cap_loss) if cap_loss is not None else 0.10,
        topology=top_name,
        zener_v=option_value(zener, "V", "--zener") if zener else None,
        regulator=reg_v is not None,
        regulator_dropout_v=option_value(dropout, "V", "--dropout"),
        regulator_quiescent_a=option_value(quiescent, "A", "--quiescent")
        if reg_v is not None
        else 0.0,
        burst_current_a=b_i,
        burst_duration_s=b_t,
        burst_period_s=b_p,
        minimize=minimize.strip().lower(),
        top=top,
        smd_only=smd_only,
        tht_only=tht_only,
        exclude=tuple(exclude or ()),
    )
    limit_s = None
    if time_limit is not None:
        limit_s = option_value(time_limit, "s", "--time-limit")
        if not limit_s > 0:
            raise BadValueError(f"--time-limit must be > 0 s, got {time_limit!r}")
    url = catalogue_url(db, create)
    frame = catalogue_frame(url, stock_only=stock_only, min_stock=build_qty if in_stock else None)
    frame = price_at_build(frame, url, build_qty)
    warn_skipped_parts(frame)
    # a progress bar (stderr) for searches over large catalogues
    bar = None if json or len(frame) < 1000 else _Bar("searching part sets")
    try:
        designs = D.design(frame, req, pol, progress=bar, time_limit_s=limit_s)
    finally:
        if bar is not None:
            bar.close()
    doc = {
        "requirement": {
            "load_a": req.load_a,
            "vout_v": req.vout_v,
            "topology": req.topology,
            "minimize": req.minimize,
            "mains_v": req.mains.nominal_v,
            "mains_tolerance": req.mains.tolerance,
            "frequencies_hz": list(req.mains.frequencies_hz),
            "surge_v": req.conditions.surge_v,
            # None: the default, 1.3 x the bus voltage (common practice, no source)
            "vout_max_v": req.conditions.vout_max_v,
            # None: the default, 0.9 x the bus voltage (common practice, no source)
            "vout_min_v": req.conditions.vout_min_v,
            "ambient_c": req.conditions.ambient_c,
            "profile": req.conditions.profile,
            "target_life_h": req.conditions.life_h,
            "humidity_fraction": req.conditions.humidity,
            "switch_ons": req.conditions.switch_ons,
            "cap_loss_override": req.conditions.end_of_life_loss,
        },
        "mains": mains_record(req.mains),
        "policy": pol.to_dict(),
        "standby_limit_source": standby_source,
        "designs": [D.design_to_dict(d) for d in designs],
        "bom": str(bom) if bom is not None else None,
        "cautions": list(CAUTIONS),
    }
    # the BOM and the report appear together or not at all
    with Outputs() as outputs:
        if bom is not None:
            D.write_bom(designs[0], bom, outputs=outputs)
        if report is not None:
            from ..report import write_report

            write_report(
                report, "design", to_jsonable(doc), designs[0].circuit,
                analysis=designs[0].analysis, outputs=outputs,
            )  # fmt: skip
    if json:
        print_json(doc)
        return
    typer.echo(describe_life(req.conditions))
    if req.mains.harmonics:
        typer.echo(describe_mains(doc["mains"]))
    for d in designs:
        _echo_design(d, len(designs), req)
    if bom is not None:
        typer.echo(f"BOM of design 1 written to {bom}")
    echo_cautions()


_UNITS = {
    "x_capacitor": "F",
    "reservoir": "F",
    "series_resistor": "ohm",
    "bleeder": "ohm",
    "zener": "V",
    "fuse": "A",
    "rectifier": "A",
}


def _ratings_text(p: Any) -> str:
    r = p.ratings
    out = []
    if "safety_class" in r:
        out.append(str(r["safety_class"]))
    if "rated_voltage_ac_v" in r:
        out.append(f"{r['rated_voltage_ac_v']:g} VAC")
    if "rated_voltage_v" in r:
        out.append(f"{r['rated_voltage_v']:g} V")
    if "power_w" in r:
        out.append(format_value(r["power_w"], "W"))
    if "limiting_voltage_v" in r:
        out.append(f"LEV {r['limiting_voltage_v']:g} V")
    if "pulse_energy_j" in r:
        out.append(format_value(r["pulse_energy_j"], "J") + " pulse")
    if "dvdt_v_per_s" in r:
        out.append(f"{r['dvdt_v_per_s'] / 1e6:g} V/us")
    if "vrrm_v" in r:
        out.append(f"VRRM {r['vrrm_v']:g} V")
    if "ifsm_a" in r:
        out.append(f"IFSM {r['ifsm_a']:g} A")
    if "i2t_a2s" in r:
        out.append(f"I2t {r['i2t_a2s']:.3g} A2s")
    if "ripple_a" in r:
        out.append("ripple " + format_value(r["ripple_a"], "A"))
    if "temp_max_c" in r:
        out.append(f"{r['temp_max_c']:g} C")
    if r.get("fusible"):
        out.append("fusible")
    return ", ".join(out)


def _echo_design(d: Any, n: int, req: Any) -> None:
    note = next((p.price_note for p in d.parts if p.price_note), None)
    price_label = f"prices: {note}" if note else "prices: catalogue"
    typer.echo(
        f"Design {d.rank} of {n} ({d.topology}): total {d.total_price:.4f}, "
        f"{d.total_area_mm2:.0f} mm2, {d.part_count} parts  [{price_label}]"
    )
    rows = [("role", "code", "value", "qty", "arrangement", "ratings", "unit", "line")]
    for p in d.parts:
        value = format_value(p.value, _UNITS[p.role]) if p.role != "rectifier" else p.kind
        rows.append(
            (
                p.role,
                p.code,
                value,
                str(p.qty),
                p.arrangement,
                _ratings_text(p),
                f"{p.unit_price:.4f}",
                f"{p.line_price:.4f}",
            )
        )
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    for r in rows:
        typer.echo("  " + "  ".join(c.ljust(w) for c, w in zip(r, widths, strict=True)).rstrip())
    e = d.effective
    typer.echo(
        "  effective: C "
        + format_value(e["x_capacitance_f"], "F")
        + ", R "
        + format_value(e["series_resistance_ohm"], "ohm")
        + ", bleeder "
        + format_value(e["bleeder_resistance_ohm"], "ohm")
        + f", Zener {e['zener_voltage_v']:g} V "
        + format_value(e["zener_power_rating_w"], "W")
        + ", reservoir "
        + format_value(e["reservoir_f"], "F")
    )
    w = d.worst_case
    if w is not None:
        from ._circuit import describe_corner

        typer.echo("  worst case:")
        for label, val, unit, corner in (
            ("min DC current", w.min_dc_current_a, "A", w.min_dc_current_corner),
            ("max Zener power", w.max_zener_power_w, "W", w.max_zener_power_corner),
            ("max series R power", w.max_series_r_power_w, "W", w.max_series_r_power_corner),
            ("max bleeder power", w.max_bleeder_power_w, "W", w.max_bleeder_power_corner),
            ("max output voltage", w.max_output_voltage_v, "V", w.max_output_voltage_corner),
            ("no-load real power", w.no_load_real_power_w, "W", w.no_load_real_power_corner),
        ):
            typer.echo(f"    {label:<20} {format_value(val, unit):>10}   {describe_corner(corner)}")
    if d.life:
        typer.echo("  life: " + life_text(d.life))
    if d.search:
        sr = d.search
        typer.echo(
            f"  search: {sr['note']} ({sr['points_screened']} points screened, "
            f"{sr['candidates_verified']} verified exactly)"
        )
        if not sr.get("exhaustive") and sr.get("best_possible_price") is not None:
            typer.echo(
                f"    open bound: best found {sr['best_found_price']:.4f}, "
                f"best still possible {sr['best_possible_price']:.4f}"
            )
    typer.echo(f"  checks (binding: {', '.join(d.binding)}):")
    for f in d.checks:
        if f.stress is not None and f.limit is None:  # no limit set: the figure and a note
            stress = _fmt(f.stress, f.unit)
            typer.echo(f"    {f.severity:<4}  {f.rule:<28} {stress:>10}   {f.note}   {f.source}")
            continue
        if f.stress is None or f.unit == "class":
            typer.echo(f"    {f.severity:<4}  {f.rule:<28} {f.note:<24}   {f.source}")
            continue
        unit = f.unit if f.unit not in ("class",) else ""
        stress = _fmt(f.stress, unit)
        limit = _fmt(f.limit, unit)
        mark = " *" if f.rule in d.binding else ""
        typer.echo(
            f"    {f.severity:<4}  {f.rule:<28} {stress:>10} <= {limit:<10} "
            f"margin {f.margin * 100:5.1f} %{mark}   {f.source}"
        )
    typer.echo("")


def life_text(life: dict) -> str:
    """The life section in one line (design and check text)."""
    out = [f"target {life['target_life_h']:.0f} h"]
    if life.get("reservoir_life_h") is not None:
        out.append(
            f"reservoir {life['reservoir_life_h']:.0f} h at a core of "
            f"{life['reservoir_core_temp_c']:.1f} C"
        )
    if life.get("x_cap_loss_fraction") is not None:
        out.append(f"X capacitor loss {life['x_cap_loss_fraction'] * 100:.1f} %")
    if life.get("end_of_life_min_dc_current_a") is not None:
        out.append("min DC current then " + format_value(life["end_of_life_min_dc_current_a"], "A"))
    out.append(f"{life['switch_ons']:.0f} switch-ons")
    notes = [n for n in life.get("notes", []) if n]
    return ", ".join(out) + (f" ({'; '.join(notes)})" if notes else "")


def _fmt(x: float, unit: str) -> str:
    if unit == "h":
        return f"{x:.0f} h"
    if unit in ("V/s",):
        return f"{x / 1e6:.3g} V/us"
    if unit == "C":
        return f"{x:.0f} C"
    if unit == "A2s":
        return f"{x:.3g} A2s"
    if unit == "":
        return f"{x:g}"
    return format_value(x, unit)
