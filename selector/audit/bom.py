"""Reading a bill of materials: CSV, TSV or XLSX, any common header spelling, one part per ref.

What this module does, in order:

1. **Bytes to text.** A UTF-8 or UTF-16 byte-order mark is honoured (and said so in the notes);
   otherwise the text must be valid UTF-8, or the caller names the encoding. Text that is not
   UTF-8 is an error naming the row and column of the first bad byte: the reader never guesses
   between Latin-1 and Windows-1252. NUL bytes without a byte-order mark (UTF-16 saved without
   one) are refused the same way.
2. **Cells.** CSV and TSV through the standard ``csv`` module (the delimiter is sniffed among
   ``, ; TAB |``), so every row number in an error is the file's own line number; XLSX through
   openpyxl, which also tells which cells are merged. A workbook with several sheets needs
   ``sheet=``. Merged cells in or below the header are refused with their range.
3. **Header.** The first row (among the first 20 non-blank rows) in which a reference column and
   a value or description column are recognised. Each header is compared, after lower-casing and
   dropping punctuation, with the spellings in :data:`HEADER_SPELLINGS` by rapidfuzz
   (``max(ratio, token_sort_ratio)``, weighted; >= 85 counts). Each field takes its best header;
   two headers equally good for one field are an error unless ``columns=`` says which.
4. **Lines.** Grouped references (``R2, R3``, ``R2 R3``, ``R2-R4``, ``R2..R4``, ``R2-4``) are
   expanded; a quantity column must agree with the count. Blank rows are skipped (noted); a row
   with cells but no reference, a duplicate reference on one board, a bad range or quantity is
   an error naming file, row and column. Rows marked not fitted are dropped (noted).

A ``Role`` column (as ``dropper design --bom`` writes it) names each part's role; ``--role`` and
a roles file still win over it.

Several boards in one file are told apart by a column recognised as ``board`` (``Board``,
``Assembly``, ``PCB``, ``Project``); references need only be unique within a board.
"""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Final

from ..errors import BadRowError, BadValueError

__all__ = [
    "FIELDS",
    "HEADER_SPELLINGS",
    "BomPart",
    "BomTable",
    "expand_refs",
    "map_headers",
    "read_bom",
]

#: field -> (spelling, weight); weight < 1 for spellings that other tools use for another thing
HEADER_SPELLINGS: Final[dict[str, tuple[tuple[str, float], ...]]] = {
    "ref": (
        ("reference", 1.0),
        ("references", 1.0),
        ("ref", 1.0),
        ("refs", 1.0),
        ("refdes", 1.0),
        ("ref des", 1.0),
        ("designator", 1.0),
        ("designators", 1.0),
        ("reference designator", 1.0),
        ("reference designators", 1.0),
        ("part reference", 1.0),
        ("position", 0.95),
        ("pos", 0.9),
        ("parts", 0.9),
    ),
    "value": (
        ("value", 1.0),
        ("values", 1.0),
        ("val", 1.0),
        ("part value", 1.0),
        ("nominal value", 1.0),
        ("comment", 0.9),
    ),
    "qty": (
        ("qty", 1.0),
        ("quantity", 1.0),
        ("qnty", 1.0),
        ("qty per board", 1.0),
        ("quantity per pcb", 1.0),
        ("quantity per board", 1.0),
        ("count", 0.95),
        ("pcs", 0.95),
        ("amount", 0.9),
    ),
    "description": (
        ("description", 1.0),
        ("desc", 1.0),
        ("part description", 1.0),
        ("details", 0.95),
        ("specification", 0.95),
        ("characteristics", 0.95),
    ),
    "package": (
        ("footprint", 1.0),
        ("package", 1.0),
        ("pkg", 1.0),
        ("case", 1.0),
        ("package case", 1.0),
        ("pcb footprint", 1.0),
        ("footprint name", 1.0),
        ("size", 0.9),
    ),
    "mpn": (
        ("manufacturer part number", 1.0),
        ("mpn", 1.0),
        ("mfr part number", 1.0),
        ("mfr part", 1.0),
        ("mfr pn", 1.0),
        ("mfg part number", 1.0),
        ("manufacturer pn", 1.0),
        ("part number", 0.95),
        ("pn", 0.9),
    ),
    "manufacturer": (("manufacturer", 1.0), ("mfr", 1.0), ("mfg", 1.0), ("maker", 0.95)),
    "voltage": (
        ("voltage", 1.0),
        ("rated voltage", 1.0),
        ("voltage rating", 1.0),
        ("working voltage", 1.0),
        ("voltage rated", 1.0),
    ),
    "power": (("power", 1.0), ("power rating", 1.0), ("wattage", 1.0), ("rated power", 1.0)),
    "tolerance": (("tolerance", 1.0), ("tol", 1.0)),
    "board": (
        ("board", 1.0),
        ("board name", 1.0),
        ("assembly", 0.95),
        ("pcb", 0.95),
        ("project", 0.9),
    ),
    "role": (("role", 1.0), ("dropper role", 1.0), ("function", 0.9)),
    "dnp": (
        ("dnp", 1.0),
        ("dnf", 1.0),
        ("do not populate", 1.0),
        ("do not fit", 1.0),
        ("not fitted", 1.0),
    ),
    "fitted": (("fitted", 1.0), ("populate", 1.0), ("populated", 1.0), ("mounted", 1.0)),
}

