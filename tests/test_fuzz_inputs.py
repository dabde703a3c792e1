"""Fuzz suite (issue 14): generated input must never crash dropper or pass unnamed.

Hypothesis generates value strings, CLI option sets and files (BOMs, stock lists, policy
files, catalogue family TOML) and feeds them to the library readers and, through typer's
CliRunner, to the commands. Each test asserts that the input is either accepted (a finite
number, a parsed file) or refused with a :class:`selector.errors.DropperError` whose message
names the option or the file; no other exception, no exit code 3, no traceback.

Budget: ``EXAMPLES`` below sum to more than 10,000 inputs; the targets are the paths that end
early (parsing and validation), never a full design: CLI runs point ``--db`` at a file that
does not exist, so a command that parsed every option stops with exit 2 naming ``--db``.
``derandomize=True`` makes CI runs reproducible; ``deadline=None`` because the shared machine's
timing varies. These are robustness checks of the input edge, not physics.
"""

from __future__ import annotations

import codecs
import math
import tempfile
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from typer.testing import CliRunner

from selector.errors import BadRowError, DropperError

#: examples per test (the sum is the suite's input count; keep it above 10,000)
EXAMPLES = {
    "values": 4000,
    "percent_like": 2500,
    "option_parsers": 2000,
    "cli_snap": 100,
    "cli_design": 200,
    "cli_audit": 80,
    "bom_csv": 600,
    "bom_xlsx": 30,
    "stock_csv": 300,
    "policy": 800,
    "family_toml": 300,
}
assert sum(EXAMPLES.values()) >= 10_000


def _settings(name: str):
    return settings(
        max_examples=EXAMPLES[name],
        deadline=None,
        derandomize=True,
        database=None,
        suppress_health_check=list(HealthCheck),
    )


runner = CliRunner()
WORK = Path(tempfile.mkdtemp(prefix="dropper-fuzz-"))
MISSING_DB = str(WORK / "no-such-catalogue.sqlite")
DATA = Path(__file__).parent / "data"

# --- strategies ---------------------------------------------------------------------------

_SPECIAL = [
    "1e999", "-1e999", "nan", "NaN", "inf", "-inf", "1e-320", "0", "-0", "0x10", "1_000", "½",
    "٣", "4k7", "2k2", "4R7", "R47", "330n", "0u33", "4n7", "1M", "12mA", "305VAC", "10%",
    "K", "M", "J", "", " ", "1e9F", "1,5", "..", "--5", "5-", "+", "1e", "9" * 400,
]  # fmt: skip
_SUFFIX = [
    "", "n", "u", "µ", "m", "k", "K", "M", "G", "p", "F", "V", "A", "W", "ohm", "Ω", "R", "%",
    "VAC", "VDC", "mA", "s", "ms", "h", "y", " nF", "Hz", "C", "x", "/",
]  # fmt: skip
NUMBER_TEXT = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.integers(-(10**30), 10**30).map(str),
    st.decimals(allow_nan=True, allow_infinity=True, places=4).map(str),
    st.sampled_from(_SPECIAL),
)
VALUE_TEXT = st.one_of(
    st.builds(lambda n, s: n + s, NUMBER_TEXT, st.sampled_from(_SUFFIX)),
    st.text(max_size=12),
    st.sampled_from(_SPECIAL),
)
CELL = st.one_of(VALUE_TEXT, st.text(max_size=20), st.sampled_from(["=1+1", "@x", "\x1b]0;t\x07"]))
QUANTITIES = [None, "F", "ohm", "V", "A", "W", "s", "Hz", "J"]


def _named(exc: Exception, *names: str) -> bool:
    text = str(exc)
    return any(n in text for n in names)


# --- value texts --------------------------------------------------------------------------


@_settings("values")
@given(text=VALUE_TEXT, quantity=st.sampled_from(QUANTITIES))
def test_parse_value_is_finite_or_refused(text, quantity):
    from selector.units import parse_value

    try:
        value = parse_value(text, quantity)
    except DropperError:
        return
    assert math.isfinite(value)


@_settings("percent_like")
@given(text=VALUE_TEXT, which=st.sampled_from(["tolerance", "percent", "duration", "count"]))
def test_percent_duration_count_are_finite_or_refused(text, which):
    from selector import units

    reader = {
        "tolerance": units.parse_tolerance,
        "percent": units.parse_percent,
        "duration": units.parse_duration,
        "count": units.parse_count,
    }[which]
    try:
        value = reader(text)
    except DropperError:
        return
    assert math.isfinite(value)
    if which == "tolerance":
        assert 0 <= value < 1


# --- the CLI's option parsers (selector/cli/_circuit.py) ------------------------------------


