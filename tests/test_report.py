"""The HTML report (selector.report): parses, carries inline SVG only, shows the JSON's numbers.

The documents below have the shapes of the check / design / audit JSON documents; their values
are invented for the test (demo). The plotted line current is the textbook current of an ideal
capacitor across a sine source, i(t) = Vpk * 2 pi f C * cos(2 pi f t) (any circuits textbook),
only so that the plot has a real waveform to draw.
"""

from __future__ import annotations

import json
import math
import os
import re
import shutil
import subprocess
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import numpy as np
import pytest

from selector.cautions import CAUTIONS
from selector.errors import BadValueError
from selector.report import render_report, write_report
from selector.report.plots import Trace, pulse_window, waveform_svg
from selector.report.schematic import schematic_svg
from selector.units import parse_value

CHROMIUM = shutil.which("chromium") or (
    "/usr/bin/chromium" if Path("/usr/bin/chromium").exists() else None
)


def need_chromium() -> None:
    """Skip the headless render tests where Debian's chromium is missing (developers'
    machines); fail instead where DROPPER_REQUIRE_CHROMIUM is set (.ci/run installs it)."""
    if CHROMIUM is not None:
        return
    if os.environ.get("DROPPER_REQUIRE_CHROMIUM"):
        pytest.fail("DROPPER_REQUIRE_CHROMIUM is set but chromium is not installed")
    pytest.skip("Debian's chromium is not installed here: the headless render test is skipped")


class _Page(HTMLParser):
    """Collects what the tests look at: tags in order, numeric cells, scripts, SVGs, links."""

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.stack: list[str] = []
        self.cells: list[dict[str, str]] = []
        self._cell: dict[str, str] | None = None
        self.svgs = 0
        self.scripts: list[tuple[dict[str, str | None], str]] = []
        self._script: dict[str, str | None] | None = None
        self._script_text: list[str] = []
        self.urls: list[str] = []
        self.text: list[str] = []
        self.body_focus: str | None = None
        self.sections: list[str] = []
        self.li: list[str] = []
        self._in_li = False

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "svg":
            self.svgs += 1
        if tag == "body":
            self.body_focus = a.get("data-focus")
        if tag == "section":
            self.sections.append(a.get("id") or "")
        if tag in ("td", "span") and a.get("data-si"):
            self._cell = {"key": a["data-key"] or "", "si": a["data-si"], "text": ""}
        if tag == "script":
            self._script, self._script_text = a, []
        if tag == "li":
            self._in_li = True
            self.li.append("")
        for k in ("src", "href", "xlink:href"):
            if a.get(k):
                self.urls.append(a[k])
        if tag not in ("br", "wbr", "meta", "img", "input", "link", "hr"):
            self.stack.append(tag)

    def handle_endtag(self, tag):
        if tag in ("td", "span") and self._cell is not None:
            self.cells.append(self._cell)
            self._cell = None
        if tag == "script" and self._script is not None:
            self.scripts.append((self._script, "".join(self._script_text)))
            self._script = None
        if tag == "li":
            self._in_li = False
        if self.stack and self.stack[-1] == tag:
            self.stack.pop()

    def handle_data(self, data):
        if self._cell is not None:
            self._cell["text"] += data
        if self._script is not None:
            self._script_text.append(data)
        if self._in_li:
            self.li[-1] += data
        self.text.append(data)


def _parse(html: str) -> _Page:
    page = _Page()
    page.feed(html)
    page.close()
    return page


def _lookup(doc: Any, path: str) -> Any:
    """Value at a dotted path with [i] indexes, e.g. ``checks[2].stress``."""
    cur = doc
    for part in re.findall(r"[^.\[\]]+|\[\d+\]", path):
        if part.startswith("["):
            cur = cur[int(part[1:-1])]
        else:
            cur = cur[part]
    return cur


