"""Circuit options shared by ``check``, ``design`` and ``audit``.

Each option is an ``Annotated`` alias so a command declares it in one line::

    def check(topology: TopologyOpt = "bridge", mains: MainsOpt = "230", ...): ...

and the builders below turn the texts into engine dataclasses (values read only through
``selector.units``). A command that computes some values itself (``design``) simply passes
``None`` for them and builds the parts it needs.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Annotated

import typer

from ..engine import Circuit, Conditions, Load, Mains, Regulator, Tolerances
from ..engine.circuit import (
    DEFAULT_RESERVOIR_ESR_OHM,
    DISCHARGE_PROFILES,
    HARMONIC_PROFILES,
    MAX_HARMONIC_ORDER,
    TOPOLOGIES,
    Harmonic,
)
from ..errors import BadValueError, DropperError, OutOfRangeError
from ..policy import PRODUCT_CLASSES, Policy, product_class_limit
from ..ranges import check_range
from ..units import (
    format_duration,
    format_value,
    parse_count,
    parse_duration,
    parse_percent,
    parse_tolerance,
    parse_value,
)

__all__ = [
    "AmbientOpt",
    "VaristorOpt",
    "BleederOpt",
    "BurstOpt",
    "BurstPeriodOpt",
    "BurstTimeOpt",
    "CapLossOpt",
    "CapOpt",
    "CapTolOpt",
    "DbOpt",
    "DiodeDropOpt",
    "DiodeROpt",
    "DropoutOpt",
    "FreqOpt",
    "HarmonicsOpt",
    "HumidityOpt",
    "JsonOpt",
    "LifeOpt",
    "LoadOpt",
    "LoadROpt",
    "MainsOpt",
    "MainsTolOpt",
    "ProfileOpt",
    "QuiescentOpt",
    "RegulatorOpt",
    "ReservoirEsrOpt",
    "ReservoirOpt",
    "RTolOpt",
    "SeriesROpt",
    "ProductClassOpt",
    "StandbyLimitOpt",
    "SurgeOpt",
    "SwitchOnsOpt",
    "TopologyOpt",
    "VoutMaxOpt",
    "VoutMinOpt",
    "ZenerOpt",
    "ZenerTolOpt",
    "ZenerZOpt",
    "circuit_from_options",
    "conditions_from_options",
    "describe_corner",
    "describe_life",
    "load_from_options",
    "mains_from_options",
    "describe_mains",
    "option_percent",
    "option_temperature",
    "option_value",
    "parse_burst",
    "parse_cap_loss",
    "parse_topology",
    "parse_frequencies",
    "parse_harmonics",
    "standby_policy",
    "tolerances_from_options",
]


TopologyOpt = Annotated[str, typer.Option("--topology", help=f"{' or '.join(TOPOLOGIES)}.")]
MainsOpt = Annotated[str, typer.Option("--mains", help="Nominal mains, V rms (230, 120).")]
MainsTolOpt = Annotated[str, typer.Option("--mains-tol", help="Mains tolerance, % (10).")]
FreqOpt = Annotated[str, typer.Option("--freq", help="Mains frequency or set, Hz: 50 or 50,60.")]
HarmonicsOpt = Annotated[
    str | None,
    typer.Option(
        "--harmonics",
        help="Mains harmonics applied at every corner: order:% of the fundamental[@phase deg], "
        f"comma-separated (5:6,7:5,3:5 or 5:6@180), or a profile: {', '.join(HARMONIC_PROFILES)} "
        "[M]; 'none' for a pure sine.",
    ),
]
CapOpt = Annotated[
    list[str] | None,
    typer.Option("--cap", help="X capacitor (330n); repeat for parts in parallel."),
]
CapTolOpt = Annotated[str, typer.Option("--cap-tol", help="X capacitor tolerance, % or K/M.")]
CapLossOpt = Annotated[
    str | None,
    typer.Option(
        "--cap-loss",
        help="X capacitor end-of-life capacitance loss, %; default: from its humidity grade "
        "at --life, --humidity and --ambient (Peck's model), and 10 % in the worst case.",
    ),
]
SeriesROpt = Annotated[str, typer.Option("--series-r", help="Series resistance, ohm (470).")]
RTolOpt = Annotated[str, typer.Option("--r-tol", help="Resistor tolerance, % (series + bleeder).")]
BleederOpt = Annotated[
    str, typer.Option("--bleeder", help="Bleeder across the X capacitor, ohm; 'none' for none.")
]
ZenerOpt = Annotated[str, typer.Option("--zener", help="Zener voltage, V (12).")]
ZenerTolOpt = Annotated[str, typer.Option("--zener-tol", help="Zener voltage tolerance, %.")]
ZenerZOpt = Annotated[str, typer.Option("--zener-z", help="Zener dynamic impedance, ohm.")]
ReservoirOpt = Annotated[str, typer.Option("--reservoir", help="Reservoir capacitor, F (220u).")]
ReservoirEsrOpt = Annotated[
    str | None,
    typer.Option(
        "--reservoir-esr",
        help="Reservoir ESR, ohm (default 0.3, common practice); used by the surge model.",
    ),
]
VoutMinOpt = Annotated[
    str | None,
    typer.Option(
        "--vout-min",
        help="Lowest bus voltage the load tolerates, V (default 0.9 x the bus voltage, "
        "common practice); the ripple trough at full load and low line is judged against it.",
    ),
]
VoutMaxOpt = Annotated[
    str | None,
    typer.Option(
        "--vout-max",
        help="Highest bus voltage the load tolerates, V (default 1.3 x the bus voltage, "
        "common practice); the surge's bus peak is judged against it.",
    ),
]
LoadOpt = Annotated[str, typer.Option("--load", help="DC load current, A (15m).")]
LoadROpt = Annotated[
    str | None, typer.Option("--load-r", help="Load as a resistor, ohm (instead of --load).")
]
BurstOpt = Annotated[
    str | None, typer.Option("--burst", help="Extra burst current, A (relay, radio).")
]
BurstTimeOpt = Annotated[str | None, typer.Option("--burst-time", help="Burst duration, s.")]
BurstPeriodOpt = Annotated[
    str | None, typer.Option("--burst-period", help="Burst repetition period, s.")
]
DiodeDropOpt = Annotated[str, typer.Option("--diode-drop", help="Rectifier forward drop, V.")]
DiodeROpt = Annotated[str, typer.Option("--diode-r", help="Rectifier series resistance, ohm.")]
RegulatorOpt = Annotated[
    str | None, typer.Option("--regulator", help="Linear post-regulator output, V (3.3).")
]
DropoutOpt = Annotated[str, typer.Option("--dropout", help="Regulator dropout, V.")]
QuiescentOpt = Annotated[str, typer.Option("--quiescent", help="Regulator quiescent current, A.")]
AmbientOpt = Annotated[str, typer.Option("--ambient", help="Maximum ambient temperature, C.")]
ProfileOpt = Annotated[
    str,
    typer.Option("--profile", help=f"Discharge rule: {', '.join(DISCHARGE_PROFILES)}."),
]
SurgeOpt = Annotated[
    str, typer.Option("--surge", help="IEC 61000-4-5 surge level, V peak (1k); 0 for none.")
]
LifeOpt = Annotated[
    str,
    typer.Option(
        "--life", help="Target life of continuous operation: 87600h, 10y (8760 h a year)."
    ),
]
HumidityOpt = Annotated[
    str, typer.Option("--humidity", help="Relative humidity in use, % (60), at --ambient.")
]
SwitchOnsOpt = Annotated[
    str, typer.Option("--switch-ons", help="Plug-ins / power-ups over the life (30k).")
]
StandbyLimitOpt = Annotated[
    str | None,
    typer.Option(
        "--standby-limit",
        help="No-load (standby) power limit, W (0.5); default none: the no-load power is "
        "shown, not judged.",
    ),
]
ProductClassOpt = Annotated[
    str | None,
    typer.Option(
        "--product-class",
        help="Product class setting the standby limit: "
        + ", ".join(
            f"{name} ({'none' if lim is None else f'{lim:g} W'})"
            for name, (lim, _) in PRODUCT_CLASSES.items()
        )
        + " (0.8 and 2 W from memory).",
    ),
]
JsonOpt = Annotated[bool, typer.Option("--json", help="Print one JSON document.")]
DbOpt = Annotated[str | None, typer.Option("--db", help="Catalogue database URL or file.")]
VaristorOpt = Annotated[
    str | None,
    typer.Option(
        "--varistor",
        help="A varistor across the line ahead of the dropper, from the catalogue: its code, "
        "its voltage at 1 mA (430) or its continuous rating (275VAC); the surge clamps with it.",
    ),
]


def option_value(text: str, quantity: str | None, what: str) -> float:
    """The one reader of a numeric option: ``parse_value`` (finite, inside the quantity's
    physical range, selector.ranges); an error names the option ``what``."""
    try:
        return parse_value(text, quantity)
    except BadValueError as exc:
        raise BadValueError(f"{what}: {exc}") from None


def option_percent(text: str, what: str) -> float:
    """The one reader of a tolerance or percentage option (letter or %, 0 to below 100 %)."""
    try:
        return parse_tolerance(text)
    except BadValueError as exc:
        raise BadValueError(f"{what}: {exc}") from None


def option_temperature(text: str, what: str) -> float:
    """A temperature option [C], inside the ``temperature_c`` range of selector.ranges."""
    cleaned = text.strip().removesuffix("C").removesuffix("°").strip() if text else text
    value = option_value(cleaned, None, what)
    try:
        return check_range(value, "temperature_c", "a temperature")
    except BadValueError as exc:
        raise BadValueError(f"{what}: {exc}") from None


def parse_cap_loss(text: str) -> float:
    """``--cap-loss``: the X capacitor's end-of-life loss as a fraction (10 -> 0.1)."""
    return option_percent(text, "--cap-loss")


