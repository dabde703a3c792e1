"""`dropper parts build | find | stats`: the open parts catalogue.

Thin commands over :mod:`selector.catalogue`; pandas/sqlalchemy are imported inside the command
functions so that ``dropper --help`` starts fast.
"""

from __future__ import annotations

import sys
from typing import Annotated, Any

import typer

from ..units import format_value
from ._app import CreateOpt, app, catalogue_url, print_json

parts_app = typer.Typer(
    name="parts",
    help="The parts catalogue: build it, search it, count it.",
    no_args_is_help=True,
    rich_markup_mode=None,
)
app.add_typer(parts_app, name="parts")

_DB_HELP = (
    "Catalogue database: SQLAlchemy URL or SQLite file path "
    "(default: $DROPPER_DB, else catalogue.sqlite in the user data folder)."
)
DbOption = Annotated[str | None, typer.Option("--db", help=_DB_HELP)]
JsonOption = Annotated[bool, typer.Option("--json", help="Print one JSON document.")]


class _Bar:
    """progress(done, total) callback drawing a typer progress bar on stderr."""

    def __init__(self, label: str) -> None:
        self.label = label
        self.bar: Any = None
        self.done = 0

    def __call__(self, done: int, total: int) -> None:
        if self.bar is None:
            self.bar = typer.progressbar(length=total, label=self.label, file=sys.stderr)
            self.bar.__enter__()
        self.bar.update(done - self.done)
        self.done = done

    def close(self) -> None:
        if self.bar is not None:
            self.bar.__exit__(None, None, None)


def _first_use_note(url: str):
    told = []

    def progress(done: int, total: int) -> None:
        if not told:
            told.append(True)
            typer.echo(f"Building the built-in catalogue ({total} parts) in {url} ...", err=True)

    return progress


def _open(db: str | None, create: bool = False, read_only: bool = False):
    """The catalogue of ``--db`` (a missing file refused unless ``create``, see
    :func:`~selector.cli._app.catalogue_url`), built on first use; ``read_only`` opens it
    without writing (``--dry-run``)."""
    from ..catalogue import open_catalogue
    from ..catalogue.db import safe_url

    url = catalogue_url(db, create)
    return open_catalogue(url, progress=_first_use_note(safe_url(url)), read_only=read_only)


@parts_app.command("build")
def build(db: DbOption = None, json: JsonOption = False) -> None:
    """Build (or rebuild) the built-in catalogue from the data files in catalogue/.

    Imported stock rows are kept; only the built-in rows are replaced, in one transaction
    (a design running meanwhile reads the old rows or the new ones).
    Exit code: 0 built, 2 bad data file or read-only catalogue, 4 catalogue busy (another
    process kept it locked for $DROPPER_BUSY_TIMEOUT seconds, default 60; nothing written).
    """
    from ..catalogue import build_catalogue, resolve_url

    bar = None if json else _Bar("building catalogue")
    try:
        summary = build_catalogue(resolve_url(db), progress=bar)
    finally:
        if bar is not None:
            bar.close()
    if json:
        print_json(summary)
        return
    rate = summary["builtin_parts"] / summary["build_time_s"] if summary["build_time_s"] else 0
    typer.echo(
        f"Built {summary['builtin_parts']} built-in parts in {summary['url']} "
        f"in {summary['build_time_s']:.2f} s ({rate:,.0f} parts/s); "
        f"{summary['imported_parts']} imported parts kept."
    )
    typer.echo(f"Prices and board areas: {summary['price_note']}.")


def _pct(tol: float | None) -> str:
    return "" if tol is None else f" ±{tol * 100:g} %"


def _ratings(p: dict[str, Any]) -> str:
    kind = p["kind"]
    if kind == "x_capacitor":
        text = (
            f"{p['safety_class'] or '?'} {p['rated_voltage_ac_v'] or 0:g} VAC{_pct(p['tolerance'])}"
        )
        if p["impulse_v"]:
            text += f", {p['impulse_v'] / 1000:g} kV impulse"
        return text
    if kind == "film_capacitor":
        ac = f" / {p['rated_voltage_ac_v']:g} VAC" if p["rated_voltage_ac_v"] else ""
        return f"{p['rated_voltage_v'] or 0:g} VDC{ac}{_pct(p['tolerance'])}, no safety class"
    if kind == "resistor":
        text = f"{p['power_w'] or 0:g} W{_pct(p['tolerance'])}"
        if p["rated_voltage_v"]:
            text += f", {p['rated_voltage_v']:.3g} V working"
        if p["limiting_voltage_v"]:
            text += f", LEV {p['limiting_voltage_v']:g} V"
        return text + (", fusible" if p["fusible"] else "")
    if kind in ("diode", "bridge"):
        return f"VRRM {p['vrrm_v'] or 0:g} V, IFSM {p['ifsm_a'] or 0:g} A"
    if kind == "zener":
        zz = f", Zz {format_value(p['zz_ohm'], 'ohm')}" if p["zz_ohm"] else ""
        return f"{p['power_w'] or 0:g} W{_pct(p['tolerance'])}{zz}"
    if kind == "electrolytic":
        ripple = f", ripple {format_value(p['ripple_a'], 'A')}" if p["ripple_a"] else ""
        temp = f" {p['temp_max_c']:g} °C" if p["temp_max_c"] else ""
        return f"{p['rated_voltage_v'] or 0:g} V{temp}{ripple}"
    if kind == "fuse":
        i2t = f", I²t {p['i2t_a2s']:.3g} A²s" if p["i2t_a2s"] else ""
        return f"{p['rated_voltage_ac_v'] or 0:g} VAC{i2t}"
    if kind == "varistor":
        clamp = ""
        if p["limiting_voltage_v"] and p["clamp_current_a"]:
            clamp = f", {p['limiting_voltage_v']:g} V at {format_value(p['clamp_current_a'], 'A')}"
        return (
            f"{p['rated_voltage_ac_v'] or 0:g} VAC{clamp}, {p['pulse_energy_j'] or 0:g} J, "
            f"{p['ifsm_a'] or 0:g} A"
        )
    return ""