def _waveforms() -> dict[str, Any]:
    f, c, vpk = 50.0, 330e-9, 230.0 * 1.1 * math.sqrt(2.0)
    t = np.linspace(0.0, 2.0 / f, 801)
    i = vpk * 2 * math.pi * f * c * np.cos(2 * math.pi * f * t)
    v = np.full_like(t, 12.0) - 0.1 * np.sin(4 * math.pi * f * t)
    ts = np.linspace(0.0, 5e-3, 300)
    inrush = (vpk / 470.0) * np.exp(-ts / (470.0 * c))
    return {
        "line current over two mains cycles (253 V, 50 Hz)": ("A", [Trace("253 V 50 Hz", t, i)]),
        "output voltage over two mains cycles": ("V", [("207 V 50 Hz, full load", t, v)]),
        "switch-on current at the crest": ("A", [("crest, discharged", ts, inrush)]),
    }


CHECK_DOC = {
    "circuit": {
        "topology": "bridge",
        "x_capacitors_f": [330e-9],
        "series_resistance_ohm": 470.0,
        "bleeder_resistance_ohm": 1e6,
        "zener_voltage_v": 12.0,
        "reservoir_f": 220e-6,
    },
    "mains": {"nominal_v": 230.0, "tolerance": 0.1, "frequencies_hz": [50.0, 60.0]},
    "worst_case": {
        "zener_power_w": 0.2518,
        "zener_power_w_corner": "253 V, 60 Hz, C +10 %, no load",
        "min_output_current_a": 0.01513,
        "min_output_current_a_corner": "207 V, 50 Hz, C -10 % -10 % loss",
        "series_r_power_w": 0.0893,
        "corners": {"series_r_power_w": "253 V, 60 Hz, C +10 %"},
    },
    "inrush": {"peak_current_a": 0.761, "energy_j": 0.0116, "i2t_a2s": 1.3e-4},
    "findings": [
        {
            "rule": "zener_power",
            "part": "zener",
            "stress": 0.2518,
            "limit": 0.5,
            "unit": "W",
            "margin": 0.496,
            "ok": True,
            "source": "common practice [P]",
            "corner": "253 V 60 Hz",
        },
        {
            "rule": "x_cap_voltage",
            "part": "x_capacitor",
            "stress": 253.0,
            "limit": 250.0,
            "unit": "V",
            "margin": -0.012,
            "ok": False,
            "source": "IEC 60384-14",
            "corner": "253 V",
        },
    ],
    "cautions": list(CAUTIONS),
}

DESIGN_DOC = {
    "requirement": {"load_a": 0.012, "vout_v": 5.1, "mains_v": 230.0, "topology": "bridge"},
    "designs": [
        {
            "rank": 1,
            "topology": "bridge",
            "total_price": 0.4123,
            "parts": [
                {
                    "role": "x_capacitor",
                    "code": "xcap.x2.305vac.330n.10pct",
                    "description": "X2 330 nF 305 V",
                    "value": 3.3e-7,
                    "qty": 1,
                    "unit_price": 0.14,
                },
                {
                    "role": "series_resistor",
                    "code": "res.fusible.1w.100R.5pct",
                    "description": "fusible 100 ohm 1 W",
                    "value": 100.0,
                    "qty": 1,
                    "unit_price": 0.05,
                },
                {
                    "role": "zener",
                    "code": "zener.tht.1w.5v1.5pct",
                    "description": "Zener 5.1 V 1 W",
                    "value": 5.1,
                    "qty": 1,
                    "unit_price": 0.022,
                },
            ],
            "worst_case": {"zener_power_w": 0.1203, "min_output_current_a": 0.01391},
            "checks": [
                {
                    "rule": "zener_power",
                    "part": "zener",
                    "stress": 0.1203,
                    "limit": 0.5,
                    "unit": "W",
                    "margin": 0.759,
                    "ok": True,
                    "severity": "pass",
                    "source": "common practice [P]",
                    "corner": "253 V 60 Hz no load",
                }
            ],
        },
        {"rank": 2, "topology": "bridge", "total_price": 0.5, "parts": [], "checks": []},
    ],
    "cautions": list(CAUTIONS),
}

