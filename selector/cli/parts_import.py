"""`dropper parts import`: a stock list or distributor export into the catalogue.

Thin command over :func:`selector.catalogue.importer.import_stock`; registered on the ``parts``
sub-command group of :mod:`selector.cli.parts`.
"""

from __future__ import annotations

import re
from pathlib import Path
from typing import Annotated

import typer

from ..errors import EXIT_BAD_INPUT, EXIT_FINDINGS, BadValueError
from ._app import CreateOpt, print_json
from .parts import DbOption, JsonOption, _Bar, _open, parts_app

#: imports with more data rows than this show a progress bar (on stderr)
PROGRESS_ROWS = 2000


def _parse_maps(items: list[str] | None) -> dict[str, str]:
    out: dict[str, str] = {}
    for item in items or []:
        header, sep, field = item.rpartition("=")
        if not sep or not header.strip() or not field.strip():
            raise BadValueError(f"--map {item!r}: write it as COLUMN=FIELD, e.g. 'Part No=sku'")
        out[header.strip()] = field.strip()
    return out


def _parse_rates(items: list[str] | None) -> dict[str, float]:
    """``--rate USD=0.92`` -> {"USD": 0.92} (a plain number, read by the units module)."""
    from ..units import parse_value

    out: dict[str, float] = {}
    for item in items or []:
        code, sep, figure = item.partition("=")
        code = code.strip().upper()
        if not sep or not re.fullmatch(r"[A-Z]{3}", code):
            raise BadValueError(f"--rate {item!r}: write it as CUR=RATE, e.g. USD=0.92")
        try:
            rate = parse_value(figure.strip())
        except BadValueError as exc:
            raise BadValueError(f"--rate {item!r}: {exc}") from None
        if not rate > 0:
            raise BadValueError(f"--rate {item!r}: the rate must be > 0")
        out[code] = rate
    return out


def _count_rows(path: Path) -> int:
    """Rough count of data rows, only to decide whether a progress bar is worth showing."""
    if path.suffix.lower() in (".xlsx", ".xlsm"):
        try:
            import openpyxl

            wb = openpyxl.load_workbook(path, read_only=True)
            try:
                return max((wb.worksheets[0].max_row or 1) - 1, 0)
            finally:
                wb.close()
        except Exception:  # the import itself reports an unreadable file properly
            return 0
    try:
        with path.open("rb") as fh:
            return max(sum(1 for _ in fh) - 1, 0)
    except OSError:
        return 0


def _echo_provenance(result) -> None:
    """Per figure: how many accepted rows took it from a column, from the description, from
    the family default (the nearest built-in part), or have none; refused rows per column."""
    if result.provenance:
        typer.echo("Where the figures came from (rows: column / description / family default):")
        width = max(len(column) for column in result.provenance)
        for column, counts in sorted(result.provenance.items()):
            none = f"; {counts['none']} without" if counts["none"] else ""
            typer.echo(
                f"  {column:<{width}}  {counts['column']} / {counts['description']} / "
                f"{counts['family']}{none}"
            )
    refused = result.refused_by_column()
    if refused:
        typer.echo(
            "Refused rows by column: "
            + ", ".join(f"{column} {count}" for column, count in refused.items())
        )


