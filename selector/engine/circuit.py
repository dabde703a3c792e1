"""The circuit description: plain dataclasses in SI units (V, A, F, ohm, s, Hz).

Topologies (DOMAIN.md section 2; the names are the trade's):

* ``bridge``: line - series resistor - X capacitor (bleeder across it) - full bridge - DC bus with
  the reservoir, the Zener clamp and the load;
* ``half-wave``: line - series resistor - X capacitor (bleeder across it) - node A; a Zener from A
  to neutral (reverse breakdown on the positive half cycle, forward conduction on the negative);
  a diode from A to the reservoir and the load.

Either may feed a linear post-regulator (:class:`Regulator`); the load then sits on the regulator
output and the bus sees the load current plus the regulator's quiescent current.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

from ..errors import OutOfRangeError
from .varistor import Varistor

__all__ = [
    "DEFAULT_RESERVOIR_ESR_OHM",
    "DISCHARGE_PROFILES",
    "EN50160_HARMONICS",
    "HARMONIC_PROFILES",
    "TOPOLOGIES",
    "VOUT_MAX_FACTOR",
    "VOUT_MIN_FACTOR",
    "Circuit",
    "Conditions",
    "Harmonic",
    "Load",
    "Mains",
    "Regulator",
    "Tolerances",
]

TOPOLOGIES = ("bridge", "half-wave")
DISCHARGE_PROFILES = ("iec60335", "iec62368", "iec60950")
#: reservoir ESR [ohm] assumed when the part gives none: a general-purpose aluminium electrolytic
#: of some 100 uF to 1 mF lies around 0.05-0.5 ohm at 100 kHz, small cans higher; 0.3 ohm is our
#: choice ([P] common practice, no source). Only the surge uses it (bus peak, Zener share).
DEFAULT_RESERVOIR_ESR_OHM = 0.3


def _need(ok: bool, what: str) -> None:
    if not ok:
        raise OutOfRangeError(what)


#: highest harmonic order the engine accepts (EN 50160 lists orders up to the 25th and counts
#: THD up to the 40th [M]); the event grid of the solver is refined with the order
MAX_HARMONIC_ORDER = 40


@dataclass(frozen=True)
class Harmonic:
    """One harmonic of the mains voltage: integer ``order`` h (2..40), amplitude ``fraction`` of
    the fundamental (0.06 = 6 %), ``phase_deg`` [deg] in the sine reference of the fundamental:
    ``u(t) = sqrt(2) V1 (sin(w t) + sum_h fraction_h sin(h w t + phase_h))``.

    Phase 0 puts a 3rd/7th/11th harmonic in opposition at the fundamental's crest (a flat-topped
    wave, the usual shape under rectifier loads [P]) and a 5th/9th/13th in phase with it.
    """

    order: int
    fraction: float
    phase_deg: float = 0.0

    def __post_init__(self) -> None:
        _need(
            isinstance(self.order, int) and 2 <= self.order <= MAX_HARMONIC_ORDER,
            f"harmonic order {self.order!r} outside 2..{MAX_HARMONIC_ORDER}",
        )
        _need(
            0.0 <= self.fraction <= 0.3,
            f"harmonic {self.order}: {self.fraction * 100:g} % outside 0..30 % of the fundamental",
        )
        _need(math.isfinite(self.phase_deg), f"harmonic {self.order}: phase must be finite")


#: EN 50160 (LV supply, 95 % of the 10-minute rms values over a week) individual limits of the
#: three dominant orders, from memory [M]: 3rd 5 %, 5th 6 %, 7th 5 % of the fundamental. Together
#: they give THD 9.3 %, above the standard's 8 % THD limit [M]: a compliant grid cannot have all
#: three at their limits at once, so the profile is a deliberately pessimistic envelope of the
#: dominant orders (the higher orders, whose limits are 3.5 % and below [M], are left out: give a
#: measured spectrum with order:percent instead). Phases 0 (flat-topped wave, see Harmonic).
EN50160_HARMONICS: tuple[Harmonic, ...] = (
    Harmonic(3, 0.05),
    Harmonic(5, 0.06),
    Harmonic(7, 0.05),
)
#: named harmonic profiles (name -> harmonics, source text shown beside them)
HARMONIC_PROFILES: dict[str, tuple[tuple[Harmonic, ...], str]] = {
    "en50160": (
        EN50160_HARMONICS,
        "EN 50160 individual limits of the 3rd, 5th and 7th [M]",
    ),
}


@dataclass(frozen=True)
class Mains:
    """The supply: nominal rms voltage [V], relative tolerance (0.1 = +/-10 %), frequencies [Hz],
    and the harmonic content (:class:`Harmonic`, empty: a pure sine).

    ``v_min``/``v_max`` override the tolerance when given (e.g. 207 V .. 253 V). With harmonics the
    voltages are the FUNDAMENTAL's rms and the harmonics scale with it at every corner (EN 50160
    states harmonic levels relative to the fundamental [M]); the total rms is
    ``V1 sqrt(1 + THD^2)`` (:attr:`rms_factor`), the crest ``sqrt(2) V1`` x :attr:`crest_factor`.
    ``harmonics_source`` names where the content comes from (a profile) for the reports.
    """

    nominal_v: float = 230.0
    tolerance: float = 0.10
    frequencies_hz: tuple[float, ...] = (50.0,)
    v_min: float | None = None
    v_max: float | None = None
    harmonics: tuple[Harmonic, ...] = ()
    harmonics_source: str | None = None

    def __post_init__(self) -> None:
        _need(20.0 <= self.nominal_v <= 440.0, f"mains {self.nominal_v} V outside 20..440 V rms")
        _need(0.0 <= self.tolerance < 0.5, f"mains tolerance {self.tolerance} outside 0..0.5")
        _need(len(self.frequencies_hz) > 0, "at least one mains frequency is needed")
        for f in self.frequencies_hz:
            _need(16.0 <= f <= 400.0, f"mains frequency {f} Hz outside 16..400 Hz")
        orders = [h.order for h in self.harmonics]
        _need(len(set(orders)) == len(orders), f"a harmonic order is given twice: {orders}")

    @property
    def thd(self) -> float:
        """Total harmonic distortion of the voltage, relative to the fundamental [-]:
        ``THD = sqrt(sum_h (V_h / V_1)^2)`` (IEC 61000-2-2 / EN 50160 definition [M])."""
        return math.sqrt(sum(h.fraction * h.fraction for h in self.harmonics))

    @property
    def rms_factor(self) -> float:
        """Total rms over the fundamental's rms: ``sqrt(1 + THD^2)`` [-] (Parseval)."""
        return math.sqrt(1.0 + self.thd**2)

    @property
    def crest_factor(self) -> float:
        """Peak of the distorted wave over ``sqrt(2) V1`` [-] (1 for a sine); see
        :func:`selector.engine.distortion.waveform_peak`."""
        if not self.harmonics:
            return 1.0
        from .distortion import waveform_peak

        return waveform_peak(self.harmonics)[0]

    @property
    def low_v(self) -> float:
        """Lowest rms mains voltage [V]."""
        return self.v_min if self.v_min is not None else self.nominal_v * (1 - self.tolerance)

    @property
    def high_v(self) -> float:
        """Highest rms mains voltage [V]."""
        return self.v_max if self.v_max is not None else self.nominal_v * (1 + self.tolerance)