@_settings("option_parsers")
@given(
    which=st.sampled_from(["value", "percent", "burst", "freq", "harmonics", "topology", "mains"]),
    a=VALUE_TEXT,
    b=VALUE_TEXT,
    c=VALUE_TEXT,
)
def test_option_parsers_name_the_option(which, a, b, c):
    from selector.cli import _circuit as C

    calls = {
        "value": lambda: C.option_value(a, "A", "--load"),
        "percent": lambda: C.option_percent(a, "--mains-tol"),
        "burst": lambda: C.parse_burst(f"{a}/{b}/{c}") if "/" not in a else C.parse_burst(a),
        "freq": lambda: C.parse_frequencies(f"{a},{b}"),
        "harmonics": lambda: C.parse_harmonics(f"{a}:{b}@{c}"),
        "topology": lambda: C.parse_topology(a, extra=("auto",)),
        "mains": lambda: C.mains_from_options(a, b, c),
    }
    names = {
        "value": ["--load"],
        "percent": ["--mains-tol"],
        "burst": ["--burst"],
        "freq": ["--freq", "frequenc"],
        "harmonics": ["--harmonics", "harmonic"],
        "topology": ["topology"],
        "mains": ["--mains", "--freq", "frequenc", "--mains-tol"],
    }[which]
    try:
        calls[which]()
    except DropperError as exc:
        assert _named(exc, *names), str(exc)


# --- whole commands through typer's CliRunner ---------------------------------------------


def _assert_clean(result, names: tuple[str, ...]) -> None:
    assert result.exit_code in (0, 1, 2), (result.exit_code, result.stderr)
    assert "Traceback" not in result.stderr + result.stdout
    if result.exit_code == 2:
        lines = result.stderr.splitlines()
        assert len(lines) == 1 and lines[0].startswith("Error: "), result.stderr
        assert _named_text(lines[0], names), lines[0]


def _named_text(line: str, names: tuple[str, ...]) -> bool:
    return any(n.lower() in line.lower() for n in names)


@_settings("cli_snap")
@given(
    values=st.lists(VALUE_TEXT.filter(lambda t: not t.startswith("-")), min_size=1, max_size=3),
    series=st.sampled_from(["E12", "E6", "e24", "E7", "", "E192"]),
    mode=st.sampled_from(["nearest", "up", "down", "sideways"]),
)
def test_cli_snap(values, series, mode):
    from selector.cli import app

    r = runner.invoke(app, ["snap", *values, "--series", series, "--mode", mode])
    # a refusal names the value it could not read, the series or the mode
    _assert_clean(r, ("cannot read", "series", "mode", "value", "range", "--", "must be"))


_DESIGN_OPTIONS = ["--load", "--vout", "--mains", "--mains-tol", "--freq", "--ambient",
                   "--surge", "--cap-loss", "--burst", "--life", "--humidity", "--switch-ons",
                   "--standby-limit", "--harmonics", "--cap-tol", "--r-tol"]  # fmt: skip


@_settings("cli_design")
@given(options=st.dictionaries(st.sampled_from(_DESIGN_OPTIONS), VALUE_TEXT, max_size=3))
def test_cli_design_options(options):
    """Every option set is refused naming an option, or (all valid) stops at the missing
    --db file: design never runs here."""
    from selector.cli import app

    args = ["design", "--load", "10m", "--vout", "5.1", "--db", MISSING_DB]
    for name, value in options.items():
        args += [name, value]
    r = runner.invoke(app, args)
    assert r.exit_code == 2, (args, r.stdout, r.stderr)
    _assert_clean(r, (*_DESIGN_OPTIONS, "--db", "--regulator", "burst", "harmonic"))


@_settings("cli_audit")
@given(
    options=st.dictionaries(
        st.sampled_from(
            [
                "--load",
                "--mains",
                "--freq",
                "--ambient",
                "--cap-tol",
                "--surge",
                "--zener-tol",
                "--cap-loss",
                "--burst",
                "--topology",
            ]
        ),  # fmt: skip
        VALUE_TEXT,
        max_size=3,
    )
)
def test_cli_audit_options(options):
    from selector.cli import app

    args = ["audit", str(DATA / "audit_vent_sound.csv"), "--load", "10m", "--db", MISSING_DB]
    for name, value in options.items():
        args += [name, value]
    r = runner.invoke(app, args)
    assert r.exit_code == 2, (args, r.stdout, r.stderr)
    _assert_clean(r, (*options, "--db", "--load", "burst", "topology", "frequenc"))


# --- files ---------------------------------------------------------------------------------