@parts_app.command("import")
def import_(
    file: Annotated[Path, typer.Argument(help="Stock list or distributor export: CSV, TSV, XLSX.")],
    supplier: Annotated[
        str | None,
        typer.Option(help="Name the rows are filed under (default: the file name without suffix)."),
    ] = None,
    dry_run: Annotated[
        bool,
        typer.Option(
            "--dry-run",
            help="Validate and count; write nothing (works on a read-only catalogue).",
        ),
    ] = False,
    partial: Annotated[
        bool,
        typer.Option("--partial", help="Write the good rows even when some rows are refused."),
    ] = False,
    map_: Annotated[
        list[str] | None,
        typer.Option(
            "--map",
            help="COLUMN=FIELD: map a column by hand (FIELD 'ignore' drops it). Repeatable.",
        ),
    ] = None,
    qty: Annotated[
        int, typer.Option(help="Order quantity whose price break becomes the unit price.")
    ] = 1000,
    currency: Annotated[str, typer.Option(help="Currency when the file has no column.")] = "EUR",
    rate: Annotated[
        list[str] | None,
        typer.Option(
            "--rate",
            help="CUR=RATE: convert prices in CUR at RATE EUR per CUR (the catalogue compares "
            "prices in EUR; other currencies are refused without a rate). Repeatable.",
        ),
    ] = None,
    sheet: Annotated[str | None, typer.Option(help="XLSX sheet (default: the first).")] = None,
    encoding: Annotated[
        str | None,
        typer.Option(
            "--encoding",
            help="Text encoding of a CSV/TSV file (default: UTF-8 or as its byte-order mark "
            "says, else Windows-1252).",
        ),
    ] = None,
    merge: Annotated[
        bool,
        typer.Option(
            "--merge",
            help="Add and update only: keep the supplier's rows this file does not hold.",
        ),
    ] = False,
    db: DbOption = None,
    create: CreateOpt = False,
    json: JsonOption = False,
) -> None:
    """Import your own stock list (parts, prices with quantity breaks, stock counts).

    Columns are recognised by their headers (the mapping is shown); each row is validated and
    every refused row is listed with file, row and column. Nothing is written when a row is
    refused, unless --partial. Importing the same list again updates rows in place.
    Two imports at once into one SQLite file run one after the other.
    Exit code: 0 imported, 1 imported with refused rows (--partial), 2 nothing written (bad
    rows, or a read-only catalogue), 4 catalogue busy: another process kept it locked for
    $DROPPER_BUSY_TIMEOUT seconds (default 60); nothing written, try again.
    """
    from ..catalogue.importer import import_stock

    column_map = _parse_maps(map_)
    engine = _open(db, create, read_only=dry_run)
    bar = None
    if not json and _count_rows(file) > PROGRESS_ROWS:
        bar = _Bar(f"importing {file.name}")
    try:
        result = import_stock(
            engine,
            file,
            supplier,
            dry_run=dry_run,
            partial=partial,
            column_map=column_map,
            qty=qty,
            currency=currency,
            sheet=sheet,
            progress=bar,
            merge=merge,
            rates=_parse_rates(rate),
            encoding=encoding,
        )
    finally:
        if bar is not None:
            bar.close()
        engine.dispose()
    code = 0
    if result.problems:
        code = EXIT_FINDINGS if result.written else EXIT_BAD_INPUT
    if json:
        print_json(result.to_dict())
        raise typer.Exit(code)
    if result.encoding_note:
        typer.echo(f"Encoding: {result.encoding_note}")
    typer.echo(f"Columns of {file.name}:")
    width = max(len(m.header) for m in result.mapping)
    for m in result.mapping:
        if m.field is None:
            target = "(ignored)"
        elif m.min_qty is not None:
            target = f"price at {m.min_qty}+ pcs"
        else:
            target = m.field + ("" if m.how == "given" else f"  (match {m.score:.0f})")
            if m.how == "given":
                target += "  (--map)"
        typer.echo(f"  {m.header:<{width}}  ->  {target}")
    _echo_provenance(result)
    for p in result.problems:
        typer.echo(f"refused: {p}", err=True)
    verb = "would be" if dry_run else "were"
    summary = (
        f"{result.rows} rows: {result.inserted} new, {result.updated} changed, "
        f"{result.unchanged} unchanged, {len(result.problems)} refused; "
        + ("--merge: no row withdrawn" if merge else f"{result.withdrawn} withdrawn")
    )
    if result.written:
        typer.echo(f"{summary}; supplier '{result.supplier}' (source import:{result.supplier}).")
    elif dry_run and not result.problems:
        typer.echo(f"{summary}; dry run: nothing written (the counts are what {verb} written).")
    else:
        typer.echo(
            f"{summary}; nothing written. Fix the rows above, or use --partial to write the "
            "good rows only.",
            err=True,
        )
    raise typer.Exit(code)