FIELDS: Final[tuple[str, ...]] = tuple(HEADER_SPELLINGS)

_THRESHOLD: Final[float] = 85.0
_HEADER_SCAN_ROWS: Final[int] = 20
_MAX_RANGE: Final[int] = 1000
_TRUE_WORDS: Final[frozenset[str]] = frozenset({"1", "y", "yes", "true", "x", "dnp", "dnf"})
_FALSE_WORDS: Final[frozenset[str]] = frozenset({"", "0", "n", "no", "false"})


@dataclass(frozen=True)
class BomPart:
    """One fitted part (one reference designator) as the BOM states it; texts untouched."""

    board: str
    ref: str
    row: int
    value: str
    description: str = ""
    package: str = ""
    mpn: str = ""
    manufacturer: str = ""
    voltage: str = ""
    power: str = ""
    tolerance: str = ""
    role: str = ""


@dataclass
class BomTable:
    """A BOM read and expanded: parts in file order, with what the reader decided on the way."""

    path: str
    sheet: str | None
    encoding: str
    header_row: int
    column_map: dict[str, str]
    ignored_columns: list[str]
    parts: list[BomPart]
    notes: list[str] = field(default_factory=list)

    @property
    def boards(self) -> list[str]:
        """Board names in order of first appearance ('' when the BOM has no board column)."""
        seen: dict[str, None] = {}
        for p in self.parts:
            seen.setdefault(p.board, None)
        return list(seen)


# --------------------------------------------------------------------------------------------
# bytes -> rows of cells


def _decode(path: Path, raw: bytes, encoding: str | None) -> tuple[str, str, list[str]]:
    """(text, encoding used, notes). Refuses to guess."""
    notes: list[str] = []
    if encoding is not None:
        try:
            codecs.lookup(encoding)
        except LookupError:
            raise BadValueError(
                f"unknown encoding {encoding!r}; e.g. utf-8, latin-1, cp1252, utf-16"
            ) from None
        try:
            text = raw.decode(encoding)
        except UnicodeDecodeError as exc:
            _raise_decode(path, raw, exc, encoding)
        return text.removeprefix("\ufeff"), encoding, notes
    if raw.startswith(codecs.BOM_UTF8):
        notes.append("file is UTF-8 with a byte-order mark (read as such)")
        enc = "utf-8-sig"
    elif raw.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        notes.append("file is UTF-16 with a byte-order mark (read as such)")
        enc = "utf-16"
    elif b"\x00" in raw:
        line = raw[: raw.index(b"\x00")].count(b"\n") + 1
        raise BadRowError(
            str(path),
            line,
            None,
            "holds NUL bytes: UTF-16 text without a byte-order mark? "
            "pass --encoding utf-16-le (or utf-16-be), or re-save it as UTF-8",
        )
    else:
        enc = "utf-8"
    try:
        text = raw.decode(enc)
    except UnicodeDecodeError as exc:
        _raise_decode(path, raw, exc, enc)
    return text.removeprefix("\ufeff"), enc, notes


