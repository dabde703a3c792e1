"""Build the open catalogue: read the data files in ``catalogue/`` and expand them into part rows.

Nothing here touches a database: :func:`builtin_rows` returns plain dicts (one per part, keys =
``parts`` columns, SI units) that :mod:`selector.catalogue.db` bulk-inserts. Every data file is
validated; a bad field raises :class:`~selector.errors.BadRowError` naming the file, the entry
(CSV line or the n-th ``[[family]]``), the field and the problem.

Ratings are computed by the pure functions below, each with its formula and source:
:func:`resistor_working_voltage`, :func:`x_impulse_test_voltage`, :func:`diode_i2t`,
:func:`zener_impedance`. Prices and board areas are a demo model, invented (``price_note``).
"""

from __future__ import annotations

import csv
import hashlib
import math
import tomllib
from collections.abc import Callable, Iterable
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any, Final

import numpy as np
from numpy.typing import ArrayLike

from ..errors import BadRowError, BadValueError, OutOfRangeError
from ..eseries import SERIES, values_in_range
from ..resources import catalogue_dir
from ..units import TOLERANCE_LETTERS, format_value, iec60062_code, parse_value
from .models import KINDS, Part

__all__ = [
    "BUILDER_VERSION",
    "PriceModel",
    "ResistorSize",
    "Subclass",
    "builtin_rows",
    "data_checksum",
    "data_files",
    "diode_i2t",
    "load_families",
    "load_price_model",
    "load_resistor_sizes",
    "load_subclasses",
    "resistor_working_voltage",
    "x_impulse_test_voltage",
    "zener_impedance",
]

#: bump when the expansion code changes the rows it makes (forces a rebuild like a data change)
BUILDER_VERSION: Final[str] = "1"

SUBCLASS_FILE: Final[str] = "standards/iec60384_14_subclasses.csv"
RESISTOR_SIZE_FILE: Final[str] = "standards/resistor_sizes.csv"
PRICE_MODEL_FILE: Final[str] = "price_model.toml"
FAMILY_DIR: Final[str] = "families"

_COLUMNS: Final[tuple[str, ...]] = tuple(c.name for c in Part.__table__.columns if c.name != "id")


# ---------------------------------------------------------------------------------------------
# rating formulas (pure, SI)


def resistor_working_voltage(power_w: ArrayLike, resistance_ohm: ArrayLike, lev_v: ArrayLike):
    """Highest continuous voltage across a resistor: U = min(sqrt(P * R), LEV).

    ``power_w`` [W] rated power, ``resistance_ohm`` [ohm], ``lev_v`` [V] limiting element
    voltage. Valid for P > 0, R > 0, LEV > 0 (raises OutOfRangeError otherwise). Below the
    critical resistance LEV**2 / P the power limits, above it the LEV does.
    Source: generic resistor makers' data (rated voltage definition, IEC 60115-1) [S generic].

    Worked example: a 1206 chip (0.25 W, LEV 200 V) of 100 kohm: sqrt(0.25 * 1e5) = 158.1 V;
    of 1 Mohm: sqrt(2.5e5) = 500 V, limited to 200 V.

    >>> round(float(resistor_working_voltage(0.25, 100e3, 200.0)), 1)
    158.1
    >>> float(resistor_working_voltage(0.25, 1e6, 200.0))
    200.0
    """
    p = np.asarray(power_w, dtype=float)
    r = np.asarray(resistance_ohm, dtype=float)
    lev = np.asarray(lev_v, dtype=float)
    if np.any(p <= 0) or np.any(r <= 0) or np.any(lev <= 0):
        raise OutOfRangeError("resistor_working_voltage needs P > 0, R > 0 and LEV > 0")
    out = np.minimum(np.sqrt(p * r), lev)
    return float(out) if out.ndim == 0 else out