AUDIT_DOC = {
    "file": "board.csv",
    "roles": [
        {
            "ref": "C1",
            "role": "x_capacitor",
            "kind": "x_capacitor",
            "value": 4.7e-7,
            "text": "470n X2 275V",
        },
        {
            "ref": "R1",
            "role": "series_resistor",
            "kind": "resistor",
            "value": 220.0,
            "text": "220R 1206",
        },
    ],  # fmt: skip
    "boards": [
        {
            "board": "",
            "topology": "half-wave",
            "x_capacitance_f": 4.7e-7,
            "series_resistance_ohm": 220.0,
            "zener_voltage_v": 12.0,
        }
    ],
    "findings": [
        {
            "ref": "R1",
            "role": "series_resistor",
            "rule": "series_r_power",
            "stress": 0.61,
            "rating": 0.25,
            "unit": "W",
            "margin": -1.44,
            "severity": "fail",
            "source": "common practice [P]",
            "corner": "253 V 60 Hz",
        },
        {
            "ref": "C1",
            "role": "x_capacitor",
            "rule": "x_cap_class",
            "stress": None,
            "rating": None,
            "unit": "class",
            "margin": None,
            "severity": "pass",
            "source": "IEC 60384-14",
            "corner": None,
        },
    ],
    "summary": {"fail": 1, "warn": 0, "pass": 1},
    "cautions": list(CAUTIONS),
}


@pytest.mark.parametrize(
    ("kind", "doc", "topology"),
    [("check", CHECK_DOC, "bridge"), ("design", DESIGN_DOC, "bridge"),
     ("audit", AUDIT_DOC, "half-wave")],
)  # fmt: skip
def test_report_parses_and_holds_every_section(tmp_path, kind, doc, topology):
    path = write_report(tmp_path / f"{kind}.html", kind, doc, waveforms=_waveforms())
    html = path.read_text(encoding="utf-8")
    page = _parse(html)
    assert html.startswith("<!DOCTYPE html>")
    assert page.stack == [], f"unclosed tags: {page.stack}"
    assert page.sections == [
        "inputs", "schematic", "worst-case", "waveforms", "parts", "checks", "cautions"
    ]  # fmt: skip
    # the schematic and three plots, all inline: no external URL anywhere (self-contained)
    assert page.svgs == 4
    assert not [u for u in page.urls if re.match(r"^(https?:)?//", u)]
    assert "<img" not in html and "<link" not in html and "@import" not in html
    assert f"topology: {topology}" in html
    # every caution, in full, at the end
    assert [li.strip() for li in page.li] == list(CAUTIONS)
    assert html.rfind("Safety cautions") > html.rfind('id="checks"')


@pytest.mark.parametrize(
    ("kind", "doc"), [("check", CHECK_DOC), ("design", DESIGN_DOC), ("audit", AUDIT_DOC)]
)
def test_numbers_in_the_page_equal_the_json(tmp_path, kind, doc):
    html = render_report(kind, doc, waveforms=_waveforms())
    page = _parse(html)
    (attrs, text), *_ = [s for s in page.scripts if s[0].get("id") == "dropper-result"]
    assert attrs.get("type") == "application/json"
    assert json.loads(text) == json.loads(json.dumps(doc))  # the whole document, verbatim
    focus = _lookup(doc, page.body_focus) if page.body_focus else doc
    numeric = [c for c in page.cells if c["si"]]
    assert len(numeric) >= 8
    for cell in numeric:
        key = cell["key"]
        try:
            want = _lookup(focus, key)
        except (KeyError, IndexError):
            want = _lookup(doc, key)
        assert float(cell["si"]) == float(want), key  # exact, as in the JSON
        shown = cell["text"].strip()
        if re.fullmatch(r"[-+0-9.eE]+ ?[pnµmkMG]?(F|Ω|V|A|W|J|s|Hz)", shown):
            got = parse_value(shown.replace("Ω", "ohm").replace("µ", "u"))
            assert math.isclose(got, float(want), rel_tol=5e-4), (key, shown, want)


