"""`dropper snap` in process: exact output and exit codes.

Outside reference for the values: IEC 60063 E12/E6 tables (checked against the `eseries` package
in test_eseries.py); 70.1 nF -> 68 nF and 4.42 k -> 4.7 k are the worked examples of the issue.
"""

from __future__ import annotations

import json

import pytest
from typer.testing import CliRunner

from selector.cli import app

runner = CliRunner()


def invoke(*args: str):
    return runner.invoke(app, list(args), catch_exceptions=False)


def test_snap_json_worked_example():
    result = invoke("snap", "70.1n", "4.42k", "--series", "E12", "--json")
    assert result.exit_code == 0
    rows = json.loads(result.stdout)
    assert [r["value"] for r in rows] == [68e-9, 4700.0]
    assert [r["input"] for r in rows] == [70.1e-9, 4420.0]
    assert rows[0]["series"] == "E12" and rows[0]["mode"] == "nearest"
    assert rows[0]["error"] == pytest.approx(68 / 70.1 - 1)
    assert set(rows[0]) == {"text", "input", "series", "mode", "value", "error"}


def test_snap_human_output():
    result = invoke("snap", "0u33", "--mode", "up", "--series", "E6")
    assert result.exit_code == 0
    assert result.stdout == "0u33  ->  330 n       +0.00 %  (E6 up)\n"


def test_snap_with_unit():
    result = invoke("snap", "70.1n", "--unit", "F")
    assert result.stdout == "70.1n  ->  68 nF       -3.00 %  (E12 nearest)\n"


@pytest.mark.parametrize(
    ("args", "message"),
    [
        (
            ["snap", "abc"],
            "Error: cannot read 'abc' as a value; write it like '330n', '4.7 kΩ', "
            "'2k2', '12mA', '1e-6'\n",
        ),
        (
            ["snap", "1", "--series", "E7"],
            "Error: unknown series 'E7'; choose one of E3, E6, E12, E24, E48, E96, E192\n",
        ),
        (
            ["snap", "1", "--mode", "sideways"],
            "Error: unknown mode 'sideways'; choose one of nearest, up, down\n",
        ),
        (["snap", "-5"], None),
        (["snap"], "Error: Missing argument 'values'.\n"),
    ],
)
def test_bad_input_gives_one_error_line_and_exit_2(args, message):
    result = runner.invoke(app, args)
    assert result.exit_code == 2
    assert result.stdout == ""
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: ")
    if message is not None:
        assert result.stderr == message


def test_snap_csv_column(tmp_path):
    path = tmp_path / "calc.csv"
    path.write_text("ref,computed\nC1,70.1n\nR1,4.42k\n", encoding="utf-8")
    # issue 14: the input is rewritten only with --in-place (test_snap_csv_writes_a_new_file)
    result = invoke("snap", str(path), "--column", "computed", "--json", "--in-place")
    assert result.exit_code == 0
    info = json.loads(result.stdout)
    assert info["new_column"] == "computed_E12_nearest" and info["rows"] == 2
    assert path.read_text(encoding="utf-8").splitlines() == [
        "ref,computed,computed_E12_nearest",
        "C1,70.1n,6.8e-08",
        "R1,4.42k,4700",
    ]


def test_snap_csv_bad_cell_names_file_row_column(tmp_path):
    path = tmp_path / "calc.csv"
    original = "ref,computed\nC1,70.1n\nR1,oops\n"
    path.write_text(original, encoding="utf-8")
    result = runner.invoke(app, ["snap", str(path), "--column", "computed"])
    assert result.exit_code == 2
    assert result.stderr.startswith(f"Error: {path}, row 3, column 'computed': cannot read 'oops'")
    assert path.read_text(encoding="utf-8") == original  # nothing half-written


def test_snap_csv_unknown_column_suggests(tmp_path):
    path = tmp_path / "calc.csv"
    path.write_text("ref,computed\nC1,70.1n\n", encoding="utf-8")
    result = runner.invoke(app, ["snap", str(path), "--column", "compted"])
    assert result.exit_code == 2
    assert "did you mean 'computed'?" in result.stderr


def test_every_command_has_help():
    import typer.main

    group = typer.main.get_command(app)
    names = list(group.commands)
    assert "snap" in names
    for name in names:
        cmd = group.commands[name]
        assert (cmd.help or "").strip(), f"command {name} has no help text"
        result = runner.invoke(app, [name, "--help"])
        assert result.exit_code == 0


def test_an_internal_error_is_one_line_with_its_own_exit_code(monkeypatch):
    # a bug must not print a traceback at the user (DOMAIN.md section 9: one `Error:` line);
    # exit code 3 keeps it apart from bad input (2) and findings (1)
    from selector import snapping

    def broken(*args, **kwargs):
        raise ZeroDivisionError("boom")

    monkeypatch.setattr(snapping, "snap_texts", broken)
    result = runner.invoke(app, ["snap", "1"])
    assert result.exit_code == 3
    assert result.stderr.count("\n") == 1
    assert result.stderr.startswith("Error: internal error (ZeroDivisionError: boom)")


# --- issue 14: snap --column keeps the user's file as it was and writes no formula -------


