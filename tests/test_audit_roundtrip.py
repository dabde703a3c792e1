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


# --------------------------------------------------------------------------------------------
# the BOM carries the code, the supplier and the ratings the rules used (issue 12): the audit
# of it then evaluates the same parts as the design, rule for rule and figure for figure

DESCRIBED = Path(__file__).parent / "data" / "description_stock.csv"  # demo data, invented


def _by_rule(items, part_key, limit_key):
    out: dict[str, list[tuple]] = {}
    for item in items:
        out.setdefault(item["rule"], []).append(
            (item["stress"], item[limit_key], item["severity"], item[part_key])
        )
    return {rule: sorted(rows, key=lambda r: (str(r[0]), str(r[1]))) for rule, rows in out.items()}


def _same_figure(a, b) -> bool:
    if isinstance(a, (int, float)) and isinstance(b, (int, float)):
        return a == pytest.approx(b, rel=1e-6, abs=1e-12)
    return a == b


@pytest.mark.parametrize(
    "request_args, stock",
    [
        (["--load", "12m", "--vout", "5.1", "--freq", "50,60"], False),
        (["--load", "10m", "--vout", "12", "--freq", "50"], False),
        (["--load", "8m", "--vout", "5.1", "--topology", "half-wave"], False),
        (["--load", "10m", "--vout", "5.1", "--life", "1y", "--humidity", "40"], True),
    ],
)
def test_audit_of_the_design_bom_agrees_rule_for_rule(
    catalogue_copy_url, tmp_path: Path, request_args, stock
):
    import csv

    design_args = list(request_args)
    if stock:
        done = runner.invoke(
            app,
            ["parts", "import", str(DESCRIBED), "--supplier", "trial", "--db", catalogue_copy_url],
        )
        assert done.exit_code == 0, done.output
        design_args.append("--stock-only")
    bom = tmp_path / "design.csv"
    made = runner.invoke(
        app, ["design", *design_args, "--bom", str(bom), "--json", "--db", catalogue_copy_url]
    )
    assert made.exit_code == 0, made.output
    designed = json.loads(made.stdout)["designs"][0]
    # the BOM names our code and, for imported parts, the supplier; it states the ratings
    with bom.open(encoding="utf-8") as fh:
        lines = list(csv.DictReader(fh))
    assert [line["Catalogue code"] for line in lines] == [p["code"] for p in designed["parts"]]
    expected_supplier = "trial" if stock else ""
    assert {line["Supplier"] for line in lines} == {expected_supplier}
    assert all(line["Ratings"] for line in lines)
    at = request_args.index("--vout")  # the audit reads the output voltage from the Zener
    audit_args = request_args[:at] + request_args[at + 2 :]
    audited = runner.invoke(app, ["audit", str(bom), *audit_args, "--json",
                                  "--db", catalogue_copy_url])  # fmt: skip
    assert audited.exit_code == 0, audited.output
    doc = json.loads(audited.stdout)
    assert [f for f in doc["findings"] if f["severity"] == "fail"] == []
    # nothing guessed from a family: every figure the rules read came from the BOM
    assert doc["boards"][0]["assumed"] == []
    design_rules = _by_rule(designed["checks"], "part", "limit")
    audit_rules = _by_rule(doc["findings"], "role", "rating")
    assert set(design_rules) == set(audit_rules)
    for rule, rows in design_rules.items():
        theirs = audit_rules[rule]
        assert len(rows) == len(theirs), rule
        for ours, got in zip(rows, theirs, strict=True):
            assert _same_figure(ours[0], got[0]), (rule, "stress", ours, got)
            assert _same_figure(ours[1], got[1]), (rule, "rating", ours, got)
            assert ours[2] == got[2], (rule, "severity", ours, got)
    # without the Ratings column the audit must guess figures from a family (what issue 12
    # found): the column is what makes the two agree
    stripped = tmp_path / "no-ratings.csv"
    with stripped.open("w", newline="", encoding="utf-8") as fh:
        writer = csv.DictWriter(fh, [c for c in lines[0] if c != "Ratings"], extrasaction="ignore")
        writer.writeheader()
        writer.writerows(lines)
    guessed = runner.invoke(app, ["audit", str(stripped), *audit_args, "--json",
                                  "--db", catalogue_copy_url])  # fmt: skip
    assert json.loads(guessed.stdout)["boards"][0]["assumed"] != []


def test_a_bad_ratings_cell_names_file_row_and_column(catalogue_url, tmp_path: Path):
    from selector.audit.ratings import stated_ratings

    # SI numbers as --json prints them, read by the units module
    assert stated_ratings("power_w=0.5; dvdt_v_per_s=1.3e8; humidity_grade=III; fusible=1") == {
        "power_w": 0.5,
        "dvdt_v_per_s": 1.3e8,
        "humidity_grade": "III",
        "fusible": True,
    }
    bom = tmp_path / "bad.csv"
    bom.write_text(
        "Reference,Value,Description,Role,Ratings\n"
        'C1,330n,X2 film capacitor 305VAC,x_capacitor,"rated_voltage_ac_v=305"\n'
        'R1,100,metal oxide resistor 2W,series_resistor,"power_watts=2"\n',
        encoding="utf-8",
    )
    audited = runner.invoke(app, ["audit", str(bom), "--load", "10m", "--db", catalogue_url])
    assert audited.exit_code == 2
    assert f"{bom}, row 3, column 'Ratings'" in audited.stderr
    assert "unknown rating 'power_watts'" in audited.stderr
