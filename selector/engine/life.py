"""Life models: an electrolytic's life at its core temperature, and the capacitance an X
capacitor loses over the product's life in humid air.

One function per formula, SI units except where the trade states figures in hours, degrees C
and percent relative humidity (named in each parameter). Marks as in DOMAIN.md: [S] checked in a
published source, [M] from memory, [P] common practice, no source.

Electrolytic (DOMAIN.md section 10):
    L = L_rated * 2^((T_rated - T_core) / 10), capped at ``LIFE_CAP_FACTOR`` * L_rated
    T_core = T_ambient + dT_rated * (I_ripple / I_ripple,rated)^2
The 10-degree rule is the Arrhenius law near 0.6-0.7 eV written as a doubling per 10 K [P]. The
self-heating term is I^2 ESR R_th written through the ripple rating: makers rate the ripple
current for a core rise of about 5 K over the ambient [M] from memory, so
ESR * R_th = dT_rated / I_rated^2.

X capacitor (DOMAIN.md section 10): Peck's temperature-humidity model (D. S. Peck, "Comprehensive
model for humidity testing correlation", IEEE IRPS 1986 [S]) gives the acceleration of a humidity
test over the use conditions,
    AF = (RH_test / RH_use)^n * exp(Ea / k * (1 / T_use - 1 / T_test)),  n ~ 3, Ea ~ 0.8 eV [M].
A part of a humidity grade passed its test with |dC/C| <= 10 % [S]; assuming the loss grows in
proportion to the time spent at the test's stress (linear wear-out, [P]) and to the voltage
stress V_use / V_rated ([P] assumption, no source), the loss after a life t_life is
    loss = 10 % * (t_life / AF) / t_test * V_use / V_rated.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Final

import numpy as np

from ..errors import OutOfRangeError

__all__ = [
    "BOLTZMANN_EV_PER_K",
    "HUMIDITY_TESTS",
    "LIFE_CAP_FACTOR",
    "PECK_EA_EV",
    "PECK_N",
    "RATED_RIPPLE_RISE_K",
    "HumidityTest",
    "electrolytic_core_temperature_c",
    "electrolytic_life_h",
    "humidity_test_of",
    "peck_acceleration",
    "x_cap_end_of_life_loss",
]

#: core temperature rise at the rated ripple current [K]: about 5 K [M] from memory (makers'
#: application notes for 105 C series; some give up to 10 K for 85 C series)
RATED_RIPPLE_RISE_K: Final[float] = 5.0
#: the 10-degree rule is not extrapolated beyond this multiple of the rated life [M] from
#: memory ("most makers cap the extrapolation, e.g. 15x rated life", DOMAIN.md section 10)
LIFE_CAP_FACTOR: Final[float] = 15.0
#: Peck's humidity exponent n ~ 3 [M] from memory (Peck 1986 fitted about 2.7-3)
PECK_N: Final[float] = 3.0
#: Peck's activation energy Ea ~ 0.8 eV [M] from memory (Peck 1986: 0.79 eV)
PECK_EA_EV: Final[float] = 0.8
#: Boltzmann constant [eV/K] (CODATA 2018, exact by SI definition of 2019 [S])
BOLTZMANN_EV_PER_K: Final[float] = 8.617333262e-5
#: end-of-test capacitance change a humidity grade allows, |dC/C| <= 10 % (IEC 60384-14 [S])
HUMIDITY_TEST_LOSS: Final[float] = 0.10
#: the linear wear-out is not extrapolated beyond this multiple of the test's duration [P]:
#: past it the loss is taken as total (1.0), i.e. the part does not hold the life
EXTRAPOLATION_LIMIT: Final[float] = 5.0


@dataclass(frozen=True)
class HumidityTest:
    """A humidity robustness test: temperature [C], relative humidity [fraction], duration [h]
    at rated voltage, and where the figures come from."""

    temp_c: float
    humidity: float
    hours: float
    source: str


#: IEC 60384-14 Amd 1 (2016) humidity robustness grades and their tests (DOMAIN.md table 5)
HUMIDITY_TESTS: Final[dict[str, HumidityTest]] = {
    "I": HumidityTest(40.0, 0.93, 21 * 24.0, "grade I, test A 40 C / 93 % RH / 21 d [S]"),
    "II": HumidityTest(
        85.0, 0.85, 500.0, "grade II, test B 85 C / 85 % RH [S], 500 h [M] from memory"
    ),
    "III": HumidityTest(85.0, 0.85, 1000.0, "grade IIIB, test B 85 C / 85 % RH / 1000 h [S]"),
}


def humidity_test_of(grade: str | None) -> tuple[HumidityTest, str]:
    """(test, note) of a humidity grade; no grade or an unknown one is taken as grade I, the
    least robust (conservative), and the note says so. Example: 'III' -> 85 C / 85 % / 1000 h."""
    key = (grade or "").strip().upper().removeprefix("GRADE").strip().rstrip("AB") or ""
    if key in HUMIDITY_TESTS:
        return HUMIDITY_TESTS[key], HUMIDITY_TESTS[key].source
    return HUMIDITY_TESTS["I"], "no humidity grade known: taken as grade I (least robust)"


def electrolytic_core_temperature_c(
    ambient_c: Any, ripple_a: Any, rated_ripple_a: Any, rated_rise_k: float = RATED_RIPPLE_RISE_K
) -> Any:
    """Core temperature [C] of an electrolytic carrying ``ripple_a`` [A rms] at ``ambient_c``.

    T_core = T_a + dT_rated * (I / I_rated)^2 (I^2 ESR R_th through the ripple rating; see the
    module docstring). Example: 40 C, 55 mA of a 110 mA rating -> 40 + 5 * 0.25 = 41.25 C.
    """
    ratio = np.asarray(ripple_a, dtype=float) / np.maximum(
        np.asarray(rated_ripple_a, dtype=float), 1e-12
    )
    out = np.asarray(ambient_c, dtype=float) + rated_rise_k * ratio**2
    return out.item() if out.ndim == 0 else out


def electrolytic_life_h(
    rated_life_h: Any, rated_temp_c: Any, core_temp_c: Any, cap_factor: float = LIFE_CAP_FACTOR
) -> Any:
    """Estimated life [h] at ``core_temp_c`` of an electrolytic rated ``rated_life_h`` at
    ``rated_temp_c``: L = L_r * 2^((T_r - T_core)/10), at most ``cap_factor`` x L_r.

    10-degree rule [P] (Arrhenius); cap [M]. Worked examples: 2000 h at 85 C, core 55 C ->
    2000 * 2^3 = 16000 h; 2000 h at 105 C, core 45 C -> 2000 * 2^6 = 128000 h, capped at
    15 x 2000 = 30000 h; 10000 h at 105 C, core 75 C -> 10000 * 2^3 = 80000 h.
    """
    life = np.asarray(rated_life_h, dtype=float) * np.exp2(
        (np.asarray(rated_temp_c, dtype=float) - np.asarray(core_temp_c, dtype=float)) / 10.0
    )
    out = np.minimum(life, cap_factor * np.asarray(rated_life_h, dtype=float))
    return out.item() if out.ndim == 0 else out


def peck_acceleration(
    test_temp_c: float,
    test_humidity: float,
    use_temp_c: float,
    use_humidity: float,
    n: float = PECK_N,
    ea_ev: float = PECK_EA_EV,
) -> float:
    """Peck's acceleration factor of a humidity test over the use conditions (dimensionless).

    AF = (RH_test / RH_use)^n * exp(Ea / k (1 / T_use - 1 / T_test)), T in kelvin, RH as
    fractions in (0, 1]. Source: Peck, IEEE IRPS 1986 [S]; n = 3, Ea = 0.8 eV [M]. Worked
    example: 85 C / 85 % RH over 40 C / 60 % RH: (85/60)^3 = 2.843, exp(0.8 / 8.617e-5 *
    (1/313.15 - 1/358.15)) = exp(3.725) = 41.5, AF = 118. Raises OutOfRangeError for a use
    humidity <= 0 (the model has no dry limit) or a temperature below -40 C.
    """
    if not (0 < use_humidity <= 1 and 0 < test_humidity <= 1):
        raise OutOfRangeError(
            f"Peck's model needs relative humidities in (0, 100] %, got use {use_humidity:.0%} "
            f"and test {test_humidity:.0%}"
        )
    if min(test_temp_c, use_temp_c) < -40:
        raise OutOfRangeError("Peck's model: temperatures below -40 C are outside its range")
    t_use, t_test = use_temp_c + 273.15, test_temp_c + 273.15
    return (test_humidity / use_humidity) ** n * math.exp(
        ea_ev / BOLTZMANN_EV_PER_K * (1.0 / t_use - 1.0 / t_test)
    )


def x_cap_end_of_life_loss(
    grade: str | None,
    life_h: float,
    use_temp_c: float,
    use_humidity: float,
    voltage_v: float,
    rated_voltage_v: float,
) -> tuple[float, str]:
    """(capacitance loss fraction after ``life_h`` in use, note) of an X capacitor of humidity
    ``grade`` at ``voltage_v`` rms (highest mains) of its ``rated_voltage_v``.

    loss = 10 % * (life / AF) / t_test * V / V_rated (module docstring); beyond
    ``EXTRAPOLATION_LIMIT`` test durations the loss is 1.0 (the model says nothing there).
    Example: grade III, 87600 h at 40 C / 60 % RH, 253 V of 305 V: AF 118, 742 h of test
    stress, loss = 0.1 * 0.742 * 0.830 = 6.2 %.
    """
    test, note = humidity_test_of(grade)
    af = peck_acceleration(test.temp_c, test.humidity, use_temp_c, use_humidity)
    test_fraction = life_h / af / test.hours
    if test_fraction > EXTRAPOLATION_LIMIT:
        return 1.0, (
            f"{note}; {life_h:.0f} h in use = {test_fraction:.3g} x the test's duration "
            f"(Peck AF {af:.3g}): beyond the model's {EXTRAPOLATION_LIMIT:g} x, taken as lost"
        )
    stress = min(max(voltage_v / rated_voltage_v, 0.0), 1.0) if rated_voltage_v > 0 else 1.0
    loss = min(HUMIDITY_TEST_LOSS * test_fraction * stress, 1.0)
    return loss, f"{note}; Peck AF {af:.3g}, {test_fraction:.3g} x the test's duration"