def parse_topology(text: str, extra: tuple[str, ...] = ()) -> str:
    """``--topology``: bridge or half-wave (and ``extra`` names such as 'any' or 'auto')."""
    top = text.strip().lower()
    if top in ("halfwave", "half_wave", "half"):
        top = "half-wave"
    if top not in (*extra, *TOPOLOGIES):
        raise BadValueError(
            f"--topology: unknown topology {text!r}; one of {', '.join((*extra, *TOPOLOGIES))}"
        )
    return top


def parse_burst(
    burst: str | None, burst_time: str | None = None, burst_period: str | None = None
) -> tuple[float, float, float]:
    """(current [A], duration [s], period [s]) of the load burst, the one reader for every
    command: ``--burst 30m/5ms/1s``, or ``--burst 30m --burst-time 5m --burst-period 1``.
    No burst gives zeros; a burst needs 0 < duration < period."""
    if not burst:
        if burst_time or burst_period:
            raise BadValueError("--burst-time and --burst-period need --burst (e.g. --burst 30m)")
        return 0.0, 0.0, 0.0
    if "/" in burst:
        pieces = burst.split("/")
        if len(pieces) != 3 or burst_time or burst_period:
            raise BadValueError(
                f"--burst: cannot read {burst!r}; write current/duration/period, e.g. 30m/5ms/1s "
                "(or give --burst-time and --burst-period, not both forms)"
            )
        current_text, time_text, period_text = pieces
    else:
        current_text, time_text, period_text = burst, burst_time, burst_period
        if not time_text or not period_text:
            raise BadValueError("--burst needs a duration and a period: --burst 30m/5ms/1s")
    current = option_value(current_text, "A", "--burst")
    duration = option_value(time_text, "s", "--burst duration")
    period = option_value(period_text, "s", "--burst period")
    if current > 0 and not 0 < duration < period:
        raise BadValueError(
            "--burst needs a duration > 0 and a longer period (e.g. --burst 30m/5ms/1s)"
        )
    return current, duration, period


