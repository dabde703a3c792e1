"""`dropper audit`: a finished BOM against the stresses its circuit puts on each part."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from ..errors import EXIT_FINDINGS, EXIT_OK, BadValueError
from ..units import format_value
from ._app import CreateOpt, app, catalogue_url, echo_cautions, print_json, warn_skipped_parts
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
    LoadROpt,
    MainsOpt,
    MainsTolOpt,
    ProductClassOpt,
    ProfileOpt,
    QuiescentOpt,
    RegulatorOpt,
    StandbyLimitOpt,
    SurgeOpt,
    SwitchOnsOpt,
    TopologyOpt,
    VoutMaxOpt,
    VoutMinOpt,
    conditions_from_options,
    describe_life,
    describe_mains,
    load_from_options,
    mains_from_options,
    option_value,
    parse_topology,
    standby_policy,
    tolerances_from_options,
)

_UNIT_NAMES = {"V": "V", "A": "A", "W": "W", "J": "J", "s": "s", "A2s": "A2s", "V/s": "V/s"}


def _num(x: float | None, unit: str) -> str:
    if x is None:
        return "?"
    if x == float("inf"):
        return "never"
    if unit == "V/s":
        return format_value(x * 1e-6, "V/µs")
    if unit == "C":
        return f"{x:g} °C"
    if unit in _UNIT_NAMES:
        return format_value(x, unit)
    return f"{x:g} {unit}".strip()


def finding_line(f: dict[str, Any]) -> str:
    """One line for one finding: severity, ref, role, rule, stress against rating, margin,
    corner and source."""
    ref = f["ref"] or "-"
    board = f"[{f['board']}] " if f.get("board") else ""
    head = f"{f['severity'].upper():<4}  {board}{ref:<10} {f['role']:<15} {f['rule']:<26}"
    if f["stress"] is None or f["rating"] is None:
        body = f["note"] or "not evaluated"
    elif f["unit"] == "class":
        body = (
            "an X1/X2/X3 safety capacitor is needed; this part is not one"
            if f["severity"] == "fail"
            else "X subclass present"
        )
    else:
        body = f"{_num(f['stress'], f['unit'])} against {_num(f['rating'], f['unit'])}"
        if f["margin"] is not None:
            body += f" (margin {f['margin'] * 100:+.0f} %)"
        if f["note"]:
            body += f"; {f['note']}"
    tail = f"  at {f['corner']}" if f.get("corner") else ""
    return f"{head} {body}{tail}  [{f['source']}]"


def human_report(doc: dict[str, Any]) -> list[str]:
    """The human output: what was read and decided, failures, warnings, passes count."""
    lines = [f"Audit of {doc['file']}" + (f" (sheet {doc['sheet']})" if doc.get("sheet") else "")]
    cmap = ", ".join(f"'{h}' -> {fld}" for fld, h in doc["column_map"].items())
    lines.append(f"Columns: {cmap}")
    if doc["ignored_columns"]:
        lines.append(f"Columns not used: {', '.join(doc['ignored_columns'])}")
    for note in doc["notes"]:
        lines.append(f"Note: {note}")
    for b in doc["boards"]:
        name = f"Board '{b['board']}': " if b["board"] else ""
        circ = (
            f"{name}{b['topology']}, X {format_value(b['x_capacitance_f'], 'F')}, "
            f"series {format_value(b['series_resistance_ohm'], 'ohm')}, bleeder "
            + (
                format_value(b["bleeder_resistance_ohm"], "ohm")
                if b["bleeder_resistance_ohm"] not in (None, float("inf"))
                else "none"
            )
            + f", Zener {format_value(b['zener_voltage_v'], 'V')}, reservoir "
            f"{format_value(b['reservoir_f'], 'F')}"
        )
        lines.append(circ)
        for n in b["inferred"]:
            lines.append(f"  role {n}")
        for n in b["assumed"]:
            lines.append(f"  {n}")
        for n in b["notes"]:
            lines.append(f"  note: {n}")
    given = [r for r in doc["roles"] if r["how"] != "inferred" and r["role"] != "other"]
    for r in given:
        lines.append(f"  role {r['role']}: {r['ref']} ({r['how']})")
    lines.append("")
    fails = [f for f in doc["findings"] if f["severity"] == "fail"]
    warns = [f for f in doc["findings"] if f["severity"] == "warn"]
    for f in fails + warns:
        lines.append(finding_line(f))
    for f in doc["findings"]:
        if f["rule"] == "whole.standby_power" and f["severity"] == "pass":
            lines.append(finding_line(f))  # the no-load power is always shown
    from .design import life_text

    for b in doc["boards"]:
        if b.get("life"):
            name = f"[{b['board']}] " if b["board"] else ""
            lines.append(f"{name}Life figures: " + life_text(b["life"]))
    s = doc["summary"]
    lines.append(f"{s['pass']} checks pass, {s['warn']} warn, {s['fail']} fail.")
    return lines


#: options of the BOM reader and the role assignment (shared with ``dropper yield --bom``)
RoleOpt = Annotated[
    list[str] | None,
    typer.Option(
        "--role",
        help="REF=ROLE (repeatable; BOARD:REF=ROLE for one board). Roles: x_capacitor, "
        "series_resistor, bleeder, rectifier, zener, reservoir, fuse, other.",
    ),
]
RolesFileOpt = Annotated[
    Path | None,
    typer.Option("--roles", help='TOML file: [roles] REF = "role"; [boards.NAME.roles].'),
]
SheetOpt = Annotated[str | None, typer.Option("--sheet", help="XLSX sheet holding the BOM.")]
EncodingOpt = Annotated[
    str | None,
    typer.Option(
        "--encoding",
        help="Text encoding of a CSV/TSV BOM (default: UTF-8 or as its byte-order mark says, "
        "else Windows-1252).",
    ),
]
ColumnOpt = Annotated[
    list[str] | None,
    typer.Option(
        "--column",
        help="FIELD=HEADER: pin a BOM field (ref, value, qty, description, package, mpn, "
        "voltage, power, tolerance, board, role) to a column (repeatable).",
    ),
]
PolicyOpt = Annotated[
    Path | None, typer.Option("--policy", help="Derating policy TOML (flat key = number).")
]
BomCapTolOpt = Annotated[
    str | None,
    typer.Option(
        "--cap-tol", help="X capacitor tolerance, % or K/M [default: the BOM's, else 10]."
    ),
]
BomRTolOpt = Annotated[
    str | None,
    typer.Option("--r-tol", help="Resistor tolerance, % [default: the BOM's, else 5]."),
]
BomZenerTolOpt = Annotated[
    str | None,
    typer.Option("--zener-tol", help="Zener voltage tolerance, % [default: the BOM's, else 5]."),
]
BomZenerZOpt = Annotated[
    str | None,
    typer.Option(
        "--zener-z", help="Zener dynamic impedance, ohm [default: the Zener's family, else 0]."
    ),
]
BomDiodeDropOpt = Annotated[
    str | None,
    typer.Option(
        "--diode-drop",
        help="Rectifier forward drop, V [default: the rectifier's family, else 0.8].",
    ),
]
BomDiodeROpt = Annotated[
    str | None,
    typer.Option(
        "--diode-r",
        help="Rectifier series resistance, ohm [default: the rectifier's family, else 0.1].",
    ),
]


def audit_options(
    *,
    role: list[str] | None = None,
    roles: Path | None = None,
    sheet: str | None = None,
    encoding: str | None = None,
    column: list[str] | None = None,
    topology: str = "auto",
    mains: str = "230",
    mains_tol: str = "10",
    freq: str = "50",
    harmonics: str | None = None,
    cap_tol: str | None = None,
    cap_loss: str | None = None,
    r_tol: str | None = None,
    zener_tol: str | None = None,
    zener_z: str | None = None,
    load: str = "0",
    load_r: str | None = None,
    burst: str | None = None,
    burst_time: str | None = None,
    burst_period: str | None = None,
    regulator: str | None = None,
    dropout: str = "1",
    quiescent: str = "5m",
    diode_drop: str | None = None,
    diode_r: str | None = None,
    ambient: str = "40",
    profile: str = "iec60335",
    surge: str = "1k",
    vout_max: str | None = None,
    vout_min: str | None = None,
    life: str = "10y",
    humidity: str = "60",
    switch_ons: str = "30k",
    policy: Path | None = None,
    db: str | None = None,
    create: bool = False,
    standby_limit: str | None = None,
    product_class: str | None = None,
) -> dict[str, Any]:
    """The keyword options of :func:`selector.audit.evaluate.audit_bom` from the option texts.

    A tolerance option left out (None) lets the BOM's stated tolerance win; one given is pinned.
    """
    from ..audit.roles import parse_role_options
    from ..policy import load_policy

    pinned = {
        name
        for name, text in (("cap_tol", cap_tol), ("r_tol", r_tol), ("zener_tol", zener_tol))
        if text is not None
    }
    tolerances = tolerances_from_options(
        cap_tol if cap_tol is not None else "10",
        cap_loss,
        r_tol if r_tol is not None else "5",
        zener_tol if zener_tol is not None else "5",
    )
    top = parse_topology(topology, extra=("auto",))
    reg = None
    if regulator:
        from ..engine import Regulator

        reg = Regulator(
            output_v=option_value(regulator, "V", "--regulator"),
            dropout_v=option_value(dropout, "V", "--dropout"),
            quiescent_a=option_value(quiescent, "A", "--quiescent"),
        )
    return dict(
        mains=mains_from_options(mains, mains_tol, freq, harmonics),
        conditions=conditions_from_options(
            ambient, profile, surge, vout_max, life, humidity, switch_ons, cap_loss, vout_min
        ),
        tolerances=tolerances,
        pinned_tolerances=pinned,
        load=load_from_options(load, load_r, burst, burst_time, burst_period),
        regulator=reg,
        topology=None if top == "auto" else top,
        policy=standby_policy(load_policy(policy), standby_limit, product_class)[0],
        sheet=sheet,
        encoding=encoding,
        columns=_columns(column),
        roles=parse_role_options(role or []),
        roles_file=roles,
        catalogue=_catalogue(db, create),
        circuit_defaults={
            key: option_value(text, unit, name)
            for key, text, unit, name in (
                ("diode_drop_v", diode_drop, "V", "--diode-drop"),
                ("diode_resistance_ohm", diode_r, "ohm", "--diode-r"),
                ("zener_impedance_ohm", zener_z, "ohm", "--zener-z"),
            )
            if text is not None
        },
    )


@app.command()
def audit(
    bom: Annotated[Path, typer.Argument(help="BOM file: .csv, .tsv or .xlsx.", show_default=False)],
    role: RoleOpt = None,
    roles: RolesFileOpt = None,
    sheet: SheetOpt = None,
    encoding: EncodingOpt = None,
    column: ColumnOpt = None,
    topology: TopologyOpt = "auto",
    mains: MainsOpt = "230",
    mains_tol: MainsTolOpt = "10",
    freq: FreqOpt = "50",
    harmonics: HarmonicsOpt = None,
    cap_tol: BomCapTolOpt = None,
    cap_loss: CapLossOpt = None,
    r_tol: BomRTolOpt = None,
    zener_tol: BomZenerTolOpt = None,
    zener_z: BomZenerZOpt = None,
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
    vout_max: VoutMaxOpt = None,
    vout_min: VoutMinOpt = None,
    life: LifeOpt = "10y",
    humidity: HumidityOpt = "60",
    switch_ons: SwitchOnsOpt = "30k",
    policy: PolicyOpt = None,
    standby_limit: StandbyLimitOpt = None,
    product_class: ProductClassOpt = None,
    db: DbOpt = None,
    create: CreateOpt = False,
    json: JsonOpt = False,
    report: Annotated[
        Path | None, typer.Option("--report", help="Also write an HTML report to this file.")
    ] = None,
) -> None:
    """Find the under-rated parts of a finished BOM at every worst case (exit 1: a part fails).

    Circuit values come from the BOM (X capacitors in parallel, series resistors and the bleeder
    string in series, Zeners in series, reservoirs in parallel); the options give the mains, the
    load and the conditions. --topology auto takes it from the BOM (bridge or one diode).
    """
    from ..audit.evaluate import audit_bom
    from ..outputs import check_outputs

    check_outputs([("--report", report)], [("BOM", bom), ("--roles", roles), ("--policy", policy)])
    opts = audit_options(
        role=role, roles=roles, sheet=sheet, encoding=encoding, column=column,
        topology=topology, mains=mains, mains_tol=mains_tol, freq=freq, harmonics=harmonics,
        cap_tol=cap_tol,
        cap_loss=cap_loss, r_tol=r_tol, zener_tol=zener_tol, zener_z=zener_z, load=load,
        load_r=load_r, burst=burst, burst_time=burst_time, burst_period=burst_period,
        regulator=regulator, dropout=dropout, quiescent=quiescent, diode_drop=diode_drop,
        diode_r=diode_r, ambient=ambient, profile=profile, surge=surge, vout_max=vout_max,
        vout_min=vout_min, policy=policy, db=db, create=create, standby_limit=standby_limit,
        product_class=product_class, life=life, humidity=humidity, switch_ons=switch_ons,
    )  # fmt: skip
    result = audit_bom(bom, **opts)
    from ..engine.distortion import mains_record

    supply = opts["mains"]
    doc = result.to_dict()
    doc["mains"] = mains_record(supply)
    if report is not None:
        from ..report import write_report

        board = result.boards[0] if result.boards else None
        write_report(
            report, "audit", doc, board.circuit if board else None,
            mains=supply, tolerances=opts["tolerances"], conditions=opts["conditions"],
        )  # fmt: skip
    if not json:
        typer.echo(describe_life(opts["conditions"]))
    if not json and supply.harmonics:
        typer.echo(describe_mains(doc["mains"]))
    _finish(doc, json)


def _catalogue(db: str | None, create: bool = False):
    """The catalogue as a DataFrame (the audit fills missing ratings from its families)."""
    from ..catalogue import catalogue_frame

    frame = catalogue_frame(catalogue_url(db, create))
    warn_skipped_parts(frame)
    return frame


def _columns(options: list[str] | None) -> dict[str, str]:
    out: dict[str, str] = {}
    for opt in options or []:
        fld, sep, header = opt.partition("=")
        if not sep or not fld.strip() or not header.strip():
            raise BadValueError(
                f"--column {opt!r}: write FIELD=HEADER, e.g. --column ref=Designator"
            )
        out[fld.strip().lower()] = header.strip()
    return out


def _finish(doc: dict[str, Any], as_json: bool) -> None:
    if as_json:
        print_json(doc)
    else:
        for line in human_report(doc):
            typer.echo(line)
        echo_cautions()
    raise typer.Exit(EXIT_FINDINGS if doc["summary"]["fail"] else EXIT_OK)
