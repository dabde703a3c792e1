"""Expansion of catalogue families into part rows, one expander per kind.

Each expander takes a validated :class:`~selector.catalogue.datafiles.Family` and returns plain
dicts (keys = ``parts`` columns, SI units); :func:`selector.catalogue.build.builtin_rows` runs
them through :data:`EXPANDERS` and checks that codes are unique. Ratings come from the pure
functions of :mod:`selector.catalogue.formulas`; prices and board areas are the demo price model,
invented (``price_note``).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from datetime import datetime
from typing import Any, Final

import numpy as np

from ..errors import BadValueError, OutOfRangeError
from ..units import format_value, iec60062_code, parse_value
from .datafiles import (
    RESISTOR_SIZE_FILE,
    SUBCLASS_FILE,
    Entry,
    Family,
    PriceModel,
    ResistorSize,
    Subclass,
)
from .formulas import diode_i2t, resistor_working_voltage, x_impulse_test_voltage, zener_impedance
from .models import Part

__all__ = ["EXPANDERS", "KIND_WORDS", "Context", "tolerance_tag", "unit_tag"]

_COLUMNS: Final[tuple[str, ...]] = tuple(c.name for c in Part.__table__.columns if c.name != "id")


@dataclass(frozen=True)
class Context:
    """What every expander shares: the standards tables, the price model, the build time."""

    subclasses: dict[str, Subclass]
    sizes: dict[str, ResistorSize]
    price: PriceModel
    created_at: datetime


_COMMON_KEYS = {"name", "kind", "code", "title", "mount"}


def _row(ctx: Context, fam: Family, e: Entry, **values: Any) -> dict[str, Any]:
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


def _area(ctx: Context, mount: str, length_mm: float, width_mm: float) -> float:
    factor = ctx.price.smd_courtyard_factor if mount == "smd" else ctx.price.tht_courtyard_factor
    return round(length_mm * width_mm * factor, 2)


def _pct(tol: float) -> str:
    return f"{tol * 100:g} %"


# ---------------------------------------------------------------------------------------------
# part codes: <kind>.<family>.<variant>.<value>[.<tolerance>] (catalogue/README.md lists them)

#: the first word of every built-in code, by kind
KIND_WORDS: Final[dict[str, str]] = {
    "x_capacitor": "xcap",
    "film_capacitor": "film",
    "resistor": "res",
    "diode": "diode",
    "bridge": "bridge",
    "zener": "zener",
    "electrolytic": "elcap",
    "fuse": "fuse",
    "varistor": "mov",
}
_WORD_RE: Final = re.compile(r"[a-z0-9]+")
_VALUE_RE: Final = re.compile(r"[A-Za-z0-9]+")


def unit_tag(value: float, unit: str) -> str:
    """A rating written with its unit letter where the decimal point would be (IEC 60062 style).

    ``unit`` is one lower-case letter (``v``, ``a``, ``w``): 5.1, 'v' -> '5v1'; 12, 'v' -> '12v';
    0.5, 'w' -> '0w5'; 6.3, 'v' -> '6v3'. The value is written with ``:g`` (6 significant digits).

    >>> unit_tag(5.1, "v"), unit_tag(0.5, "w"), unit_tag(1000, "v")
    ('5v1', '0w5', '1000v')
    """
    text = f"{value:g}"
    if "e" in text or value <= 0:
        raise BadValueError(f"no unit tag for {value!r} {unit}")
    whole, _, frac = text.partition(".")
    return f"{whole}{unit}{frac}"


def tolerance_tag(tol: float) -> str:
    """A tolerance as a code word: 0.05 -> '5pct', 0.005 -> '0p5pct' (no dots inside a word).

    >>> tolerance_tag(0.05), tolerance_tag(0.2), tolerance_tag(0.0025)
    ('5pct', '20pct', '0p25pct')
    """
    return f"{tol * 100:g}".replace(".", "p") + "pct"


def _code_prefix(e: Entry, kind: str) -> str:
    """The family's ``code`` field, checked: dot-separated lower-case words, the kind's word
    first, at least one family word after it (e.g. ``res.thick``)."""
    prefix = e.text("code")
    words = prefix.split(".")
    first = KIND_WORDS[kind]
    if len(words) < 2 or words[0] != first or not all(_WORD_RE.fullmatch(w) for w in words):
        raise e.fail(
            "code",
            f"{prefix!r}: write '{first}.<family word>[.<word>...]' in lower-case letters and "
            "digits, dots between the words",
        )
    return prefix


def _code(e: Entry, prefix: str, *words: str) -> str:
    """``prefix.word.word...``; each word is letters and digits only (the value may hold
    IEC 60062 capitals such as 4M7)."""
    for word in words:
        if not _VALUE_RE.fullmatch(word):
            raise e.fail("code", f"code word {word!r} after {prefix} is not letters and digits")
    return ".".join((prefix, *words))


def _word(e: Entry, field: str, default: str | None = None) -> str:
    text = e.text(field, default=default)
    if not _WORD_RE.fullmatch(text):
        raise e.fail(field, f"{text!r} must be lower-case letters and digits (it goes into codes)")
    return text


def _band(e: Entry, bands: list[Entry], key: float, what: str) -> Entry:
    for band in bands:
        if key <= band.number("max_cv"):
            return band
    raise e.fail("body", f"no body band reaches {what} = {key:g} uF*V; add a larger band")


def _expand_film(ctx: Context, fam: Family) -> list[dict]:
    e = Entry(fam.file, fam.row, fam.data, fam.name)
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
    title, mount = e.text("title"), e.text("mount")
    code = _code_prefix(e, fam.kind)
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
                vtag = f"{unit_tag(ac, 'v')}ac" if is_x else f"{unit_tag(dc, 'v')}dc"
                vtext = f"{ac:g} VAC" if is_x else f"{dc:g} VDC / {ac:g} VAC"
                row = _row(
                    ctx,
                    fam,
                    e,
                    code=_code(e, code, vtag, iec60062_code(c, "F"), tolerance_tag(tol)),
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
                    # in the text too, so that a BOM made from it audits with its grade
                    row["description"] += f", humidity grade {row['humidity_grade']}"
                    row["impulse_v"] = sub.service_impulse_max_v
                    if sub.impulse_test_v is not None:
                        row["impulse_test_v"] = round(
                            x_impulse_test_voltage(sub.impulse_test_v, c), 1
                        )
                rows.append(row)
    return rows


def _size_of(ctx: Context, s: Entry) -> ResistorSize:
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


def _expand_resistor(ctx: Context, fam: Family) -> list[dict]:
    e = Entry(fam.file, fam.row, fam.data, fam.name)
    keys = (_COMMON_KEYS - {"mount"}) | {"series", "min", "max", "tolerance", "pulse_j_per_w"}
    e.check_keys(keys | {"size", "fusible"})
    _, tol = e.tolerance("tolerance")
    per_w = e.number("pulse_j_per_w")
    fusible = e.flag("fusible")
    title, code = e.text("title"), _code_prefix(e, fam.kind)
    values = e.series_values("ohm")
    rows = []
    for s in e.items("size"):
        size = _size_of(ctx, s)
        tag = _word(s, "tag", default=size.size)
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
                    code=_code(e, code, tag, iec60062_code(r, "ohm"), tolerance_tag(tol)),
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


def _expand_diode(ctx: Context, fam: Family) -> list[dict]:
    e = Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS
        | {"package", "l_mm", "w_mm", "if_av_a", "ifsm_a", "vf_v", "rs_ohm", "tj_max_c", "vrrm"}
    )
    title, mount = e.text("title"), e.text("mount")
    code = _code_prefix(e, fam.kind)
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
                code=_code(e, code, unit_tag(ifav, "a"), unit_tag(vrrm, "v")),
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


def _expand_zener(ctx: Context, fam: Family) -> list[dict]:
    e = Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS
        | {"package", "l_mm", "w_mm", "series", "min", "max", "tolerance", "power_w"}
        | {"derate_start_c", "tj_max_c", "vf_v", "zz_ref_ohm", "zz_ref_v", "zz_exp", "price"}
    )
    _, tol = e.tolerance("tolerance")
    title, mount = e.text("title"), e.text("mount")
    code = _code_prefix(e, fam.kind)
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
                code=_code(e, code, unit_tag(power, "w"), unit_tag(vz, "v"), tolerance_tag(tol)),
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


def _expand_electrolytic(ctx: Context, fam: Family) -> list[dict]:
    e = Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS
        | {"series", "min", "max", "voltages", "tolerance", "temp_max_c", "ripple_a_per_sqrt_cv"}
        | {"price_base", "price_per_cv", "body", "rated_life_h"}
    )
    rated_life_h = e.number("rated_life_h")  # hours at temp_max_c
    _, tol = e.tolerance("tolerance")
    title, mount = e.text("title"), e.text("mount")
    code = _code_prefix(e, fam.kind)
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
                    code=_code(
                        e, code, unit_tag(float(v), "v"), iec60062_code(c, "F"), tolerance_tag(tol)
                    ),
                    description=(
                        f"{title}, {format_value(c, 'F')} {v:g} V, {d:g}x{length:g} mm, "
                        f"{rated_life_h:g}h"
                    ),
                    value=c,
                    tolerance=tol,
                    package=f"radial {d:g}x{length:g}",
                    body_mm=f"{d:g}x{length:g}",
                    area_mm2=_area(ctx, mount, d, d),
                    unit_price=round(p0 + p_cv * cv, 4),
                    rated_voltage_v=float(v),
                    ripple_a=round(k_ripple * math.sqrt(cv), 4),
                    temp_max_c=e.number("temp_max_c"),
                    rated_life_h=rated_life_h,
                )
            )
    return rows


def _expand_fuse(ctx: Context, fam: Family) -> list[dict]:
    e = Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS | {"package", "l_mm", "w_mm", "rated_ac_v", "ratings", "i2t_per_a2", "price"}
    )
    title, mount = e.text("title"), e.text("mount")
    code = _code_prefix(e, fam.kind)
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
                code=_code(e, code, f"{round(amps * 1000):d}ma"),
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


def _expand_varistor(ctx: Context, fam: Family) -> list[dict]:
    """One row per entry of ``ratings``: [continuous V ac, V at 1 mA, clamping V, energy J,
    peak A] (all at the family's disc size and clamping current)."""
    e = Entry(fam.file, fam.row, fam.data, fam.name)
    e.check_keys(
        _COMMON_KEYS | {"package", "disc_mm", "l_mm", "w_mm", "clamp_a", "ratings", "price"}
    )
    title, mount = e.text("title"), e.text("mount")
    code = _code_prefix(e, fam.kind)
    ratings = e.raw("ratings")
    if not isinstance(ratings, list) or not ratings:
        raise e.fail("ratings", "must be a non-empty list of [Vac, V1mA, Vclamp, J, A] rows")
    clamp_a = e.number("clamp_a")
    disc = e.number("disc_mm")
    area = _area(ctx, mount, e.number("l_mm"), e.number("w_mm"))
    rows = []
    for i, item in enumerate(ratings, start=1):
        if not (
            isinstance(item, list)
            and len(item) == 5
            and all(isinstance(x, (int, float)) and x > 0 for x in item)
        ):
            raise e.fail(f"ratings[{i}]", f"{item!r}: need [Vac, V1mA, Vclamp, J, A], all > 0")
        vac, v1, vc, joule, ipk = (float(x) for x in item)
        if not vc > v1 > math.sqrt(2) * vac:
            raise e.fail(f"ratings[{i}]", f"{item!r}: need Vclamp > V1mA > crest of Vac")
        rows.append(
            _row(
                ctx,
                fam,
                e,
                code=_code(e, code, f"{disc:g}mm", f"{vac:g}vac"),
                description=f"{title}, {vac:g} VAC, {v1:g} V at 1 mA, {vc:g} V at "
                f"{format_value(clamp_a, 'A')}, {joule:g} J",
                value=v1,
                package=e.text("package"),
                body_mm=f"{e.number('l_mm'):g}x{e.number('w_mm'):g}",
                area_mm2=area,
                unit_price=e.number("price"),
                rated_voltage_ac_v=vac,
                limiting_voltage_v=vc,
                clamp_current_a=clamp_a,
                pulse_energy_j=joule,
                ifsm_a=ipk,
            )
        )
    return rows


#: the expander of each kind (``models.KINDS``)
EXPANDERS: Final[dict[str, Callable[[Context, Family], list[dict]]]] = {
    "x_capacitor": _expand_film,
    "film_capacitor": _expand_film,
    "resistor": _expand_resistor,
    "diode": _expand_diode,
    "bridge": _expand_diode,
    "zener": _expand_zener,
    "electrolytic": _expand_electrolytic,
    "fuse": _expand_fuse,
    "varistor": _expand_varistor,
}
