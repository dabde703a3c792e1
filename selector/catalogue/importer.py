"""Importing a stock list or a distributor export (CSV, TSV, XLSX) into the catalogue.

What happens, in order:

1. **Cells.** CSV and TSV through the standard ``csv`` module (delimiter sniffed among
   ``, ; TAB |``), XLSX through openpyxl (first sheet unless ``sheet=``). Row numbers in every
   message are the file's own (1 = first line / first spreadsheet row). The header is the first
   non-blank row.
2. **Columns.** Each header is lower-cased, stripped of punctuation and compared with the
   spellings in :data:`FIELD_SPELLINGS` by rapidfuzz (``max(ratio, token_sort_ratio)``); a
   score of at least :data:`MATCH_THRESHOLD` maps it. Headers such as ``Price 10``, ``10+`` or
   ``@100`` are quantity price breaks. ``column_map={"My header": "field"}`` overrides. The
   mapping (with scores) is part of the result, so the CLI can show it.
3. **Rows.** Each row is validated on its own: the family text must name one catalogue family
   (:func:`recognise_family`; refused with the nearest families otherwise), the value and
   ratings are read by :func:`selector.units.parse_value` in the unit of the family's kind,
   prices and stock must be non-negative numbers. A row's ratings not given in the file are
   taken from the built-in part of the same family nearest in value (same package / voltage
   when given): the *template*. Every failure is a :class:`RowProblem` (file, row, column,
   problem).
4. **Writing.** Nothing is written if any row failed, unless ``partial=True`` (then the good
   rows are). All rows go in ONE transaction: an error or a killed process leaves the
   catalogue as it was. Each part's key is stable: ``code`` is derived from the supplier and
   the supplier's part code, so importing the same list again updates rows in place; rows that
   did not change are not written at all. Writes are upserts (``INSERT .. ON CONFLICT``), so
   two imports running at once on PostgreSQL do not lose rows.

Imported parts carry ``source = "import:<supplier>"`` and take part in design like any other.
The library never prints; ``progress(done, total)`` is called as rows are validated and
written (total = 2 x rows).
"""

from __future__ import annotations

import csv
import hashlib
import io
import math
import re
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Final

from sqlalchemy import Engine, select
from sqlalchemy.orm import Session

from ..errors import BadRowError, BadValueError, CatalogueError
from ..units import parse_tolerance, parse_value
from .build import resistor_working_voltage
from .models import VALUE_UNITS, Part, PriceBreak, Supplier

__all__ = [
    "FIELDS",
    "FIELD_SPELLINGS",
    "MATCH_THRESHOLD",
    "ColumnMatch",
    "FamilyInfo",
    "ImportResult",
    "RowProblem",
    "StockRow",
    "import_stock",
    "map_columns",
    "read_cells",
    "recognise_family",
    "stock_code",
]

Progress = Callable[[int, int], None]

#: a header maps to a field when its score reaches this (0-100)
MATCH_THRESHOLD: Final[float] = 85.0
#: a family text is recognised when its best score reaches this (0-100)
FAMILY_THRESHOLD: Final[float] = 80.0
#: two families closer than this to the best score count as a tie
FAMILY_TIE: Final[float] = 4.0
#: within a tie, the best family's whole-text score must lead by this much
FAMILY_CLEAR: Final[float] = 8.0

#: field -> header spellings (compared after lower-casing and dropping punctuation)
FIELD_SPELLINGS: Final[dict[str, tuple[str, ...]]] = {
    "supplier_code": (
        "supplier code",
        "supplier part",
        "supplier part number",
        "order code",
        "order number",
        "ordering code",
        "stock code",
        "sku",
        "item",
        "item code",
        "item number",
        "article",
        "article number",
        "part number",
        "part no",
        "pn",
        "mpn",
        "catalogue number",
        "cat no",
    ),
    "family": ("family", "part family", "type", "part type", "category", "kind", "group"),
    "description": ("description", "desc", "details", "comment", "name", "title"),
    "value": (
        "value",
        "nominal value",
        "capacitance",
        "resistance",
        "zener voltage",
        "vz",
        "rated current",
        "current rating",
    ),
    "tolerance": ("tolerance", "tol"),
    "voltage": (
        "voltage",
        "rated voltage",
        "voltage rating",
        "max voltage",
        "working voltage",
        "vrrm",
        "ac voltage",
    ),
    "power": ("power", "power rating", "rated power", "wattage", "pd"),
    "package": ("package", "case", "size", "footprint", "case size", "package case"),
    "stock": ("stock", "qty in stock", "quantity in stock", "on hand", "available", "in stock"),
    "unit_price": ("unit price", "price", "price each", "cost", "unit cost", "each"),
    "price_breaks": ("price breaks", "breaks", "quantity prices", "price table"),
    "currency": ("currency", "curr"),
    "safety_class": ("safety class", "class", "subclass", "x class"),
    "temp_max": ("max temperature", "temperature", "temp", "operating temperature max"),
    "ripple": ("ripple current", "ripple"),
}
FIELDS: Final[tuple[str, ...]] = tuple(FIELD_SPELLINGS)
_REQUIRED: Final[tuple[str, ...]] = ("supplier_code", "value")