def test_shown_values_in_engineering_notation():
    page = _parse(render_report("check", CHECK_DOC))
    shown = {c["key"]: c["text"].strip() for c in page.cells}
    assert shown["worst_case.zener_power_w"] == "251.8 mW"
    assert shown["worst_case.min_output_current_a"] == "15.13 mA"
    assert shown["circuit.series_resistance_ohm"] == "470 Ω"
    assert shown["findings[1].stress"] == "253 V"  # the row's own unit field
    html = render_report("check", CHECK_DOC)
    # the corner behind each extreme, next to it
    assert "253 V, 60 Hz, C +10 %, no load" in html
    assert "207 V, 50 Hz, C -10 % -10 % loss" in html
    assert "253 V, 60 Hz, C +10 %" in html


def test_fractions_are_shown_as_percentages():
    # a tolerance of 0.1 is 10 % (IEC 60062 letter K = 10 % [S]); keys name fractions by a
    # word: tolerance / tol / loss / fraction / margin; quantities with a unit stay in units
    doc = {
        **CHECK_DOC,
        "tolerances": {"cap_tol": 0.1, "cap_loss": 0.25, "r_tol": 0.05, "zener_tol": 0.02},
        "policy": {"zener_power_fraction": 0.5, "load_margin": 0.1, "fuse_fault_factor": 2.0},
    }
    page = _parse(render_report("check", doc))
    shown = {c["key"]: c["text"].strip() for c in page.cells}
    assert shown["mains.tolerance"] == "10 %"
    assert shown["tolerances.cap_tol"] == "10 %"
    assert shown["tolerances.cap_loss"] == "25 %"
    assert shown["tolerances.r_tol"] == "5 %"
    assert shown["tolerances.zener_tol"] == "2 %"
    assert shown["policy.zener_power_fraction"] == "50 %"
    assert shown["policy.load_margin"] == "10 %"
    assert shown["policy.fuse_fault_factor"] == "2"  # a factor, not a fraction
    assert shown["findings[0].margin"] == "+49.6 %"
    assert shown["worst_case.zener_power_w"] == "251.8 mW"
    # the policy is part of what was asked, not a computed figure
    html = render_report("check", doc)
    assert html.index("zener power fraction") < html.index('id="schematic"')


def test_parts_table_folds_the_ratings_into_one_cell():
    doc = json.loads(json.dumps(DESIGN_DOC))
    doc["designs"][0]["parts"][0].update(rated_voltage_ac_v=305.0, tolerance=0.1)
    doc["designs"][0]["parts"][1].update(power_w=1.0, family="fusible-demo")
    page = _parse(render_report("design", doc))
    shown = {c["key"]: c["text"].strip() for c in page.cells}
    assert shown["parts[0].rated_voltage_ac_v"] == "rated voltage ac 305 V"
    assert shown["parts[0].tolerance"] == "tolerance 10 %"
    assert shown["parts[1].power_w"] == "power 1 W"
    html = render_report("design", doc)
    header = re.search(r'id="parts-table">\s*<tr>(.*?)</tr>', html, re.S).group(1)
    assert re.findall(r"<th>(.*?)</th>", header) == [
        "role", "code", "description", "value", "qty", "unit price", "details and ratings"
    ]  # fmt: skip


def test_long_rule_names_wrap_at_their_joints():
    doc = json.loads(json.dumps(AUDIT_DOC))
    doc["findings"][0]["rule"] = "series_r.switch_on_voltage"
    html = render_report("audit", doc)
    assert "series_<wbr>r.<wbr>switch_<wbr>on_<wbr>voltage" in html
    assert "series_r.switch_on_voltage" in "".join(_parse(html).text)  # the text is unchanged
    assert ">470n X2 275V</td>" in html  # words without joints are left alone
    assert ">x_capacitor</td>" in html  # nor a one-letter head
    doc["findings"][0]["corner"] = "253 V 60 Hz R=17.2 Ω Vz=4.84 V"
    assert "Vz=4.84 V" in render_report("audit", doc)  # nor numbers


