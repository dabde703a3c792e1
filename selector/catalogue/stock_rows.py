"""Validating one stock-list row into the values of a ``parts`` row, with its price breaks.

The family text must name one catalogue family, the value and ratings are read by
:func:`selector.units.parse_value` in the unit of the family's kind, prices and stock must be
non-negative numbers. Ratings the file does not give come from the *template*: the built-in part
of the same family nearest in value (same package / voltage / power when given). Every failure
is a :class:`BadRowError` naming the file's row and column.
"""

from __future__ import annotations

import hashlib
import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import Any, Final

from sqlalchemy import select
from sqlalchemy.orm import Session

from ..audit.fill import x_subclass
from ..audit.ratings import Ratings
from ..errors import BadRowError, BadValueError, CatalogueError
from ..ranges import check_count, check_range
from ..units import decimal_points, parse_tolerance, parse_value
from .build import resistor_working_voltage
from .models import VALUE_UNITS, Part
from .row_ranges import escape_controls, has_controls, out_of_range_columns
from .stock_described import (
    DESCRIBED_COLUMNS,
    PROVENANCE_FIELDS,
    described_value,
    fits_description,
    matching_package,
    read_description,
)
from .stock_families import AmbiguousFamilyError, FamilyInfo, recognise_family
from .stock_prices import (
    CATALOGUE_CURRENCY,
    count,
    number,
    parse_breaks,
    price_at,
    row_currency,
    row_min_order,
    row_order_multiple,
)
from .stock_reading import cell_text, normalise_text

#: columns copied from the template part (never the identity, price or stock columns)
TEMPLATE_COLUMNS: Final[tuple[str, ...]] = (
    "tolerance",
    "mount",
    "package",
    "area_mm2",
    "rated_voltage_v",
    "rated_voltage_ac_v",
    "limiting_voltage_v",
    "power_w",
    "derate_start_c",
    "derate_end_c",
    "pulse_energy_j",
    "safety_class",
    "impulse_v",
    "impulse_test_v",
    "dvdt_v_per_s",
    "humidity_grade",
    "vrrm_v",
    "if_av_a",
    "ifsm_a",
    "vf_v",
    "rs_ohm",
    "zz_ohm",
    "tj_max_c",
    "ripple_a",
    "temp_max_c",
    "rated_life_h",
    "i2t_a2s",
    "fusible",
    "dielectric",
    "pitch_mm",
    "body_mm",
)
#: what the file's "voltage" column means per kind (the column it sets)
VOLTAGE_COLUMN: Final[dict[str, str]] = {
    "x_capacitor": "rated_voltage_ac_v",
    "film_capacitor": "rated_voltage_v",
    "electrolytic": "rated_voltage_v",
    "resistor": "limiting_voltage_v",
    "diode": "vrrm_v",
    "bridge": "vrrm_v",
    "fuse": "rated_voltage_ac_v",
}
#: the columns an import compares to decide "unchanged"


@dataclass
class StockRow:
    """One validated row, ready to write: the part's column values and its price breaks."""

    row: int
    values: dict[str, Any]
    breaks: list[tuple[int, float]]
    #: parts column -> where its figure came from: column, description, family (default), none
    sources: dict[str, str] = field(default_factory=dict)


def stock_code(supplier: str, supplier_code: str) -> str:
    """The stable catalogue ``code`` of an imported part: supplier + the supplier's code.

    At most 80 characters (the column's width); longer keys keep a hash so they stay unique.

    >>> stock_code("bench drawer", "C-330n/X2")
    'S:bench-drawer:C-330n/X2'
    """
    supplier_key = re.sub(r"\s+", "-", supplier.strip())
    code = f"S:{supplier_key}:{supplier_code.strip()}"
    if len(code) <= 80:
        return code
    digest = hashlib.sha1(code.encode("utf-8")).hexdigest()[:12]
    return f"{code[:67]}~{digest}"


