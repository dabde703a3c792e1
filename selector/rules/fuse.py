"""Stress and limit of each fuse rule: survives switch-on, opens on a shorted X capacitor.

Every function maps ``(stresses, part, policy)`` to ``(stress, limit)`` (see
``selector.rules.x_capacitor``). The "opens" rules are requirements of the form
"fault >= rating x factor", so the rating is the stress and the fault the limit.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any, Final

import numpy as np

from ..errors import OutOfRangeError
from ..policy import Policy

#: Pulse-count derating of a fuse: (pulses, fraction of the nominal melting I^2t that the fuse
#: withstands that many times), log-linear in the pulse count between the points. One pulse is 1
#: by definition. Fast-acting: 1e3 0.38, 1e4 0.29, 1e5 0.22 [M] from memory of fuse makers'
#: pulse-cycle withstand charts, not checked; 1e6 0.17 continues their fall per decade (x 0.76,
#: an assumption). Time-lag: 1e5 0.3 [M] (DOMAIN.md section 10: "roughly 0.3 for ~1e5 pulses,
#: lower for fast-acting types"); 1e3 0.5, 1e4 0.4 and 1e6 0.24 are an assumption of this
#: project (the same shape), no source. Replace them with the maker's chart for a real design.
FUSE_PULSE_CURVES: Final[dict[str, tuple[tuple[float, float], ...]]] = {
    "fast": ((1.0, 1.0), (1e3, 0.38), (1e4, 0.29), (1e5, 0.22), (1e6, 0.17)),
    "time-lag": ((1.0, 1.0), (1e3, 0.5), (1e4, 0.4), (1e5, 0.3), (1e6, 0.24)),
}
#: the largest pulse count the curves cover; asked beyond it they raise (no extrapolation)
MAX_PULSES: Final[float] = 1e6


def pulse_curve_fraction(curve: tuple[tuple[float, float], ...], pulses: Any) -> Any:
    """The fraction of a single-pulse rating that ``pulses`` repeated pulses may each reach:
    log-linear interpolation in the pulse count between the curve's points; counts below 1 are
    one pulse. Raises OutOfRangeError above the curve's last point.

    Example (fast-acting fuse curve): 30,000 pulses lie 0.477 decades above 1e4, so
    0.29 + 0.477 x (0.22 - 0.29) = 0.257.
    """
    n = np.maximum(np.asarray(pulses, dtype=float), 1.0)
    if np.any(n > curve[-1][0] * (1 + 1e-12)):
        raise OutOfRangeError(
            f"{float(np.max(n)):.3g} pulses: the pulse-derating curves end at {curve[-1][0]:.0e}"
        )
    xs = np.log10([p for p, _ in curve])
    ys = np.array([f for _, f in curve])
    out = np.interp(np.log10(n), xs, ys)
    return out.item() if out.ndim == 0 else out


def fuse_pulse_fraction(pulses: Any, time_lag: Any) -> Any:
    """The fraction of the melting I^2t a fuse withstands ``pulses`` times
    (``FUSE_PULSE_CURVES``): the time-lag curve where ``time_lag`` is 1, the fast-acting one
    otherwise (a fuse of unstated type is taken as fast-acting: the lower curve).

    Example: 30,000 pulses: fast-acting 0.257, time-lag 0.352.
    """
    fast = pulse_curve_fraction(FUSE_PULSE_CURVES["fast"], pulses)
    lag = pulse_curve_fraction(FUSE_PULSE_CURVES["time-lag"], pulses)
    out = np.where(np.asarray(time_lag, dtype=float) == 1.0, lag, fast)
    return out.item() if out.ndim == 0 else out


def switch_on_i2t_vs_melting_i2t(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Switch-on I^2t [A^2 s] against the fuse's melting I^2t x min(``fuse_i2t_fraction``,
    pulse-count derating for ``switch_ons`` pulses of the fuse's type, :func:`fuse_pulse_fraction`).

    The switch-on pulse repeats at every plug-in or power-up, so the fuse must carry it
    ``switch_ons`` times; the single-pulse margin ``fuse_i2t_fraction`` still caps a small count.
    Example: a fuse of melting I^2t 0.125 A^2 s at 30,000 switch-ons: time-lag, limit
    0.125 x min(0.5, 0.352) = 0.0440 A^2 s; fast-acting, 0.125 x 0.257 = 0.0321 A^2 s.
    """
    fraction = np.minimum(
        policy.fuse_i2t_fraction,
        fuse_pulse_fraction(stresses["switch_ons"], part.fuse_time_lag),
    )
    return stresses["inrush_i2t_a2s"], part.i2t_a2s * fraction


def surge_i2t_vs_melting_i2t(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """The surge's line-current I^2t [A^2 s] (``surge_fuse_i2t_a2s``) against the fuse's melting
    I^2t x ``fuse_i2t_fraction`` [A^2 s] (the same pulse derating as switch-on, [P]; the test
    sequence applies five pulses of each polarity [M]).

    Example: 0.0126 A^2 s against a 0.02 A^2 s fuse at 0.5: limit 0.01 A^2 s, fails.
    """
    return (
        stresses["surge_fuse_i2t_a2s"],
        np.asarray(part.i2t_a2s, dtype=float) * policy.fuse_i2t_fraction,
    )


def rated_current_vs_fault_current(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """Rated current x ``fuse_fault_factor`` [A] against the fault current with a shorted X
    capacitor, I_fault = V_rms,min / R_series [A] (R floored at 1 mohm)."""
    fault_a = stresses["mains_min_v"] / np.maximum(stresses["series_resistance_ohm"], 1e-3)
    return part.value * policy.fuse_fault_factor, fault_a


def rated_power_vs_fault_power(
    stresses: Mapping[str, Any], part: Any, policy: Policy
) -> tuple[Any, Any]:
    """A fusible series resistor as the fuse: rated power x ``fusible_fault_factor`` [W] against
    the fault power per element with a shorted X capacitor, V_rms,min^2 / R_series x share [W]."""
    fault_w = (
        stresses["mains_min_v"] ** 2
        / np.maximum(stresses["series_resistance_ohm"], 1e-3)
        * part.power_share
    )
    return part.power_w * policy.fusible_fault_factor, fault_w