def x_impulse_test_voltage(impulse_test_v: float, capacitance_f: float) -> float:
    """Impulse test voltage of an X capacitor: Up for C <= 1 uF, Up / sqrt(C / 1 uF) above.

    ``impulse_test_v`` [V] the subclass's test voltage Up (X1 4 kV, X2 2.5 kV),
    ``capacitance_f`` [F] rated capacitance, > 0. Source: IEC 60384-14, impulse test [S].

    Worked example: X2 (Up = 2.5 kV), 2.2 uF: 2500 / sqrt(2.2) = 1685.5 V; 470 nF: 2500 V.

    >>> round(x_impulse_test_voltage(2500.0, 2.2e-6), 1)
    1685.5
    >>> x_impulse_test_voltage(2500.0, 470e-9)
    2500.0
    """
    if not (impulse_test_v > 0 and capacitance_f > 0):
        raise OutOfRangeError("x_impulse_test_voltage needs Up > 0 and C > 0")
    ratio = capacitance_f / 1e-6
    if ratio <= 1.0 + 1e-9:
        return float(impulse_test_v)
    return float(impulse_test_v / math.sqrt(ratio))


def diode_i2t(ifsm_a: float, duration_s: float = 8.3e-3) -> float:
    """I^2 t of a single half-sine current pulse of peak IFSM lasting ``duration_s``.

    I^2 t = integral_0^T (Ip sin(pi t / T))^2 dt = Ip^2 * T / 2. ``ifsm_a`` [A] peak,
    ``duration_s`` [s] the half-sine width (8.3 ms: one half cycle at 60 Hz, the width generic
    rectifier data use for IFSM [S generic]). Valid for Ip > 0, 0 < T <= 10 ms.
    Source: the integral of sin^2 over a half period (any calculus text).

    Worked example: IFSM = 30 A, 8.3 ms: 900 * 0.0083 / 2 = 3.735 A^2 s.

    >>> round(diode_i2t(30.0), 3)
    3.735
    """
    if not (ifsm_a > 0 and 0 < duration_s <= 10e-3):
        raise OutOfRangeError("diode_i2t needs IFSM > 0 and 0 < T <= 10 ms")
    return ifsm_a**2 * duration_s / 2.0


def zener_impedance(vz_v: float, ref_ohm: float, ref_v: float = 6.8, exponent: float = 1.5):
    """Dynamic impedance Zz of a Zener of voltage Vz in the catalogue's demo model [P, invented].

    Zz = ref_ohm * (Vz / ref_v) ** exponent for Vz >= ref_v, ref_ohm * (ref_v / Vz) ** exponent
    below: lowest near ref_v (about 6.8 V, where avalanche and field emission meet) and rising on
    both sides, the shape generic data sheets show; the figures are invented for the demo.
    ``vz_v`` [V] 1..300, ``ref_ohm`` [ohm] > 0, ``ref_v`` [V] > 0.

    Worked example: ref 3.5 ohm at 6.8 V, Vz = 27.2 V: 3.5 * 4 ** 1.5 = 28 ohm.

    >>> zener_impedance(27.2, 3.5)
    28.0
    """
    if not (1.0 <= vz_v <= 300.0 and ref_ohm > 0 and ref_v > 0):
        raise OutOfRangeError(f"zener_impedance holds for 1 V <= Vz <= 300 V, not {vz_v!r}")
    ratio = vz_v / ref_v if vz_v >= ref_v else ref_v / vz_v
    return float(round(ref_ohm * ratio**exponent, 6))


# ---------------------------------------------------------------------------------------------
# data files


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


def _root(root: Path | str | None) -> Path:
    return Path(root) if root is not None else catalogue_dir()


def _rel(path: Path, root: Path) -> str:
    try:
        return path.relative_to(root).as_posix()
    except ValueError:
        return str(path)


def _read_csv(path: Path, root: Path, required: tuple[str, ...]) -> list[tuple[int, dict]]:
    name = _rel(path, root)
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
    base = _root(root)
    path = base / SUBCLASS_FILE
    name = _rel(path, base)
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
    base = _root(root)
    path = base / RESISTOR_SIZE_FILE
    name = _rel(path, base)
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
    name = _rel(path, root)
    if not path.is_file():
        raise BadRowError(name, None, None, "file is missing")
    try:
        with path.open("rb") as fh:
            return tomllib.load(fh)
    except tomllib.TOMLDecodeError as exc:
        raise BadRowError(name, None, None, f"not valid TOML: {exc}") from None