_BOM_HEADERS = ["Reference", "Ref", "Designator", "Qty", "Quantity", "Value", "Description",
                "Footprint", "Package", "Voltage", "Power", "Tolerance", "DNP", "Board", "Role",
                "MPN", ""]  # fmt: skip
_ENCODINGS = ["utf-8", "utf-8-sig", "utf-16", "latin-1", "cp1252"]


@st.composite
def csv_bytes(draw, headers: list[str]):
    delimiter = draw(st.sampled_from([",", ";", "\t"]))
    line_end = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    head = draw(st.lists(st.sampled_from(headers), min_size=1, max_size=7))
    n_rows = draw(st.integers(0, 6))
    rows = [
        draw(st.lists(CELL, min_size=0, max_size=len(head) + 1)) for _ in range(n_rows)
    ]  # ragged on purpose
    quote = draw(st.booleans())

    def cell(c: str) -> str:
        if quote or any(ch in c for ch in (delimiter, '"', "\n", "\r")):
            return '"' + c.replace('"', '""') + '"'
        return c

    text = line_end.join(delimiter.join(cell(c) for c in row) for row in [head, *rows])
    encoding = draw(st.sampled_from(_ENCODINGS))
    data = text.encode(encoding, errors="replace")
    if draw(st.integers(0, 20)) == 0:
        data = data[: draw(st.integers(0, len(data)))]  # truncated
    return data


def _file(name: str, data: bytes) -> Path:
    path = WORK / name
    path.write_bytes(data)
    return path


@_settings("bom_csv")
@given(data=csv_bytes(_BOM_HEADERS), suffix=st.sampled_from([".csv", ".tsv", ".txt"]))
def test_bom_reader(data, suffix):
    from selector.audit.bom import read_bom

    path = _file("fuzz-bom" + suffix, data)
    try:
        read_bom(path)
    except BadRowError as exc:
        assert exc.file == str(path), str(exc)
    except DropperError as exc:
        assert str(path) in str(exc) or "encoding" in str(exc), str(exc)


@_settings("bom_xlsx")
@given(
    head=st.lists(st.sampled_from(_BOM_HEADERS), min_size=1, max_size=6),
    rows=st.lists(
        st.lists(
            st.one_of(CELL, st.floats(allow_nan=True), st.integers(-(10**20), 10**20), st.none()),
            max_size=7,
        ),
        max_size=5,
    ),
)
def test_bom_reader_xlsx(head, rows):
    import openpyxl
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    from selector.audit.bom import read_bom

    book = openpyxl.Workbook()
    sheet = book.active
    for row in [head, *rows]:
        # openpyxl cannot store these control characters at all (no spreadsheet holds them)
        sheet.append([ILLEGAL_CHARACTERS_RE.sub("", c) if isinstance(c, str) else c for c in row])
    path = WORK / "fuzz-bom.xlsx"
    book.save(path)
    try:
        read_bom(path)
    except BadRowError as exc:
        assert exc.file == str(path), str(exc)


_STOCK_HEADERS = ["Stock code", "Code", "Category", "Description", "Value", "Tol.", "Voltage",
                  "Power", "Package", "On hand", "Stock", "Price 1", "Price 100", "Price",
                  "Currency", "Remark", "Kind"]  # fmt: skip


@pytest.fixture(scope="module")
def stock_engine():
    from selector.catalogue import make_engine, migrate

    engine = make_engine("sqlite://")
    migrate(engine)
    yield engine
    engine.dispose()


@_settings("stock_csv")
@given(data=csv_bytes(_STOCK_HEADERS))
def test_stock_import_dry_run(stock_engine, data):
    from selector.catalogue.importer import import_stock

    path = _file("fuzz-stock.csv", data)
    try:
        result = import_stock(stock_engine, path, "fuzz", dry_run=True)
    except BadRowError as exc:
        assert exc.file == str(path) or str(path) in str(exc), str(exc)
        return
    except DropperError as exc:
        assert str(path) in str(exc), str(exc)
        return
    for problem in result.problems:
        assert str(path) in str(problem) or "row" in str(problem), str(problem)


_POLICY_KEYS = ["load_margin", "zener_power_fraction", "standby_limit_w", "dvdt_fraction",
                "reservoir_temp_margin_c", "zener_power_fractoin", "x", "[t]"]  # fmt: skip
TOML_VALUE = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True).map(lambda f: repr(f).replace("inf", "inf")),
    st.integers(-(10**400), 10**400).map(str),
    st.sampled_from(['"0.5"', "true", "[1]", "{a = 1}", "nan", "-inf", "1e999", "0x1F", ""]),
    st.text(max_size=8),
)