@dataclass(frozen=True)
class Load:
    """DC load on the bus (or on the regulator output when there is one).

    Either a constant current ``current_a`` [A] or a resistor ``resistance_ohm`` [ohm]; a burst
    profile adds ``burst_current_a`` for ``burst_duration_s`` every ``burst_period_s``.
    """

    current_a: float = 0.0
    resistance_ohm: float | None = None
    burst_current_a: float = 0.0
    burst_duration_s: float = 0.0
    burst_period_s: float = 0.0

    def __post_init__(self) -> None:
        _need(self.current_a >= 0, f"load current {self.current_a} A is negative")
        _need(
            self.resistance_ohm is None or self.resistance_ohm > 0,
            f"load resistance {self.resistance_ohm} ohm must be positive",
        )
        _need(self.burst_current_a >= 0, "burst current must not be negative")
        if self.burst_current_a > 0:
            _need(
                0 < self.burst_duration_s < self.burst_period_s,
                "a burst needs 0 < duration < period",
            )

    @property
    def has_burst(self) -> bool:
        return self.burst_current_a > 0 and self.burst_duration_s > 0

    def demand_a(self, voltage_v: float) -> float:
        """Steady (base) current [A] the load draws at ``voltage_v`` (bursts excluded)."""
        if self.resistance_ohm is not None:
            return self.current_a + voltage_v / self.resistance_ohm
        return self.current_a

    def average_demand_a(self, voltage_v: float) -> float:
        """Base current plus the burst current averaged over its period [A]."""
        extra = 0.0
        if self.has_burst:
            extra = self.burst_current_a * self.burst_duration_s / self.burst_period_s
        return self.demand_a(voltage_v) + extra

    @property
    def is_zero(self) -> bool:
        return self.current_a == 0 and self.resistance_ohm is None and not self.has_burst

    def describe(self) -> float:
        """A number for the corner record: the load current [A] (resistor: None-safe 0)."""
        return self.current_a


