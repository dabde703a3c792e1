"""`--report FILE` on the commands: the page holds the same numbers as the command's --json.

The circuit checked is the README's example values (330 nF, 470 ohm, 1 Mohm, 12 V, 220 uF,
12 mA); the engine computes it, the report shows it. The comparison is exact: each number in
the page carries its JSON key and SI value.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from typer.testing import CliRunner

from selector.cautions import CAUTIONS
from selector.cli import app
from selector.units import format_value
from tests.test_report import (
    LAYOUT_WIDTHS,
    _lookup,
    _parse,
    assert_layout_fits,
    chromium_layout,
    need_chromium,
)

DATA = Path(__file__).parent / "data"
runner = CliRunner()


def _plain(obj):
    from selector.cli._app import to_jsonable

    return to_jsonable(obj)


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


#: sections the report adds to a check document (the circuit, mains, tolerances, conditions)
_ADDED = ("circuit.", "mains.", "tolerances.", "conditions.")


def _compare(page, doc) -> int:
    """Every numeric cell whose key is in the JSON document equals it; returns how many."""
    focus = _lookup(doc, page.body_focus) if page.body_focus else doc
    n = 0
    for cell in page.cells:
        if not cell["si"] or cell["key"].startswith(_ADDED):
            continue  # the report's additions to a check document: what was analysed
        try:
            want = _lookup(focus, cell["key"])
        except (KeyError, IndexError, TypeError):
            want = _lookup(doc, cell["key"])
        assert float(cell["si"]) == float(want), cell["key"]
        n += 1
    return n


def test_check_report_equals_check_json(tmp_path):
    out = tmp_path / "check.html"
    args = ["check", "--cap", "330n", "--series-r", "470", "--bleeder", "1M", "--zener", "12",
            "--reservoir", "220u", "--load", "12m", "--freq", "50,60"]  # fmt: skip
    result = invoke(*args, "--json", "--report", str(out))
    assert result.exit_code in (0, 1), result.output
    doc = json.loads(result.stdout)
    html = out.read_text(encoding="utf-8")
    page = _parse(html)
    assert page.stack == []
    assert page.svgs == 4  # schematic, line current, output voltage, switch-on current
    assert _compare(page, doc) >= 40
    assert [li.strip() for li in page.li] == list(CAUTIONS)
    assert "C1 330 nF" in html and "DZ1 12 V" in html  # the schematic carries the values
    # the worst-case figures come with their corners
    wc = doc["worst_case"]
    corner = wc["max_zener_power_corner"]
    assert f"mains {format_value(corner['mains_v'], 'V', 4)}, {corner['freq_hz']:g} Hz" in html
    assert "Line current over two mains cycles" in html
    assert "Switch-on current at the crest" in html
    # what was analysed, tolerances as percentages (the defaults of the check options)
    shown = {c["key"]: c["text"].strip() for c in page.cells}
    assert shown["mains.tolerance"] == "10 %"
    assert shown["tolerances.cap_tol"] == "10 %" and shown["tolerances.cap_loss"] == "10 %"
    assert shown["tolerances.r_tol"] == "5 %" and shown["tolerances.zener_tol"] == "5 %"
    assert shown["conditions.surge_v"] == "1 kV"
    assert shown["nominal.reactive_power_var"].endswith(" var")
    assert shown["nominal.apparent_power_va"].endswith(" VA")
    # the switch-on figures share one corner: said once, above the table
    inrush = html[html.index("<h3>inrush</h3>") : html.index("<h3>surge</h3>")]
    assert inrush.count("Corner of every figure in this section: mains ") == 1


def test_report_path_error_is_one_line(tmp_path):
    result = runner.invoke(
        app, ["check", "--cap", "330n", "--report", str(tmp_path / "no" / "such" / "r.html")]
    )
    assert result.exit_code == 2
    assert result.stderr.startswith("Error: ") and result.stderr.count("\n") == 1


@pytest.mark.parametrize("command", ["check", "design", "audit"])
def test_report_option_is_offered(command):
    result = invoke(command, "--help")
    assert result.exit_code == 0
    assert "--report" in result.stdout and "HTML report" in result.stdout


def test_design_stock_only_cli_with_report(catalogue_copy_url, tmp_path):
    """The issue's done-when path: import the demo stock list (DEMO data, invented), design
    --stock-only from it, --report writes the page; its numbers equal the --json document."""
    imported = invoke(
        "parts", "import", str(DATA / "demo_stock.xlsx"), "--supplier", "demo-shelf",
        "--db", catalogue_copy_url,
    )  # fmt: skip
    assert imported.exit_code == 0, imported.output
    out = tmp_path / "design.html"
    result = invoke(
        "design", "--load", "12m", "--vout", "5.1", "--freq", "50,60", "--stock-only",
        # the demo stock holds only general-purpose electrolytics (2000 h at 105 C, at most
        # 30000 h by the 10-degree rule's cap) and grade I X2 parts: a shorter, drier life
        "--life", "20kh", "--humidity", "30",
        "--db", catalogue_copy_url, "--json", "--report", str(out),
    )  # fmt: skip
    assert result.exit_code == 0, result.output
    doc = json.loads(result.stdout)
    codes = [p["code"] for p in doc["designs"][0]["parts"]]
    assert codes and all(c.startswith("S:demo-shelf:") for c in codes)
    html = out.read_text(encoding="utf-8")
    page = _parse(html)
    assert page.body_focus == "designs[0]" and page.stack == [] and page.svgs == 4
    assert _compare(page, doc) >= 40
    assert [li.strip() for li in page.li] == list(CAUTIONS)
    for code in codes:
        assert code in html


def test_audit_cli_with_report(tmp_path):
    out = tmp_path / "audit.html"
    bom = DATA / "audit_vent_faulty.csv"
    result = invoke("audit", str(bom), "--freq", "50,60", "--json", "--report", str(out))
    assert result.exit_code == 1  # the demo BOM has failing parts
    doc = json.loads(result.stdout)
    page = _parse(out.read_text(encoding="utf-8"))
    assert page.stack == [] and page.svgs == 4
    assert _compare(page, doc) >= 20
    fails = doc["summary"]["fail"]
    assert f"{fails} of {len(doc['findings'])} checks fail" in out.read_text(encoding="utf-8")


def test_design_from_the_demo_stock_and_its_report(catalogue_copy_url, tmp_path):
    """Library path of `dropper design --stock-only --report`: import the demo stock list
    (DEMO data, invented), design from the stock-only frame, report the first design."""
    from selector.catalogue import make_engine, parts_frame
    from selector.catalogue.importer import import_stock
    from selector.design import Requirement, design, design_to_dict
    from selector.engine import Conditions, Mains
    from selector.report import write_report

    engine = make_engine(catalogue_copy_url)
    try:
        import_stock(engine, DATA / "demo_stock.xlsx", supplier="demo-shelf")
        frame = parts_frame(engine, stock_only=True)
    finally:
        engine.dispose()
    # the demo stock's general-purpose parts last a shorter, drier life (see above)
    req = Requirement(
        load_a=0.012,
        vout_v=5.1,
        mains=Mains(230.0, 0.1, (50.0, 60.0)),
        conditions=Conditions(life_s=20000 * 3600.0, humidity=0.3),
    )
    best = design(frame, req)[0]
    doc = {"designs": [design_to_dict(best)], "cautions": list(CAUTIONS)}
    # every chosen part comes from the imported stock list
    assert {p["code"].split(":")[1] for p in doc["designs"][0]["parts"]} == {"demo-shelf"}
    out = write_report(
        tmp_path / "design.html", "design", doc, best.circuit, analysis=best.analysis
    )
    html = out.read_text(encoding="utf-8")
    page = _parse(html)
    assert page.stack == [] and page.svgs == 4
    assert _compare(page, json.loads(json.dumps(doc, default=_plain))) >= 20
    for p in doc["designs"][0]["parts"]:
        assert p["code"] in html


@pytest.mark.parametrize("kind", ["check", "design", "audit"])
def test_command_reports_render_and_fit_in_chromium(catalogue_copy_url, tmp_path, kind):
    """The reports the three commands write, rendered headless: every table and figure is
    there and nothing overflows the page, at a 1280 px window and at A4 width."""
    need_chromium()
    out = tmp_path / f"{kind}.html"
    args = {
        "check": ["check", "--cap", "330n", "--series-r", "470", "--bleeder", "1M", "--zener",
                  "12", "--reservoir", "220u", "--load", "10m", "--freq", "50,60"],
        "design": ["design", "--load", "12m", "--vout", "5.1", "--freq", "50,60",
                   "--db", catalogue_copy_url],
        "audit": ["audit", str(DATA / "audit_vent_sound.csv"), "--freq", "50,60"],
    }[kind]  # fmt: skip
    result = invoke(*args, "--mains", "230", "--report", str(out))
    assert result.exit_code == 0, result.output
    html = out.read_text(encoding="utf-8")
    assert html.count("<figure") == 4  # schematic, line current, output voltage, switch-on
    if kind != "check":
        assert 'id="parts-table"' in html
    assert 'id="checks-table"' in html or kind == "check"
    for width in LAYOUT_WIDTHS:
        assert_layout_fits(chromium_layout(out, tmp_path, width), html, width)