def parse_frequencies(text: str) -> tuple[float, ...]:
    """'50' -> (50.0,); '50,60' -> (50.0, 60.0) (order kept: the first is the nominal one)."""
    parts = [p for p in text.replace(";", ",").split(",") if p.strip()]
    if not parts:
        raise BadValueError(f"--freq: cannot read {text!r}; write 50 or 50,60")
    out: list[float] = []
    for p in parts:
        f = option_value(p.strip(), "Hz", "--freq")
        if f not in out:
            out.append(f)
    return tuple(out)


_HARMONIC_FORMS = (
    "write order:percent[@phase_deg] items separated by commas (5:6,7:5,3:5 or 5:6@180), "
    f"orders 2..{MAX_HARMONIC_ORDER}, 0..30 % of the fundamental, "
    f"or a profile name: {', '.join(HARMONIC_PROFILES)}; none for a pure sine"
)


def parse_harmonics(text: str | None) -> tuple[tuple[Harmonic, ...], str | None]:
    """The one reader of ``--harmonics``: (harmonics, source text).

    ``'5:6,7:5@180'`` -> 5th 6 % phase 0, 7th 5 % phase 180 deg (source ``'--harmonics'``);
    ``'en50160'`` -> the named profile with its source (:data:`HARMONIC_PROFILES`, [M]);
    ``None``, ``''`` or ``'none'`` -> no harmonics. A bad item raises BadValueError naming it and
    the valid forms.
    """
    if text is None or text.strip().lower() in ("", "none", "no", "0", "sine"):
        return (), None
    key = text.strip().lower().replace(" ", "").replace("-", "").replace("_", "")
    if key in HARMONIC_PROFILES:
        hs, source = HARMONIC_PROFILES[key]
        return hs, f"{key}: {source}"
    out: list[Harmonic] = []
    for raw in text.replace(";", ",").split(","):
        token = raw.strip()
        if not token:
            continue

        def bad(why: str, token: str = token) -> BadValueError:
            return BadValueError(f"--harmonics: {why} in {token!r}; {_HARMONIC_FORMS}")

        head, _, phase_text = token.partition("@")
        order_text, sep, pct_text = head.partition(":")
        if not sep or not order_text.strip() or not pct_text.strip():
            raise bad("cannot read the item")
        try:
            order_f = float(order_text.strip())
        except ValueError:
            raise bad(f"order {order_text.strip()!r} is not a number") from None
        if not math.isfinite(order_f) or order_f != int(order_f):
            raise bad(f"order {order_f:g} is not a whole number")
        try:
            pct = parse_value(pct_text.strip().rstrip("%").strip(), None)
            phase = parse_value(phase_text.strip().rstrip("°").strip(), None) if phase_text else 0.0
        except BadValueError:
            raise bad("cannot read the percentage or the phase") from None
        if any(h.order == int(order_f) for h in out):
            raise bad(f"order {int(order_f)} is given twice")
        try:
            out.append(Harmonic(int(order_f), pct / 100.0, phase))
        except OutOfRangeError as exc:
            raise bad(str(exc)) from None
    if not out:
        raise BadValueError(f"--harmonics: nothing to read in {text!r}; {_HARMONIC_FORMS}")
    return tuple(out), "--harmonics"