@dataclass(frozen=True)
class Regulator:
    """Linear post-regulator: output voltage [V], dropout [V], quiescent current [A]."""

    output_v: float
    dropout_v: float = 1.0
    quiescent_a: float = 0.005

    def __post_init__(self) -> None:
        _need(self.output_v > 0, "regulator output voltage must be positive")
        _need(self.dropout_v >= 0 and self.quiescent_a >= 0, "dropout and Iq must be >= 0")


@dataclass(frozen=True)
class Circuit:
    """Component values of one dropper [SI]. ``x_capacitors_f`` are in parallel.

    ``bleeder_resistance_ohm`` may be ``math.inf`` (no bleeder). ``diode_drop_v`` and
    ``diode_resistance_ohm`` describe one rectifier diode (bridge: two conduct in series) and the
    Zener's forward direction; ``zener_impedance_ohm`` is the dynamic resistance in breakdown.
    ``reservoir_esr_ohm`` is the reservoir's equivalent series resistance (catalogue-independent;
    default :data:`DEFAULT_RESERVOIR_ESR_OHM`); the steady state leaves it out (its drop at the
    ripple current is mV), the surge model includes it. ``pulse_diode_drop_v`` and
    ``pulse_diode_resistance_ohm`` are the rectifier's straight line in the high-current region
    (amperes to tens of amperes: switch-on and surge); ``None`` takes the steady-state values. A
    junction's tangent at tens of mA has a slope resistance ``VT / I`` far above its ohmic
    resistance and overstates the drop at 20 A by volts (switch-on peaks a few % low); see
    :meth:`pulse_diode` and :meth:`.surge_circuit.ExpDiode.line`.
    """

    topology: str = "bridge"
    x_capacitors_f: tuple[float, ...] = (330e-9,)
    series_resistance_ohm: float = 470.0
    bleeder_resistance_ohm: float = 1e6
    diode_drop_v: float = 0.8
    diode_resistance_ohm: float = 0.1
    zener_voltage_v: float = 12.0
    zener_impedance_ohm: float = 0.0
    reservoir_f: float = 220e-6
    load: Load = field(default_factory=Load)
    regulator: Regulator | None = None
    reservoir_esr_ohm: float = DEFAULT_RESERVOIR_ESR_OHM
    pulse_diode_drop_v: float | None = None
    pulse_diode_resistance_ohm: float | None = None
    #: a varistor across the line ahead of the dropper (:class:`.varistor.Varistor`): only the
    #: surge sees it (below its 1 mA voltage it is open, microamperes at the mains crest)
    varistor: Varistor | None = None

    def __post_init__(self) -> None:
        _need(
            self.topology in TOPOLOGIES,
            f"unknown topology {self.topology!r}; one of {', '.join(TOPOLOGIES)}",
        )
        _need(len(self.x_capacitors_f) > 0, "at least one X capacitor is needed")
        for c in self.x_capacitors_f:
            _need(1e-9 <= c <= 20e-6, f"X capacitance {c} F outside 1 nF..20 uF")
        _need(
            1.0 <= self.series_resistance_ohm <= 1e5,
            f"series resistance {self.series_resistance_ohm} ohm outside 1 ohm..100 kohm",
        )
        _need(self.bleeder_resistance_ohm >= 1e3, "bleeder below 1 kohm is not a bleeder")
        _need(0 <= self.diode_drop_v <= 3, f"diode drop {self.diode_drop_v} V outside 0..3 V")
        _need(0 <= self.diode_resistance_ohm <= 100, "diode resistance outside 0..100 ohm")
        _need(1.0 <= self.zener_voltage_v <= 200, f"Zener {self.zener_voltage_v} V out of 1..200 V")
        _need(0 <= self.zener_impedance_ohm <= 1e3, "Zener impedance outside 0..1 kohm")
        _need(1e-7 <= self.reservoir_f <= 0.1, f"reservoir {self.reservoir_f} F out of range")
        for v in (self.pulse_diode_drop_v, self.pulse_diode_resistance_ohm):
            _need(v is None or 0 <= v <= 100, f"pulse diode value {v} outside 0..100")
        _need(
            0 <= self.reservoir_esr_ohm <= 100,
            f"reservoir ESR {self.reservoir_esr_ohm} ohm outside 0..100 ohm",
        )
        if self.regulator is not None:
            _need(
                self.regulator.output_v < self.bus_voltage_v,
                "regulator output must be below the bus voltage",
            )

    @property
    def x_capacitance_f(self) -> float:
        """Total X capacitance [F] (parts in parallel)."""
        return float(sum(self.x_capacitors_f))

    @property
    def bus_voltage_v(self) -> float:
        """Nominal regulated DC voltage on the reservoir [V]: Vz (bridge) or Vz - Vf (half-wave)."""
        if self.topology == "half-wave":
            return self.zener_voltage_v - self.diode_drop_v
        return self.zener_voltage_v

    def bus_demand_a(self) -> float:
        """Base current the bus must supply at regulation [A] (regulator Iq included)."""
        if self.regulator is not None:
            return self.load.demand_a(self.regulator.output_v) + self.regulator.quiescent_a
        return self.load.demand_a(self.bus_voltage_v)

    def with_values(self, **changes) -> Circuit:
        """A copy with some fields changed (``dataclasses.replace``)."""
        return replace(self, **changes)

    def pulse_diode(self) -> tuple[float, float]:
        """(drop [V], resistance [ohm]) of one rectifier diode for pulses (switch-on, surge)."""
        vf = self.diode_drop_v if self.pulse_diode_drop_v is None else self.pulse_diode_drop_v
        rd = self.pulse_diode_resistance_ohm
        return vf, self.diode_resistance_ohm if rd is None else rd

    def for_pulses(self) -> Circuit:
        """A copy whose diode is the pulse diode (for the switch-on and surge models)."""
        vf, rd = self.pulse_diode()
        if vf == self.diode_drop_v and rd == self.diode_resistance_ohm:
            return self
        return replace(self, diode_drop_v=vf, diode_resistance_ohm=rd)

    @property
    def has_bleeder(self) -> bool:
        return math.isfinite(self.bleeder_resistance_ohm)