@dataclass
class Lookup:
    """Per-import caches: the families, each family's built-in parts, recognised texts and
    templates (a few thousand rows need few database queries)."""

    session: Session
    families: Sequence[FamilyInfo]
    parts: dict[str, list[Mapping[str, Any]]] = field(default_factory=dict)
    recognised: dict[str, FamilyInfo | BadValueError] = field(default_factory=dict)
    templates: dict[tuple[Any, ...], dict[str, Any]] = field(default_factory=dict)
    grouped: dict[str, dict[str, list[Mapping[str, Any]]]] = field(default_factory=dict)

    def family(self, text: str) -> FamilyInfo:
        """The family ``text`` names (each distinct text recognised once)."""
        got = self.recognised.get(text)
        if got is None:
            try:
                got = recognise_family(text, self.families)
            except BadValueError as exc:
                got = exc
            self.recognised[text] = got
        if isinstance(got, BadValueError):
            raise got
        return got

    def family_parts(self, family: FamilyInfo) -> list[Mapping[str, Any]]:
        """The family's built-in rows (one query per family)."""
        if family.name not in self.parts:
            table = Part.__table__
            stmt = select(table).where(table.c.source == "builtin", table.c.family == family.name)
            self.parts[family.name] = list(self.session.execute(stmt).mappings().all())
        return self.parts[family.name]

    def by_package(self, family: FamilyInfo) -> dict[str, list[Mapping[str, Any]]]:
        """The family's built-in rows by normalised package name."""
        key = f"{family.name}\0package"
        if key not in self.grouped:
            groups: dict[str, list[Mapping[str, Any]]] = {}
            for part in self.family_parts(family):
                if part["package"]:
                    groups.setdefault(normalise_text(part["package"]), []).append(part)
            self.grouped[key] = groups
        return self.grouped[key]


def template(
    lookup: Lookup,
    family: FamilyInfo,
    value: float,
    package: str | None,
    voltage: float | None,
    power: float | None = None,
) -> dict[str, Any]:
    """Ratings of the built-in part of ``family`` most like the row: same package if any, then
    same power rating if any, then a voltage rating >= the row's, then nearest in value (log)
    and in voltage."""
    key = (family.name, round(math.log10(value), 3), package, voltage, power)
    if key in lookup.templates:
        return lookup.templates[key]
    parts = lookup.family_parts(family)
    if not parts:
        raise CatalogueError(f"the catalogue has no built-in parts of family {family.name!r}")
    pool = parts
    if package:
        pool = lookup.by_package(family).get(normalise_text(package)) or pool
    if power is not None:
        same_power = [
            part
            for part in pool
            if part["power_w"] and math.isclose(part["power_w"], power, rel_tol=1e-6)
        ]
        pool = same_power or pool
    voltage_column = VOLTAGE_COLUMN.get(family.kind)
    if voltage is not None and voltage_column:
        rated_enough = [
            part
            for part in pool
            if part[voltage_column] is not None and part[voltage_column] >= voltage
        ]
        pool = rated_enough or pool

    def distance(part: Mapping[str, Any]) -> tuple[float, float]:
        part_value = part["value"] if part["value"] and part["value"] > 0 else value
        value_distance = abs(math.log(part_value / value))
        part_voltage = part[voltage_column] if voltage_column and voltage is not None else None
        return (value_distance, abs(part_voltage - voltage) if part_voltage is not None else 0.0)

    best = min(pool, key=distance)
    lookup.templates[key] = {column: best[column] for column in TEMPLATE_COLUMNS}
    return lookup.templates[key]


@dataclass(frozen=True)
class _RowCells:
    """One row's cells with the file's header names, for reading fields and naming failures."""

    file: str
    number: int
    cells: Sequence[Any]
    columns: Mapping[str, int]
    headers: Sequence[str]
    #: the file's decimal sign for prices (selector.units.decimal_sign_of)
    decimal_sign: str | None = "."

    def cell(self, field_name: str) -> Any:
        index = self.columns.get(field_name)
        return self.cells[index] if index is not None and index < len(self.cells) else ""

    def text(self, field_name: str) -> str:
        return cell_text(self.cell(field_name))

    def fail(self, field_name: str | None, problem: str) -> BadRowError:
        index = self.columns.get(field_name) if field_name else None
        column = self.headers[index] if index is not None else None
        return BadRowError(self.file, self.number, column, problem)


