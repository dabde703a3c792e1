"""Which column of a BOM header row holds which field: the spellings and the fuzzy match.

Step 3 of :mod:`.bom`: each header, lower-cased and without punctuation, is scored against
:data:`HEADER_SPELLINGS` by rapidfuzz; :func:`map_headers` gives each field its best header and
refuses ties; :func:`_find_header` finds the header row among the first rows of a sheet.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Final

from ..errors import BadRowError, BadValueError

__all__ = ["FIELDS", "HEADER_SPELLINGS", "map_headers"]

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
    # written by `dropper design --bom`: the catalogue code, its supplier and the ratings the
    # design's rules used (``name=number`` in SI, the JSON keys), read back by the audit
    "code": (("catalogue code", 1.0), ("catalog code", 1.0), ("dropper code", 1.0)),
    "supplier": (("supplier", 1.0), ("vendor", 0.95), ("distributor", 0.95)),
    "ratings": (("ratings", 1.0), ("rule ratings", 1.0), ("rated figures", 1.0)),
}

FIELDS: Final[tuple[str, ...]] = tuple(HEADER_SPELLINGS)

_THRESHOLD: Final[float] = 85.0
_HEADER_SCAN_ROWS: Final[int] = 20


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