# price-break headers: "price 10", "price @ 10", "price 10+", "10+", "@100", "qty 100 price"
_BREAK_RES = (
    re.compile(r"^(?:unit\s*)?(?:price|cost)\s*(?:@|at|for|x|qty)?\s*(\d+)\s*\+?\s*(?:pcs)?$"),
    re.compile(r"^@?\s*(\d+)\s*\+\s*(?:pcs)?$"),
    re.compile(r"^@\s*(\d+)$"),
    re.compile(r"^(?:qty|quantity)\s*(\d+)\s*\+?\s*(?:price)?$"),
)

#: columns copied from the template part (never the identity, price or stock columns)
_RATING_COLUMNS: Final[tuple[str, ...]] = (
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
    "i2t_a2s",
    "fusible",
    "dielectric",
    "pitch_mm",
    "body_mm",
)
#: what the file's "voltage" column means per kind (the column it sets)
_VOLTAGE_COLUMN: Final[dict[str, str]] = {
    "x_capacitor": "rated_voltage_ac_v",
    "film_capacitor": "rated_voltage_v",
    "electrolytic": "rated_voltage_v",
    "resistor": "limiting_voltage_v",
    "diode": "vrrm_v",
    "bridge": "vrrm_v",
    "fuse": "rated_voltage_ac_v",
}
#: the columns an import compares to decide "unchanged"
_COMPARED: Final[tuple[str, ...]] = (
    "kind",
    "family",
    "description",
    "value",
    "unit_price",
    "price_note",
    "stock",
    *_RATING_COLUMNS,
)


# --------------------------------------------------------------------------- results


@dataclass(frozen=True)
class RowProblem:
    """One refused row: the file, its row number (the file's own), the column and why."""

    file: str
    row: int | None
    column: str | None
    problem: str

    def __str__(self) -> str:
        return str(BadRowError(self.file, self.row, self.column, self.problem))


@dataclass(frozen=True)
class ColumnMatch:
    """How one header of the file was mapped: ``field`` (None: ignored), ``score`` 0-100,
    ``how`` = ``"fuzzy"``, ``"given"`` (column_map) or ``"price break"``; ``min_qty`` for a
    price-break column."""

    header: str
    field: str | None
    score: float
    how: str
    min_qty: int | None = None


@dataclass
class StockRow:
    """One validated row, ready to write: the part's column values and its price breaks."""

    row: int
    values: dict[str, Any]
    breaks: list[tuple[int, float]]


@dataclass
class ImportResult:
    """What an import did (or, with ``dry_run``, would do)."""

    file: str
    supplier: str
    rows: int
    mapping: list[ColumnMatch]
    problems: list[RowProblem] = field(default_factory=list)
    inserted: int = 0
    updated: int = 0
    unchanged: int = 0
    written: bool = False
    dry_run: bool = False
    families: dict[str, int] = field(default_factory=dict)

    @property
    def accepted(self) -> int:
        return self.inserted + self.updated + self.unchanged

    def to_dict(self) -> dict[str, Any]:
        """The JSON document of ``dropper parts import --json``."""
        return {
            "file": self.file,
            "supplier": self.supplier,
            "source": f"import:{self.supplier}",
            "rows": self.rows,
            "accepted": self.accepted,
            "inserted": self.inserted,
            "updated": self.updated,
            "unchanged": self.unchanged,
            "refused": len(self.problems),
            "written": self.written,
            "dry_run": self.dry_run,
            "families": dict(sorted(self.families.items())),
            "mapping": [
                {
                    "header": m.header,
                    "field": m.field,
                    "score": round(m.score, 1),
                    "how": m.how,
                    "min_qty": m.min_qty,
                }
                for m in self.mapping
            ],
            "problems": [
                {"file": p.file, "row": p.row, "column": p.column, "problem": p.problem}
                for p in self.problems
            ],
        }


# --------------------------------------------------------------------------- reading


