"""Ratings from the text of a BOM line: value, tolerance, voltage (AC or DC), power, current,
package and the class words that say what a part is.

Numbers are read only by :func:`selector.units.parse_value` and :func:`parse_tolerance`; this
module finds *where* in the text a rating is written (regular expressions over the value,
description, package and rating columns; the manufacturer part number is never read) and what
it means for the kind of part.

Reading rules worth knowing (each is common practice, no source):

* ``305VAC``, ``275 V~``, ``AC 250V``, ``250 Vac`` are AC ratings; ``400VDC``, ``63 V=`` are DC.
  A bare ``63V`` is DC on an electrolytic, ceramic or general film capacitor, and AC on a
  capacitor of safety class X or Y (their rated voltage is stated in V AC). Each such reading is
  kept in ``Ratings.notes`` so the user sees it.
* ``X1 X2 X3 Y1 Y2 Y3 Y4`` are IEC 60384-14 safety classes only as whole words (``X1Y2`` and
  ``X1/Y2`` name both). ``X7R``, ``X5R``, ``Y5V``, ``Z5U`` are ceramic dielectrics (EIA codes),
  never safety classes.
* A voltage on a Zener line is its Zener voltage; on a diode or bridge its VRRM; on a resistor its
  limiting element voltage. ``5V1`` (a Zener voltage code) is read as 5.1 V.
* A capacitance that reads above 0.1 F (``104`` is 104 F, ``334K`` is 334 kF) is refused: it is a
  three-digit code or a typing error, and guessing which would be unsafe.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Final

from ..errors import BadValueError
from ..units import decimal_points, parse_tolerance, parse_value

__all__ = ["KINDS", "STATED_FIELDS", "Ratings", "apply_stated_ratings", "kind_of", "read_ratings"]

#: kinds of part the auditor tells apart (catalogue kinds plus ceramic/unknown capacitor, other)
KINDS: Final[tuple[str, ...]] = (
    "x_capacitor",
    "film_capacitor",
    "ceramic_capacitor",
    "capacitor",
    "electrolytic",
    "resistor",
    "diode",
    "bridge",
    "zener",
    "fuse",
    "varistor",
    "other",
)


@dataclass
class Ratings:
    """What a BOM line says about one part, in SI units; ``None`` where the line is silent.

    Field names follow the catalogue's columns (DEVELOPERS.md) so a missing one can be filled
    from a catalogue family. ``assumed`` maps a field to the family that supplied it.
    """

    kind: str
    value: float | None = None
    tolerance: float | None = None
    package: str | None = None
    mount: str | None = None
    safety_class: str | None = None
    dielectric: str | None = None
    technology: str | None = None
    fusible: bool = False
    pulse_rated: bool = False
    rated_voltage_v: float | None = None
    rated_voltage_ac_v: float | None = None
    limiting_voltage_v: float | None = None
    power_w: float | None = None
    vrrm_v: float | None = None
    if_av_a: float | None = None
    ifsm_a: float | None = None
    i2t_a2s: float | None = None
    temp_max_c: float | None = None
    tj_max_c: float | None = None
    derate_start_c: float | None = None
    derate_end_c: float | None = None
    pulse_energy_j: float | None = None
    dvdt_v_per_s: float | None = None
    ripple_a: float | None = None
    rated_life_h: float | None = None
    humidity_grade: str | None = None
    vf_v: float | None = None
    rs_ohm: float | None = None
    zz_ohm: float | None = None
    pitch_mm: float | None = None  # lead pitch of a film capacitor [mm], as the catalogue keeps it
    impulse_v: float | None = None  # X capacitor: peak impulse voltage in service [V]
    #: a varistor's clamping current [A] (its clamping voltage is ``limiting_voltage_v``)
    clamp_current_a: float | None = None
    words: list[str] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    assumed: dict[str, str] = field(default_factory=dict)


# ---------------------------------------------------------------------------------------------
# words

_WORDS: Final[tuple[tuple[str, str, str], ...]] = (
    # (regex on upper-case text, attribute, value)
    (r"POLYPROPYLENE|\bPP\b", "dielectric", "pp"),
    (r"POLYESTER|POLYETHYLENE[\s-]*TEREPHTHALATE|\bPETP?\b", "dielectric", "pet"),
    (r"\bC0G\b|\bCOG\b|\bNP0\b|\bNPO\b", "dielectric", "c0g"),
    (r"\bX7R\b|\bX5R\b|\bX7S\b|\bX6S\b|\bY5V\b|\bZ5U\b", "dielectric", "class2_ceramic"),
    (r"METAL[\s-]*OXIDE|\bMOX\b", "technology", "metal_oxide"),
    (r"WIRE[\s-]*WOUND|\bWW\b", "technology", "wirewound"),
    (r"METAL[\s-]*FILM", "technology", "metal_film"),
    (r"THICK[\s-]*FILM", "technology", "thick_film"),
    (r"THIN[\s-]*FILM", "technology", "thin_film"),
    (r"CARBON[\s-]*FILM", "technology", "carbon_film"),
)
_SAFETY_RE = re.compile(r"(?<![A-Z0-9])(X[123]|Y[1-4])(?:\s*/\s*|(?=Y[1-4]))?(Y[1-4])?(?![A-Z0-9])")
_ELECTROLYTIC_RE = re.compile(
    r"ELECTROLYTIC|\bELKO\b|ALUMINI?UM|\bALU\b|POLARI[SZ]ED|\bCP_|\bCP\b|\bE-?CAP\b"
)
_CERAMIC_RE = re.compile(r"CERAMIC|\bMLCC\b")
_FILM_RE = re.compile(
    r"\bFILM\b|METALL?[IY][SZ]ED|POLYPROPYLENE|POLYESTER|POLYETHYLENE[\s-]*TEREPHTHALATE"
    r"|\bPETP?\b|\bPP\b"
)
_ZENER_RE = re.compile(r"ZENER")
_BRIDGE_RE = re.compile(r"BRIDGE|(?<![A-Z0-9])(MBS|MBF|ABS|KBP|GBU|DBS|DB-?1)(?![A-Z0-9])")
_FUSE_RE = re.compile(r"\bFUSE\b|\bFUSES\b")
_FUSIBLE_RE = re.compile(r"FUSIBLE|FUSE\s+RESISTOR|FUSING\s+RESISTOR")
_PULSE_RE = re.compile(r"PULSE|ANTI[\s-]*SURGE|SURGE[\s-]*PROOF|HIGH[\s-]*SURGE")
_OTHER_RE = re.compile(r"\bLED\b|\bTVS\b|\bNTC\b|\bPTC\b|THERMISTOR")
_VARISTOR_RE = re.compile(r"VARISTOR|\bMOV\b|\bVDR\b")
_GLASS_RE = re.compile(r"\bGLASS\b")
_SLOW_RE = re.compile(r"TIME[\s-]*LAG|SLOW[\s-]*BLOW|\bSLOW\b|\(T\)|TIME[\s-]*DELAY")
_FAST_RE = re.compile(r"FAST[\s-]*ACTING|\bFAST\b|QUICK[\s-]*ACTING|\(F\)")

# ---------------------------------------------------------------------------------------------
# packages: (regex on upper-case text, canonical name, mount)

_PACKAGES: Final[tuple[tuple[str, str, str], ...]] = (
    (r"MICRO[\s_-]*MELF|MELF[\s_-]*0102", "melf_0102", "smd"),
    (r"MINI[\s_-]*MELF|MELF[\s_-]*0204|0204[\s_-]*MELF", "melf_0204", "smd"),
    (r"MELF[\s_-]*0207|0207[\s_-]*MELF|\bMELF\b", "melf_0207", "smd"),
    (r"SOD[\s_-]*80|LL[\s_-]*34", "sod80", "smd"),
    (r"SOD[\s_-]*123F?", "sod123", "smd"),
    (r"SOD[\s_-]*323", "sod323", "smd"),
    (r"DO[\s_-]*214AC|(?<![A-Z0-9])SMA(?![A-Z0-9])", "sma", "smd"),
    (r"DO[\s_-]*214AA|(?<![A-Z0-9])SMB(?![A-Z0-9])", "smb", "smd"),
    (r"DO[\s_-]*214AB|(?<![A-Z0-9])SMC(?![A-Z0-9])", "smc", "smd"),
    (r"SOT[\s_-]*23", "sot23", "smd"),
    (r"(?<![A-Z0-9])(MBS|MBF|ABS)(?![A-Z0-9])", "mbs", "smd"),
    (r"DO[\s_-]*41|SOD[\s_-]*81", "do41", "tht"),
    (r"DO[\s_-]*35|SOD[\s_-]*27", "do35", "tht"),
    (r"DO[\s_-]*15(?!\d)", "do15", "tht"),
    (r"DO[\s_-]*201", "do201", "tht"),
    (r"(?<![A-Z0-9])(KBP|GBU|DB-?1|DIP[\s_-]*4)(?![A-Z0-9])", "dip_bridge", "tht"),
    (r"(?<![0-9])0201(?![0-9])", "0201", "smd"),
    (r"(?<![0-9])0402(?![0-9])", "0402", "smd"),
    (r"(?<![0-9])0603(?![0-9])", "0603", "smd"),
    (r"(?<![0-9])0805(?![0-9])", "0805", "smd"),
    (r"(?<![0-9])1206(?![0-9])", "1206", "smd"),
    (r"(?<![0-9])1210(?![0-9])", "1210", "smd"),
    (r"(?<![0-9])1812(?![0-9])", "1812", "smd"),
    (r"(?<![0-9])2010(?![0-9])", "2010", "smd"),
    (r"(?<![0-9])2512(?![0-9])", "2512", "smd"),
    (r"AXIAL|DIN[\s_-]*0\d{3}", "axial", "tht"),
    (r"RADIAL|\bTHT\b|\bP\d+(\.\d+)?MM\b", "radial", "tht"),
    (r"\bSMD\b|\bSMT\b", "smd", "smd"),
)

# ---------------------------------------------------------------------------------------------
# numbers in text (found here, read by selector.units)

_NUM = r"\d+(?:\.\d+)?"
_VOLT_RE = re.compile(
    rf"(?<![\w.])(?:(?P<pre>AC|DC)\s*)?(?P<num>{_NUM})\s*(?P<k>K)?\s*V(?:OLTS?)?"
    r"(?:\s*(?P<suf>AC|DC|RMS|~|=))?(?![A-Z0-9])"
)
_POWER_RE = re.compile(
    rf"(?<![\w./])(?P<num>{_NUM}|\d+\s*/\s*\d+)\s*(?P<m>M)?\s*W(?:ATTS?)?(?![A-Z0-9])"
)
_CURRENT_RE = re.compile(rf"(?<![\w.])(?P<num>{_NUM})\s*(?P<m>M)?\s*A(?:MPS?)?(?![A-Z0-9])")
_IFSM_RE = re.compile(rf"IFSM\s*[=:]?\s*(?P<num>{_NUM})\s*A(?![A-Z0-9])")
_I2T_RE = re.compile(
    rf"I2T\s*[=:]?\s*(?P<num>{_NUM})\s*(?:A2S|A²S)?(?![A-Z0-9])|(?P<num2>{_NUM})\s*A(?:2|²)S"
)
_TEMP_RE = re.compile(r"(?<![\w.])(?P<num>\d{2,3})\s*(?:°|º|DEG\.?\s*)?C(?![A-Z0-9])")
_LIFE_RE = re.compile(
    r"(?<![\w.])(?P<num>\d+(?:\.\d+)?)\s*(?P<k>K)?\s*(?:H|HRS?|HOURS?)(?![A-Z0-9])"
)
_GRADE_RE = re.compile(r"(?:HUMIDITY\s+)?GRADE\s+(?P<grade>III|II|I)(?:\s*[AB])?(?![A-Z0-9])")
_PITCH_RE = re.compile(
    rf"PITCH\s*[=:]?\s*(?P<num>{_NUM})\s*(?:MM)?(?![A-Z0-9])"
    rf"|(?<![A-Z0-9])P\s?(?P<num2>{_NUM})\s*(?:MM)?(?![A-Z0-9.])"
)
_TOL_RE = re.compile(r"(?:±|\+/-)?\s*(?P<num>\d+(?:\.\d+)?)\s*%")
_ZENER_CODE_RE = re.compile(r"(?<!\d)(?P<a>\d{1,3})V(?P<b>\d)(?!\d)")
_SPLIT_RE = re.compile(r"[\s,;_]+|(?<!\d)/|/(?!\d)")
_CAP_UPPER_RE = re.compile(r"^(?P<num>[\d.]+)\s*(?P<p>[PNU])F$")


def kind_of(ref: str, text: str) -> str:
    """The kind of part from its designator prefix and the words of its line.

    >>> kind_of("C1", "330n X2 305VAC")
    'x_capacitor'
    >>> kind_of("C4", "100n 50V X7R 0603")
    'ceramic_capacitor'
    >>> kind_of("D5", "Zener 5.1V 0.5W SOD-123")
    'zener'
    """
    up = text.upper()
    prefix = re.match(r"[A-Za-z]*", ref).group(0).upper()  # type: ignore[union-attr]
    if prefix in ("MOV", "VDR") or (
        _VARISTOR_RE.search(up) and prefix not in ("U", "IC", "Q", "T", "K", "LED")
    ):
        return "varistor"
    if prefix in ("RV", "VR", "MOV", "VAR", "TH", "NTC", "PTC", "LED", "U", "IC", "Q", "T", "K"):
        return "other"
    if _OTHER_RE.search(up) and not _ZENER_RE.search(up):
        return "other"
    if prefix in ("BR", "DB", "BD", "B", "RECT") or (prefix == "D" and _BRIDGE_RE.search(up)):
        return "bridge"
    if prefix in ("F", "FU", "FS", "FUSE"):
        return "resistor" if _FUSIBLE_RE.search(up) else "fuse"
    if prefix in ("R", "RF", "RS", "RB"):
        return "resistor"
    if prefix in ("Z", "ZD", "DZ"):
        return "zener"
    if prefix in ("D", "V", "CR"):
        if _ZENER_RE.search(up) or _ZENER_CODE_RE.search(up):
            return "zener"
        return "diode"
    if prefix in ("C", "CX", "CY", "CE"):
        if _ELECTROLYTIC_RE.search(up):
            return "electrolytic"
        if _safety_classes(up):
            return "x_capacitor"
        if _CERAMIC_RE.search(up) or re.search(_WORDS[2][0] + "|" + _WORDS[3][0], up):
            return "ceramic_capacitor"
        if _FILM_RE.search(up):
            return "film_capacitor"
        return "capacitor"
    return "other"


def _safety_classes(up: str) -> list[str]:
    out: list[str] = []
    for m in _SAFETY_RE.finditer(up):
        out.extend(g for g in m.groups() if g)
    return out


def _read(text: str, quantity: str) -> float:
    return parse_value(text.replace(",", "."), quantity)


def _value_from(text: str, quantity: str, strict: bool) -> float | None:
    """The first token of ``text`` that reads as ``quantity``; ``strict`` wants a unit or a code
    letter (so that a package code such as 0805 in a description is not read as a value)."""
    whole = text.strip()
    if not whole:
        return None
    candidates = [whole] + [t for t in _SPLIT_RE.split(whole) if t]
    for token in candidates:
        t = token.strip()
        if quantity == "V":
            m = _ZENER_CODE_RE.fullmatch(t.upper())
            if m:
                t = f"{m.group('a')}.{m.group('b')}V"
        if quantity == "A":  # fuse speed letters: T100mA, F500mA, 100mAT
            t = re.sub(r"(?<=[aA])[TFtf]$", "", re.sub(r"^[TFtf](?=\d)", "", t))
        if quantity == "F":
            m = _CAP_UPPER_RE.match(t.upper())
            if m:
                t = f"{m.group('num')}{m.group('p').lower()}F"
        if strict and re.fullmatch(r"[\d.]+", t):
            continue
        try:
            return _read(t, quantity)
        except BadValueError:
            continue
    return None


_QUANTITY = {
    "x_capacitor": "F",
    "film_capacitor": "F",
    "ceramic_capacitor": "F",
    "capacitor": "F",
    "electrolytic": "F",
    "resistor": "ohm",
    "zener": "V",
    "fuse": "A",
}


def read_ratings(
    ref: str,
    value: str,
    description: str = "",
    package: str = "",
    voltage: str = "",
    power: str = "",
    tolerance: str = "",
    kind: str | None = None,
) -> Ratings:
    """Read one BOM line into :class:`Ratings`.

    ``kind`` overrides the kind read from the designator and the words (used when the user
    gives a part a role its text does not show, e.g. a Zener written only as ``D3 BZX 5V1``).

    Raises :class:`BadValueError` naming the column (``value``, ``voltage``, ``power``,
    ``tolerance``) when a part that needs a value has none that reads, or a rating column holds
    text that does not read.

    >>> r = read_ratings("C1", "470n", "X2 film capacitor 305VAC 10%")
    >>> (r.kind, r.value, r.rated_voltage_ac_v, r.safety_class, r.tolerance)
    ('x_capacitor', 4.7e-07, 305.0, 'X2', 0.1)
    """
    # a decimal comma between digits ('0,47µF', '0,6W') is a decimal point to the finders below
    try:
        value, description, voltage, power, tolerance = (
            decimal_points(t) for t in (value, description, voltage, power, tolerance)
        )
    except BadValueError as exc:
        raise BadValueError(f"description: {exc}") from None
    text = " ".join(t for t in (value, description, package, voltage, power, tolerance) if t)
    up = text.upper()
    if kind is None:
        kind = kind_of(ref, text)
    elif kind not in KINDS:
        raise ValueError(f"unknown kind {kind!r}; one of {', '.join(KINDS)}")
    r = Ratings(kind=kind)
    if kind == "other":
        return r
    # ---- class words
    classes = _safety_classes(up)
    if classes:
        r.safety_class = "".join(dict.fromkeys(classes))
        r.words.append(r.safety_class)
    if re.search(r"\bSAFETY\b", up):
        r.words.append("safety")
    for pattern, attr, val in _WORDS:
        if re.search(pattern, up) and getattr(r, attr) is None:
            setattr(r, attr, val)
            r.words.append(val)
    if kind == "film_capacitor" and r.dielectric is None:
        r.dielectric = "film"
    if _FUSIBLE_RE.search(up):
        r.fusible = True
        r.words.append("fusible")
    if _PULSE_RE.search(up):
        r.pulse_rated = True
        r.words.append("pulse")
    if _GLASS_RE.search(up):
        r.words.append("glass")
    if kind == "fuse":
        if (
            _SLOW_RE.search(up)
            or re.match(r"^\s*T\d", value.upper())
            or value.upper().endswith("T")
        ):
            r.words.append("time-lag")
        elif _FAST_RE.search(up) or re.match(r"^\s*F\d", value.upper()):
            r.words.append("fast")
    # ---- package
    pkg_text = " ".join(t for t in (package, description, value) if t).upper()
    for pattern, name, mount in _PACKAGES:
        if re.search(pattern, pkg_text):
            r.package, r.mount = name, mount
            break
    if r.package is None and "glass" in r.words and kind == "zener":
        r.package, r.mount = "do35", "tht"
    if kind == "varistor":
        _read_varistor(r, up)
        return r
    # ---- value
    quantity = _QUANTITY.get(kind)
    if quantity is not None:
        r.value = _value_from(value, quantity, strict=False)
        if r.value is None:
            r.value = _value_from(description, quantity, strict=True)
        if r.value is None and kind == "zener":
            m = _ZENER_CODE_RE.search(up)
            if m:
                r.value = _read(f"{m.group('a')}.{m.group('b')}V", "V")
        if r.value is None and kind == "zener":
            volts = _voltages(description + " " + voltage)
            if volts:
                r.value = volts[0][0]
        if r.value is None and kind != "fuse" and value:
            # a bare number that the ranges refuse: say why (sign, or a three-digit code)
            try:
                bare = float(value.strip().replace(",", "."))
            except ValueError:
                bare = None
            if bare is not None and bare <= 0:
                raise BadValueError(f"value: {value!r} is not a positive {_NAMES[quantity]}")
            if bare is not None and quantity == "F" and bare > 0.1:
                raise BadValueError(
                    f"value: {value!r} reads as {bare:g} F; write it with a prefix such as 100n "
                    "(a three-digit code like 104 is not read, to avoid a guess)"
                )
        if r.value is None and kind != "fuse":
            shown = value or description
            raise BadValueError(
                f"value: cannot read {shown!r} as a {_NAMES[quantity]}"
                + (" (empty)" if not shown else "")
            )
        if r.value is not None and r.value <= 0:
            raise BadValueError(f"value: {value!r} is not a positive {_NAMES[quantity]}")
        if quantity == "F" and r.value is not None and r.value > 0.1:
            raise BadValueError(
                f"value: {value!r} reads as {r.value:g} F; write it with a prefix such as 100n "
                "(a three-digit code like 104 is not read, to avoid a guess)"
            )
    # ---- tolerance
    if tolerance:
        try:
            r.tolerance = parse_tolerance(tolerance)
        except BadValueError as exc:
            raise BadValueError(f"tolerance: {exc}") from None
    else:
        m = _TOL_RE.search(text)
        if m:
            r.tolerance = parse_tolerance(m.group("num") + "%")
    # ---- voltages
    if voltage:
        vtext = voltage if re.search(r"[A-Za-z~=]", voltage) else voltage + "V"
        found = _voltages(vtext)
        if not found:
            raise BadValueError(f"voltage: cannot read {voltage!r} (write it like 305VAC or 63V)")
        volts = found + _voltages(" ".join((value, description)))
    else:
        volts = _voltages(" ".join((value, description)))
    _assign_voltages(r, volts)
    # ---- power
    ptext = power if power else text
    if power and not re.search(r"[A-Za-z]", power):
        ptext = power + "W"
    m = _POWER_RE.search(ptext.upper())
    if m:
        r.power_w = _power(m)
    elif power:
        raise BadValueError(f"power: cannot read {power!r} (write it like 0.25W, 1/4W or 250mW)")
    # ---- currents
    m = _IFSM_RE.search(up)
    if m:
        r.ifsm_a = _read(m.group("num") + "A", "A")
    m = _I2T_RE.search(up)
    if m:
        r.i2t_a2s = _read(m.group("num") or m.group("num2"), "A2s")
    if kind in ("electrolytic", "capacitor", "zener", "diode", "bridge"):
        temps = [parse_value(m.group("num")) for m in _TEMP_RE.finditer(up)]
        temps = [t for t in temps if 70 <= t <= 200]
        if temps:
            r.temp_max_c = max(temps)
    if kind == "electrolytic":
        m = _LIFE_RE.search(up)
        if m:  # a rated life written on the line: '10000h', '5000 hours', '2k h'
            r.rated_life_h = float(m.group("num")) * (1e3 if m.group("k") else 1.0)
    if kind in ("x_capacitor", "film_capacitor", "capacitor"):
        m = _PITCH_RE.search(up)
        if m:  # 'pitch 22.5mm', 'P15': a lead pitch in millimetres (a bare number, no unit)
            r.pitch_mm = parse_value(m.group("num") or m.group("num2"))
    m = _GRADE_RE.search(up)
    if m and kind not in ("electrolytic", "zener", "diode", "bridge", "fuse", "resistor"):
        r.humidity_grade = m.group("grade")  # IEC 60384-14 Amd 1 humidity robustness grade
    if kind in ("diode", "bridge"):
        rest = _IFSM_RE.sub(" ", up)
        m = _CURRENT_RE.search(rest)
        if m:
            r.if_av_a = _read(m.group("num") + ("m" if m.group("m") else "") + "A", "A")
    return r


#: a varistor's figures: "430 V at 1 mA" (varistor voltage), "710 V at 50 A" (clamping
#: voltage at its current), "80 J" (energy), "4.5 kA" (8/20 us peak current), "14 mm" (disc)
_AT_CURRENT_RE = re.compile(
    rf"(?<![\w.])(?P<v>{_NUM})\s*V\s*(?:AT|@)\s*(?P<a>{_NUM})\s*(?P<p>[MK])?\s*A(?![A-Z0-9])"
)
_ENERGY_RE = re.compile(rf"(?<![\w.])(?P<num>{_NUM})\s*(?P<m>M)?\s*J(?:OULES?)?(?![A-Z0-9])")
_PEAK_A_RE = re.compile(rf"(?<![\w.])(?P<num>{_NUM})\s*(?P<p>K)?\s*A(?:MPS?)?(?![A-Z0-9])")
_DISC_RE = re.compile(
    rf"(?<![\w.])(?P<num>{_NUM})\s*MM\s*(?:DISC|DIA)|DISC\s*(?P<num2>{_NUM})\s*MM"
)


def _read_varistor(r: Ratings, up: str) -> None:
    """A varistor line's figures into ``r``: the varistor voltage at 1 mA (``value``), the
    clamping voltage and its current (``limiting_voltage_v``, ``clamp_current_a``), the
    continuous AC voltage (``rated_voltage_ac_v``; a voltage without an AC/DC mark and not
    "at" a current is read as V AC: varistors are named by their continuous AC rating, common
    practice), the energy (``pulse_energy_j``), the 8/20 us peak current (``ifsm_a``) and the
    disc diameter (``package`` 'disc N mm'). Every figure is read by selector.units; a missing
    one stays None (filled from the catalogue family, else the rule warns)."""
    r.words.append("varistor")
    rest = up
    for m in _AT_CURRENT_RE.finditer(up):
        volts = _read(m.group("v") + "V", "V")
        amps = _read(
            m.group("a") + (m.group("p") or "").replace("M", "m").replace("K", "k") + "A", "A"
        )
        if abs(amps - 1e-3) <= 1e-9:
            r.value = r.value or volts
        elif r.limiting_voltage_v is None:
            r.limiting_voltage_v, r.clamp_current_a = volts, amps
        rest = rest.replace(m.group(0), " ")
    m = _ENERGY_RE.search(rest)
    if m:
        r.pulse_energy_j = _read(m.group("num") + ("m" if m.group("m") else "") + "J", "J")
        rest = rest.replace(m.group(0), " ")
    m = _DISC_RE.search(rest)
    if m:
        size = m.group("num") or m.group("num2")
        r.package = f"disc {size} mm"
        r.mount = r.mount or "tht"
        rest = rest.replace(m.group(0), " ")
    for v, tag in _voltages(rest):
        if tag == "ac" and r.rated_voltage_ac_v is None:
            r.rated_voltage_ac_v = v
        elif tag is None and r.rated_voltage_ac_v is None:
            r.rated_voltage_ac_v = v
            r.notes.append(
                f"{v:g} V read as V AC: varistors are named by their continuous AC rating "
                "(common practice)"
            )
    rest = _VOLT_RE.sub(" ", rest)
    m = _IFSM_RE.search(rest) or _PEAK_A_RE.search(rest)
    if m:
        r.ifsm_a = _read(m.group("num") + ("k" if m.groupdict().get("p") else "") + "A", "A")


_NAMES = {"F": "capacitance", "ohm": "resistance", "V": "voltage", "A": "current"}


def _power(m: re.Match[str]) -> float:
    num = m.group("num").replace(" ", "")
    if "/" in num:
        a, b = num.split("/")
        w = _read(a, "W") / _read(b, "W")
    else:
        w = _read(num + ("m" if m.group("m") else ""), "W")
    return float(f"{w:.12g}")


def _voltages(text: str) -> list[tuple[float, str | None]]:
    """(volts, 'ac' | 'dc' | None) for each voltage written in the text, in order."""
    out: list[tuple[float, str | None]] = []
    for m in _VOLT_RE.finditer(text.upper()):
        v = _read(m.group("num") + ("k" if m.group("k") else "") + "V", "V")
        tag = m.group("pre") or m.group("suf")
        kind = None
        if tag in ("AC", "RMS", "~"):
            kind = "ac"
        elif tag in ("DC", "="):
            kind = "dc"
        out.append((v, kind))
    return out


def _assign_voltages(r: Ratings, volts: list[tuple[float, str | None]]) -> None:
    if not volts:
        return
    if r.kind == "zener":
        return  # a voltage on a Zener line is its Zener voltage, read as the value
    if r.kind in ("diode", "bridge"):
        r.vrrm_v = max(v for v, _ in volts)
        return
    if r.kind == "resistor":
        r.limiting_voltage_v = volts[0][0]
        if volts[0][1] == "ac":
            r.notes.append("limiting voltage stated in V AC; compared with peak stress as is")
        return
    if r.kind == "fuse":
        # no dropper rule checks a fuse's rated voltage; kept (AC or unmarked) for the catalogue
        r.rated_voltage_ac_v = next((v for v, tag in volts if tag != "dc"), None)
        return
    for v, tag in volts:
        if tag == "ac":
            r.rated_voltage_ac_v = r.rated_voltage_ac_v or v
        elif tag == "dc":
            r.rated_voltage_v = r.rated_voltage_v or v
        elif r.safety_class:
            r.rated_voltage_ac_v = r.rated_voltage_ac_v or v
            r.notes.append(
                f"{v:g} V read as V AC: safety-class capacitors are rated in V AC (common practice)"
            )
        else:
            r.rated_voltage_v = r.rated_voltage_v or v
            if r.kind in ("film_capacitor", "capacitor"):
                r.notes.append(f"{v:g} V read as V DC (no AC/DC mark on a non-safety capacitor)")


#: the ratings a BOM's ``Ratings`` column may state (``name=value``; the names are the
#: catalogue's columns and the JSON keys, numbers in SI base units as in ``--json``)
STATED_FIELDS: Final[tuple[str, ...]] = (
    "tolerance",
    "safety_class",
    "humidity_grade",
    "fusible",
    "rated_voltage_v",
    "rated_voltage_ac_v",
    "limiting_voltage_v",
    "power_w",
    "derate_start_c",
    "derate_end_c",
    "pulse_energy_j",
    "impulse_v",
    "dvdt_v_per_s",
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
)
_TEXT_FIELDS: Final[frozenset[str]] = frozenset({"safety_class", "humidity_grade"})


def stated_ratings(text: str) -> dict[str, float | str | bool]:
    """Read a ``Ratings`` cell: ``power_w=1; limiting_voltage_v=350; fusible=1``.

    Names are those of :data:`STATED_FIELDS`; numbers are read by
    :func:`selector.units.parse_value` (plain SI numbers, as ``--json`` prints them). Raises
    :class:`BadValueError` starting ``ratings:`` for an unknown name or a number that does not
    read.

    >>> stated_ratings("power_w=0.5; limiting_voltage_v=300; fusible=0")
    {'power_w': 0.5, 'limiting_voltage_v': 300.0, 'fusible': False}
    """
    out: dict[str, float | str | bool] = {}
    for chunk in re.split(r"[;|]", text):
        chunk = chunk.strip()
        if not chunk:
            continue
        name, sep, figure = (piece.strip() for piece in chunk.partition("="))
        if not sep or not figure:
            raise BadValueError(f"ratings: {chunk!r} is not name=value (e.g. power_w=0.5)")
        if name not in STATED_FIELDS:
            raise BadValueError(
                f"ratings: unknown rating {name!r}; one of {', '.join(STATED_FIELDS)}"
            )
        if name in _TEXT_FIELDS:
            out[name] = figure
        elif name == "fusible":
            if figure.lower() not in ("0", "1", "yes", "no", "true", "false"):
                raise BadValueError(f"ratings: fusible={figure!r}; write fusible=1 or fusible=0")
            out[name] = figure.lower() in ("1", "yes", "true")
        else:
            try:
                out[name] = parse_value(figure)
            except BadValueError as exc:
                raise BadValueError(f"ratings: {name}: {exc}") from None
    return out


def apply_stated_ratings(ratings: Ratings, text: str) -> None:
    """Set the ratings a ``Ratings`` cell states (:func:`stated_ratings`) on ``ratings``; they
    win over what the line's text says, and a stated figure is never filled from a family."""
    for name, figure in stated_ratings(text).items():
        setattr(ratings, name, figure)
        ratings.assumed.pop(name, None)