def mains_from_options(
    mains: str = "230", mains_tol: str = "10", freq: str = "50", harmonics: str | None = None
) -> Mains:
    """Mains from the option texts (``harmonics``: see :func:`parse_harmonics`)."""
    hs, source = parse_harmonics(harmonics)
    nominal_v = option_value(mains, "V", "--mains")
    tolerance = option_percent(mains_tol, "--mains-tol")
    frequencies_hz = parse_frequencies(freq)
    try:
        return Mains(
            nominal_v=nominal_v,
            tolerance=tolerance,
            frequencies_hz=frequencies_hz,
            harmonics=hs,
            harmonics_source=source,
        )
    except DropperError as exc:
        # the model's own range check (20..440 V, tolerance below 50 %): name the option
        text = str(exc)
        option = (
            "--mains-tol"
            if "tolerance" in text
            else "--freq"
            if "frequenc" in text
            else ("--mains")
        )
        raise BadValueError(f"{option}: {text}") from None


def describe_mains(record: dict) -> str:
    """One line for the supply of a ``mains`` JSON record (:func:`engine.distortion.mains_record`):
    'Mains: 230 V +/-10 % 50 Hz, harmonics 3rd 5 % 5th 6 % 7th 5 % (THD 9.27 %, crest 344.5 V at
    the highest mains; en50160: ... [M])' or '..., pure sine'."""
    freqs = "/".join(f"{f:g}" for f in record["frequencies_hz"])
    head = f"Mains: {record['nominal_v']:g} V +/-{record['tolerance'] * 100:g} % {freqs} Hz"
    if not record["harmonics"]:
        return f"{head}, pure sine (crest {record['max_peak_v']:.1f} V at the highest mains)"
    items = " ".join(
        f"{_ordinal(h['order'])} {h['percent']:g} %"
        + (f"@{h['phase_deg']:g}°" if h["phase_deg"] else "")
        for h in record["harmonics"]
    )
    src = record.get("harmonics_source") or ""
    return (
        f"{head}, harmonics {items} of the fundamental at every corner "
        f"(THD {record['thd_percent']:.2f} %, crest factor {record['crest_factor']:.3f}, "
        f"crest {record['max_peak_v']:.1f} V at the highest mains"
        + (f"; {src}" if src and src != "--harmonics" else "")
        + ")"
    )


