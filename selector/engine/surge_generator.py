"""The IEC 61000-4-5 combination-wave generator as a circuit (one job: the generator): its
element values, their derivation from the standard's wave shapes, and the measures of a
wave (front time, time to half value, duration) that the derivation and the tests use.
The surge through the dropper that this generator drives is :mod:`.surge_circuit`.

The generator
-------------
Our own five-element network (the usual structure of a combination-wave generator: an
energy-storage capacitor, pulse-shaping resistors, a rise-time inductor)::

    +--[Lr]--[Rm]--+------ out +
    |              |
   [Cc] [Rs1]    [Rs2]
    |              |
    +--------------+------ out -

``Cc`` (charged to ``U0`` at t = 0) with ``Rs1`` across it shapes the tail, ``Lr`` the front,
``Rm`` sets the short-circuit current, ``Rs2`` across the output gives the open-circuit voltage
``Rs2 i_L``. Each of the two load cases is a second-order linear circuit, solved exactly
(eigenvalues). The five values are the solution of five conditions (Newton on the exact
responses, :func:`derive_generator`): open-circuit front time 1.2 us, open-circuit time to half
value 50 us (from the virtual origin), short-circuit front time 8 us, short-circuit undershoot
28 % of the peak, and peak open-circuit voltage / peak short-circuit current = 2 ohm (the
effective output impedance). The undershoot takes the place of the current's duration because
with the duration at exactly 20 us this network undershoots by 31.8 %, beyond the 30 % that
edition 3 allows [M]; the duration then comes out at 20.5 us, inside its +/-20 %. Result:
Cc = 6.47 uF, Rs1 = 17.6 ohm, Lr = 10.7 uH, Rm = 0.895 ohm, Rs2 = 25.6 ohm. Impedance scaling
(R, L times k, C over k) keeps the four shape figures and scales the ratio, so the solution is
unique up to the branch the iteration starts on; ``tests/test_surge_circuit.py`` re-derives it
and checks the waveforms against the standard's definitions and tolerances.

Definitions and tolerances used (IEC 61000-4-5; IEC 60060-1 for the 1.2/50 us impulse):
front time of the voltage ``T1 = 1.67 (t90 - t30)`` = 1.2 us +/- 30 %, time to half value
(virtual origin to 50 % on the tail) 50 us +/- 20 % [S: IEC 60060-1 figures, also in ITU-T K.96
Amd 1, which notes that edition 3 of IEC 61000-4-5 measures the duration between the two 50 %
points instead]; front time of the current ``T1 = 1.25 (t90 - t10)`` = 8 us +/- 20 %,
duration ``Td = 1.18 x`` (width at 50 %) = 20 us +/- 20 % [M: the 1.18 factor and the current
tolerances from memory]. Effective output impedance 2 ohm line to line [S].
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import OutOfRangeError

__all__ = [
    "GENERATOR",
    "OPEN_CIRCUIT_PEAK_PER_VOLT",
    "UNDERSHOOT_TARGET",
    "Generator",
    "current_wave_times",
    "derive_generator",
    "generator_waveform",
    "voltage_wave_times",
]


@dataclass(frozen=True)
class Generator:
    """Element values of the combination-wave generator [F, ohm, H]."""

    cc_f: float
    rs1_ohm: float
    lr_h: float
    rm_ohm: float
    rs2_ohm: float

    def _matrix(self, short: bool) -> np.ndarray:
        rl = self.rm_ohm if short else self.rm_ohm + self.rs2_ohm
        return np.array(
            [
                [-1.0 / (self.rs1_ohm * self.cc_f), -1.0 / self.cc_f],
                [1.0 / self.lr_h, -rl / self.lr_h],
            ]
        )

    def peak_per_volt(self, short: bool = False) -> float:
        """Peak open-circuit voltage [V/V] (or short-circuit current [A/V]) per volt of charge."""
        t = np.linspace(0.0, 40e-6, 40001)
        return float(np.max(generator_waveform(self, t, 1.0, short, per_charge=True)))


#: derived by :func:`derive_generator` (see the module docstring); 5 significant figures
GENERATOR = Generator(
    cc_f=6.4695e-6, rs1_ohm=17.595, lr_h=10.676e-6, rm_ohm=0.89528, rs2_ohm=25.581
)

#: short-circuit current undershoot the derivation aims at (fraction of the peak): inside the
#: 30 % that edition 3 allows [M], with a margin (own choice)
UNDERSHOOT_TARGET = 0.28


def generator_waveform(gen: Generator, t_s, level_v: float, short: bool, per_charge=False):
    """Open-circuit voltage [V] (``short=False``) or short-circuit current [A] at ``t_s`` [s].

    ``level_v`` is the peak open-circuit voltage (the surge level); the charging voltage is
    ``level_v / peak_per_volt`` (with ``per_charge`` the level is the charging voltage itself).
    Exact: ``x(t) = V exp(L t) V^-1 x(0)`` of the 2 x 2 circuit, ``x(0) = (U0, 0)``.
    """
    t = np.asarray(t_s, float)
    u0 = level_v if per_charge else level_v / OPEN_CIRCUIT_PEAK_PER_VOLT
    lam, vec = np.linalg.eig(gen._matrix(short))
    coef = np.linalg.solve(vec, np.array([u0, 0.0]))
    i_l = np.real(np.exp(np.multiply.outer(t, lam)) @ (vec[1] * coef))
    return i_l if short else gen.rs2_ohm * i_l


def _crossing(t: np.ndarray, y: np.ndarray, level: float, rising: bool, start: int = 0) -> float:
    """Time where ``y`` first crosses ``level`` (rising or falling) from index ``start``
    (linear interpolation between samples)."""
    seg = y[start:]
    j = int(np.argmax(seg >= level)) if rising else int(np.argmax(seg <= level))
    j += start
    if j == 0:
        return float(t[0])
    return float(t[j - 1] + (level - y[j - 1]) * (t[j] - t[j - 1]) / (y[j] - y[j - 1]))


def voltage_wave_times(t_s, v) -> dict[str, float]:
    """Front time, time to half value and peak of a 1.2/50 us impulse (IEC 60060-1 [S]).

    ``T1 = 1.67 (t90 - t30)``; virtual origin ``O1 = t30 - 0.5 (t90 - t30)`` (the line through
    the 30 % and 90 % points meets zero there); ``T2 = t50(tail) - O1``; ``Tw`` = width at 50 %
    (edition 3 of IEC 61000-4-5 uses it as the duration). Units: s, V.
    """
    t = np.asarray(t_s, float)
    y = np.asarray(v, float)
    pk = float(np.max(y))
    ip = int(np.argmax(y))
    t30 = _crossing(t, y, 0.3 * pk, True)
    t90 = _crossing(t, y, 0.9 * pk, True)
    t50r = _crossing(t, y, 0.5 * pk, True)
    t50f = _crossing(t, y, 0.5 * pk, False, ip)
    o1 = t30 - 0.5 * (t90 - t30)
    return {"front_s": 1.67 * (t90 - t30), "half_s": t50f - o1, "width_s": t50f - t50r, "peak": pk}


def current_wave_times(t_s, i) -> dict[str, float]:
    """Front time and duration of an 8/20 us impulse current.

    ``T1 = 1.25 (t90 - t10)`` [S]; virtual origin ``O1 = t10 - (t90 - t10) / 8``;
    ``half_s = t50(tail) - O1`` (the older definition); ``duration_s = 1.18 Tw`` with ``Tw`` the
    width at 50 % (edition 3, [M]). Units: s, A.
    """
    t = np.asarray(t_s, float)
    y = np.asarray(i, float)
    pk = float(np.max(y))
    ip = int(np.argmax(y))
    t10 = _crossing(t, y, 0.1 * pk, True)
    t90 = _crossing(t, y, 0.9 * pk, True)
    t50r = _crossing(t, y, 0.5 * pk, True)
    t50f = _crossing(t, y, 0.5 * pk, False, ip)
    o1 = t10 - (t90 - t10) / 8.0
    return {
        "front_s": 1.25 * (t90 - t10),
        "half_s": t50f - o1,
        "duration_s": 1.18 * (t50f - t50r),
        "peak": pk,
        "undershoot": float(-min(np.min(y), 0.0) / pk),
    }


def derive_generator(start: Generator = GENERATOR, iterations: int = 30) -> Generator:
    """Solve the five wave conditions for the five element values (Newton, numerical Jacobian
    in the logarithms of the values). Conditions: open-circuit front 1.2 us and half value
    50 us; short-circuit front 8 us and undershoot :data:`UNDERSHOOT_TARGET`; peak Voc / peak
    Isc = 2 ohm. Converges from values within some 30 % of the solution."""
    t = np.concatenate([np.linspace(0.0, 6e-6, 24001), np.linspace(6e-6, 300e-6, 58801)[1:]])

    def resid(logp: np.ndarray) -> np.ndarray:
        g = Generator(*np.exp(logp))
        v = voltage_wave_times(t, generator_waveform(g, t, 1.0, False, per_charge=True))
        i = current_wave_times(t, generator_waveform(g, t, 1.0, True, per_charge=True))
        return np.log(
            [
                v["front_s"] / 1.2e-6,
                v["half_s"] / 50e-6,
                i["front_s"] / 8e-6,
                math.exp(i["undershoot"] - UNDERSHOOT_TARGET),
                v["peak"] / i["peak"] / 2.0,
            ]
        )

    p = np.log([start.cc_f, start.rs1_ohm, start.lr_h, start.rm_ohm, start.rs2_ohm])
    for _ in range(iterations):
        r = resid(p)
        if float(np.max(np.abs(r))) < 1e-10:
            break
        jac = np.empty((5, 5))
        for k in range(5):
            dp = np.zeros(5)
            dp[k] = 1e-6
            jac[:, k] = (resid(p + dp) - r) / 1e-6
        p = p - np.linalg.solve(jac, r)
    else:
        raise OutOfRangeError("generator derivation did not converge")
    return Generator(*np.exp(p))


#: peak open-circuit voltage of :data:`GENERATOR` per volt of charge [V/V] (100 ps samples)
OPEN_CIRCUIT_PEAK_PER_VOLT = float(
    np.max(
        generator_waveform(GENERATOR, np.linspace(0.0, 10e-6, 100001), 1.0, False, per_charge=True)
    )
)
