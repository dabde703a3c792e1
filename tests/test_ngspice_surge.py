"""The surge through the whole circuit against ngspice (outside reference: the ngspice circuit
simulator, Debian package ``ngspice``, run as ``ngspice -b``).

Both sides use the same generator (the element values of
:data:`selector.engine.surge_circuit.GENERATOR`) in series with the mains, and the same
physical devices: SPICE level-1 diodes ``D(IS=1e-12 N=1 RS=0.1 CJO=20p)``, Zener ``BV=Vz
IBV=10 mA`` with its own ``RS`` (tests/ngspice_util.py). The engine's piecewise-linear devices
are straight lines fitted to those junctions over the current range of the pulse
(:meth:`ExpDiode.line`): the rectifier over 0.1..1 x ``V / (R + 2 ohm)``, the Zener over
0.2..1 x its own peak (two passes: the first estimates the peak). ngspice's pre-state is its own
(four mains cycles from a pre-charged reservoir, ending at the surge's phase).

Acceptance (issue 11): every surge figure within 5 %, the bus peak within 10 %.
"""

from __future__ import annotations

import ngspice_util as nu
import pytest

from selector.engine import surge_circuit as scm

pytestmark = [
    pytest.mark.ngspice,
    pytest.mark.skipif(nu.ngspice_path() is None, reason="ngspice is not installed"),
]

S = nu.SurgeScenario
SCENARIOS = [
    # the issue's reference circuit: 330 nF / 47 ohm / 5.1 V Zener / 470 uF bridge
    S("ref-1k-90+", "bridge", 330e-9, 47, 5.1, 470e-6, 0.0, 1000, 90, 1),
    S("ref-2k-270-", "bridge", 330e-9, 47, 5.1, 470e-6, 0.0, 2000, 270, -1),
    S("ref-2k-esr1-90+", "bridge", 330e-9, 47, 5.1, 470e-6, 1.0, 2000, 90, 1),
    S("bridge-100R-22u-0+", "bridge", 470e-9, 100, 12.0, 22e-6, 2.0, 1000, 0, 1),
    S("bridge-1k-100u-180-", "bridge", 220e-9, 1000, 15.0, 100e-6, 0.5, 2000, 180, -1),
    S("bridge-470R-zrs1-90+", "bridge", 330e-9, 470, 5.1, 470e-6, 0.3, 2000, 90, 1, zener_rs=1.0),
    S("half-47R-470u-90+", "half-wave", 330e-9, 47, 5.1, 470e-6, 0.3, 2000, 90, 1),
    S("half-220R-22u-270-", "half-wave", 680e-9, 220, 12.0, 22e-6, 1.5, 1000, 270, -1),
    S("half-470R-100u-0-", "half-wave", 330e-9, 470, 9.1, 100e-6, 0.5, 2000, 0, -1),
    # the issue's reference with 1 ohm ESR and a Zener of 1 ohm bulk resistance
    S("ref-2k-esr1-zrs1-270-", "bridge", 330e-9, 47, 5.1, 470e-6, 1.0, 2000, 270, -1, zener_rs=1.0),
]

RECTIFIER = scm.ExpDiode(is_a=nu.IS, n=1.0, rs_ohm=nu.RS)


def engine_case(sc: nu.SurgeScenario, pre: tuple[float, float], iz_peak: float) -> scm.SurgeCase:
    """The scenario as a :class:`SurgeCase` with lines fitted to the ngspice junctions."""
    ipk = sc.level_v / (sc.r_ohm + 2.0)
    vf, rd = RECTIFIER.line(0.1 * ipk, ipk)
    iz = max(iz_peak, 0.05)
    dz, zz = scm.ExpDiode(is_a=nu.IBV, n=1.0, rs_ohm=sc.zener_rs).line(0.2 * iz, iz)
    return scm.SurgeCase(
        topology=sc.topology,
        mains_v=sc.mains_v,
        freq_hz=sc.freq_hz,
        cap_f=sc.cap_f,
        r_ohm=sc.r_ohm,
        bleeder_ohm=sc.bleeder_ohm,
        vf_v=vf,
        rd_ohm=rd,
        vz_v=sc.vz_v + dz,
        zz_ohm=zz,
        reservoir_f=sc.reservoir_f,
        esr_ohm=sc.esr_ohm,
        load_a=0.0,
        load_g=0.0,
        phases_deg=(sc.phase_deg,),
        v_x0=(pre[0],),
        v_o0=(pre[1],),
    )


def engine_surge(sc: nu.SurgeScenario, pre: tuple[float, float]) -> dict[str, float]:
    j = 0 if sc.polarity > 0 else 1
    iz = sc.level_v / (sc.r_ohm + 2.0) / 4.0
    for _ in range(2):
        run = scm.simulate([engine_case(sc, pre, iz)], sc.level_v)
        iz = float(run.zener_peak_current_a[j])
    return {k: float(getattr(run, k)[j]) for k in scm.SURGE_STRESSES}


def u0(level_v: float) -> float:
    """Charging voltage of the generator's capacitor for a peak open-circuit voltage."""
    return level_v / scm.GENERATOR.peak_per_volt()


@pytest.mark.parametrize("sc", SCENARIOS, ids=[s.name for s in SCENARIOS])
def test_surge_against_ngspice(sc: nu.SurgeScenario) -> None:
    pre = nu.surge_pre_state(sc)
    ref = nu.surge_metrics(sc, scm.GENERATOR, u0(sc.level_v), scm.SURGE_WINDOW_S, pre=pre)
    got = engine_surge(sc, pre)
    for name in scm.SURGE_STRESSES:
        if name == "series_r_peak_voltage_v":
            continue  # R x peak current: the same comparison as the peak current
        tol = 0.10 if name == "bus_peak_v" else 0.05
        # ngspice: every surge figure within 5 %, the bus peak within 10 % (issue 11)
        assert got[name] == pytest.approx(ref[name], rel=tol), name
    # the peaks of the pulse within 2 % (issue 11 item 3: diode lines for the high currents)
    for name in ("peak_current_a", "rectifier_peak_current_a", "x_cap_peak_total_v"):
        assert got[name] == pytest.approx(ref[name], rel=0.02), name


def test_reference_circuit_matches_the_issue_figures() -> None:
    # issue 11 (an ngspice run of its own): X capacitor total 966 V / 1614 V at 1 kV / 2 kV,
    # bridge ~37-39 A at 2 kV, and with 1 ohm ESR the Zener ~18 A and the bus ~24 V (which our
    # runs reproduce with a Zener of 1 ohm bulk resistance). The engine: within 1 %/6 %/5 %.
    sc1, sc2, sc3 = SCENARIOS[0], SCENARIOS[1], SCENARIOS[-1]
    e1 = engine_surge(sc1, nu.surge_pre_state(sc1))
    e2 = engine_surge(sc2, nu.surge_pre_state(sc2))
    e3 = engine_surge(sc3, nu.surge_pre_state(sc3))
    assert e1["x_cap_peak_total_v"] == pytest.approx(966.0, rel=0.01)
    assert e2["x_cap_peak_total_v"] == pytest.approx(1614.0, rel=0.01)
    assert 37.0 * 0.94 <= e2["rectifier_peak_current_a"] <= 39.0 * 1.06
    assert e3["zener_peak_current_a"] == pytest.approx(18.0, rel=0.05)
    assert e3["bus_peak_v"] == pytest.approx(24.0, rel=0.05)
