"""`dropper snap`: computed values to IEC 60063 preferred values."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from ..units import format_value
from ._app import app, print_json


@app.command()
def snap(
    values: Annotated[
        list[str],
        typer.Argument(help="Values to snap (330n, 4k7, 1e-6), or one CSV file with --column."),
    ],
    series: Annotated[
        str, typer.Option(help="IEC 60063 series: E3 E6 E12 E24 E48 E96 E192.")
    ] = "E12",
    mode: Annotated[
        str, typer.Option(help="nearest (log scale), up (>=) or down (<=).")
    ] = "nearest",
    unit: Annotated[
        str | None, typer.Option(help="Expected unit (F, ohm, V, A, ...): rejects others.")
    ] = None,
    column: Annotated[
        str | None, typer.Option(help="Snap this column of the CSV file given as VALUE.")
    ] = None,
    output: Annotated[
        Path | None,
        typer.Option(help="With --column: write here (default: FILE.snapped.csv beside it)."),
    ] = None,
    in_place: Annotated[
        bool,
        typer.Option(
            "--in-place",
            help="With --column: rewrite the CSV file itself (encoding, byte-order mark, "
            "line ends and headers kept).",
        ),
    ] = False,
    encoding: Annotated[
        str | None,
        typer.Option(
            help="With --column: the CSV file's encoding (default: UTF-8, or as its "
            "byte-order mark says)."
        ),
    ] = None,
    json: Annotated[bool, typer.Option("--json", help="Print one JSON document.")] = False,
) -> None:
    """Snap values to the nearest, next-up or next-down preferred value (IEC 60063)."""
    from .. import snapping  # lazy: keeps numpy out of `dropper --help`

    if column is not None:
        if len(values) != 1:
            raise typer.BadParameter("with --column give exactly one CSV file", param_hint="VALUES")
        result = snapping.snap_csv_column(
            Path(values[0]), column, series=series, mode=mode, quantity=unit, output=output,
            in_place=in_place, encoding=encoding,
        )  # fmt: skip
        if json:
            print_json(result)
        else:
            typer.echo(
                f"{result['rows']} rows: column '{result['new_column']}' written to "
                f"{result['path']}"
            )
        return
    if output is not None or in_place or encoding is not None:
        raise typer.BadParameter("--output, --in-place and --encoding need --column")
    rows = snapping.snap_texts(values, series=series, mode=mode, quantity=unit)
    if json:
        print_json(rows)
        return
    width = max(len(r["text"]) for r in rows)
    for r in rows:
        typer.echo(
            f"{r['text']:>{width}}  ->  {format_value(r['value'], unit or '', 3):<10}"
            f"  {r['error'] * 100:+.2f} %  ({r['series']} {r['mode']})"
        )