def read_cells(path: str | Path, sheet: str | None = None) -> list[tuple[int, list[Any]]]:
    """The non-blank rows of a CSV, TSV or XLSX file as ``(row number, cells)``.

    Row numbers are the file's own, counted from 1. XLSX cells keep their type (numbers stay
    numbers); CSV/TSV cells are text. Raises :class:`BadRowError` when the file cannot be read.
    """
    p = Path(path)
    if not p.is_file():
        raise BadValueError(f"{p}: no such file")
    suffix = p.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        return _read_xlsx(p, sheet)
    if suffix in (".xls", ".ods"):
        raise BadRowError(str(p), None, None, "save it as .xlsx, .csv or .tsv to import it")
    raw = p.read_bytes()
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise BadRowError(
            str(p), line, None, "not UTF-8 text; save it as UTF-8 (CSV UTF-8) to import it"
        ) from None
    if suffix == ".tsv" or suffix == ".tab":
        delimiter = "\t"
    else:
        sample = text[:8192]
        try:
            delimiter = csv.Sniffer().sniff(sample, delimiters=",;\t|").delimiter
        except csv.Error:
            delimiter = ","
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    rows: list[tuple[int, list[Any]]] = []
    try:
        for cells in reader:
            if any(c.strip() for c in cells):
                rows.append((reader.line_num, cells))
    except csv.Error as exc:
        raise BadRowError(str(p), reader.line_num, None, f"cannot read as CSV: {exc}") from None
    return rows