def _raise_decode(path: Path, raw: bytes, exc: UnicodeDecodeError, enc: str) -> None:
    start = exc.start
    line_start = raw.rfind(b"\n", 0, start) + 1
    row = raw.count(b"\n", 0, start) + 1
    column = None
    try:  # which column: find the header in the text read leniently, count cells before the byte
        text = raw.decode(enc, errors="replace").removeprefix("\ufeff")
        delim = "\t" if path.suffix.lower() == ".tsv" else _sniff(text[:65536])
        rows = [
            (i, next(csv.reader([ln], delimiter=delim), []))
            for i, ln in enumerate(text.splitlines(), 1)
        ]
        _, _, mapping = _find_header(rows, None, "")
        header = next(cells for i, cells in rows if cells and map_headers(cells) == mapping)
        before = raw[line_start:start].decode(enc, errors="replace")
        index = len(next(csv.reader([before], delimiter=delim), [""])) - 1
        if 0 <= index < len(header):
            column = header[index].strip() or None
    except (csv.Error, StopIteration, BadRowError, BadValueError):
        pass
    byte = raw[start : start + 1].hex()
    raise BadRowError(
        str(path),
        row,
        column,
        f"byte 0x{byte} is not {enc} text (Latin-1 or Windows-1252?); "
        "re-save the file as UTF-8 or pass --encoding latin-1 (or cp1252)",
    )


def _sniff(sample: str) -> str:
    """The delimiter among , TAB ; | that splits the sample's lines most consistently: the most
    common non-zero count of it per line, times the share of lines that have that count."""
    from collections import Counter

    lines = [ln for ln in sample.splitlines() if ln.strip()][:30]
    best, best_score = ",", 0.0
    for delim in (",", "\t", ";", "|"):
        counts = Counter(ln.count(delim) for ln in lines)
        counts.pop(0, None)
        if not counts:
            continue
        n, hits = counts.most_common(1)[0]
        score = n * hits / len(lines)
        if score > best_score:
            best, best_score = delim, score
    return best


def _read_text_rows(path: Path, text: str) -> list[tuple[int, list[str]]]:
    """(line number, cells) for each record of a CSV/TSV text."""
    delim = "\t" if path.suffix.lower() == ".tsv" else _sniff(text[:65536])
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delim)
    rows: list[tuple[int, list[str]]] = []
    start = 1
    try:
        for cells in reader:
            rows.append((start, [c.strip() for c in cells]))
            start = reader.line_num + 1
    except csv.Error as exc:
        raise BadRowError(str(path), reader.line_num, None, f"cannot read as CSV: {exc}") from None
    return rows


def _cell_text(value: object) -> str:
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, float):
        if value == int(value) and abs(value) < 1e15:
            return str(int(value))
        return f"{value:.12g}"
    return str(value).strip()


def _read_xlsx_rows(path: Path, sheet: str | None) -> tuple[str, list[tuple[int, list[str]]], list]:
    import zipfile

    from openpyxl import load_workbook

    try:
        book = load_workbook(path, data_only=True)
    except (zipfile.BadZipFile, KeyError, OSError, ValueError) as exc:
        raise BadRowError(
            str(path), None, None, f"cannot read as an XLSX workbook: {exc}"
        ) from None
    names = book.sheetnames
    if sheet is None:
        if len(names) != 1:
            raise BadRowError(
                str(path),
                None,
                None,
                f"the workbook has {len(names)} sheets ({', '.join(names)}); "
                "say which one holds the BOM with --sheet NAME",
            )
        sheet = names[0]
    elif sheet not in names:
        from rapidfuzz import process

        match = process.extractOne(sheet, names)
        hint = f"; did you mean '{match[0]}'?" if match else ""
        raise BadRowError(
            str(path), None, None, f"no sheet '{sheet}' (sheets: {', '.join(names)}){hint}"
        )
    ws = book[sheet]
    rows = [
        (i, [_cell_text(v) for v in values])
        for i, values in enumerate(ws.iter_rows(values_only=True), start=1)
    ]
    merged = [(str(r), r.min_row, r.max_row) for r in ws.merged_cells.ranges]
    return sheet, rows, merged