def load_price_model(root: Path | str | None = None) -> PriceModel:
    """The demo price model's label and board-area factors (``price_model.toml``)."""
    base = _root(root)
    path = base / PRICE_MODEL_FILE
    data = _load_toml(path, base)
    entry = _Entry(_rel(path, base), None, data, "price model")
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


class _Entry:
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

    def items(self, field: str) -> list[_Entry]:
        value = self.raw(field)
        if not isinstance(value, list) or not value:
            raise self.fail(field, "must be a non-empty list of tables")
        return [
            _Entry(self.file, self.row, v, self.family, f"{self.prefix}{field}[{i}].")
            for i, v in enumerate(value, start=1)
        ]

    def table(self, field: str) -> _Entry:
        return _Entry(self.file, self.row, self.raw(field), self.family, f"{self.prefix}{field}.")


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
    base = _root(root)
    folder = base / FAMILY_DIR
    files = sorted(folder.glob("*.toml"))
    if not files:
        raise BadRowError(_rel(folder, base), None, None, "no family files (*.toml) found")
    out: list[Family] = []
    seen: dict[str, str] = {}
    for path in files:
        rel = _rel(path, base)
        data = _load_toml(path, base)
        extra = set(data) - {"family"}
        if extra:
            raise BadRowError(rel, None, sorted(extra)[0], "unknown top-level key; use [[family]]")
        entries = data.get("family")
        if not isinstance(entries, list) or not entries:
            raise BadRowError(rel, None, "family", "no [[family]] entries")
        for i, raw in enumerate(entries, start=1):
            probe = _Entry(rel, i, raw, "?")
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


def data_files(root: Path | str | None = None) -> list[Path]:
    """The data files the built-in catalogue is made from (``*.toml`` and ``*.csv``), sorted."""
    base = _root(root)
    return sorted(p for p in base.rglob("*") if p.suffix in (".toml", ".csv") and p.is_file())


def data_checksum(root: Path | str | None = None) -> str:
    """SHA-256 over the data files (relative path + bytes) and :data:`BUILDER_VERSION`."""
    base = _root(root)
    digest = hashlib.sha256(f"builder {BUILDER_VERSION}\n".encode())
    for path in data_files(base):
        digest.update(_rel(path, base).encode() + b"\0")
        digest.update(path.read_bytes() + b"\0")
    return digest.hexdigest()


# ---------------------------------------------------------------------------------------------
# expansion of families into rows


@dataclass(frozen=True)
class _Context:
    subclasses: dict[str, Subclass]
    sizes: dict[str, ResistorSize]
    price: PriceModel
    created_at: datetime


_COMMON_KEYS = {"name", "kind", "code", "title", "mount"}


def _row(ctx: _Context, fam: Family, e: _Entry, **values: Any) -> dict[str, Any]:
    row: dict[str, Any] = dict.fromkeys(_COLUMNS)
    row.update(
        family=fam.name,
        kind=fam.kind,
        mount=values.pop("mount", None) or e.text("mount"),
        price_note=ctx.price.label,
        source="builtin",
        fusible=False,
        created_at=ctx.created_at,
    )
    row.update(values)
    if row["mount"] not in ("smd", "tht"):
        raise e.fail("mount", f"{row['mount']!r}: use 'smd' or 'tht'")
    return row


def _area(ctx: _Context, mount: str, length_mm: float, width_mm: float) -> float:
    factor = ctx.price.smd_courtyard_factor if mount == "smd" else ctx.price.tht_courtyard_factor
    return round(length_mm * width_mm * factor, 2)


def _pct(tol: float) -> str:
    return f"{tol * 100:g} %"


