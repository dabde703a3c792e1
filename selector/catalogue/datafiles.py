"""The catalogue's data files: standards tables (CSV), the price model and family files (TOML).

Every loader validates what it reads; a bad field raises :class:`~selector.errors.BadRowError`
naming the file, the entry (CSV line or the n-th ``[[family]]``), the field and the problem.
:class:`Entry` is the checked accessor the expanders in :mod:`selector.catalogue.expand` use.
"""

from __future__ import annotations

import csv
import math
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final

from ..errors import BadRowError, BadValueError
from ..eseries import SERIES, values_in_range
from ..resources import catalogue_dir
from ..units import TOLERANCE_LETTERS, parse_value
from .models import KINDS

__all__ = [
    "FAMILY_DIR",
    "PRICE_MODEL_FILE",
    "RESISTOR_SIZE_FILE",
    "SUBCLASS_FILE",
    "Entry",
    "Family",
    "PriceModel",
    "ResistorSize",
    "Subclass",
    "load_families",
    "load_price_model",
    "load_resistor_sizes",
    "load_subclasses",
    "rel_name",
    "root_dir",
]

SUBCLASS_FILE: Final[str] = "standards/iec60384_14_subclasses.csv"
RESISTOR_SIZE_FILE: Final[str] = "standards/resistor_sizes.csv"
PRICE_MODEL_FILE: Final[str] = "price_model.toml"
FAMILY_DIR: Final[str] = "families"


@dataclass(frozen=True)
class Subclass:
    """One row of the IEC 60384-14 subclass table (volts; None = not given / no test)."""

    name: str
    group: str
    insulation: str | None
    service_impulse_min_v: float | None
    service_impulse_max_v: float | None
    impulse_test_v: float | None
    rated_ac_min_v: float | None
    rated_ac_max_v: float | None
    mark: str
    note: str


@dataclass(frozen=True)
class ResistorSize:
    """Generic power and limiting element voltage of one resistor size (or an inline size)."""

    size: str
    style: str
    mount: str
    power_w: float
    lev_v: float
    derate_start_c: float
    derate_end_c: float
    body_l_mm: float
    body_w_mm: float
    pitch_mm: float | None
    mark: str


@dataclass(frozen=True)
class PriceModel:
    """Label and board-area factors of the demo price model (invented)."""

    label: str
    currency: str
    quantity_basis: int
    smd_courtyard_factor: float
    tht_courtyard_factor: float


def root_dir(root: Path | str | None) -> Path:
    """``root`` as a Path, or the installed catalogue folder when it is None."""
    return Path(root) if root is not None else catalogue_dir()


def rel_name(path: Path, root: Path) -> str:
    """``path`` relative to ``root`` in POSIX form (the name errors show), else as given."""
    try:
        return path.relative_to(root).as_posix()
    except ValueError:
        return str(path)


def _read_csv(path: Path, root: Path, required: tuple[str, ...]) -> list[tuple[int, dict]]:
    name = rel_name(path, root)
    if not path.is_file():
        raise BadRowError(name, None, None, "file is missing")
    with path.open(newline="", encoding="utf-8") as fh:
        reader = csv.DictReader(fh)
        header = reader.fieldnames or []
        for col in required:
            if col not in header:
                raise BadRowError(name, 1, col, f"missing column; the header has {header}")
        return [(i, row) for i, row in enumerate(reader, start=2)]


def _csv_float(name: str, line: int, row: dict, col: str, optional: bool = False) -> float | None:
    text = (row.get(col) or "").strip()
    if not text:
        if optional:
            return None
        raise BadRowError(name, line, col, "empty; a number is required")
    try:
        value = float(text)
    except ValueError:
        raise BadRowError(name, line, col, f"{text!r} is not a number") from None
    if not math.isfinite(value) or value < 0:
        raise BadRowError(name, line, col, f"{text!r} must be a finite number >= 0")
    return value