def test_snap_csv_writes_a_new_file_by_default(tmp_path):
    path = tmp_path / "calc.csv"
    original = b"ref,computed\nC1,70.1n\n"
    path.write_bytes(original)
    result = runner.invoke(app, ["snap", str(path), "--column", "computed"])
    assert result.exit_code == 0, result.stderr
    assert path.read_bytes() == original
    new = tmp_path / "calc.snapped.csv"
    assert result.stdout == f"1 rows: column 'computed_E12_nearest' written to {new}\n"
    assert new.read_bytes() == b"ref,computed,computed_E12_nearest\nC1,70.1n,6.8e-08\n"


@pytest.mark.parametrize(
    ("original", "expected", "encoding"),
    [
        # UTF-8 signature, CRLF, duplicate headers, a blank line, no final line end kept
        (b"\xef\xbb\xbfref,computed,ref\r\nC1,70.1n,a\r\n\r\nR1,4.42k,b",
         b"\xef\xbb\xbfref,computed,ref,computed_E12_nearest\r\nC1,70.1n,a,6.8e-08\r\n\r\n"
         b"R1,4.42k,b,4700", None),
        # semicolons and a Latin-1 micro sign (the user's encoding named)
        ("Bauteil;Wert\nC1;4.7\xb5F\n".encode("cp1252"),
         "Bauteil;Wert;Wert_E12_nearest\nC1;4.7\xb5F;4.7e-06\n".encode("cp1252"), "cp1252"),
        # UTF-16 with its byte-order mark, CR line ends
        ("ref,computed\rC1,70.1n\r".encode("utf-16"),
         "ref,computed,computed_E12_nearest\rC1,70.1n,6.8e-08\r".encode("utf-16"), None),
        # UTF-16 big-endian (byte-order mark FE FF, Python codecs docs / Unicode 15 section
        # 23.8): written back big-endian, not in the machine's byte order; also when the user
        # names plain "utf-16"
        (b"\xfe\xff" + "ref,computed\nC1,70.1n\n".encode("utf-16-be"),
         b"\xfe\xff" + "ref,computed,computed_E12_nearest\nC1,70.1n,6.8e-08\n".encode("utf-16-be"),
         None),
        (b"\xfe\xff" + "ref,computed\nC1,70.1n\n".encode("utf-16-be"),
         b"\xfe\xff" + "ref,computed,computed_E12_nearest\nC1,70.1n,6.8e-08\n".encode("utf-16-be"),
         "utf-16"),
        # UTF-16 little-endian with FF FE stays little-endian
        (b"\xff\xfe" + "ref,computed\nC1,70.1n\n".encode("utf-16-le"),
         b"\xff\xfe" + "ref,computed,computed_E12_nearest\nC1,70.1n,6.8e-08\n".encode("utf-16-le"),
         None),
        # a Latin-1 micro sign without --encoding: read and written back as Windows-1252
        ("Bauteil;Wert\nC1;4.7\xb5F\n".encode("cp1252"),
         "Bauteil;Wert;Wert_E12_nearest\nC1;4.7\xb5F;4.7e-06\n".encode("cp1252"), None),
    ],
)  # fmt: skip
def test_snap_in_place_keeps_encoding_bom_line_ends_headers(tmp_path, original, expected, encoding):
    path = tmp_path / "calc.csv"
    path.write_bytes(original)
    column = "Wert" if b"Wert" in original else "computed"
    args = ["snap", str(path), "--column", column, "--in-place"]
    if encoding:
        args += ["--encoding", encoding]
    result = runner.invoke(app, args)
    assert result.exit_code == 0, result.stderr
    assert path.read_bytes() == expected
    assert [p.name for p in tmp_path.iterdir()] == ["calc.csv"]  # no temporary file left


def test_snap_escapes_formula_cells(tmp_path):
    path = tmp_path / "calc.csv"
    path.write_text("ref,computed,note\nC1,70.1n,=HYPERLINK(x)\nC2,1u,-5\n", encoding="utf-8")
    result = runner.invoke(app, ["snap", str(path), "--column", "computed", "--in-place"])
    assert result.exit_code == 0, result.stderr
    assert path.read_text(encoding="utf-8").splitlines()[1:] == [
        "C1,70.1n,'=HYPERLINK(x),6.8e-08",
        "C2,1u,-5,1e-06",  # a plain number is no formula and stays a number
    ]


@pytest.mark.parametrize(
    ("extra", "message"),
    [
        (["--output", "{p}"], "--output {p} is the input CSV file; refusing"),
        (["--output", "{d}/o.csv", "--in-place"], "either --output FILE or --in-place"),
        (["--output", "{d}/nowhere/o.csv"], "the folder {d}/nowhere does not exist"),
    ],
)
def test_snap_output_refusals(tmp_path, extra, message):
    path = tmp_path / "calc.csv"
    path.write_text("ref,computed\nC1,70.1n\n", encoding="utf-8")
    extra = [e.format(p=path, d=tmp_path) for e in extra]
    result = runner.invoke(app, ["snap", str(path), "--column", "computed", *extra])
    assert result.exit_code == 2
    assert message.format(p=path, d=tmp_path) in result.stderr
    assert [p.name for p in tmp_path.iterdir()] == ["calc.csv"]


def test_snap_duplicate_target_header_is_refused(tmp_path):
    path = tmp_path / "calc.csv"
    path.write_text("v,v\n1n,2n\n", encoding="utf-8")
    result = runner.invoke(app, ["snap", str(path), "--column", "v"])
    assert result.exit_code == 2
    assert "row 1, column 'v': the header appears 2 times (columns 1, 2)" in result.stderr