def _ordinal(n: int) -> str:
    suffix = "th" if 10 <= n % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(n % 10, "th")
    return f"{n}{suffix}"


def tolerances_from_options(
    cap_tol: str = "10", cap_loss: str | None = None, r_tol: str = "5", zener_tol: str = "5"
) -> Tolerances:
    """Tolerances from the option texts (percent or IEC 60062 letters); ``cap_loss`` None is
    the IEC 60384-14 endurance limit, 10 % [S], in the worst-case analysis."""
    return Tolerances(
        cap_tol=option_percent(cap_tol, "--cap-tol"),
        cap_loss=parse_cap_loss(cap_loss) if cap_loss is not None else 0.10,
        r_tol=option_percent(r_tol, "--r-tol"),
        zener_tol=option_percent(zener_tol, "--zener-tol"),
    )


def conditions_from_options(
    ambient: str = "40",
    profile: str = "iec60335",
    surge: str = "1k",
    vout_max: str | None = None,
    life: str = "10y",
    humidity: str = "60",
    switch_ons: str = "30k",
    cap_loss: str | None = None,
    vout_min: str | None = None,
) -> Conditions:
    """Ambient, discharge profile, surge level, highest and lowest bus voltage and the life
    and duty (target life, humidity in use, switch-ons) from the option texts."""
    prof = profile.strip().lower().replace("-", "").replace(" ", "")
    if prof not in DISCHARGE_PROFILES:
        raise BadValueError(
            f"--profile: unknown {profile!r}; one of {', '.join(DISCHARGE_PROFILES)}"
        )
    return Conditions(
        ambient_c=option_temperature(ambient, "--ambient"),
        profile=prof,
        surge_v=option_value(surge, "V", "--surge"),
        vout_max_v=option_value(vout_max, "V", "--vout-max") if vout_max else None,
        vout_min_v=option_value(vout_min, "V", "--vout-min") if vout_min else None,
        life_s=_read(parse_duration, life, "--life"),
        humidity=_read(parse_percent, humidity, "--humidity"),
        switch_ons=_read(parse_count, switch_ons, "--switch-ons"),
        end_of_life_loss=parse_cap_loss(cap_loss) if cap_loss is not None else None,
    )


def _read(reader, text: str, what: str) -> float:
    try:
        return reader(text)
    except BadValueError as exc:
        raise BadValueError(f"{what}: {exc}") from None


def describe_life(conditions: Conditions) -> str:
    """One line for the life and duty: 'Life: 87600 h (10 y) continuous at 40 C, 60 % RH,
    30000 switch-ons'."""
    return (
        f"Life: {format_duration(conditions.life_s)} continuous at {conditions.ambient_c:g} C, "
        f"{conditions.humidity * 100:g} % RH, {conditions.switch_ons:.0f} switch-ons"
    )


def standby_policy(
    policy: Policy, standby_limit: str | None = None, product_class: str | None = None
) -> tuple[Policy, str | None]:
    """``policy`` with the no-load power limit of ``--standby-limit`` or ``--product-class``
    (both given: they must agree); (policy, source of the limit or None).

    Without either the policy's own limit stays (None by default: no limit). Example:
    ``standby_policy(Policy(), '0.5')`` -> limit 0.5 W, source '--standby-limit'.
    """
    limit: float | None = policy.standby_limit_w
    source = None if limit is None else "--policy"
    if product_class:
        limit, source = product_class_limit(product_class)
        source = f"--product-class {product_class.strip().lower()}: {source}"
    if standby_limit:
        value = option_value(standby_limit, "W", "--standby-limit")
        if not value > 0:
            raise BadValueError(f"--standby-limit must be > 0 W, got {standby_limit!r}")
        if product_class and limit != value:
            raise BadValueError(
                f"--standby-limit {standby_limit} and --product-class {product_class} disagree; "
                "give one of them"
            )
        limit, source = value, source or "--standby-limit"
    return dataclasses.replace(policy, standby_limit_w=limit), source