@dataclass(frozen=True)
class Tolerances:
    """Relative tolerances: X capacitor (+/-), end-of-life capacitance loss, resistors, Zener."""

    cap_tol: float = 0.10
    cap_loss: float = 0.10
    r_tol: float = 0.05
    zener_tol: float = 0.05

    def __post_init__(self) -> None:
        for name in ("cap_tol", "cap_loss", "r_tol", "zener_tol"):
            v = getattr(self, name)
            _need(0 <= v < 0.9, f"{name} {v} outside 0..0.9")


#: default highest allowed bus voltage as a multiple of the nominal bus voltage ([P] common
#: practice, no source: parts on a clamped bus are commonly rated for 1.3 x its voltage)
VOUT_MAX_FACTOR = 1.3
#: default lowest allowed bus voltage as a multiple of the nominal bus voltage (vout - 10 %,
#: [P] common practice, no source)
VOUT_MIN_FACTOR = 0.9


#: default target life: 10 years of continuous operation, 87600 h [P]
DEFAULT_LIFE_S = 10 * 8760 * 3600.0
#: time between unplugging and plugging back in (or switching off and on again) for the
#: re-plug at the opposite crest [s]: 0.2 s, a wall switch turned off and on, or a plug pulled
#: and pushed back at once. An assumption of this project, no source [P]; the shorter it is, the
#: more charge the X capacitor keeps (0 gives the full 2 Vpk step).
REPLUG_DELAY_S = 0.2