def _volt_tag(v: float) -> str:
    """5.1 -> '5V1', 12 -> '12V', 6.3 -> '6V3' (the trade's way of writing voltages in codes)."""
    text = f"{v:g}"
    return text.replace(".", "V") if "." in text else f"{text}V"


def _band(e: _Entry, bands: list[_Entry], key: float, what: str) -> _Entry:
    for band in bands:
        if key <= band.number("max_cv"):
            return band
    raise e.fail("body", f"no body band reaches {what} = {key:g} uF*V; add a larger band")


def _expand_film(ctx: _Context, fam: Family) -> list[dict]:
    e = _Entry(fam.file, fam.row, fam.data, fam.name)
    is_x = fam.kind == "x_capacitor"
    keys = _COMMON_KEYS | {"dielectric", "series", "min", "max", "tolerances", "temp_max_c"}
    keys |= {"price", "voltage", "body"} | ({"safety_class", "humidity_grade"} if is_x else set())
    e.check_keys(keys)
    sub: Subclass | None = None
    if is_x:
        cls = e.text("safety_class").upper()
        sub = ctx.subclasses.get(cls)
        if sub is None or sub.group != "X":
            xs = [s for s in ctx.subclasses if s.startswith("X")]
            raise e.fail("safety_class", f"{cls!r} is not an X subclass of {SUBCLASS_FILE}: {xs}")
        grade = e.text("humidity_grade")
        if grade not in ("I", "II", "III"):
            raise e.fail("humidity_grade", f"{grade!r}: use I, II or III (IEC 60384-14 Amd 1)")
    price = e.table("price")
    price.check_keys({"base", "per_uf", "tolerance_factor"})
    base, per_uf = price.number("base"), price.number("per_uf")
    tol_factor = price.table("tolerance_factor")
    tolerances = e.tolerances("tolerances")
    for letter, _ in tolerances:
        tol_factor.number(letter)
    volts = e.items("voltage")
    bands = e.items("body")
    for band in bands:
        band.check_keys({"max_cv", "pitch_mm", "l_mm", "w_mm", "h_mm", "dvdt_v_per_us"})
    title, code, mount = e.text("title"), e.text("code"), e.text("mount")
    temp_max = e.number("temp_max_c")
    dielectric = e.text("dielectric")
    rows = []
    for c in e.series_values("F"):
        c_uf = c / 1e-6
        for v in volts:
            v.check_keys({"ac_v", "dc_v", "price_factor"})
            ac, dc, pf = v.number("ac_v"), v.number("dc_v"), v.number("price_factor")
            band = _band(e, bands, c_uf * ac, "C x V")
            pitch = band.number("pitch_mm")
            dims = (band.number("l_mm"), band.number("w_mm"), band.number("h_mm"))
            for letter, tol in tolerances:
                vtag = f"{ac:g}" if is_x else f"{dc:g}"
                vtext = f"{ac:g} VAC" if is_x else f"{dc:g} VDC / {ac:g} VAC"
                row = _row(
                    ctx,
                    fam,
                    e,
                    code=f"{code}-{vtag}-{iec60062_code(c, 'F')}-{letter}",
                    description=(
                        f"{title}, {format_value(c, 'F')} ±{_pct(tol)} {vtext}, pitch {pitch:g} mm"
                    ),
                    value=c,
                    tolerance=tol,
                    package=f"box P{pitch:g}",
                    pitch_mm=pitch,
                    body_mm="x".join(f"{d:g}" for d in dims),
                    area_mm2=_area(ctx, mount, dims[0], dims[1]),
                    unit_price=round((base + per_uf * c_uf) * pf * tol_factor.number(letter), 4),
                    rated_voltage_v=dc,
                    rated_voltage_ac_v=ac,
                    dvdt_v_per_s=band.number("dvdt_v_per_us") * 1e6,
                    temp_max_c=temp_max,
                    dielectric=dielectric,
                )
                if sub is not None:
                    row["safety_class"] = sub.name
                    row["humidity_grade"] = e.text("humidity_grade")
                    row["impulse_v"] = sub.service_impulse_max_v
                    if sub.impulse_test_v is not None:
                        row["impulse_test_v"] = round(
                            x_impulse_test_voltage(sub.impulse_test_v, c), 1
                        )
                rows.append(row)
    return rows