def test_dotted_part_codes_wrap_at_every_joint():
    """A built-in code (selector/catalogue/expand.py: words joined by dots, many starting with a
    digit) wraps at each dot, so the code column of an A4 parts table stays narrow; a decimal
    number inside a code stays whole, and the cell's class judges the same pieces."""
    from selector.report.html import _Cell

    doc = json.loads(json.dumps(DESIGN_DOC))
    parts = doc["designs"][0]["parts"]
    parts[0]["code"] = "xcap.x3.275vac.330n.20pct"
    parts[1]["code"] = "res.fusible.0w5.8R2.5pct"
    parts[2]["code"] = "res.thick.0805.100k.5pct"
    html = render_report("design", doc)
    assert ">xcap.<wbr>x3.<wbr>275vac.<wbr>330n.<wbr>20pct</td>" in html
    assert ">res.<wbr>fusible.<wbr>0w5.<wbr>8R2.<wbr>5pct</td>" in html
    assert ">res.<wbr>thick.<wbr>0805.100k.<wbr>5pct</td>" in html  # 0805.100 reads as a number
    assert "res.fusible.0w5.8R2.5pct" in "".join(_parse(html).text)  # the text is unchanged
    # every piece is short, so the cell wraps at its joints (class text), not anywhere (long)
    assert re.search(r'<td class="text" data-key="parts\[1\]\.code"', html)
    assert _Cell("fusible.0w5.8R2.5pct").css == "text"
    assert _Cell("fusible0w58R25pct").css == "text long"  # one word of 17 letters
    assert _Cell("12345678.123456789").css == "text long"  # a number does not break


def test_failing_checks_are_counted_and_marked():
    html = render_report("check", CHECK_DOC)
    assert "1 of 2 checks fail" in html
    assert html.count('class="bad"') == 1
    audit = render_report("audit", AUDIT_DOC)
    assert "1 of 2 checks fail" in audit


def test_verdict_of_a_check_document_without_findings():
    doc = {k: v for k, v in CHECK_DOC.items() if k != "findings"}
    assert "The load is met at every corner" in render_report("check", {**doc, "ok": True})
    assert "Not accepted" in render_report("check", {**doc, "ok": False})


def test_same_document_same_page():
    fixed = dict(now=lambda: __import__("datetime").datetime(2026, 1, 1))
    a = render_report("check", CHECK_DOC, waveforms=_waveforms(), **fixed)
    b = render_report("check", CHECK_DOC, waveforms=_waveforms(), **fixed)
    assert a == b


def test_autoescape_keeps_markup_out():
    doc = dict(CHECK_DOC, cautions=["<script>alert(1)</script> & more"])
    html = render_report("check", doc)
    assert "<script>alert(1)" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; more" in html


def test_design_report_shows_the_first_design_and_its_prices():
    page = _parse(render_report("design", DESIGN_DOC))
    assert page.body_focus == "designs[0]"
    shown = {c["key"]: c["text"].strip() for c in page.cells}
    assert shown["parts[0].unit_price"] == "0.14"
    assert shown["parts[0].value"] == "330 nF"  # unit from the part's role
    assert shown["parts[1].value"] == "100 Ω"
    assert shown["checks[0].margin"] == "+75.9 %"
    assert "xcap.x2.305vac.330n.10pct" in "".join(page.text)


def test_schematics_carry_the_values():
    for topology in ("bridge", "half-wave"):
        svg = schematic_svg(topology, {"x_capacitor": "C1 330 nF X2", "zener": "DZ1 12 V"})
        assert svg.startswith("<svg") and "330 nF" in svg and "DZ1 12 V" in svg
    with pytest.raises(BadValueError, match="one of bridge, half-wave"):
        schematic_svg("forward")


def test_plot_errors_and_scaling():
    t = np.linspace(0, 0.04, 50)
    svg = waveform_svg("small", "A", [Trace("x", t, 1e-3 * np.sin(t))])
    assert "[µA]" in svg or "[mA]" in svg
    with pytest.raises(BadValueError, match="nothing to plot"):
        waveform_svg("empty", "A", [])
    with pytest.raises(BadValueError, match="empty or ragged"):
        waveform_svg("ragged", "A", [Trace("x", t, t[:-1])])