def load_from_options(
    load: str = "0",
    load_r: str | None = None,
    burst: str | None = None,
    burst_time: str | None = None,
    burst_period: str | None = None,
) -> Load:
    """The load: a current, or a resistor, plus an optional burst profile."""
    burst_a, bt, bp = parse_burst(burst, burst_time, burst_period)
    current = option_value(load, "A", "--load")
    r = option_value(load_r, "ohm", "--load-r") if load_r else None
    return Load(
        current_a=current,
        resistance_ohm=r,
        burst_current_a=burst_a,
        burst_duration_s=bt,
        burst_period_s=bp,
    )


def circuit_from_options(
    cap: list[str] | None,
    topology: str = "bridge",
    series_r: str = "470",
    bleeder: str = "1M",
    zener: str = "12",
    zener_z: str = "0",
    reservoir: str = "220u",
    diode_drop: str = "0.8",
    diode_r: str = "0.1",
    load: Load | None = None,
    regulator: str | None = None,
    dropout: str = "1",
    quiescent: str = "5m",
    reservoir_esr: str | None = None,
) -> Circuit:
    """The circuit from the option texts. ``cap`` must hold at least one value."""
    if not cap:
        raise BadValueError("give the X capacitor with --cap (e.g. --cap 330n; repeat for more)")
    top = parse_topology(topology)
    caps = tuple(option_value(c, "F", "--cap") for c in cap)
    if bleeder.strip().lower() in ("none", "no", "inf", "0"):
        rb = math.inf
    else:
        rb = option_value(bleeder, "ohm", "--bleeder")
    reg = None
    if regulator:
        reg = Regulator(
            output_v=option_value(regulator, "V", "--regulator"),
            dropout_v=option_value(dropout, "V", "--dropout"),
            quiescent_a=option_value(quiescent, "A", "--quiescent"),
        )
    return Circuit(
        topology=top,
        x_capacitors_f=caps,
        series_resistance_ohm=option_value(series_r, "ohm", "--series-r"),
        bleeder_resistance_ohm=rb,
        diode_drop_v=option_value(diode_drop, "V", "--diode-drop"),
        diode_resistance_ohm=option_value(diode_r, "ohm", "--diode-r"),
        zener_voltage_v=option_value(zener, "V", "--zener"),
        zener_impedance_ohm=option_value(zener_z, "ohm", "--zener-z"),
        reservoir_f=option_value(reservoir, "F", "--reservoir"),
        load=load or Load(),
        regulator=reg,
        reservoir_esr_ohm=(
            option_value(reservoir_esr, "ohm", "--reservoir-esr")
            if reservoir_esr
            else DEFAULT_RESERVOIR_ESR_OHM
        ),
    )


def describe_corner(corner: dict | None) -> str:
    """A corner record as short text: '253 V 60 Hz C=363 nF R=447 Ω Vz=12.6 V no load'."""
    if not corner:
        return ""
    parts = []
    if "mains_v" in corner:
        parts.append(f"{corner['mains_v']:.4g} V")
    if "freq_hz" in corner:
        parts.append(f"{corner['freq_hz']:g} Hz")
    if "cap_f" in corner:
        parts.append("C=" + format_value(corner["cap_f"], "F"))
    if "r_ohm" in corner:
        parts.append("R=" + format_value(corner["r_ohm"], "ohm"))
    if "bleeder_ohm" in corner:
        parts.append("Rb=" + format_value(corner["bleeder_ohm"], "ohm"))
    if "vz_v" in corner:
        parts.append(f"Vz={corner['vz_v']:.3g} V")
    if "thd" in corner:
        parts.append(f"THD {corner['thd'] * 100:.3g} %" if corner["thd"] > 0 else "sine")
    if "load_a" in corner:
        parts.append("no load" if corner["load_a"] == 0 else "loaded")
    return " ".join(parts)