def load_subclasses(root: Path | str | None = None) -> dict[str, Subclass]:
    """The IEC 60384-14 subclass table (``standards/iec60384_14_subclasses.csv``) by name."""
    base = root_dir(root)
    path = base / SUBCLASS_FILE
    name = rel_name(path, base)
    cols = (
        "subclass",
        "group",
        "insulation",
        "service_impulse_min_v",
        "service_impulse_max_v",
        "impulse_test_v",
        "rated_ac_min_v",
        "rated_ac_max_v",
        "mark",
        "note",
    )
    out: dict[str, Subclass] = {}
    for line, row in _read_csv(path, base, cols):
        sub = row["subclass"].strip().upper()
        if sub[:1] not in ("X", "Y") or sub in out:
            raise BadRowError(name, line, "subclass", f"{sub!r} is not a new X or Y subclass")
        group = row["group"].strip().upper()
        if group != sub[0]:
            raise BadRowError(name, line, "group", f"{group!r} does not match subclass {sub}")

        def num(col: str, _line: int = line, _row: dict = row) -> float | None:
            return _csv_float(name, _line, _row, col, optional=True)

        out[sub] = Subclass(
            name=sub,
            group=group,
            insulation=row["insulation"].strip() or None,
            service_impulse_min_v=num("service_impulse_min_v"),
            service_impulse_max_v=num("service_impulse_max_v"),
            impulse_test_v=num("impulse_test_v"),
            rated_ac_min_v=num("rated_ac_min_v"),
            rated_ac_max_v=num("rated_ac_max_v"),
            mark=row["mark"].strip(),
            note=row["note"].strip(),
        )
    for sub in ("X1", "X2", "X3"):
        if sub not in out:
            raise BadRowError(name, None, "subclass", f"subclass {sub} is missing")
        if out[sub].service_impulse_max_v is None:
            raise BadRowError(name, None, "service_impulse_max_v", f"{sub} needs a value")
    return out


def load_resistor_sizes(root: Path | str | None = None) -> dict[str, ResistorSize]:
    """The generic resistor size table (``standards/resistor_sizes.csv``) by size name."""
    base = root_dir(root)
    path = base / RESISTOR_SIZE_FILE
    name = rel_name(path, base)
    cols = (
        "size",
        "style",
        "mount",
        "power_w",
        "lev_v",
        "derate_start_c",
        "derate_end_c",
        "body_l_mm",
        "body_w_mm",
        "pitch_mm",
        "mark",
    )
    out: dict[str, ResistorSize] = {}
    for line, row in _read_csv(path, base, cols):
        size = row["size"].strip()
        if not size or size in out:
            raise BadRowError(name, line, "size", f"{size!r} is empty or repeated")
        mount = row["mount"].strip()
        if mount not in ("smd", "tht"):
            raise BadRowError(name, line, "mount", f"{mount!r}: use 'smd' or 'tht'")
        vals = {c: _csv_float(name, line, row, c) for c in cols[3:9]}
        for col in ("power_w", "lev_v", "body_l_mm", "body_w_mm"):
            if not vals[col]:
                raise BadRowError(name, line, col, "must be > 0")
        if vals["derate_end_c"] <= vals["derate_start_c"]:
            raise BadRowError(name, line, "derate_end_c", "must be above derate_start_c")
        out[size] = ResistorSize(
            size=size,
            style=row["style"].strip(),
            mount=mount,
            pitch_mm=_csv_float(name, line, row, "pitch_mm", optional=True),
            mark=row["mark"].strip(),
            **vals,
        )
    return out


def _load_toml(path: Path, root: Path) -> dict:
    name = rel_name(path, root)
    if not path.is_file():
        raise BadRowError(name, None, None, "file is missing")
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise BadRowError(name, None, None, f"not valid TOML: {exc}") from None


def load_price_model(root: Path | str | None = None) -> PriceModel:
    """The demo price model's label and board-area factors (``price_model.toml``)."""
    base = root_dir(root)
    path = base / PRICE_MODEL_FILE
    data = _load_toml(path, base)
    entry = Entry(rel_name(path, base), None, data, "price model")
    entry.check_keys(
        {"label", "currency", "quantity_basis", "smd_courtyard_factor", "tht_courtyard_factor"}
    )
    label = entry.text("label")
    if "invented" not in label:
        raise BadRowError(entry.file, None, "label", "the demo price model must say 'invented'")
    return PriceModel(
        label=label,
        currency=entry.text("currency"),
        quantity_basis=int(entry.number("quantity_basis")),
        smd_courtyard_factor=entry.number("smd_courtyard_factor"),
        tht_courtyard_factor=entry.number("tht_courtyard_factor"),
    )