def _read_xlsx(p: Path, sheet: str | None) -> list[tuple[int, list[Any]]]:
    import openpyxl

    try:
        wb = openpyxl.load_workbook(p, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many kinds for a bad file
        raise BadRowError(str(p), None, None, f"cannot read as XLSX: {exc}") from None
    try:
        if sheet is not None:
            if sheet not in wb.sheetnames:
                raise BadRowError(
                    str(p), None, None, f"no sheet {sheet!r}; sheets: {', '.join(wb.sheetnames)}"
                )
            ws = wb[sheet]
        else:
            ws = wb.worksheets[0]
        rows = []
        for number, cells in enumerate(ws.iter_rows(values_only=True), start=1):
            values = ["" if c is None else c for c in cells]
            if any(str(c).strip() for c in values):
                rows.append((number, values))
        return rows
    finally:
        wb.close()


# --------------------------------------------------------------------------- columns


def _norm(text: str) -> str:
    text = str(text).lower().replace("_", " ")
    text = re.sub(r"[^\w@+ ]+", " ", text)
    return re.sub(r"\s+", " ", text).strip()


def _break_qty(header: str) -> int | None:
    h = _norm(header)
    for rx in _BREAK_RES:
        m = rx.match(h)
        if m:
            return int(m.group(1))
    return None


def map_columns(
    headers: Sequence[str], column_map: Mapping[str, str] | None = None
) -> list[ColumnMatch]:
    """Map each header to a field (see module doc). ``column_map`` maps a header (matched
    exactly, or case-insensitively) to a field name, or to ``"ignore"``.

    Each field takes its best-scoring header; a header that does not reach
    :data:`MATCH_THRESHOLD` is ignored. Raises :class:`BadValueError` for an unknown field or
    header in ``column_map``, naming the valid ones.
    """
    from rapidfuzz import fuzz

    given: dict[int, str | None] = {}
    for header, fld in (column_map or {}).items():
        idx = next((i for i, h in enumerate(headers) if str(h) == header), None)
        if idx is None:
            idx = next(
                (i for i, h in enumerate(headers) if _norm(h) == _norm(header)),
                None,
            )
        if idx is None:
            raise BadValueError(
                f"--map: no column {header!r} in the file; columns: "
                + ", ".join(repr(str(h)) for h in headers)
            )
        if fld not in FIELDS and fld != "ignore":
            raise BadValueError(
                f"--map: unknown field {fld!r}; fields: {', '.join(FIELDS)}, ignore"
            )
        given[idx] = None if fld == "ignore" else fld

    result: list[ColumnMatch | None] = [None] * len(headers)
    taken: set[str] = set()
    for idx, fld in given.items():
        result[idx] = ColumnMatch(str(headers[idx]), fld, 100.0, "given")
        if fld:
            taken.add(fld)
    candidates: list[tuple[float, int, str]] = []
    for i, header in enumerate(headers):
        if i in given:
            continue
        qty = _break_qty(str(header))
        if qty is not None:
            result[i] = ColumnMatch(str(header), "price_breaks", 100.0, "price break", qty)
            continue
        h = _norm(header)
        if not h:
            continue
        for fld, spellings in FIELD_SPELLINGS.items():
            score = max(max(fuzz.ratio(h, s), fuzz.token_sort_ratio(h, s)) for s in spellings)
            if score >= MATCH_THRESHOLD:
                candidates.append((score, i, fld))
    # best pairs first; each field and each header used once
    for score, i, fld in sorted(candidates, key=lambda c: (-c[0], c[1])):
        if result[i] is not None or fld in taken:
            continue
        result[i] = ColumnMatch(str(headers[i]), fld, float(score), "fuzzy")
        taken.add(fld)
    return [
        m if m is not None else ColumnMatch(str(headers[i]), None, 0.0, "ignored")
        for i, m in enumerate(result)
    ]


# --------------------------------------------------------------------------- families


@dataclass(frozen=True)
class FamilyInfo:
    """A catalogue family an imported row can belong to."""

    name: str
    kind: str
    title: str
    safety_class: str | None


def _family_titles() -> dict[str, str]:
    """Family name -> title, from the open catalogue's family files."""
    from .build import load_families

    return {f.name: str(f.data.get("title", f.name)) for f in load_families()}


def catalogue_families(session: Session) -> list[FamilyInfo]:
    """The built-in families present in the catalogue (name, kind, title, safety class)."""
    rows = session.execute(
        select(Part.family, Part.kind, Part.safety_class).where(Part.source == "builtin").distinct()
    ).all()
    titles = _family_titles()
    seen: dict[str, FamilyInfo] = {}
    for name, kind, sclass in rows:
        if name not in seen:
            seen[name] = FamilyInfo(name, kind, titles.get(name, name), sclass)
    return sorted(seen.values(), key=lambda f: f.name)


def _fnorm(text: str) -> str:
    """Family text for matching: lower-case words and numbers apart (``105C`` -> ``105 c``,
    ``0w5`` -> ``0.5 w``, ``5x20`` -> ``5 x 20``); safety classes stay whole (``x2``)."""
    t = re.sub(r"(\d)w(\d)", r"\1.\2w", str(text).lower().replace("°", ""))
    return " ".join(re.findall(r"\b[xy][1-4]\b|\d+(?:\.\d+)?|[a-z]+", t))


def _family_texts(f: FamilyInfo) -> list[str]:
    return [_fnorm(f.name), _fnorm(f.title), _fnorm(f"{f.kind} {f.name}")]


def recognise_family(text: str, families: Sequence[FamilyInfo]) -> FamilyInfo:
    """The family a stock row's family text names.

    Each family is scored by rapidfuzz ``token_set_ratio`` against its name, its title and
    ``kind name`` (all lower-cased, punctuation dropped, digits apart from letters). The best
    must reach :data:`FAMILY_THRESHOLD`. Families within :data:`FAMILY_TIE` of it are a tie:
    a tie with another kind or safety class is refused (a general-purpose capacitor must never
    be taken for an X capacitor by a guess); a tie within one kind is broken by
    ``token_sort_ratio`` (the closer whole text) only when it leads by :data:`FAMILY_CLEAR`.
    Raises :class:`BadValueError` naming the nearest families.
    """
    from rapidfuzz import fuzz

    t = _fnorm(text)
    if not t:
        raise BadValueError("no family given; name one of the catalogue's families")
    exact = [f for f in families if text.strip().lower() == f.name.lower() or t == _fnorm(f.name)]
    if exact:
        return exact[0]
    scored = []
    for f in families:
        texts = _family_texts(f)
        primary = max(fuzz.token_set_ratio(t, s) for s in texts)
        secondary = max(fuzz.token_sort_ratio(t, s) for s in texts)
        scored.append((primary, secondary, f))
    scored.sort(key=lambda s: (-s[0], -s[1], s[2].name))
    nearest = ", ".join(f"{f.name} ({f.title})" for _, _, f in scored[:3])
    if not scored or scored[0][0] < FAMILY_THRESHOLD:
        raise BadValueError(f"family {text!r} not recognised; nearest: {nearest}")
    top_p, top_s, best = scored[0]
    close = [(p, s, f) for p, s, f in scored[1:] if p >= top_p - FAMILY_TIE]
    # another kind or safety class close by: never guess; same kind: only a clear winner
    rivals = [
        f
        for p, s, f in close
        if f.kind != best.kind
        or (f.safety_class or "") != (best.safety_class or "")
        or s > top_s - FAMILY_CLEAR
    ]
    if rivals:
        names = ", ".join(f.name for f in [best, *rivals[:3]])
        raise BadValueError(f"family {text!r} is ambiguous: it fits {names}; write the family name")
    return best


# --------------------------------------------------------------------------- rows


def stock_code(supplier: str, supplier_code: str) -> str:
    """The stable catalogue ``code`` of an imported part: supplier + the supplier's code.

    At most 80 characters (the column's width); longer keys keep a hash so they stay unique.

    >>> stock_code("bench drawer", "C-330n/X2")
    'S:bench-drawer:C-330n/X2'
    """
    sup = re.sub(r"\s+", "-", supplier.strip())
    code = f"S:{sup}:{supplier_code.strip()}"
    if len(code) <= 80:
        return code
    digest = hashlib.sha1(code.encode("utf-8")).hexdigest()[:12]
    return f"{code[:67]}~{digest}"


def _text(cell: Any) -> str:
    if cell is None:
        return ""
    if isinstance(cell, float) and cell.is_integer():
        return str(int(cell))
    return str(cell).strip()


def _number(cell: Any, what: str) -> float:
    if isinstance(cell, (int, float)) and not isinstance(cell, bool):
        value = float(cell)
    else:
        s = _text(cell).replace("€", "").replace("$", "").replace("£", "").strip()
        if s.count(",") == 1 and "." not in s:
            s = s.replace(",", ".")  # decimal comma
        try:
            value = float(s)
        except ValueError:
            raise BadValueError(f"cannot read {_text(cell)!r} as {what}") from None
    if not math.isfinite(value) or value < 0:
        raise BadValueError(f"{what} must be a number >= 0, got {_text(cell)!r}")
    return value


def _parse_breaks(cell: Any) -> list[tuple[int, float]]:
    """``"1:0.12; 10:0.10; 100:0.08"`` (also ``1=0.12``, ``1+ 0.12``) -> [(1, 0.12), ...]."""
    out = []
    for chunk in re.split(r"[;|]", _text(cell)):
        chunk = chunk.strip()
        if not chunk:
            continue
        m = re.match(r"^(\d+)\s*\+?\s*[:=@ ]\s*(.+)$", chunk)
        if not m:
            raise BadValueError(
                f"cannot read price break {chunk!r}; write them like '1:0.12; 10:0.10'"
            )
        out.append((int(m.group(1)), _number(m.group(2), "a price")))
    return out


def _price_at(breaks: Sequence[tuple[int, float]], qty: int) -> float:
    """Unit price when buying ``qty`` pieces: the break with the largest min_qty <= qty (or
    the smallest break when qty is below all)."""
    ordered = sorted(breaks)
    applicable = [p for q, p in ordered if q <= qty]
    return applicable[-1] if applicable else ordered[0][1]


@dataclass
class _Lookup:
    """Per-import caches: the families, each family's built-in parts, recognised texts and
    templates (a few thousand rows need few database queries)."""

    session: Session
    families: Sequence[FamilyInfo]
    parts: dict[str, list[Mapping[str, Any]]] = field(default_factory=dict)
    recognised: dict[str, FamilyInfo | BadValueError] = field(default_factory=dict)
    templates: dict[tuple[Any, ...], dict[str, Any]] = field(default_factory=dict)
    grouped: dict[str, dict[str, list[Mapping[str, Any]]]] = field(default_factory=dict)

    def family(self, text: str) -> FamilyInfo:
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
        if family.name not in self.parts:
            t = Part.__table__
            stmt = select(t).where(t.c.source == "builtin", t.c.family == family.name)
            self.parts[family.name] = list(self.session.execute(stmt).mappings().all())
        return self.parts[family.name]

    def by_package(self, family: FamilyInfo) -> dict[str, list[Mapping[str, Any]]]:
        key = f"{family.name}\0package"
        if key not in self.grouped:
            groups: dict[str, list[Mapping[str, Any]]] = {}
            for p in self.family_parts(family):
                if p["package"]:
                    groups.setdefault(_norm(p["package"]), []).append(p)
            self.grouped[key] = groups
        return self.grouped[key]


def _template(
    lookup: _Lookup,
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
        pool = lookup.by_package(family).get(_norm(package)) or pool
    if power is not None:
        same_p = [
            p for p in pool if p["power_w"] and math.isclose(p["power_w"], power, rel_tol=1e-6)
        ]
        pool = same_p or pool
    col = _VOLTAGE_COLUMN.get(family.kind)
    if voltage is not None and col:
        ok = [p for p in pool if p[col] is not None and p[col] >= voltage]
        pool = ok or pool

    def distance(p: Mapping[str, Any]) -> tuple[float, float]:
        v = p["value"] if p["value"] and p["value"] > 0 else value
        vd = abs(math.log(v / value))
        pv = p[col] if col and voltage is not None else None
        return (vd, abs(pv - voltage) if pv is not None else 0.0)

    best = min(pool, key=distance)
    lookup.templates[key] = {c: best[c] for c in _RATING_COLUMNS}
    return lookup.templates[key]


def _validate_row(
    file: str,
    number: int,
    cells: Sequence[Any],
    columns: Mapping[str, int],
    break_columns: Sequence[tuple[int, int, str]],
    lookup: _Lookup,
    supplier: str,
    qty: int,
    currency: str,
    headers: Sequence[str],
) -> StockRow:
    def cell(fld: str) -> Any:
        idx = columns.get(fld)
        return cells[idx] if idx is not None and idx < len(cells) else ""

    def header(fld: str) -> str | None:
        return _header_of.get(fld)

    _header_of = {fld: headers[idx] for fld, idx in columns.items()}

    def fail(fld: str | None, problem: str) -> BadRowError:
        return BadRowError(file, number, header(fld) if fld else None, problem)

    code_text = _text(cell("supplier_code"))
    if not code_text:
        raise fail("supplier_code", "no supplier part code")
    fam_text = _text(cell("family")) if "family" in columns else ""
    fam_field = "family"
    if not fam_text:
        fam_text, fam_field = _text(cell("description")), "description"
    if not fam_text:
        raise fail("family" if "family" in columns else None, "no family (nor description)")
    try:
        family = lookup.family(fam_text)
    except BadValueError as exc:
        raise fail(fam_field, str(exc)) from None
    unit = VALUE_UNITS[family.kind]
    try:
        value = parse_value(cell("value") if _text(cell("value")) else "", unit)
    except BadValueError as exc:
        raise fail("value", str(exc)) from None
    if not value > 0:
        raise fail("value", f"the value must be > 0, got {_text(cell('value'))!r}")
    package = _text(cell("package")) or None
    voltage = None
    if _text(cell("voltage")):
        try:
            voltage = parse_value(cell("voltage"), "V")
        except BadValueError as exc:
            raise fail("voltage", str(exc)) from None
        if voltage <= 0:
            raise fail("voltage", "the voltage rating must be > 0")
    power = None
    if _text(cell("power")):
        try:
            power = parse_value(cell("power"), "W")
        except BadValueError as exc:
            raise fail("power", str(exc)) from None
        if power <= 0:
            raise fail("power", "the power rating must be > 0")
    values: dict[str, Any] = dict(_template(lookup, family, value, package, voltage, power))
    values.update(
        code=stock_code(supplier, code_text),
        kind=family.kind,
        family=family.name,
        value=value,
        supplier=supplier,
        supplier_code=code_text,
        source=f"import:{supplier}",
    )
    desc = _text(cell("description")) if "description" in columns else ""
    values["description"] = desc or f"{family.title} (imported from {supplier})"
    if package:
        values["package"] = package
    if voltage is not None:
        col = _VOLTAGE_COLUMN.get(family.kind)
        if col is None:
            raise fail("voltage", f"a voltage rating means nothing for a {family.kind}")
        values[col] = voltage
    if _text(cell("tolerance")):
        try:
            values["tolerance"] = parse_tolerance(cell("tolerance"))
        except BadValueError as exc:
            raise fail("tolerance", str(exc)) from None
    if power is not None:
        values["power_w"] = power
    if _text(cell("safety_class")):
        sc = _text(cell("safety_class")).upper()
        if family.kind == "x_capacitor" and sc != (family.safety_class or "").upper():
            raise fail(
                "safety_class",
                f"class {sc} contradicts family {family.name} ({family.safety_class})",
            )
    if _text(cell("temp_max")):
        try:
            values["temp_max_c"] = _number(
                re.sub(r"(?i)\s*°?\s*c$", "", _text(cell("temp_max"))), "a temperature"
            )
        except BadValueError as exc:
            raise fail("temp_max", str(exc)) from None
    if _text(cell("ripple")):
        try:
            values["ripple_a"] = parse_value(cell("ripple"), "A")
        except BadValueError as exc:
            raise fail("ripple", str(exc)) from None
    if _text(cell("stock")):
        try:
            stock = _number(cell("stock"), "a stock count")
        except BadValueError as exc:
            raise fail("stock", str(exc)) from None
        if not float(stock).is_integer():
            raise fail("stock", f"a stock count is a whole number, got {_text(cell('stock'))!r}")
        values["stock"] = int(stock)
    else:
        values["stock"] = None
    breaks: list[tuple[int, float]] = []
    for idx, min_qty, head in break_columns:
        c = cells[idx] if idx < len(cells) else ""
        if _text(c):
            try:
                breaks.append((min_qty, _number(c, "a price")))
            except BadValueError as exc:
                raise BadRowError(file, number, head, str(exc)) from None
    if _text(cell("price_breaks")):
        try:
            breaks.extend(_parse_breaks(cell("price_breaks")))
        except BadValueError as exc:
            raise fail("price_breaks", str(exc)) from None
    if _text(cell("unit_price")):
        try:
            single = _number(cell("unit_price"), "a price")
        except BadValueError as exc:
            raise fail("unit_price", str(exc)) from None
        if not any(q == 1 for q, _ in breaks):
            breaks.append((1, single))
    merged: dict[int, float] = {}
    for q, p in breaks:
        if q < 1:
            raise fail("price_breaks", f"a price break starts at 1 piece or more, got {q}")
        if q in merged and merged[q] != p:
            raise fail("price_breaks", f"two prices for {q} pieces: {merged[q]} and {p}")
        merged[q] = p
    breaks = sorted(merged.items())
    if not breaks:
        raise fail("unit_price", "no price (give a unit price or price-break columns)")
    values["unit_price"] = _price_at(breaks, qty)
    cur = _text(cell("currency")) or currency
    values["price_note"] = f"{supplier} stock list, {cur} per piece at {qty} pcs"
    return StockRow(number, values, breaks)


# --------------------------------------------------------------------------- import


def _supplier_name(path: Path, supplier: str | None) -> str:
    name = (supplier or path.stem).strip()
    if not name or len(name) > 60:
        raise BadValueError(f"supplier name must be 1-60 characters, got {name!r}")
    return name


def import_stock(
    engine: Engine,
    path: str | Path,
    supplier: str | None = None,
    *,
    dry_run: bool = False,
    partial: bool = False,
    column_map: Mapping[str, str] | None = None,
    qty: int = 1000,
    currency: str = "EUR",
    sheet: str | None = None,
    progress: Progress | None = None,
) -> ImportResult:
    """Import a stock list into the catalogue behind ``engine`` (see the module doc).

    ``supplier``: the name the rows are filed under (default: the file's stem); ``qty``: the
    order quantity whose price-break price becomes the part's ``unit_price`` (the built-in
    demo prices are per piece at 1000); ``column_map``: header -> field overrides.
    Returns an :class:`ImportResult`; when rows failed and ``partial`` is false, nothing is
    written and ``result.problems`` lists every failure (file, row, column).
    Raises :class:`BadRowError` when the file itself cannot be used (no header, no supplier
    code or value column).
    """
    p = Path(path)
    name = _supplier_name(p, supplier)
    if qty < 1:
        raise BadValueError(f"the order quantity must be >= 1, got {qty}")
    rows = read_cells(p, sheet)
    if not rows:
        raise BadRowError(str(p), None, None, "the file is empty")
    header_no, header = rows[0]
    headers = [_text(h) for h in header]
    mapping = map_columns(headers, column_map)
    columns = {m.field: i for i, m in enumerate(mapping) if m.field and m.how != "price break"}
    break_columns = [(i, m.min_qty or 1, m.header) for i, m in enumerate(mapping) if m.min_qty]
    for req in _REQUIRED:
        if req not in columns:
            raise BadRowError(
                str(p),
                header_no,
                None,
                f"no column recognised as {req!r} among {', '.join(repr(h) for h in headers)}; "
                f"name one with --map COLUMN={req}",
            )
    if "family" not in columns and "description" not in columns:
        raise BadRowError(
            str(p), header_no, None, "no 'family' (or 'description') column; add one or --map it"
        )
    if not ({"unit_price", "price_breaks"} & set(columns)) and not break_columns:
        raise BadRowError(str(p), header_no, None, "no price column ('unit price' or 'price 10')")
    body = rows[1:]
    result = ImportResult(str(p), name, len(body), mapping, dry_run=dry_run)
    total = 2 * len(body)
    good: list[StockRow] = []
    seen_codes: dict[str, int] = {}
    with Session(engine) as session:
        families = catalogue_families(session)
        if not families:
            raise CatalogueError("the catalogue holds no built-in families; run `parts build`")
        lookup = _Lookup(session, families)
        for n, (number, cells) in enumerate(body, start=1):
            try:
                row = _validate_row(
                    str(p), number, cells, columns, break_columns, lookup, name, qty, currency,
                    headers,
                )  # fmt: skip
                first = seen_codes.get(row.values["code"])
                if first is not None:
                    raise BadRowError(
                        str(p),
                        number,
                        headers[columns["supplier_code"]],
                        f"supplier code {row.values['supplier_code']!r} already on row {first}",
                    )
                seen_codes[row.values["code"]] = number
                good.append(row)
                fam = row.values["family"]
                result.families[fam] = result.families.get(fam, 0) + 1
            except BadRowError as exc:
                result.problems.append(RowProblem(exc.file, exc.row, exc.column, exc.problem))
            if progress is not None and (n % 200 == 0 or n == len(body)):
                progress(n, total)
    if result.problems and not partial:
        result.families = {}
        return result
    _working_voltages(good)
    _write(engine, name, currency, good, result, dry_run, progress, len(body), total)
    return result


def _working_voltages(rows: Sequence[StockRow]) -> None:
    """Resistors: the working voltage depends on the resistance, min(sqrt(P R), LEV)
    (:func:`selector.catalogue.build.resistor_working_voltage`), so it is computed for the
    row's own value, not taken from the template (one vectorised call for all rows)."""
    import numpy as np

    res = [
        r.values
        for r in rows
        if r.values["kind"] == "resistor"
        and r.values.get("power_w")
        and r.values.get("limiting_voltage_v")
    ]
    if not res:
        return
    volts = np.atleast_1d(
        resistor_working_voltage(
            np.array([v["power_w"] for v in res]),
            np.array([v["value"] for v in res]),
            np.array([v["limiting_voltage_v"] for v in res]),
        )
    )
    for v, u in zip(res, volts, strict=True):
        v["rated_voltage_v"] = float(u)


def _write(
    engine: Engine,
    supplier: str,
    currency: str,
    rows: list[StockRow],
    result: ImportResult,
    dry_run: bool,
    progress: Progress | None,
    offset: int,
    total: int,
) -> None:
    """Compare with what is stored and upsert the new and changed rows, in one transaction.

    ``progress`` is called after each batch, inside the transaction: an exception it raises
    (or the process dying there) rolls everything back."""
    chunk = 500
    with engine.begin() as conn:
        _ensure_supplier(conn, supplier, currency)
        for start in range(0, len(rows), chunk):
            batch = rows[start : start + chunk]
            codes = [r.values["code"] for r in batch]
            stored = {
                rec.code: rec
                for rec in conn.execute(
                    select(Part.__table__).where(Part.code.in_(codes))
                ).mappings()
            }
            stored_breaks: dict[int, list[tuple[int, float]]] = {}
            ids = [rec["id"] for rec in stored.values()]
            if ids:
                for pid, q, price in conn.execute(
                    select(PriceBreak.part_id, PriceBreak.min_qty, PriceBreak.unit_price).where(
                        PriceBreak.part_id.in_(ids)
                    )
                ):
                    stored_breaks.setdefault(pid, []).append((q, price))
            changed: list[StockRow] = []
            for r in batch:
                rec = stored.get(r.values["code"])
                if rec is None:
                    result.inserted += 1
                    changed.append(r)
                    continue
                if rec["source"] != r.values["source"]:
                    raise CatalogueError(
                        f"code {r.values['code']!r} already belongs to {rec['source']!r}"
                    )
                same = all(_same(rec[c], r.values.get(c)) for c in _COMPARED) and sorted(
                    stored_breaks.get(rec["id"], [])
                ) == sorted(r.breaks)
                if same:
                    result.unchanged += 1
                else:
                    result.updated += 1
                    changed.append(r)
            if changed and not dry_run:
                _upsert(conn, changed)
            done = min(start + chunk, len(rows))
            if progress is not None:
                # scaled so that the last batch reports total even when rows were refused
                progress(offset + (done * (total - offset)) // max(len(rows), 1), total)
        if dry_run:
            conn.rollback()
            return
    result.written = True


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, float) or isinstance(b, float):
        if a is None or b is None:
            return a is None and b is None
        return math.isclose(float(a), float(b), rel_tol=1e-12, abs_tol=0.0)
    if isinstance(a, bool) or isinstance(b, bool):
        return bool(a) == bool(b)
    return a == b


def _dialect_insert(conn: Any, table: Any) -> Any:
    name = conn.dialect.name
    if name == "postgresql":
        from sqlalchemy.dialects.postgresql import insert
    elif name == "sqlite":
        from sqlalchemy.dialects.sqlite import insert
    else:
        raise CatalogueError(f"stock import supports SQLite and PostgreSQL, not {name}")
    return insert(table)


def _ensure_supplier(conn: Any, supplier: str, currency: str) -> None:
    stmt = _dialect_insert(conn, Supplier.__table__).values(
        name=supplier, currency=currency, note="imported stock list"
    )
    conn.execute(stmt.on_conflict_do_nothing(index_elements=["name"]))


def _upsert(conn: Any, rows: list[StockRow]) -> None:
    table = Part.__table__
    columns = ["code", "source", "supplier", "supplier_code", *_COMPARED]
    payload = [{c: r.values.get(c) for c in columns} for r in rows]
    ins = _dialect_insert(conn, table)
    stmt = ins.on_conflict_do_update(
        index_elements=["code"],
        set_={c: ins.excluded[c] for c in columns if c != "code"},
    )
    conn.execute(stmt, payload)
    codes = [r.values["code"] for r in rows]
    ids = dict(conn.execute(select(Part.code, Part.id).where(Part.code.in_(codes))).all())
    pb = PriceBreak.__table__
    conn.execute(pb.delete().where(pb.c.part_id.in_(list(ids.values()))))
    breaks = [
        {"part_id": ids[r.values["code"]], "min_qty": q, "unit_price": price}
        for r in rows
        for q, price in r.breaks
    ]
    if breaks:
        conn.execute(pb.insert(), breaks)