def _size_of(ctx: _Context, s: _Entry) -> ResistorSize:
    name = s.text("size")
    inline = {"mount", "power_w", "lev_v", "derate_start_c", "derate_end_c"}
    inline |= {"body_l_mm", "body_w_mm", "pitch_mm"}
    s.check_keys({"size", "tag", "price"} | inline)
    if name in ctx.sizes:
        clash = inline & set(s.data)
        if clash:
            raise s.fail(
                sorted(clash)[0], f"size {name!r} takes its ratings from {RESISTOR_SIZE_FILE}"
            )
        return ctx.sizes[name]
    if not set(s.data) & inline:
        raise s.fail("size", f"{name!r} is not in {RESISTOR_SIZE_FILE} and has no inline ratings")
    start, end = s.number("derate_start_c"), s.number("derate_end_c")
    if end <= start:
        raise s.fail("derate_end_c", "must be above derate_start_c")
    return ResistorSize(
        size=name,
        style="inline",
        mount=s.text("mount"),
        power_w=s.number("power_w"),
        lev_v=s.number("lev_v"),
        derate_start_c=start,
        derate_end_c=end,
        body_l_mm=s.number("body_l_mm"),
        body_w_mm=s.number("body_w_mm"),
        pitch_mm=s.number("pitch_mm") if s.has("pitch_mm") else None,
        mark="M",
    )


def _expand_resistor(ctx: _Context, fam: Family) -> list[dict]:
    e = _Entry(fam.file, fam.row, fam.data, fam.name)
    keys = (_COMMON_KEYS - {"mount"}) | {"series", "min", "max", "tolerance", "pulse_j_per_w"}
    e.check_keys(keys | {"size", "fusible"})
    letter, tol = e.tolerance("tolerance")
    per_w = e.number("pulse_j_per_w")
    fusible = e.flag("fusible")
    title, code = e.text("title"), e.text("code")
    values = e.series_values("ohm")
    rows = []
    for s in e.items("size"):
        size = _size_of(ctx, s)
        tag = s.text("tag", default=size.size)
        price = s.number("price")
        length = size.pitch_mm if size.pitch_mm else size.body_l_mm
        area = _area(ctx, size.mount, length, size.body_w_mm)
        working = resistor_working_voltage(size.power_w, np.asarray(values), size.lev_v)
        for r, u in zip(values, working.tolist(), strict=True):
            rows.append(
                _row(
                    ctx,
                    fam,
                    s,
                    mount=size.mount,
                    code=f"{code}{tag}-{iec60062_code(r, 'ohm')}-{letter}",
                    description=(
                        f"{title} {size.size}, {format_value(r, 'ohm')} ±{_pct(tol)}, "
                        f"{size.power_w:g} W, LEV {size.lev_v:g} V"
                    ),
                    value=r,
                    tolerance=tol,
                    package=size.size,
                    pitch_mm=size.pitch_mm,
                    body_mm=f"{size.body_l_mm:g}x{size.body_w_mm:g}",
                    area_mm2=area,
                    unit_price=price,
                    rated_voltage_v=float(u),
                    limiting_voltage_v=size.lev_v,
                    power_w=size.power_w,
                    derate_start_c=size.derate_start_c,
                    derate_end_c=size.derate_end_c,
                    pulse_energy_j=round(per_w * size.power_w, 6),
                    fusible=fusible,
                )
            )
    return rows


