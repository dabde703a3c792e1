"""Designs from the built-in catalogue, checked by the real engine and by ngspice.

Outside reference: the ngspice circuit simulator (Debian package ``ngspice``, ``ngspice -b``),
through tests/ngspice_util.py (SPICE level-1 diodes, Zener breakdown at Vz for 10 mA; models
listed there). For three requirements (demo figures, invented) the top design is simulated at the
corner where the engine found its minimum DC current (low mains, lowest frequency, capacitance
at -tolerance -end-of-life loss, series resistance at +tolerance, Zener at +tolerance) with the
load connected: the current ngspice delivers into the bus must cover the load, and the Zener must
still conduct (the output is held).
"""

from __future__ import annotations

import ngspice_util as nu
import pytest

from selector import design as D
from selector.engine import Conditions, Mains
from selector.policy import Policy

REQUIREMENTS = [
    # load A, vout V, frequencies, topology
    (0.012, 5.1, (50.0, 60.0), "bridge"),
    (0.005, 12.0, (50.0,), "bridge"),
    (0.004, 5.1, (60.0,), "half-wave"),
]

#: the rules that apply to every design at the 1 kV surge (fuse.surge_i2t only to a real fuse)
SURGE_AND_WINDOW_RULES = {
    "x_cap.surge_total",
    "bleeder.surge_voltage",
    "rectifier.surge_i2t",
    "zener.surge_power",
    "whole.output_window_max",
    "whole.bus_surge_peak",
}


@pytest.fixture(scope="module")
def frame(builtin_frame):
    return builtin_frame


def _design(frame, load, vout, freqs, top):
    req = D.Requirement(
        load_a=load,
        vout_v=vout,
        mains=Mains(230.0, 0.10, freqs),
        conditions=Conditions(40.0, "iec60335", 1000.0),
        topology=top,
    )
    return D.design(frame, req, Policy())[0]


@pytest.mark.parametrize(("load", "vout", "freqs", "top"), REQUIREMENTS)
def test_engine_design_passes_every_rule(frame, load, vout, freqs, top):
    d = _design(frame, load, vout, freqs, top)
    assert d.topology == top
    assert all(f.severity == "pass" or f.waived for f in d.checks)
    # the surge rules (issue 11) and the output window are among the checks that passed
    ids = {f.rule for f in d.checks}
    assert SURGE_AND_WINDOW_RULES <= ids
    assert "fuse.surge_i2t" in ids or "fuse.fusible_opens_on_short" in ids
    assert d.worst_case.load_met
    # check's own verdict on the same values accepts the design, the bus peak during the
    # surge included (issue 11: a design must never be one that `check` refuses)
    assert d.analysis.failures == []
    assert d.worst_case.min_dc_current_a >= load * 1.1  # default load margin 10 % [P]


@pytest.mark.ngspice
@pytest.mark.skipif(nu.ngspice_path() is None, reason="ngspice is not installed")
@pytest.mark.parametrize(("load", "vout", "freqs", "top"), REQUIREMENTS)
def test_ngspice_confirms_minimum_current_at_low_corner(frame, load, vout, freqs, top):
    d = _design(frame, load, vout, freqs, top)
    k = d.worst_case.min_dc_current_corner
    sc = nu.Scenario(
        name=f"design-{top}-{load}",
        topology=top,
        mains_v=k["mains_v"],
        freq_hz=k["freq_hz"],
        cap_f=k["cap_f"],
        r_ohm=k["r_ohm"],
        vz_v=k["vz_v"],
        reservoir_f=d.effective["reservoir_f"],
        load_a=load,
        bleeder_ohm=d.effective["bleeder_resistance_ohm"],
    )
    got = nu.steady_metrics(sc)
    # ngspice: the dropper delivers at least the load current at the weakest corner ...
    assert got["dc_current_a"] >= load
    # ... with current to spare for the Zener (it still clamps: power > 0, output held)
    assert got["zener_power_w"] > 0
    # and the engine's minimum agrees with ngspice within 3 % (engine vs ngspice: issue 3)
    assert got["dc_current_a"] == pytest.approx(d.worst_case.min_dc_current_a, rel=0.03)