def test_pulse_window_of_an_rc_charging_pulse():
    # switch-on of R and C from a step: i = V/R exp(-t/(R C)) (RC charging, any circuits
    # textbook [S]); it falls below 1 % of its peak at ln(100) tau = 4.61 tau, and the window
    # adds 30 % of that: 5.99 tau
    r, c, vpk, f = 470.0, 330e-9, 357.8, 60.0
    tau = r * c
    t = np.arange(0.0, 2.0 / f, tau / 20.0)
    pulse = vpk / r * np.exp(-t / tau)
    lo, hi = pulse_window(t, pulse)
    assert lo == 0.0
    assert hi == pytest.approx(1.3 * math.log(100.0) * tau, rel=0.02)
    # switched on at the crest, the steady current C dv/dt = -Vpk w C sin(w t) follows the
    # pulse (here 44 mA, 5.8 % of the peak): the window still ends within 6 tau
    i = pulse - vpk * 2 * math.pi * f * c * np.sin(2 * math.pi * f * t)
    lo, hi = pulse_window(t, i)
    assert lo == 0.0 and 3 * tau < hi <= 6 * tau
    svg = waveform_svg("switch-on", "A", [Trace("crest", t, i)])
    assert "time [µs]" in svg  # the window (under 1 ms) is plotted in us
    assert "time [ms]" in waveform_svg("whole", "A", [Trace("", t, i)], window_s=None)


def test_pulse_window_of_a_surge_and_of_steady_waveforms():
    # IEC 61000-4-5 1.2/50 us open-circuit surge (the engine's double exponential) over 20 ms:
    # the window holds the pulse (its 1 % end is a few hundred us), not the 20 ms record
    from selector.engine.transients import surge_wave

    t = np.concatenate([[0.0], np.geomspace(1e-9, 20e-3, 700)])
    lo, hi = pulse_window(t, surge_wave(t, 1000.0))
    assert lo == 0.0 and 100e-6 < hi < 1e-3
    # a sine over two mains cycles returns to its peak every cycle: not a pulse
    ts = np.linspace(0.0, 0.04, 801)
    assert pulse_window(ts, np.cos(2 * math.pi * 50.0 * ts)) is None
    # a bus voltage that charges and stays up: not a pulse
    assert pulse_window(ts, 12.0 * (1 - np.exp(-ts / 5e-3))) is None
    with pytest.raises(BadValueError, match="end must come after"):
        waveform_svg("x", "A", [Trace("", ts, ts)], window_s=(1.0, 0.5))


def test_unknown_kind_is_refused():
    with pytest.raises(BadValueError, match="one of check, design, audit"):
        render_report("summary", CHECK_DOC)


#: injected (in the tests only, into a copy of the report) before ``</body>``: after the
#: page has loaded, measure the page, every table and figure against its container, and every
#: cell against itself, and write the result as JSON into ``<pre id="layout-check">``
_LAYOUT_PROBE = """<script>
window.addEventListener("load", function () {
  var de = document.documentElement, out = {
    page: {scrollWidth: de.scrollWidth, clientWidth: de.clientWidth,
           innerWidth: window.innerWidth},
    items: [], cells: []};
  document.querySelectorAll("table, figure").forEach(function (el) {
    var box = el.parentElement, r = el.getBoundingClientRect(), b = box.getBoundingClientRect();
    var svg = el.querySelector("svg"), sr = svg ? svg.getBoundingClientRect() : null;
    out.items.push({tag: el.tagName.toLowerCase(), id: el.id,
      section: el.closest("section") ? el.closest("section").id : "",
      scrollWidth: el.scrollWidth, width: r.width, height: r.height,
      containerWidth: box.clientWidth, left: r.left, right: r.right,
      containerLeft: b.left, containerRight: b.right,
      svgWidth: sr ? sr.width : null, svgHeight: sr ? sr.height : null,
      rows: el.tagName === "TABLE" ? el.rows.length : null});
  });
  document.querySelectorAll("td, th").forEach(function (c) {
    if (c.scrollWidth > c.clientWidth + 1)
      out.cells.push({text: c.textContent.slice(0, 60), scrollWidth: c.scrollWidth,
                      clientWidth: c.clientWidth});
  });
  var pre = document.createElement("pre");
  pre.id = "layout-check";
  pre.style.whiteSpace = "pre-wrap";
  pre.style.wordBreak = "break-all";
  pre.textContent = JSON.stringify(out);
  document.body.appendChild(pre);
});
</script>"""