@st.composite
def toml_lines(draw, keys: list[str]):
    lines = []
    for _ in range(draw(st.integers(0, 5))):
        key = draw(st.sampled_from(keys))
        lines.append(f"{key} = {draw(TOML_VALUE)}" if not key.startswith("[") else key)
    if draw(st.integers(0, 10)) == 0:
        lines.append(draw(st.text(max_size=20)))
    text = "\n".join(lines) + "\n"
    encoding = draw(st.sampled_from(["utf-8", "utf-8-sig", "utf-16", "latin-1"]))
    return text.encode(encoding, errors="replace")


@_settings("policy")
@given(data=toml_lines(_POLICY_KEYS))
def test_policy_file(data):
    from selector.policy import load_policy

    path = _file("fuzz-policy.toml", data)
    try:
        policy = load_policy(path)
    except DropperError as exc:
        assert str(exc).startswith(f"policy file {path}"), str(exc)
        return
    for value in policy.to_dict().values():
        assert value is None or math.isfinite(value)


_FAMILY_KEYS = ["name", "kind", "code", "title", "mount", "package", "series", "min", "max",
                "tolerance", "power_w", "derate_start_c", "tj_max_c", "vf_v", "zz_ref_ohm",
                "zz_ref_v", "zz_exp", "l_mm", "w_mm", "serie"]  # fmt: skip
FAMILY_VALUE = st.one_of(
    TOML_VALUE,
    st.sampled_from(
        [
            '"zener-fuzz"',
            '"zener"',
            '"zener.smd"',
            '"smd"',
            '"E24"',
            '"2.4"',
            '"47"',
            '"J"',
            '"resistor"',
            '"E7"',
            '"1e999"',
            '"-1"',
        ]
    ),  # fmt: skip
)


@_settings("family_toml")
@given(
    entries=st.lists(
        st.dictionaries(st.sampled_from(_FAMILY_KEYS), FAMILY_VALUE, max_size=12), max_size=2
    ),
    garbage=st.booleans(),
)
def test_catalogue_family_file(entries, garbage):
    from selector.catalogue.datafiles import load_families

    root = WORK / "fuzz-catalogue"
    (root / "families").mkdir(parents=True, exist_ok=True)
    text = "".join(
        "[[family]]\n" + "".join(f"{k} = {v}\n" for k, v in entry.items()) for entry in entries
    )
    if garbage:
        text += "= ]\n"
    (root / "families" / "fuzz.toml").write_text(text, encoding="utf-8")
    try:
        load_families(root)
    except BadRowError as exc:
        assert "fuzz.toml" in exc.file, str(exc)
    except DropperError as exc:
        assert "fuzz.toml" in str(exc), str(exc)


def test_the_budget_is_at_least_ten_thousand_inputs():
    assert sum(EXAMPLES.values()) >= 10_000
    assert codecs.lookup("utf-16")  # the encodings the file strategies draw exist


# --- the suite's first findings, pinned (each crashed or gave an unnamed error) ------------


@pytest.mark.parametrize(
    ("call", "named"),
    [
        (lambda C: C.parse_harmonics("1e999:1"), "--harmonics"),  # was OverflowError
        (lambda C: C.parse_harmonics("nan:1"), "--harmonics"),  # was ValueError
        (lambda C: C.mains_from_options("0"), "--mains"),
        (lambda C: C.mains_from_options("230", "60"), "--mains-tol"),
    ],
)
def test_found_option_cases(call, named):
    from selector.cli import _circuit as C

    with pytest.raises(DropperError) as exc:
        call(C)
    assert named in str(exc.value)


@pytest.mark.parametrize(("option", "value"), [("--load", "0"), ("--vout", "0")])
def test_found_design_zero_is_named(option, value):
    from selector.cli import app

    args = ["design", "--load", "10m", "--vout", "5.1", "--db", MISSING_DB, option, value]
    r = runner.invoke(app, args)
    assert r.exit_code == 2 and r.stderr.startswith(f"Error: {option}: "), r.stderr


def test_found_xlsx_huge_float_cell():
    import openpyxl

    from selector.audit.bom_cells import _cell_text

    assert _cell_text(float("inf")) == "inf" and _cell_text(1e308) == "1e+308"
    book = openpyxl.Workbook()
    book.active.append(["Reference", "Value"])
    book.active.append(["C1", 1.7976931348623157e308])
    path = WORK / "huge.xlsx"
    book.save(path)
    from selector.audit.bom import read_bom

    try:  # read (the value text is kept for the rules to judge) or refused naming the file
        table = read_bom(path)
    except BadRowError as exc:
        assert exc.file == str(path)
    else:
        assert [p.ref for p in table.parts] == ["C1"]
