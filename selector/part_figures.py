"""Library side of `dropper parts ratings FILE`: the figures the rules would use for each line
of a BOM or a stock list, and where each came from.

A file with a reference-designator column is a BOM: each line is read as `dropper audit` reads
it (:func:`selector.audit.rated_parts.line_ratings`) and a missing rating is filled from the
best-matching catalogue family exactly as the audit fills it
(:func:`selector.audit.fill.fill_from_catalogue`). Any other file is a stock list: it is read as
`dropper parts import --dry-run` reads it (nothing is written). The figures listed per kind are
:data:`selector.catalogue.stock_described.PROVENANCE_FIELDS` (value, tolerance, package and the
ratings the rules read). Sources: ``column`` (a value or rating column of the file), ``ratings
column`` (a BOM's ``Ratings`` cell, as ``design --bom`` writes it), ``description`` (read from
the text), ``family <name>`` (a family default: the audit's fill, or an import's nearest
built-in part), ``none`` (unknown: the rules warn).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

__all__ = ["FigureLine", "FiguresReport", "figures_of_file"]


@dataclass
class FigureLine:
    """One line of the file: where it is, what it is, and each figure with its source."""

    row: int
    label: str  # the designators of a BOM line, the supplier code of a stock row
    kind: str
    family: str | None
    figures: dict[str, tuple[Any, str]] = field(default_factory=dict)

    def to_dict(self) -> dict[str, Any]:
        return {
            "row": self.row,
            "label": self.label,
            "kind": self.kind,
            "family": self.family,
            "figures": {
                name: {"value": value, "source": source}
                for name, (value, source) in self.figures.items()
            },
        }


@dataclass
class FiguresReport:
    """The file's lines and the lines that could not be read (file, row, column, problem)."""

    file: str
    layout: str  # "bom" or "stock list"
    lines: list[FigureLine]
    refused: list[str] = field(default_factory=list)

    def to_dict(self) -> dict[str, Any]:
        return {
            "file": self.file,
            "layout": self.layout,
            "lines": [line.to_dict() for line in self.lines],
            "refused": list(self.refused),
        }


def figures_of_file(engine: Any, path: str | Path, frame: Any = None) -> FiguresReport:
    """The figures of every line of ``path`` (a BOM or a stock list, see the module doc).

    ``engine``: the catalogue (families for a stock list); ``frame``: its parts frame for the
    BOM fill (read from ``engine`` when not given). Raises the readers' errors for a file that
    cannot be read at all."""
    from .audit.bom import read_bom
    from .errors import BadRowError

    try:
        table = read_bom(path)
    except BadRowError as exc:
        if "no header row with a reference" not in exc.problem:
            raise
        return _stock_figures(engine, path)
    if frame is None:
        from .catalogue import parts_frame

        frame = parts_frame(engine)
    return _bom_figures(table, frame)


def _bom_figures(table: Any, frame: Any) -> FiguresReport:
    from .audit.fill import CATALOGUE_KIND, CatalogueIndex, fill_from_catalogue
    from .audit.rated_parts import line_ratings
    from .audit.ratings import stated_ratings
    from .catalogue.stock_described import PROVENANCE_FIELDS
    from .errors import BadRowError

    index = CatalogueIndex(frame)
    by_row: dict[int, FigureLine] = {}
    refused: list[str] = []
    memo: dict = {}
    for part in table.parts:
        if part.row in by_row:
            by_row[part.row].label += f", {part.ref}"
            continue
        try:
            ratings = line_ratings(table, part, memo, role=part.role or None)
        except BadRowError as exc:
            refused.append(str(exc))
            continue
        kind = CATALOGUE_KIND.get(ratings.kind)
        wanted = PROVENANCE_FIELDS.get(kind or "", ("value",))
        stated = stated_ratings(part.ratings) if part.ratings else {}
        columns = {
            "value": part.value,
            "package": part.package,
            "tolerance": part.tolerance,
            "power_w": part.power,
        }
        voltage_field = {"resistor": "limiting_voltage_v", "diode": "vrrm_v", "bridge": "vrrm_v"}
        columns[voltage_field.get(kind or "", "rated_voltage_v")] = part.voltage
        if kind == "x_capacitor":
            columns["rated_voltage_ac_v"] = part.voltage
        sources: dict[str, str] = {}
        for name in wanted:
            value = _ratings_value(ratings, name, kind)
            if value is None:
                continue
            if name in stated:
                sources[name] = "ratings column"
            elif columns.get(name):
                sources[name] = "column"
            else:
                sources[name] = "description"
        family = fill_from_catalogue(ratings, wanted, index) if kind else None
        for name, family_name in ratings.assumed.items():
            if name in wanted:
                sources[name] = f"family {family_name}"
        line = FigureLine(part.row, part.ref, ratings.kind, family)
        for name in wanted:
            line.figures[name] = (
                _ratings_value(ratings, name, kind),
                sources.get(name, "none"),
            )
        by_row[part.row] = line
    return FiguresReport(table.path, "bom", list(by_row.values()), refused)


def _ratings_value(ratings: Any, name: str, kind: str | None) -> Any:
    if name == "value" and kind in ("diode", "bridge"):
        return ratings.if_av_a
    return getattr(ratings, name, None)


def _stock_figures(engine: Any, path: str | Path) -> FiguresReport:
    from .catalogue.importer import import_stock

    result = import_stock(engine, path, "ratings-preview", dry_run=True, keep_rows=True)
    lines = []
    for row in result.accepted_rows:
        values = row.values
        line = FigureLine(row.row, str(values["supplier_code"]), values["kind"], values["family"])
        for name, source in row.sources.items():
            shown = f"family {values['family']}" if source == "family" else source
            line.figures[name] = (values.get(name), shown)
        lines.append(line)
    return FiguresReport(str(path), "stock list", lines, [str(p) for p in result.problems])