def _price(value: float | None) -> str:
    return "-" if value is None else f"{value:.4f}"


def _table(headers: list[str], rows: list[list[str]], right: set[int]) -> list[str]:
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(headers)]

    def line(cells: list[str]) -> str:
        out = [
            c.rjust(w) if i in right else c.ljust(w)
            for i, (c, w) in enumerate(zip(cells, widths, strict=True))
        ]
        return "  ".join(out).rstrip()

    return [line(headers)] + [line(r) for r in rows]


@parts_app.command("find")
def find(
    text: Annotated[
        str | None,
        typer.Argument(help="Free text, e.g. 'x2 330n 305', '4k7 1206', 'zener 12V 1W'."),
    ] = None,
    kind: Annotated[
        str | None,
        typer.Option(
            help="Only this kind: x_capacitor film_capacitor resistor diode bridge zener "
            "electrolytic fuse."
        ),
    ] = None,
    value: Annotated[
        str | None, typer.Option(help="Only this value (330n, 4k7, 12): read in the kind's unit.")
    ] = None,
    min_voltage: Annotated[
        str | None, typer.Option(help="Any voltage rating (AC, DC/working, VRRM) at least this.")
    ] = None,
    min_power: Annotated[str | None, typer.Option(help="Power rating at least this.")] = None,
    limit: Annotated[int, typer.Option(min=1, help="Show at most this many parts.")] = 20,
    db: DbOption = None,
    create: CreateOpt = False,
    json: JsonOption = False,
) -> None:
    """Search the catalogue; best matches first, ties to the cheaper part.

    Exit code 1 when no part matches.
    """
    from ..catalogue import find_parts

    engine = _open(db, create)
    try:
        found = find_parts(
            engine,
            text=text,
            kind=kind,
            value=value,
            min_voltage=min_voltage,
            min_power=min_power,
            limit=limit,
        )
    finally:
        engine.dispose()
    if json:
        print_json(
            {
                "query": {
                    "text": text,
                    "kind": kind,
                    "value": value,
                    "min_voltage": min_voltage,
                    "min_power": min_power,
                    "limit": limit,
                },
                "count": len(found),
                "parts": found,
            }
        )
    elif found:
        rows = [
            [
                p["code"],
                p["kind"],
                format_value(p["value"], p["value_unit"] or "") if p["value"] is not None else "-",
                _ratings(p),
                p["package"] or "-",
                _price(p["unit_price"]),
            ]
            for p in found
        ]
        for line in _table(["code", "kind", "value", "ratings", "package", "price"], rows, {5}):
            typer.echo(line)
        notes = sorted({p["price_note"] for p in found if p["price_note"]})
        if notes:
            typer.echo(f"Prices: {'; '.join(notes)}.")
    else:
        typer.echo("No part matches.")
    if not found:
        raise typer.Exit(1)


@parts_app.command("stats")
def stats(db: DbOption = None, create: CreateOpt = False, json: JsonOption = False) -> None:
    """Count the catalogue's parts per kind and family; name the price model."""
    from ..catalogue import catalogue_stats
    from ..catalogue.db import safe_url

    engine = _open(db, create)
    try:
        result = {"url": safe_url(engine), **catalogue_stats(engine)}
    finally:
        engine.dispose()
    if json:
        print_json(result)
        return
    sources = ", ".join(f"{n} {s}" for s, n in result["sources"].items())
    typer.echo(f"Catalogue {result['url']}")
    typer.echo(
        f"Schema {result['schema_revision']}, built {result['built_at'] or '-'}; "
        f"{result['parts']} parts ({sources or 'none'})."
    )
    typer.echo("")
    kind_rows = [[k, str(n)] for k, n in result["kinds"].items()]
    for line in _table(["kind", "parts"], kind_rows, {1}):
        typer.echo(line)
    typer.echo("")
    fam_rows = [
        [
            f["family"],
            f["kind"],
            f["source"],
            str(f["parts"]),
            f"{_price(f['min_price'])} - {_price(f['max_price'])}",
        ]
        for f in result["families"]
    ]
    for line in _table(["family", "kind", "source", "parts", "price"], fam_rows, {3}):
        typer.echo(line)
    typer.echo("")
    for note, n in result["price_notes"].items():
        typer.echo(f"Prices and board areas: {note or 'no note'} ({n} parts).")