# --------------------------------------------------------------------------------------------
# headers


def _normalise(header: str) -> str:
    return " ".join(re.sub(r"[^0-9a-z]+", " ", header.lower()).split())


def _scores(header: str) -> dict[str, float]:
    from rapidfuzz import fuzz

    h = _normalise(header)
    out: dict[str, float] = {}
    if not h:
        return out
    for name, spellings in HEADER_SPELLINGS.items():
        best = 0.0
        for spelling, weight in spellings:
            s = max(fuzz.ratio(h, spelling), fuzz.token_sort_ratio(h, spelling)) * weight
            best = max(best, s)
        if best >= _THRESHOLD:
            out[name] = best
    return out


def map_headers(
    headers: list[str], columns: Mapping[str, str] | None = None, where: str = ""
) -> dict[str, int]:
    """Map field name -> column index for a header row.

    ``columns`` pins fields to headers (``{"ref": "Designator"}``), matched exactly after
    normalisation. Each other field takes the best-scoring header not already taken; two headers
    tying (within 1 point) for the best score of one field raise :class:`BadValueError`.

    >>> map_headers(["Designator", "Comment", "Footprint", "Quantity"])
    {'ref': 0, 'value': 1, 'package': 2, 'qty': 3}
    """
    taken: dict[str, int] = {}
    used: set[int] = set()
    norm = [_normalise(h) for h in headers]
    for name, header in (columns or {}).items():
        if name not in HEADER_SPELLINGS:
            raise BadValueError(f"unknown BOM field {name!r}; one of {', '.join(FIELDS)}")
        want = _normalise(header)
        hits = [i for i, n in enumerate(norm) if n == want]
        if not hits:
            raise BadValueError(
                f"{where}no column '{header}' for {name}; columns: "
                + ", ".join(h for h in headers if h)
            )
        taken[name] = hits[0]
        used.add(hits[0])
    pairs = []
    for i, h in enumerate(headers):
        if i in used:
            continue
        for name, score in _scores(h).items():
            if name not in taken:
                pairs.append((score, i, name))
    pairs.sort(key=lambda p: (-p[0], p[1]))
    for score, i, name in pairs:
        if name in taken or i in used:
            continue
        rivals = [
            j for s, j, n in pairs if n == name and j != i and j not in used and s >= score - 1.0
        ]
        if rivals:
            others = ", ".join(f"'{headers[j]}'" for j in rivals)
            raise BadValueError(
                f"{where}columns '{headers[i]}' and {others} both look like the {name} column; "
                f"say which with --column {name}=HEADER"
            )
        taken[name] = i
        used.add(i)
    return taken


# --------------------------------------------------------------------------------------------
# references

_REF_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_.]*\d[A-Za-z0-9_.]*$")
_RANGE_RE = re.compile(
    r"^(?P<p1>[A-Za-z][A-Za-z_]*)(?P<a>\d+)\s*(?:-|\.\.|–|—|to)\s*(?P<p2>[A-Za-z][A-Za-z_]*)?(?P<b>\d+)$"
)


def expand_refs(text: str) -> list[str]:
    """Expand a grouped reference cell into single designators, in order.

    Separators: comma, semicolon, whitespace. Ranges ``R2-R4``, ``R2..R4``, ``R2-4``, ``R2 - R4``
    with one prefix. Raises :class:`BadValueError` for a range with two prefixes, a reversed or
    huge range, or a token that is not a designator.

    >>> expand_refs("R2, R3")
    ['R2', 'R3']
    >>> expand_refs("R2-R4 C1")
    ['R2', 'R3', 'R4', 'C1']
    """
    s = re.sub(r"\s*(-|\.\.|–|—)\s*", r"\1", text.strip())
    out: list[str] = []
    for token in re.split(r"[,;\s]+", s):
        if not token:
            continue
        m = _RANGE_RE.match(token)
        if m:
            p1, p2 = m.group("p1"), m.group("p2") or m.group("p1")
            if p1.upper() != p2.upper():
                raise BadValueError(f"range {token!r} mixes prefixes {p1} and {p2}")
            a, b = int(m.group("a")), int(m.group("b"))
            if b < a:
                raise BadValueError(f"range {token!r} runs backwards; write {p1}{b}-{p1}{a}")
            if b - a >= _MAX_RANGE:
                raise BadValueError(
                    f"range {token!r} spans {b - a + 1} parts; more than {_MAX_RANGE}"
                )
            out.extend(f"{p1}{k}" for k in range(a, b + 1))
        elif _REF_RE.match(token):
            out.append(token)
        else:
            raise BadValueError(f"{token!r} is not a reference designator (e.g. R1, C12, D3)")
    return out