def _expand_diode(ctx: _Context, fam: Family) -> list[dict]:
    e = _Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS
        | {"package", "l_mm", "w_mm", "if_av_a", "ifsm_a", "vf_v", "rs_ohm", "tj_max_c", "vrrm"}
    )
    title, code, mount = e.text("title"), e.text("code"), e.text("mount")
    ifav, ifsm = e.number("if_av_a"), e.number("ifsm_a")
    area = _area(ctx, mount, e.number("l_mm"), e.number("w_mm"))
    rows = []
    for v in e.items("vrrm"):
        v.check_keys({"vrrm_v", "price"})
        vrrm = v.number("vrrm_v")
        rows.append(
            _row(
                ctx,
                fam,
                e,
                code=f"{code}-{vrrm:g}",
                description=f"{title}, {vrrm:g} V, IFSM {ifsm:g} A",
                value=ifav,
                package=e.text("package"),
                body_mm=f"{e.number('l_mm'):g}x{e.number('w_mm'):g}",
                area_mm2=area,
                unit_price=v.number("price"),
                vrrm_v=vrrm,
                if_av_a=ifav,
                ifsm_a=ifsm,
                vf_v=e.number("vf_v"),
                rs_ohm=e.number("rs_ohm"),
                tj_max_c=e.number("tj_max_c"),
                i2t_a2s=round(diode_i2t(ifsm), 4),
            )
        )
    return rows


def _expand_zener(ctx: _Context, fam: Family) -> list[dict]:
    e = _Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS
        | {"package", "l_mm", "w_mm", "series", "min", "max", "tolerance", "power_w"}
        | {"derate_start_c", "tj_max_c", "vf_v", "zz_ref_ohm", "zz_ref_v", "zz_exp", "price"}
    )
    letter, tol = e.tolerance("tolerance")
    title, code, mount = e.text("title"), e.text("code"), e.text("mount")
    power, tj = e.number("power_w"), e.number("tj_max_c")
    start = e.number("derate_start_c")
    if tj <= start:
        raise e.fail("tj_max_c", "must be above derate_start_c")
    area = _area(ctx, mount, e.number("l_mm"), e.number("w_mm"))
    rows = []
    for vz in e.series_values("V"):
        try:
            zz = zener_impedance(
                vz, e.number("zz_ref_ohm"), e.number("zz_ref_v"), e.number("zz_exp")
            )
        except OutOfRangeError as exc:
            raise e.fail("max", str(exc)) from None
        rows.append(
            _row(
                ctx,
                fam,
                e,
                code=f"{code}-{_volt_tag(vz)}",
                description=f"{title}, {vz:g} V ±{_pct(tol)}, {e.text('package')}",
                value=vz,
                tolerance=tol,
                package=e.text("package"),
                body_mm=f"{e.number('l_mm'):g}x{e.number('w_mm'):g}",
                area_mm2=area,
                unit_price=e.number("price"),
                power_w=power,
                derate_start_c=start,
                derate_end_c=tj,
                tj_max_c=tj,
                zz_ohm=zz,
                vf_v=e.number("vf_v"),
            )
        )
    return rows


def _expand_electrolytic(ctx: _Context, fam: Family) -> list[dict]:
    e = _Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS
        | {"series", "min", "max", "voltages", "tolerance", "temp_max_c", "ripple_a_per_sqrt_cv"}
        | {"price_base", "price_per_cv", "body"}
    )
    letter, tol = e.tolerance("tolerance")
    title, code, mount = e.text("title"), e.text("code"), e.text("mount")
    volts = e.raw("voltages")
    if not isinstance(volts, list) or not volts:
        raise e.fail("voltages", "must be a non-empty list of rated DC voltages")
    for v in volts:
        if isinstance(v, bool) or not isinstance(v, (int, float)) or v <= 0:
            raise e.fail("voltages", f"{v!r} is not a voltage > 0")
    bands = e.items("body")
    for band in bands:
        band.check_keys({"max_cv", "d_mm", "l_mm"})
    k_ripple = e.number("ripple_a_per_sqrt_cv")
    p0, p_cv = e.number("price_base"), e.number("price_per_cv")
    rows = []
    for c in e.series_values("F"):
        c_uf = c / 1e-6
        for v in volts:
            cv = c_uf * v
            band = _band(e, bands, cv, "C x V")
            d, length = band.number("d_mm"), band.number("l_mm")
            rows.append(
                _row(
                    ctx,
                    fam,
                    e,
                    code=f"{code}-{iec60062_code(c, 'F')}-{_volt_tag(float(v))}",
                    description=f"{title}, {format_value(c, 'F')} {v:g} V, {d:g}x{length:g} mm",
                    value=c,
                    tolerance=tol,
                    package=f"radial {d:g}x{length:g}",
                    body_mm=f"{d:g}x{length:g}",
                    area_mm2=_area(ctx, mount, d, d),
                    unit_price=round(p0 + p_cv * cv, 4),
                    rated_voltage_v=float(v),
                    ripple_a=round(k_ripple * math.sqrt(cv), 4),
                    temp_max_c=e.number("temp_max_c"),
                )
            )
    return rows


