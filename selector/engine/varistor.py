"""A metal-oxide varistor (MOV) across the line ahead of the dropper: its clamp characteristic.

The model is the power law of a varistor's conduction region,

    I = I_ref (V / V_ref)^alpha        (symmetric: I(-V) = -I(V)),

fitted through two points every varistor data sheet gives: the varistor voltage ``V_1mA`` at
the 1 mA dc reference current and the clamping voltage ``V_c`` at a stated 8/20 us current
``I_c``, so ``alpha = ln(I_c / 1 mA) / ln(V_c / V_1mA)``. Source: the power-law (``I = k
V^alpha``) description of ZnO varistors, e.g. L. M. Levinson and H. R. Philipp, "The physics
of metal oxide varistors", J. Appl. Phys. 46 (1975) 1332, and the varistor-voltage definition
at 1 mA of IEEE C62.33 [M: from memory, not checked against the texts]. A two-point secant
through the clamping point is what a data sheet supports; it is conservative on the clamping
voltage below ``I_c`` only in so far as the real curve is flatter there ([P]).

For the surge's piecewise-linear simulation (:mod:`.surge_simulation`) the law is replaced by
its chords between currents 1 mA x 2^j (:meth:`Varistor.breakpoints`); below 1 mA the varistor
is open (its leakage at the mains crest is microamperes). Worked example (a 14 mm disc rated
275 V ac: V_1mA = 430 V, V_c = 710 V at 50 A, figures from memory, typical of the class [M]):
alpha = ln(50000) / ln(710 / 430) = 21.6; at 100 A the law gives 430 x (1e5)^(1/21.6) = 733 V.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import OutOfRangeError

__all__ = ["REFERENCE_CURRENT_A", "VARISTOR_SEGMENTS", "Varistor"]

#: the varistor-voltage reference current (1 mA dc) [S: the common data-sheet convention; the
#: IEEE C62.33 definition from memory, M]
REFERENCE_CURRENT_A = 1e-3

#: chords of the power law in the surge simulation: 1 mA x 2^0 .. 2^VARISTOR_SEGMENTS (8.4 kA);
#: the top chord continues beyond. With factor-2 steps the chords' voltage at a given current
#: is within 0.6 % of the law for alpha >= 10 and 0.3 % for alpha >= 20 (tests/test_varistor.py)
VARISTOR_SEGMENTS = 23


@dataclass(frozen=True)
class Varistor:
    """A varistor's clamp (SI): ``v_1ma_v`` its varistor voltage at 1 mA, ``clamp_v`` its
    clamping voltage at ``clamp_a`` (8/20 us). Optional ratings for the rules:
    ``continuous_ac_v`` (max continuous rms), ``energy_j`` (max 10/1000 us or 2 ms energy as
    the data sheet states it), ``peak_current_a`` (max 8/20 us single pulse); ``code`` names
    the catalogue part (empty when given by value)."""

    v_1ma_v: float
    clamp_v: float
    clamp_a: float
    continuous_ac_v: float | None = None
    energy_j: float | None = None
    peak_current_a: float | None = None
    code: str = ""

    def __post_init__(self) -> None:
        if not (self.v_1ma_v > 0 and math.isfinite(self.v_1ma_v)):
            raise OutOfRangeError(f"varistor voltage {self.v_1ma_v!r} V must be positive")
        if not self.clamp_v > self.v_1ma_v:
            raise OutOfRangeError(
                f"varistor clamping voltage {self.clamp_v:g} V must exceed its 1 mA voltage "
                f"{self.v_1ma_v:g} V"
            )
        if not self.clamp_a > REFERENCE_CURRENT_A:
            raise OutOfRangeError(f"varistor clamping current {self.clamp_a:g} A must exceed 1 mA")
        if not 5.0 <= self.alpha <= 100.0:
            raise OutOfRangeError(
                f"varistor exponent {self.alpha:.1f} outside 5..100 (V1mA {self.v_1ma_v:g} V, "
                f"Vc {self.clamp_v:g} V at {self.clamp_a:g} A): not a metal-oxide varistor"
            )

    @property
    def alpha(self) -> float:
        """The power-law exponent through the two data-sheet points."""
        return math.log(self.clamp_a / REFERENCE_CURRENT_A) / math.log(self.clamp_v / self.v_1ma_v)

    def current(self, v):
        """Current [A] at voltage ``v`` [V] (the power law, odd in v)."""
        v = np.asarray(v, float)
        return np.sign(v) * REFERENCE_CURRENT_A * (np.abs(v) / self.v_1ma_v) ** self.alpha

    def voltage(self, i):
        """Voltage [V] at current ``i`` [A] (the inverse law, odd in i)."""
        i = np.asarray(i, float)
        return np.sign(i) * self.v_1ma_v * (np.abs(i) / REFERENCE_CURRENT_A) ** (1.0 / self.alpha)

    def breakpoints(self, segments: int = VARISTOR_SEGMENTS) -> tuple[np.ndarray, np.ndarray]:
        """(voltages [V], currents [A]) of the chords' ends: 1 mA x 2^j, j = 0..segments."""
        i = REFERENCE_CURRENT_A * 2.0 ** np.arange(segments + 1)
        return self.voltage(i), i

    def pwl_voltage(self, i, segments: int = VARISTOR_SEGMENTS):
        """Voltage [V] of the chord model at current ``i`` >= 1 mA [A] (for the accuracy test)."""
        v_pts, i_pts = self.breakpoints(segments)
        i = np.asarray(i, float)
        j = np.clip(np.searchsorted(i_pts, i) - 1, 0, segments - 1)
        g = (i_pts[j + 1] - i_pts[j]) / (v_pts[j + 1] - v_pts[j])
        return v_pts[j] + (i - i_pts[j]) / g
