"""Round trip: the BOM `dropper design --bom` writes is read back by `dropper audit`, and the
audit finds no failure in a design the solver proposed (both run the same rule engine, so a
disagreement would be a defect in one of them or in the BOM text between them).

Requirements are demo figures (invented), in the range of DOMAIN.md section 1 (a few mA to a few
tens of mA at 230 V).
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from selector.cli import app

runner = CliRunner()


@pytest.mark.parametrize(
    "load, vout, freq",
    [("12m", "5.1", "50,60"), ("10m", "12", "50"), ("5m", "3.3", "50,60")],
)
def test_design_bom_audits_without_failure(catalogue_url, tmp_path: Path, load, vout, freq):
    bom = tmp_path / "design.csv"
    made = runner.invoke(
        app,
        ["design", "--load", load, "--vout", vout, "--mains", "230", "--freq", freq,
         "--bom", str(bom), "--db", catalogue_url, "--json"],
    )  # fmt: skip
    assert made.exit_code == 0, made.output
    assert bom.is_file()
    audited = runner.invoke(
        app,
        ["audit", str(bom), "--mains", "230", "--freq", freq, "--load", load,
         "--db", catalogue_url, "--json"],
    )  # fmt: skip
    doc = json.loads(audited.stdout)
    failing = [(f["rule"], f["ref"], f["stress"], f["rating"]) for f in doc["findings"]
               if f["severity"] == "fail"]  # fmt: skip
    assert failing == []
    assert audited.exit_code == 0
    # every designed part was read back with the role design gave it
    assert all(r["how"] == "BOM" for r in doc["roles"])


@pytest.mark.parametrize(
    "load_a, vout_v, freqs, topology",
    [
        (0.012, 5.1, (50.0, 60.0), "bridge"),
        (0.008, 5.1, (50.0, 60.0), "half-wave"),
        (0.010, 12.0, (50.0,), "bridge"),
    ],
)
def test_library_round_trip(catalogue_url, tmp_path: Path, load_a, vout_v, freqs, topology):
    """The same round trip through the library: design(), write_bom(), audit_bom()."""
    from selector.audit.evaluate import audit_bom
    from selector.catalogue import make_engine, parts_frame
    from selector.design import Requirement, design, write_bom
    from selector.engine import Conditions, Load, Mains, Tolerances

    engine = make_engine(catalogue_url)
    try:
        frame = parts_frame(engine)
    finally:
        engine.dispose()
    mains = Mains(230.0, 0.10, freqs)
    req = Requirement(
        load_a=load_a, vout_v=vout_v, mains=mains, conditions=Conditions(), topology=topology
    )
    best = design(frame, req)[0]
    bom = tmp_path / "design.csv"
    write_bom(best, bom)
    result = audit_bom(
        bom,
        mains=mains,
        conditions=Conditions(),
        tolerances=Tolerances(cap_loss=req.cap_loss),
        load=Load(current_a=load_a),
        catalogue=frame,
    )
    failing = [(f.rule, f.ref, f.stress, f.rating) for f in result.findings if f.severity == "fail"]
    assert failing == []
    assert result.boards[0].circuit.topology == best.topology
    assert result.boards[0].circuit.x_capacitance_f == pytest.approx(
        best.effective["x_capacitance_f"]
    )