def chromium_layout(report: Path, workdir: Path, width: int = 1280) -> dict[str, Any]:
    """Render ``report`` in headless chromium at ``width`` px and return what
    :data:`_LAYOUT_PROBE` measured (the report itself is not changed: a copy is probed)."""
    assert CHROMIUM is not None
    probe = workdir / f"probe-{width}-{report.name}"
    probe.write_text(
        report.read_text(encoding="utf-8").replace("</body>", _LAYOUT_PROBE + "\n</body>"),
        encoding="utf-8",
    )
    proc = subprocess.run(
        [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
         f"--user-data-dir={workdir / 'chromium-profile'}", f"--window-size={width},2000",
         "--run-all-compositor-stages-before-draw", "--virtual-time-budget=5000",
         "--dump-dom", probe.as_uri()],
        capture_output=True, text=True, timeout=180,
    )  # fmt: skip
    m = re.search(r'<pre id="layout-check"[^>]*>(.*?)</pre>', proc.stdout, re.S)
    assert m, f"no layout result from chromium: {proc.stderr[-2000:]}"
    import html as _html

    return json.loads(_html.unescape(m.group(1)))


def assert_layout_fits(layout: dict[str, Any], html: str, width: int) -> None:
    """Every table and figure of the page is rendered, with a size, inside its container, and
    nothing makes the page or a cell scroll sideways."""
    page = layout["page"]
    assert page["innerWidth"] == width, page
    assert page["scrollWidth"] <= page["clientWidth"], f"the page scrolls sideways: {page}"
    items = layout["items"]
    assert len([i for i in items if i["tag"] == "table"]) == html.count("<table")
    assert len([i for i in items if i["tag"] == "figure"]) == html.count("<figure")
    for item in items:
        where = f"{item['tag']} {item['id'] or ''} in section {item['section']!r}"
        assert item["width"] > 100 and item["height"] > 20, f"{where} not rendered: {item}"
        assert item["scrollWidth"] <= item["containerWidth"] + 1, f"{where} overflows: {item}"
        assert item["left"] >= item["containerLeft"] - 1, f"{where} sticks out left: {item}"
        assert item["right"] <= item["containerRight"] + 1, f"{where} sticks out right: {item}"
        if item["tag"] == "figure":
            assert item["svgWidth"] > 300 and item["svgHeight"] > 100, f"{where}: {item}"
            assert item["svgWidth"] <= item["containerWidth"] + 1, f"{where}: {item}"
        else:
            assert item["rows"] >= 1, f"{where} has no rows: {item}"
    assert layout["cells"] == [], f"cells whose text overflows: {layout['cells'][:5]}"


#: the report must fit a 1280 px screen and an A4 page (210 mm - 2 x 10 mm margins at 96 px
#: per inch: 718 px; ISO 216 [S] for the A4 width)
LAYOUT_WIDTHS = (1280, 718)


@pytest.mark.parametrize(
    ("kind", "doc"), [("check", CHECK_DOC), ("design", DESIGN_DOC), ("audit", AUDIT_DOC)]
)
def test_renders_headless_in_chromium(tmp_path, kind, doc):
    need_chromium()
    path = write_report(tmp_path / f"{kind}.html", kind, doc, waveforms=_waveforms())
    html = path.read_text(encoding="utf-8")
    for width in LAYOUT_WIDTHS:
        assert_layout_fits(chromium_layout(path, tmp_path, width), html, width)


def test_layout_check_sees_an_overflow(tmp_path):
    """The layout check is not blind: a table wider than the page fails it."""
    need_chromium()
    path = write_report(tmp_path / "check.html", "check", CHECK_DOC, waveforms=_waveforms())
    html = path.read_text(encoding="utf-8").replace(
        '<table class="inputs">', '<table class="inputs" style="min-width: 3000px">', 1
    )
    path.write_text(html, encoding="utf-8")
    with pytest.raises(AssertionError, match="scrolls sideways|overflows"):
        assert_layout_fits(chromium_layout(path, tmp_path), html, 1280)