def _row_family(row: _RowCells, lookup: Lookup) -> FamilyInfo:
    """The family the row's family text (else its description) names.

    A description that fits several families of one kind and one safety class (``Zener diode
    12V 1W DO-41`` fits the 1 W and the 5 W Zener families by its words) is read by the BOM
    reader; the one family with a built-in part of the stated power and package wins. Ties
    across kinds or classes are never broken."""
    family_text = row.text("family") if "family" in row.columns else ""
    family_field = "family"
    if not family_text:
        family_text, family_field = row.text("description"), "description"
        try:  # '0,5W' names the family as '0.5W' does (ISO 80000-1 decimal comma)
            family_text = decimal_points(family_text)
        except BadValueError:
            pass  # an ambiguous number: the description reader refuses it below
    if not family_text:
        raise row.fail("family" if "family" in row.columns else None, "no family (nor description)")
    try:
        return lookup.family(family_text)
    except AmbiguousFamilyError as exc:
        tied = exc.candidates
        same = {(family.kind, family.safety_class or "") for family in tied}
        if family_field == "description" and len(same) == 1:
            try:
                said = read_description(family_text, tied[0].kind, row.text("value"))
            except BadValueError:
                said = None
            if said is not None:
                fitting = [f for f in tied if fits_description(said, lookup.family_parts(f))]
                if len(fitting) == 1:
                    return fitting[0]
        raise row.fail(family_field, str(exc)) from None
    except BadValueError as exc:
        raise row.fail(family_field, str(exc)) from None


def _row_description(row: _RowCells, family: FamilyInfo) -> Ratings | None:
    """The row's description read by the BOM reader as the family's kind (None without one);
    a description that contradicts the family's safety class is refused."""
    if "description" not in row.columns or not row.text("description"):
        return None
    try:
        said = read_description(row.text("description"), family.kind, row.text("value"))
    except BadValueError as exc:
        message = str(exc)
        if row.text("value") and message.startswith("value: "):
            return Ratings(kind=family.kind)  # the value column decides; the text is not read
        raise row.fail("description", message) from None
    if said is not None and family.kind == "x_capacitor" and said.safety_class:
        named = x_subclass(said.safety_class)
        if named and named != (family.safety_class or "").upper():
            raise row.fail(
                "description",
                f"class {named} in the description contradicts family {family.name} "
                f"({family.safety_class})",
            )
    return said


def _row_rating(row: _RowCells, field_name: str, unit: str) -> float | None:
    """The row's voltage or power rating (> 0) in ``unit``, None when the cell is empty."""
    if not row.text(field_name):
        return None
    try:
        rating = parse_value(row.cell(field_name), unit)
    except BadValueError as exc:
        raise row.fail(field_name, str(exc)) from None
    if rating <= 0:
        raise row.fail(field_name, f"the {field_name} rating must be > 0")
    return rating


def _row_stock(row: _RowCells) -> int | None:
    """The stock count (a whole number >= 0), None when not given."""
    if not row.text("stock"):
        return None
    try:
        return count(row.cell("stock"), "a stock count")
    except BadValueError as exc:
        raise row.fail("stock", str(exc)) from None


def _row_price_breaks(
    row: _RowCells, break_columns: Sequence[tuple[int, int, str]]
) -> list[tuple[int, float]]:
    """(min qty, unit price) from the price-break columns, the price-break text and the unit
    price (as the 1-piece break unless one is given), merged and sorted."""
    breaks: list[tuple[int, float]] = []
    for index, min_qty, header in break_columns:
        cell = row.cells[index] if index < len(row.cells) else ""
        if cell_text(cell):
            try:
                breaks.append((min_qty, number(cell, "a price", row.decimal_sign)))
            except BadValueError as exc:
                raise BadRowError(row.file, row.number, header, str(exc)) from None
    if row.text("price_breaks"):
        try:
            breaks.extend(parse_breaks(row.cell("price_breaks"), row.decimal_sign))
        except BadValueError as exc:
            raise row.fail("price_breaks", str(exc)) from None
    if row.text("unit_price"):
        try:
            single = number(row.cell("unit_price"), "a price", row.decimal_sign)
        except BadValueError as exc:
            raise row.fail("unit_price", str(exc)) from None
        if not any(min_qty == 1 for min_qty, _ in breaks):
            breaks.append((1, single))
    merged: dict[int, float] = {}
    for min_qty, price in breaks:
        if min_qty < 1:
            raise row.fail(
                "price_breaks", f"a price break starts at 1 piece or more, got {min_qty}"
            )
        if min_qty in merged and merged[min_qty] != price:
            raise row.fail(
                "price_breaks", f"two prices for {min_qty} pieces: {merged[min_qty]} and {price}"
            )
        merged[min_qty] = price
    breaks = sorted(merged.items())
    if not breaks:
        raise row.fail("unit_price", "no price (give a unit price or price-break columns)")
    return breaks


