"""`dropper yield`: the share of built units that meets the load and keeps every part within its
rating, with part values drawn within their tolerance bands.

Exit code 0 whenever the run completes, whatever the yield: a yield is a figure, not a finding
(scripts read ``yield_fraction`` / ``ci_low`` from ``--json``); 2 for bad input.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from ..cautions import CAUTIONS
from ..errors import BadValueError
from ..units import format_value
from ._app import CreateOpt, app, echo_cautions, print_json
from ._circuit import (
    AmbientOpt,
    BleederOpt,
    BurstOpt,
    BurstPeriodOpt,
    BurstTimeOpt,
    CapLossOpt,
    CapOpt,
    DbOpt,
    DropoutOpt,
    FreqOpt,
    JsonOpt,
    LoadOpt,
    LoadROpt,
    MainsOpt,
    MainsTolOpt,
    ProfileOpt,
    QuiescentOpt,
    RegulatorOpt,
    ReservoirOpt,
    SeriesROpt,
    SurgeOpt,
    TopologyOpt,
    ZenerOpt,
    circuit_from_options,
    conditions_from_options,
    load_from_options,
    mains_from_options,
    option_percent,
    tolerances_from_options,
)
from .audit import (
    BomCapTolOpt,
    BomDiodeDropOpt,
    BomDiodeROpt,
    BomRTolOpt,
    BomZenerTolOpt,
    BomZenerZOpt,
    ColumnOpt,
    EncodingOpt,
    PolicyOpt,
    RoleOpt,
    RolesFileOpt,
    SheetOpt,
    audit_options,
)

#: runs with at least this many samples show a progress bar on stderr (text output only)
PROGRESS_FROM = 200_000


@app.command("yield")
def yield_cmd(
    cap: CapOpt = None,
    bom: Annotated[
        Path | None,
        typer.Option("--bom", help="A design's BOM (.csv, .tsv, .xlsx) instead of --cap etc."),
    ] = None,
    samples: Annotated[int, typer.Option("--samples", help="Units to draw.")] = 10_000,
    seed: Annotated[
        int | None,
        typer.Option(
            "--seed", help="Seed of the draws (same seed and --samples: same units) [default: new]."
        ),
    ] = None,
    dist: Annotated[
        str,
        typer.Option(
            "--dist",
            help="uniform within each band, or normal with the band at +/-3 sigma, truncated "
            "to the band.",
        ),
    ] = "uniform",
    line: Annotated[
        str,
        typer.Option(
            "--line",
            help="band: each unit must meet the load at the lowest line and frequency (stresses "
            "at the highest); drawn: at its own mains drawn from the band and frequency from "
            "the set.",
        ),
    ] = "band",
    reservoir_tol: Annotated[
        str | None,
        typer.Option(
            "--reservoir-tol", help="Reservoir tolerance, % [default: the BOM's, else 20]."
        ),
    ] = None,
    topology: TopologyOpt = "auto",
    mains: MainsOpt = "230",
    mains_tol: MainsTolOpt = "10",
    freq: FreqOpt = "50",
    cap_tol: BomCapTolOpt = None,
    cap_loss: CapLossOpt = None,
    series_r: SeriesROpt = "470",
    r_tol: BomRTolOpt = None,
    bleeder: BleederOpt = "1M",
    zener: ZenerOpt = "12",
    zener_tol: BomZenerTolOpt = None,
    zener_z: BomZenerZOpt = None,
    reservoir: ReservoirOpt = "220u",
    load: LoadOpt = "0",
    load_r: LoadROpt = None,
    burst: BurstOpt = None,
    burst_time: BurstTimeOpt = None,
    burst_period: BurstPeriodOpt = None,
    regulator: RegulatorOpt = None,
    dropout: DropoutOpt = "1",
    quiescent: QuiescentOpt = "5m",
    diode_drop: BomDiodeDropOpt = None,
    diode_r: BomDiodeROpt = None,
    ambient: AmbientOpt = "40",
    profile: ProfileOpt = "iec60335",
    surge: SurgeOpt = "1k",
    role: RoleOpt = None,
    roles: RolesFileOpt = None,
    sheet: SheetOpt = None,
    encoding: EncodingOpt = None,
    column: ColumnOpt = None,
    policy: PolicyOpt = None,
    db: DbOpt = None,
    create: CreateOpt = False,
    json: JsonOpt = False,
) -> None:
    """Production yield: the share of units, part values drawn within their tolerances, that
    meets the load (available DC current >= load, no policy margin) and, with --bom, keeps
    every part within its rating; with a 95 % Wilson interval and the value that drives the
    misses. The end-of-life capacitance loss is applied as a fixed figure, not drawn.
    --topology auto: as the BOM shows, else bridge. Exit 0 whenever it ran (a yield is a
    figure, not a finding); 2 for bad input."""
    from ..production_yield import bom_design, production_yield

    if bom is not None and cap:
        raise BadValueError("give either --bom FILE or the values (--cap ...), not both")
    if bom is None and (role or roles or sheet or encoding or column):
        raise BadValueError("--role, --roles, --sheet, --encoding and --column need --bom FILE")
    res_tol = None if reservoir_tol is None else option_percent(reservoir_tol, "--reservoir-tol")
    parts = context = pol = None
    notes: list[str] = []
    if bom is not None:
        opts = audit_options(
            role=role, roles=roles, sheet=sheet, encoding=encoding, column=column,
            topology=topology, mains=mains, mains_tol=mains_tol, freq=freq, cap_tol=cap_tol,
            cap_loss=cap_loss, r_tol=r_tol, zener_tol=zener_tol, zener_z=zener_z, load=load,
            load_r=load_r, burst=burst, burst_time=burst_time, burst_period=burst_period,
            regulator=regulator, dropout=dropout, quiescent=quiescent, diode_drop=diode_drop,
            diode_r=diode_r, ambient=ambient, profile=profile, surge=surge, policy=policy, db=db,
            create=create,
        )  # fmt: skip
        design = bom_design(bom, **opts)
        circuit, tol = design.circuit, design.tolerances
        mains_obj, cond = opts["mains"], opts["conditions"]
        parts, context, pol = design.parts, design.context, opts["policy"]
        notes = design.notes
        if res_tol is None:
            res_tol = design.reservoir_tol
    else:
        top = "bridge" if topology.strip().lower() == "auto" else topology
        circuit = circuit_from_options(
            cap,
            topology=top,
            series_r=series_r,
            bleeder=bleeder,
            zener=zener,
            zener_z=zener_z if zener_z is not None else "0",
            reservoir=reservoir,
            diode_drop=diode_drop if diode_drop is not None else "0.8",
            diode_r=diode_r if diode_r is not None else "0.1",
            load=load_from_options(load, load_r, burst, burst_time, burst_period),
            regulator=regulator,
            dropout=dropout,
            quiescent=quiescent,
        )
        tol = tolerances_from_options(
            cap_tol if cap_tol is not None else "10",
            cap_loss,
            r_tol if r_tol is not None else "5",
            zener_tol if zener_tol is not None else "5",
        )
        mains_obj = mains_from_options(mains, mains_tol, freq)
        cond = conditions_from_options(ambient, profile, surge)
        if policy is not None:
            from ..policy import load_policy

            pol = load_policy(policy)
    if res_tol is None:
        from ..production_yield import RESERVOIR_TOL

        res_tol = RESERVOIR_TOL
    bar = None
    if not json and samples >= PROGRESS_FROM:
        from .parts import _Bar

        bar = _Bar("drawing units")
    try:
        result = production_yield(
            circuit,
            mains_obj,
            tol,
            cond,
            samples=samples,
            seed=seed,
            dist=dist.strip().lower(),
            line=line.strip().lower(),
            reservoir_tol=res_tol,
            parts=parts,
            context=context,
            policy=pol,
            progress=bar,
        )
    finally:
        if bar is not None:
            bar.close()
    doc = {
        "topology": circuit.topology,
        "x_capacitance_f": circuit.x_capacitance_f,
        "series_resistance_ohm": circuit.series_resistance_ohm,
        "bleeder_resistance_ohm": circuit.bleeder_resistance_ohm,
        "zener_voltage_v": circuit.zener_voltage_v,
        "reservoir_f": circuit.reservoir_f,
        "tolerances": {
            "cap_tol": tol.cap_tol,
            "cap_loss": tol.cap_loss,
            "r_tol": tol.r_tol,
            "zener_tol": tol.zener_tol,
            "reservoir_tol": res_tol,
        },
        "bom": str(bom) if bom is not None else None,
        **result.to_dict(),
        "bom_notes": notes,
        "cautions": list(CAUTIONS),
    }
    if json:
        print_json(doc)
    else:
        for text in render_yield(doc):
            typer.echo(text)
        echo_cautions()


def _percent(x: float) -> str:
    return f"{x * 100:.2f} %"


def render_yield(doc: dict[str, Any]) -> list[str]:
    """The human output: the yield with its interval, the criterion, misses by rule, the
    driver, the calibration and the notes."""
    n, k = doc["samples"], doc["passed"]
    head = f"Production yield of a {doc['topology']} dropper"
    if doc.get("bom"):
        head += f" ({doc['bom']})"
    lines = [
        f"{head}: {doc['samples']} units, {doc['dist']} draws, seed {doc['seed']}",
        f"  Units that pass: {k} of {n} = {_percent(doc['yield_fraction'])}  "
        f"(95 % Wilson interval {_percent(doc['ci_low'])} .. {_percent(doc['ci_high'])})",
    ]
    load = format_value(doc["demand_a"], "A")
    if doc["criterion_mains_v"] is not None:
        where = (
            f"{doc['criterion_mains_v']:.4g} V {doc['criterion_freq_hz']:g} Hz "
            "(lowest line and frequency)"
        )
    else:
        where = "each unit's own mains and frequency"
    lines.append(
        f"  Load: available DC current >= {load} at {where}; least unit "
        f"{format_value(doc['min_current_a'], 'A')}"
    )
    missed = {r: c for r, c in doc["misses_by_rule"].items() if c}
    if missed:
        lines.append("  Misses by rule:")
        width = max(len(r) for r in missed)
        for r, c in sorted(missed.items(), key=lambda kv: -kv[1]):
            lines.append(f"    {r:<{width}}  {c}")
    else:
        count = len(doc["misses_by_rule"])
        lines.append(f"  Misses by rule: none ({count} rule{'s' if count > 1 else ''} checked)")
    d = doc["driver"]
    if d is not None:
        low, high = ("lowest", "highest") if d["parameter"] == "freq_hz" else (
            "bottom third", "top third"
        )  # fmt: skip
        lines.append(
            f"  Driver of the misses: {d['parameter']} (rank correlation with the margin "
            f"{d['rank_correlation']:+.2f}; misses {_percent(d['miss_rate_low'])} in the {low} "
            f"of its band, {_percent(d['miss_rate_high'])} in the {high})"
        )
    cal = doc["calibration"]
    lines.append(
        f"  Calibration: closed form x fitted ratio from {cal['points']} exact solves; "
        f"largest error at those points {cal['max_error'] * 100:.3f} % "
        f"(uncalibrated {cal['closed_form_max_error'] * 100:.2f} %)"
    )
    for text in doc["not_evaluated"]:
        lines.append(f"  not evaluated: {text}")
    for text in doc["notes"]:
        lines.append(f"  note: {text}")
    for text in doc.get("bom_notes") or []:
        lines.append(f"  BOM: {text}")
    return lines