@dataclass(frozen=True)
class Conditions:
    """Ambient temperature [C], discharge profile, IEC 61000-4-5 surge level [V] (0: none), and
    the highest bus voltage the load tolerates ``vout_max_v`` [V] (None: ``VOUT_MAX_FACTOR`` x
    the nominal bus voltage, see :meth:`vout_max`) and the lowest ``vout_min_v`` [V] (None:
    ``VOUT_MIN_FACTOR`` x the nominal bus voltage, see :meth:`vout_min`)."""

    ambient_c: float = 40.0
    profile: str = "iec60335"
    surge_v: float = 1000.0
    vout_max_v: float | None = None
    vout_min_v: float | None = None
    #: target life [s] of continuous operation (default 10 years of 8760 h) [P]
    life_s: float = DEFAULT_LIFE_S
    #: relative humidity in use, fraction (default 0.6) [P]
    humidity: float = 0.6
    #: plug-ins / power-ups over the life (default 30 000) [P]
    switch_ons: float = 30_000.0
    #: re-plug delay [s] for the switch-on after a re-plug at the opposite crest (see
    #: ``REPLUG_DELAY_S``; selector.engine.transients.replug_residual_v)
    replug_delay_s: float = REPLUG_DELAY_S
    #: X capacitor loss at the end of the life, fraction (``--cap-loss``); None: from the
    #: part's humidity grade by Peck's model (selector.engine.life)
    end_of_life_loss: float | None = None

    def __post_init__(self) -> None:
        _need(
            self.profile in DISCHARGE_PROFILES,
            f"unknown discharge profile {self.profile!r}; one of {', '.join(DISCHARGE_PROFILES)}",
        )
        _need(-40 <= self.ambient_c <= 125, f"ambient {self.ambient_c} C outside -40..125 C")
        _need(0 <= self.surge_v <= 10e3, f"surge level {self.surge_v} V outside 0..10 kV")
        _need(
            self.vout_max_v is None or 0 < self.vout_max_v <= 1000,
            f"highest bus voltage {self.vout_max_v} V outside 0..1000 V",
        )
        _need(
            self.vout_min_v is None or 0 <= self.vout_min_v <= 1000,
            f"lowest bus voltage {self.vout_min_v} V outside 0..1000 V",
        )
        _need(0 < self.life_s <= 100 * 8760 * 3600.0, f"life {self.life_s} s outside 0..100 y")
        _need(0 <= self.humidity <= 1, f"humidity {self.humidity} outside 0..1 (0..100 %)")
        _need(
            0 <= self.replug_delay_s <= 60, f"re-plug delay {self.replug_delay_s} s outside 0..60 s"
        )
        # the pulse-count derating curves (selector.rules.fuse) end at 1e6 pulses
        _need(
            0 <= self.switch_ons <= 1e6,
            f"switch-ons {self.switch_ons:g} outside 0..1e6 (the pulse-derating curves end there)",
        )

    @property
    def life_h(self) -> float:
        """The target life in hours."""
        return self.life_s / 3600.0

    def vout_max(self, circuit: Circuit) -> float:
        """The highest allowed bus voltage [V]: the given one, else 1.3 x the bus voltage [P]."""
        if self.vout_max_v is not None:
            return self.vout_max_v
        return VOUT_MAX_FACTOR * circuit.bus_voltage_v

    def vout_min(self, circuit: Circuit) -> float:
        """The lowest allowed bus voltage [V]: the given one, else 0.9 x the bus voltage [P]."""
        if self.vout_min_v is not None:
            return self.vout_min_v
        return VOUT_MIN_FACTOR * circuit.bus_voltage_v