def validate_row(
    file: str,
    number: int,
    cells: Sequence[Any],
    columns: Mapping[str, int],
    break_columns: Sequence[tuple[int, int, str]],
    lookup: Lookup,
    supplier: str,
    qty: int,
    currency: str,
    headers: Sequence[str],
    rates: Mapping[str, float] | None = None,
    decimal_sign: str | None = ".",
) -> StockRow:
    """One row of the file (``number`` is the file's own) as a :class:`StockRow`.

    ``columns`` maps a field to its column index, ``break_columns`` lists (index, min qty,
    header) of the price-break columns; ``qty`` is the order quantity whose price becomes the
    unit price; ``decimal_sign`` is the file's for its prices (None: refuse ambiguous cells).
    Raises :class:`BadRowError` on the first problem.
    """
    row = _RowCells(file, number, cells, columns, headers, decimal_sign)
    rates = {code.upper(): rate for code, rate in (rates or {}).items()}
    code_text = row.text("supplier_code")
    if not code_text:
        raise row.fail("supplier_code", "no supplier part code")
    for field_name in ("supplier_code", "package", "safety_class"):
        if has_controls(row.text(field_name)):
            raise row.fail(
                field_name,
                f"control characters in {escape_controls(row.text(field_name))!r}; "
                "a code or name holds printable text only",
            )
    family = _row_family(row, lookup)
    unit = VALUE_UNITS[family.kind]
    said = _row_description(row, family)
    told = described_value(said, family.kind) if said is not None else None
    sources: dict[str, str] = {}
    if row.text("value") or told is None:
        try:
            value = parse_value(row.cell("value") if row.text("value") else "", unit)
        except BadValueError as exc:
            field_name = "value" if "value" in columns or "description" not in columns else None
            problem = str(exc) if field_name else f"no value in the description ({exc})"
            raise row.fail(field_name or "description", problem) from None
        sources["value"] = "column"
    else:
        value, sources["value"] = told, "description"
    if not value > 0:
        raise row.fail("value", f"the value must be > 0, got {row.text('value')!r}")
    package = row.text("package") or None
    if package:
        sources["package"] = "column"
    else:
        package = matching_package(said, lookup.family_parts(family))
        if package:
            sources["package"] = "description"
    voltage_column = VOLTAGE_COLUMN.get(family.kind)
    voltage = _row_rating(row, "voltage", "V")
    if voltage is not None and voltage_column:
        sources[voltage_column] = "column"
    power = _row_rating(row, "power", "W")
    if power is not None:
        sources["power_w"] = "column"
    described = _described_columns(said, family.kind)
    if voltage is None and voltage_column and voltage_column in described:
        voltage = described[voltage_column]
    if power is None and "power_w" in described:
        power = described["power_w"]
    values: dict[str, Any] = dict(template(lookup, family, value, package, voltage, power))
    for column, figure in described.items():
        if column not in sources:
            values[column], sources[column] = figure, "description"
    values.update(
        code=stock_code(supplier, code_text),
        kind=family.kind,
        family=family.name,
        value=value,
        supplier=supplier,
        supplier_code=code_text,
        source=f"import:{supplier}",
        withdrawn=False,
    )
    description = row.text("description") if "description" in columns else ""
    values["description"] = description or f"{family.title} (imported from {supplier})"
    if package:
        values["package"] = package
    if voltage is not None:
        voltage_column = VOLTAGE_COLUMN.get(family.kind)
        if voltage_column is None:
            raise row.fail("voltage", f"a voltage rating means nothing for a {family.kind}")
        values[voltage_column] = voltage
    if row.text("tolerance"):
        try:
            values["tolerance"] = parse_tolerance(row.cell("tolerance"))
        except BadValueError as exc:
            raise row.fail("tolerance", str(exc)) from None
        sources["tolerance"] = "column"
    if power is not None:
        values["power_w"] = power
    if row.text("safety_class"):
        safety_class = row.text("safety_class").upper()
        if family.kind == "x_capacitor" and safety_class != (family.safety_class or "").upper():
            raise row.fail(
                "safety_class",
                f"class {safety_class} contradicts family {family.name} ({family.safety_class})",
            )
    if row.text("temp_max"):
        try:
            values["temp_max_c"] = number(
                re.sub(r"(?i)\s*°?\s*c$", "", row.text("temp_max")), "a temperature"
            )
        except BadValueError as exc:
            raise row.fail("temp_max", str(exc)) from None
        sources["temp_max_c"] = "column"
    if row.text("ripple"):
        try:
            values["ripple_a"] = parse_value(row.cell("ripple"), "A")
        except BadValueError as exc:
            raise row.fail("ripple", str(exc)) from None
        sources["ripple_a"] = "column"
    values["stock"] = _row_stock(row)
    values["min_order_qty"] = row_min_order(row)
    values["order_multiple"] = row_order_multiple(row)
    breaks = _row_price_breaks(row, break_columns)
    priced_in, rate = row_currency(row, break_columns, currency, rates)
    if rate != 1.0:
        breaks = [(min_qty, float(f"{price * rate:.12g}")) for min_qty, price in breaks]
    values["unit_price"] = price_at(breaks, qty)
    converted = (
        f" (converted from {priced_in} at {rate:g} {CATALOGUE_CURRENCY}/{priced_in})"
        if priced_in != CATALOGUE_CURRENCY
        else ""
    )
    values["price_note"] = (
        f"{supplier} stock list, {CATALOGUE_CURRENCY} per piece at {qty} pcs{converted}"
    )[:120]
    for column, problem in out_of_range_columns(values):
        raise row.fail(_FIELD_OF_COLUMN.get(column), problem)
    for min_qty, price in breaks:
        try:
            check_count(min_qty, "a price break quantity")
            check_range(price, "price", "a price")
        except BadValueError as exc:
            raise row.fail("price_breaks", str(exc)) from None
    for column in PROVENANCE_FIELDS.get(family.kind, ()):
        if column not in sources:
            sources[column] = "family" if values.get(column) is not None else "none"
    return StockRow(number, values, breaks, sources)