def _expand_fuse(ctx: _Context, fam: Family) -> list[dict]:
    e = _Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS | {"package", "l_mm", "w_mm", "rated_ac_v", "ratings", "i2t_per_a2", "price"}
    )
    title, code, mount = e.text("title"), e.text("code"), e.text("mount")
    ratings = e.raw("ratings")
    if not isinstance(ratings, list) or not ratings:
        raise e.fail("ratings", "must be a non-empty list of rated currents like '100m'")
    k = e.number("i2t_per_a2")
    area = _area(ctx, mount, e.number("l_mm"), e.number("w_mm"))
    rows = []
    for i, text in enumerate(ratings, start=1):
        try:
            amps = parse_value(text, "A")
        except BadValueError as exc:
            raise e.fail(f"ratings[{i}]", str(exc)) from None
        if amps <= 0:
            raise e.fail(f"ratings[{i}]", f"{text!r} must be > 0")
        rows.append(
            _row(
                ctx,
                fam,
                e,
                code=f"{code}-{round(amps * 1000):d}mA",
                description=f"{title}, {format_value(amps, 'A')} {e.number('rated_ac_v'):g} VAC",
                value=amps,
                package=e.text("package"),
                body_mm=f"{e.number('l_mm'):g}x{e.number('w_mm'):g}",
                area_mm2=area,
                unit_price=e.number("price"),
                rated_voltage_ac_v=e.number("rated_ac_v"),
                i2t_a2s=round(k * amps**2, 6),
            )
        )
    return rows


_EXPANDERS: Final[dict[str, Callable[[_Context, Family], list[dict]]]] = {
    "x_capacitor": _expand_film,
    "film_capacitor": _expand_film,
    "resistor": _expand_resistor,
    "diode": _expand_diode,
    "bridge": _expand_diode,
    "zener": _expand_zener,
    "electrolytic": _expand_electrolytic,
    "fuse": _expand_fuse,
}


def builtin_rows(
    root: Path | str | None = None, families: Iterable[Family] | None = None
) -> list[dict[str, Any]]:
    """Every built-in part as a dict of ``parts`` columns (no ``id``), validated, codes unique.

    ``root`` is the catalogue folder (default: the installed one). Raises BadRowError for a bad
    data file; the message names the file, the entry and the field.
    """
    base = _root(root)
    ctx = _Context(
        subclasses=load_subclasses(base),
        sizes=load_resistor_sizes(base),
        price=load_price_model(base),
        created_at=datetime.now(UTC).replace(tzinfo=None, microsecond=0),
    )
    rows: list[dict[str, Any]] = []
    seen: dict[str, str] = {}
    for fam in families if families is not None else load_families(base):
        made = _EXPANDERS[fam.kind](ctx, fam)
        for row in made:
            code = row["code"]
            if code in seen:
                raise BadRowError(
                    fam.file,
                    fam.row,
                    "code",
                    f"family {fam.name!r}: code {code} repeats "
                    f"(also made by family {seen[code]!r})",
                )
            seen[code] = fam.name
            if not row.get("description"):
                raise BadRowError(fam.file, fam.row, "title", "empty description")
        rows.extend(made)
    return rows