# --------------------------------------------------------------------------------------------
# the reader


def _find_header(rows: list[tuple[int, list[str]]], columns, where: str):
    seen = 0
    tried: list[str] = []
    for k, (line, cells) in enumerate(rows):
        if not any(cells):
            continue
        seen += 1
        if seen > _HEADER_SCAN_ROWS:
            break
        try:
            mapping = map_headers(cells, columns, where)
        except BadValueError:
            if columns:
                raise
            mapping = {}
        if "ref" in mapping and ("value" in mapping or "description" in mapping):
            # a real ambiguity in the header row is reported, not skipped
            return k, line, map_headers(cells, columns, where)
        tried.append(" | ".join(c for c in cells if c)[:80])
    raise BadRowError(
        where.rstrip(": "),
        None,
        None,
        "no header row with a reference/designator column and a value or description column "
        f"in the first {_HEADER_SCAN_ROWS} non-blank rows"
        + (f" (first row seen: {tried[0]!r})" if tried else "")
        + "; name them with --column ref=HEADER --column value=HEADER",
    )


def read_bom(
    path: str | Path,
    sheet: str | None = None,
    encoding: str | None = None,
    columns: Mapping[str, str] | None = None,
) -> BomTable:
    """Read a BOM file (``.csv``, ``.tsv``, ``.txt``, ``.xlsx``, ``.xlsm``) into one
    :class:`BomPart` per fitted reference designator.

    Raises :class:`BadRowError` (file, row, column, problem) for anything it would otherwise
    have to guess, :class:`BadValueError` for bad arguments.
    """
    path = Path(path)
    name = str(path)
    if not path.exists():
        raise BadRowError(name, None, None, "no such file")
    if not path.is_file():
        raise BadRowError(name, None, None, "not a file")
    suffix = path.suffix.lower()
    notes: list[str] = []
    merged: list = []
    if suffix in (".xlsx", ".xlsm"):
        if path.stat().st_size == 0:
            raise BadRowError(name, None, None, "the file is empty")
        if encoding is not None:
            notes.append("--encoding ignored: an XLSX workbook carries its own encoding")
        sheet, rows, merged = _read_xlsx_rows(path, sheet)
        enc = "xlsx"
    elif suffix in (".csv", ".tsv", ".txt", ""):
        if sheet is not None:
            raise BadValueError("--sheet applies to XLSX workbooks only")
        raw = path.read_bytes()
        text, enc, notes = _decode(path, raw, encoding)
        if not text.strip():
            raise BadRowError(name, None, None, "the file is empty")
        rows = _read_text_rows(path, text)
    elif suffix == ".xls":
        raise BadRowError(name, None, None, "old .xls workbooks are not read; save it as .xlsx")
    else:
        raise BadRowError(
            name, None, None, f"unknown file type {suffix!r}; give a .csv, .tsv or .xlsx file"
        )
    if not any(any(c for c in cells) for _, cells in rows):
        raise BadRowError(name, None, None, "the file holds no data (only blank rows)")
    k, header_line, mapping = _find_header(rows, columns, f"{name}: ")
    headers = rows[k][1]
    if header_line != rows[0][0]:
        notes.append(f"header found on row {header_line}")
    for rng, r0, r1 in merged:
        if r1 >= header_line:
            raise BadRowError(
                name,
                r0,
                None,
                f"cells {rng} are merged; unmerge them and give each part its own complete row",
            )
    column_map = {f: headers[i] for f, i in mapping.items()}
    ignored = [h for i, h in enumerate(headers) if h and i not in mapping.values()]

    parts: list[BomPart] = []
    first_row: dict[tuple[str, str], int] = {}
    blank: list[int] = []
    skipped: list[str] = []
    width = len(headers)

    def cell(cells: list[str], fld: str) -> str:
        i = mapping.get(fld)
        return cells[i] if i is not None and i < len(cells) else ""

    for line, cells in rows[k + 1 :]:
        if not any(cells):
            blank.append(line)
            continue
        extra = [c for c in cells[width:] if c]
        if extra:
            raise BadRowError(
                name,
                line,
                None,
                f"has {len(cells)} cells where the header has {width} (an unquoted "
                f"separator inside a value? extra text {extra[0]!r})",
            )
        ref_text = cell(cells, "ref")
        ref_col = column_map["ref"]
        if not ref_text:
            raise BadRowError(
                name,
                line,
                ref_col,
                "no reference designator (a merged cell or a continuation line?); "
                "give each part its own complete row",
            )
        try:
            refs = expand_refs(ref_text)
        except BadValueError as exc:
            raise BadRowError(name, line, ref_col, str(exc)) from None
        if _not_fitted(cell(cells, "dnp"), cell(cells, "fitted"), name, line, column_map):
            skipped.extend(refs)
            continue
        qty_text = cell(cells, "qty")
        if qty_text:
            try:
                qty_f = float(qty_text.replace(",", "."))
            except ValueError:
                qty_f = -1.0
            if qty_f != int(qty_f) or qty_f < 0:
                raise BadRowError(
                    name, line, column_map["qty"], f"quantity {qty_text!r} is not a whole number"
                )
            if int(qty_f) == 0:
                skipped.extend(refs)
                continue
            if int(qty_f) != len(refs):
                raise BadRowError(
                    name,
                    line,
                    column_map["qty"],
                    f"quantity {int(qty_f)} but {len(refs)} designator(s) "
                    f"({', '.join(refs)}) in column '{ref_col}'",
                )
        board = cell(cells, "board")
        for ref in refs:
            key = (board, ref.upper())
            if key in first_row:
                on = f" on board '{board}'" if board else ""
                raise BadRowError(
                    name,
                    line,
                    ref_col,
                    f"designator {ref} appears twice{on} (rows {first_row[key]} and {line})",
                )
            first_row[key] = line
            parts.append(
                BomPart(
                    board=board,
                    ref=ref,
                    row=line,
                    value=cell(cells, "value"),
                    description=cell(cells, "description"),
                    package=cell(cells, "package"),
                    mpn=cell(cells, "mpn"),
                    manufacturer=cell(cells, "manufacturer"),
                    voltage=cell(cells, "voltage"),
                    power=cell(cells, "power"),
                    tolerance=cell(cells, "tolerance"),
                    role=cell(cells, "role"),
                )
            )
    if blank:
        notes.append(f"{len(blank)} blank row(s) skipped: {_rows_text(blank)}")
    if skipped:
        notes.append(f"not fitted, left out: {', '.join(skipped)}")
    if not parts:
        raise BadRowError(name, None, None, "no fitted parts below the header")
    return BomTable(
        path=name,
        sheet=sheet,
        encoding=enc,
        header_row=header_line,
        column_map=column_map,
        ignored_columns=ignored,
        parts=parts,
        notes=notes,
    )


def _not_fitted(dnp: str, fitted: str, name: str, line: int, column_map) -> bool:
    for text, fld, fitted_when_true in ((dnp, "dnp", False), (fitted, "fitted", True)):
        t = text.strip().lower()
        if fld not in column_map or not t:
            continue
        if t in _TRUE_WORDS or t in ("fitted", "populated"):
            return not fitted_when_true
        if t in _FALSE_WORDS or t in ("not fitted", "unpopulated"):
            return fitted_when_true
        raise BadRowError(
            name, line, column_map[fld], f"cannot tell yes or no from {text!r} (write yes or no)"
        )
    return False


def _rows_text(rows: list[int]) -> str:
    if len(rows) > 10:
        return ", ".join(map(str, rows[:10])) + f", ... ({len(rows)} in all)"
    return ", ".join(map(str, rows))