def _described_columns(said: Ratings | None, kind: str) -> dict[str, Any]:
    """The parts columns the description sets for a part of ``kind`` (only the figures whose
    source is reported, so a temperature on a Zener line does not become a capacitor's class)."""
    if said is None:
        return {}
    wanted = PROVENANCE_FIELDS.get(kind, ())
    return {
        column: getattr(said, column)
        for column in DESCRIBED_COLUMNS
        if column in wanted and getattr(said, column, None) is not None
    }


#: the stock-list field a parts column comes from (for naming the file's column in errors)
_FIELD_OF_COLUMN: Final[dict[str, str]] = {
    "value": "value",
    "tolerance": "tolerance",
    "rated_voltage_v": "voltage",
    "rated_voltage_ac_v": "voltage",
    "power_w": "power",
    "stock": "stock",
    "temp_max_c": "temp_max",
    "ripple_a": "ripple",
    "unit_price": "unit_price",
    "min_order_qty": "min_order_qty",
    "order_multiple": "order_multiple",
}


def set_working_voltages(rows: Sequence[StockRow]) -> None:
    """Resistors: the working voltage depends on the resistance, min(sqrt(P R), LEV)
    (:func:`selector.catalogue.build.resistor_working_voltage`), so it is computed for the
    row's own value, not taken from the template (one vectorised call for all rows)."""
    import numpy as np

    resistors = [
        row.values
        for row in rows
        if row.values["kind"] == "resistor"
        and row.values.get("power_w")
        and row.values.get("limiting_voltage_v")
    ]
    if not resistors:
        return
    volts = np.atleast_1d(
        resistor_working_voltage(
            np.array([values["power_w"] for values in resistors]),
            np.array([values["value"] for values in resistors]),
            np.array([values["limiting_voltage_v"] for values in resistors]),
        )
    )
    for values, working_v in zip(resistors, volts, strict=True):
        values["rated_voltage_v"] = float(working_v)
