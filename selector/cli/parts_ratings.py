"""`dropper parts ratings FILE`: the figures the rules would use for each line of a BOM or a
stock list, and where each came from.

Thin command over :func:`selector.part_figures.figures_of_file`; registered on the ``parts``
sub-command group of :mod:`selector.cli.parts`.
"""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Any

import typer

from ..errors import EXIT_BAD_INPUT
from ._app import print_json
from .parts import DbOption, JsonOption, _open, parts_app

#: printing unit of a figure, from its name's suffix (the JSON keys' suffixes)
_UNITS: tuple[tuple[str, str], ...] = (
    ("_v_per_s", "V/s"),
    ("_a2s", "A2s"),
    ("_ohm", "ohm"),
    ("_v", "V"),
    ("_w", "W"),
    ("_a", "A"),
    ("_j", "J"),
    ("_c", "C"),
    ("_h", "h"),
)
_VALUE_UNITS = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "electrolytic": "F",
    "capacitor": "F",
    "ceramic_capacitor": "F",
    "resistor": "ohm",
    "zener": "V",
    "fuse": "A",
    "diode": "A",
    "bridge": "A",
}


def _shown(name: str, value: Any, kind: str) -> str:
    """A figure in engineering notation (through selector.units)."""
    from ..units import format_percent, format_value

    if value is None:
        return "-"
    if isinstance(value, str):
        return value
    if name == "tolerance":
        return format_percent(float(value))
    if name == "value":
        return format_value(float(value), _VALUE_UNITS.get(kind, ""))
    unit = next((u for suffix, u in _UNITS if name.endswith(suffix)), "")
    if unit in ("C", "h"):
        return f"{float(value):g} {unit}"
    return format_value(float(value), unit)


@parts_app.command("ratings")
def ratings(
    file: Annotated[Path, typer.Argument(help="A BOM or a stock list: CSV, TSV, XLSX.")],
    db: DbOption = None,
    json: JsonOption = False,
) -> None:
    """Show the ratings the rules would use for each line of a BOM or stock list.

    Each figure says where it came from: a column of the file, a BOM's Ratings column, the
    description text, a family default of the catalogue (invented demo figures), or none.
    Nothing is written. Exit code: 0 every line read, 2 some lines could not be read.
    """
    from ..part_figures import figures_of_file

    engine = _open(db)
    try:
        report = figures_of_file(engine, file)
    finally:
        engine.dispose()
    code = EXIT_BAD_INPUT if report.refused else 0
    if json:
        print_json(report.to_dict())
        raise typer.Exit(code)
    typer.echo(f"Ratings the rules would use, {file.name} ({report.layout}):")
    for line in report.lines:
        family = f", family {line.family}" if line.family else ""
        typer.echo(f"  row {line.row}: {line.label} ({line.kind}{family})")
        for name, (value, source) in line.figures.items():
            typer.echo(f"      {name:<20} {_shown(name, value, line.kind):>10}  {source}")
    for problem in report.refused:
        typer.echo(f"refused: {problem}", err=True)
    if any(s.startswith("family") for line in report.lines for _, s in line.figures.values()):
        typer.echo(
            "Family defaults are the built-in catalogue's figures: an invented demo model; "
            "give datasheet figures in the file before you trust them."
        )
    raise typer.Exit(code)