class Entry:
    """One TOML table (a [[family]] or an item of its lists) with checked accessors."""

    def __init__(self, file: str, row: int | None, data: Any, family: str, prefix: str = ""):
        self.file = file
        self.row = row
        self.family = family
        self.prefix = prefix
        if not isinstance(data, dict):
            raise BadRowError(file, row, prefix.rstrip(".") or None, "must be a TOML table")
        self.data = data

    def fail(self, field: str | None, problem: str) -> BadRowError:
        col = f"{self.prefix}{field}" if field else (self.prefix.rstrip(".") or None)
        return BadRowError(self.file, self.row, col, f"family {self.family!r}: {problem}")

    def check_keys(self, allowed: set[str]) -> None:
        from rapidfuzz import process

        for key in self.data:
            if key not in allowed:
                best = process.extractOne(key, sorted(allowed))
                hint = f"; did you mean {best[0]!r}?" if best and best[1] >= 60 else ""
                raise self.fail(key, f"unknown field{hint}")

    def has(self, field: str) -> bool:
        return field in self.data

    def raw(self, field: str) -> Any:
        if field not in self.data:
            raise self.fail(field, "missing")
        return self.data[field]

    def text(self, field: str, default: str | None = None) -> str:
        if default is not None and field not in self.data:
            return default
        value = self.raw(field)
        if not isinstance(value, str) or not value.strip():
            raise self.fail(field, f"{value!r} must be a non-empty text")
        return value.strip()

    def number(self, field: str, default: float | None = None, positive: bool = True) -> float:
        if default is not None and field not in self.data:
            return default
        value = self.raw(field)
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise self.fail(field, f"{value!r} must be a number")
        value = float(value)
        if not math.isfinite(value) or (positive and value <= 0):
            raise self.fail(field, f"{value!r} must be a finite number > 0")
        return value

    def flag(self, field: str, default: bool = False) -> bool:
        if field not in self.data:
            return default
        value = self.data[field]
        if not isinstance(value, bool):
            raise self.fail(field, f"{value!r} must be true or false")
        return value

    def quantity(self, field: str, unit: str) -> float:
        value = self.raw(field)
        try:
            out = parse_value(value, unit)
        except BadValueError as exc:
            raise self.fail(field, str(exc)) from None
        if out <= 0:
            raise self.fail(field, f"{value!r} must be > 0")
        return out

    def tolerance(self, field: str) -> tuple[str, float]:
        letter = self.text(field)
        return self._letter(field, letter)

    def _letter(self, field: str, letter: Any) -> tuple[str, float]:
        if letter not in TOLERANCE_LETTERS:
            raise self.fail(field, f"{letter!r} is not an IEC 60062 tolerance letter")
        return letter, TOLERANCE_LETTERS[letter]

    def tolerances(self, field: str) -> list[tuple[str, float]]:
        value = self.raw(field)
        if not isinstance(value, list) or not value:
            raise self.fail(field, "must be a non-empty list of tolerance letters")
        return [self._letter(field, v) for v in value]

    def series_values(self, unit: str) -> list[float]:
        series = self.text("series")
        if series not in SERIES:
            raise self.fail("series", f"{series!r}: choose one of {', '.join(SERIES)}")
        low = self.quantity("min", unit)
        high = self.quantity("max", unit)
        if high < low:
            raise self.fail("max", "must not be below min")
        values = values_in_range(low, high, series).tolist()
        if not values:
            raise self.fail("min", f"no {series} value between min and max")
        return values

    def items(self, field: str) -> list[Entry]:
        value = self.raw(field)
        if not isinstance(value, list) or not value:
            raise self.fail(field, "must be a non-empty list of tables")
        return [
            Entry(self.file, self.row, v, self.family, f"{self.prefix}{field}[{i}].")
            for i, v in enumerate(value, start=1)
        ]

    def table(self, field: str) -> Entry:
        return Entry(self.file, self.row, self.raw(field), self.family, f"{self.prefix}{field}.")


@dataclass(frozen=True)
class Family:
    """One ``[[family]]`` entry of a family file (validated later by the kind's expander)."""

    file: str
    row: int
    name: str
    kind: str
    data: dict


def load_families(root: Path | str | None = None) -> list[Family]:
    """Every ``[[family]]`` of ``families/*.toml`` (files in name order), names checked unique."""
    base = root_dir(root)
    folder = base / FAMILY_DIR
    files = sorted(folder.glob("*.toml"))
    if not files:
        raise BadRowError(rel_name(folder, base), None, None, "no family files (*.toml) found")
    out: list[Family] = []
    seen: dict[str, str] = {}
    for path in files:
        rel = rel_name(path, base)
        data = _load_toml(path, base)
        extra = set(data) - {"family"}
        if extra:
            raise BadRowError(rel, None, sorted(extra)[0], "unknown top-level key; use [[family]]")
        entries = data.get("family")
        if not isinstance(entries, list) or not entries:
            raise BadRowError(rel, None, "family", "no [[family]] entries")
        for i, raw in enumerate(entries, start=1):
            probe = Entry(rel, i, raw, "?")
            name = probe.text("name")
            probe.family = name
            kind = probe.text("kind")
            if kind not in KINDS:
                from rapidfuzz import process

                best = process.extractOne(kind, KINDS)
                raise probe.fail(
                    "kind", f"unknown kind {kind!r} (nearest: {best[0]!r}); one of {KINDS}"
                )
            if name in seen:
                raise probe.fail("name", f"repeated family name (first in {seen[name]})")
            seen[name] = rel
            out.append(Family(file=rel, row=i, name=name, kind=kind, data=raw))
    return out
