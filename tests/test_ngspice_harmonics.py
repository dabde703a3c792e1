"""The engine on a distorted mains against ngspice (outside reference: the ngspice circuit
simulator, Debian package ``ngspice``, run as ``ngspice -b``). The mains is a sum of SIN sources
in series, one per tone (tests/ngspice_util.py); device models as in tests/test_ngspice.py.

Acceptance (issue 11 item 2): DC current, Zener power and line rms within 3 % of ngspice with
three harmonics (3rd 5 %, 5th 6 %, 7th 5 %: the EN 50160 individual limits [M]), bridge and
half-wave; a bridge with an even harmonic (full-cycle shooting), shifted phases, and every order
up to the 25th as well.
"""

from __future__ import annotations

import ngspice_util as nu
import pytest
from test_ngspice import engine_circuit, rel

from selector.engine import solve_steady_state
from selector.engine.circuit import Harmonic

pytestmark = [
    pytest.mark.ngspice,
    pytest.mark.skipif(nu.ngspice_path() is None, reason="ngspice is not installed"),
]

S = nu.Scenario
EN = ((3, 0.05, 0.0), (5, 0.06, 0.0), (7, 0.05, 0.0))
# every order 2..25 at 70 % of its EN 50160 individual limit [M] (THD 7.9 %), phases 37 h deg:
# the event grid and the quadrature refine with the 25th (1250 Hz)
_LIMITS = {2: 2, 3: 5, 4: 1, 5: 6, 6: .5, 7: 5, 8: .5, 9: 1.5, 10: .5, 11: 3.5, 12: .5, 13: 3,
           14: .5, 15: .5, 16: .5, 17: 2, 18: .5, 19: 1.5, 20: .5, 21: .5, 22: .5, 23: 1.5,
           24: .5, 25: 1.5}  # fmt: skip
WIDE = tuple((h, 0.7 * p / 100, 37.0 * h % 360) for h, p in _LIMITS.items())
SCENARIOS = [
    S("h-bridge-230-50-470R-noload", "bridge", 230, 50, 330e-9, 470, 12.0, harmonics=EN),
    S("h-bridge-230-50-220R-partial", "bridge", 230, 50, 470e-9, 220, 12.0, load_a=0.008,
      harmonics=EN),
    S("h-half-230-50-470R-noload", "half-wave", 230, 50, 330e-9, 470, 12.0, harmonics=EN),
    S("h-half-230-60-220R-partial", "half-wave", 230, 60, 680e-9, 220, 5.6, load_a=0.008,
      harmonics=EN),
    # an even harmonic breaks the half-wave symmetry: the bridge is shot over the full cycle
    S("h-bridge-120-60-100R-even", "bridge", 120, 60, 1e-6, 100, 9.1, load_a=0.010,
      harmonics=((2, 0.02, 0.0), (3, 0.05, 0.0), (5, 0.06, 180.0))),
    # phases that raise the crest (5th in phase at the crest, 3rd and 7th shifted)
    S("h-bridge-230-50-100R-wide", "bridge", 230, 50, 330e-9, 100, 12.0, load_a=0.005,
      harmonics=WIDE),
    S("h-half-230-50-100R-phase", "half-wave", 230, 50, 470e-9, 100, 9.1, load_a=0.004,
      harmonics=((3, 0.05, 180.0), (5, 0.06, 0.0), (7, 0.05, 90.0))),
]  # fmt: skip


def harmonics_of(sc: nu.Scenario) -> tuple[Harmonic, ...]:
    return tuple(Harmonic(h, a, ph) for h, a, ph in sc.harmonics)


@pytest.mark.parametrize("sc", SCENARIOS, ids=[s.name for s in SCENARIOS])
def test_distorted_steady_state_against_ngspice(sc: nu.Scenario) -> None:
    ref = nu.steady_metrics(sc)
    st = solve_steady_state(engine_circuit(sc), sc.mains_v, sc.freq_hz, harmonics=harmonics_of(sc))
    # ngspice: DC current, Zener power, line rms within 3 %
    assert rel(st.dc_current_a, ref["dc_current_a"]) < 0.03
    assert rel(st.line_current_rms_a, ref["line_current_rms_a"]) < 0.03
    scale = max(abs(ref["zener_power_w"]), 0.2 * sc.vz_v * ref["dc_current_a"])
    assert abs(st.zener_power_w - ref["zener_power_w"]) < 0.03 * scale


def test_harmonics_change_the_result_ngspice_sees() -> None:
    """The comparison above is not blind to the harmonics: on the same circuit ngspice's line
    rms with and without them differs by far more than the 3 % tolerance (h w C V_h grows with
    the order: 15 %, 30 % and 35 % of the fundamental current)."""
    sc = SCENARIOS[0]
    clean = nu.Scenario(**{**sc.__dict__, "name": "clean", "harmonics": ()})
    with_h = nu.steady_metrics(sc)["line_current_rms_a"]
    without = nu.steady_metrics(clean)["line_current_rms_a"]
    assert with_h / without > 1.08
