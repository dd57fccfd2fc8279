"""The command line on awkward files and outputs: exact fits, collinear lasso degrees, row numbers
after blank lines, reader options, standard output, the CSV-injection guard and links at the output."""

import csv
import io
import json
import os

import numpy as np
import pytest

from app.cli import main

LINE = "x,y\n" + "".join(f"{i},{2 * i + 1 + (0.5 if i % 3 == 0 else -0.25)}\n" for i in range(1, 13))


def run(argv, capsys):
    code = main([str(a) for a in argv])
    out, err = capsys.readouterr()
    return code, out, err


@pytest.mark.parametrize("extra", [[], ["--loo"], ["--penalty", "lasso"], ["--stream"], ["--test-fraction", "0"]])
def test_constant_y_is_an_exact_fit(tmp_path, capsys, extra):
    """y that never changes: every degree fits exactly, so the CV error is 0 and is printed as such."""
    p = tmp_path / "flat.csv"
    p.write_text("x,y\n" + "".join(f"{i},7.5\n" for i in range(30)))
    code, out, err = run(["sweep", p, "--x", "x", "--y", "y", "--degrees", "0-3", *extra], capsys)
    assert code == 0 and "Traceback" not in err
    assert "recommended (simplest): degree 0" in out and "exact fit (CV error 0)" in out


def test_lasso_on_timestamp_like_x_leaves_collinear_degrees_unscored(tmp_path, capsys):
    """x near 1.7e9 (seconds since 1970): degrees the lasso cannot take are listed as not scored, not a crash."""
    p = tmp_path / "ts.csv"
    p.write_text("t,y\n" + "".join(f"{1.7e9 + 3600 * i:.0f},{(i % 7) * 0.3 + 1}\n" for i in range(60)))
    code, out, err = run(["sweep", p, "--x", "t", "--y", "y", "--degrees", "0-5", "--penalty", "lasso"], capsys)
    assert code == 0 and "Traceback" not in err
    assert "     5           -  not scored (see the warning)" in out and "warning: " in err
    assert "recommended (lowest): degree" in out


def test_exclude_takes_the_row_number_the_reader_reports(tmp_path, capsys):
    """After a blank line, --exclude 9 leaves out the line a spreadsheet shows as row 9 (checked against numpy.polyfit)."""
    lines = LINE.splitlines()
    lines.insert(5, "")                      # a blank line: spreadsheet row 6
    p = tmp_path / "b.csv"
    p.write_text("\n".join(lines) + "\n")
    out_json = tmp_path / "fit.json"
    code, _, err = run(["fit", p, "--x", "x", "--y", "y", "--degree", "1", "--exclude", "9", "--json", out_json],
                       capsys)
    assert code == 0 and "excluded row(s) 9" in err
    kept = [ln.split(",") for i, ln in enumerate(lines, start=1) if i > 1 and ln and i != 9]
    x, y = np.array(kept, dtype=float).T
    assert 7.0 not in x and 8.0 in x         # row 9 holds x = 7 (row 6 is the blank line)
    doc = json.loads(out_json.read_text())
    slope = next(r["value"] for r in doc["power_coefficients"] if r["power"] == 1)
    assert slope == pytest.approx(np.polyfit(x, y, 1)[0], rel=1e-10)
    assert doc["data"]["excluded_rows"] == [9] and doc["data"]["rows"] == 11


def test_no_header_keeps_the_first_row(tmp_path, capsys):
    """--no-header fits every line (columns named 1 and 2); without it the numeric first line is refused."""
    p = tmp_path / "n.csv"
    p.write_text("".join(ln + "\n" for ln in LINE.splitlines()[1:]))
    code, _, err = run(["fit", p, "--x", "1", "--y", "2", "--degree", "1"], capsys)
    assert code == 2 and "Pass --no-header if the file has no header row" in err
    out_json = tmp_path / "f.json"
    code, _, _ = run(["fit", p, "--x", "1", "--y", "2", "--degree", "1", "--no-header", "--json", out_json], capsys)
    x, y = np.loadtxt(p, delimiter=",").T
    doc = json.loads(out_json.read_text())
    assert code == 0 and doc["data"]["rows"] == 12
    assert doc["power_coefficients"][1]["value"] == pytest.approx(np.polyfit(x, y, 1)[0], rel=1e-10)


def test_comment_and_skip_rows_options(tmp_path, capsys):
    """--skip-rows and --comment read a logger export with a title and notes; rows keep their numbers."""
    p = tmp_path / "log.csv"
    body = LINE.splitlines()
    p.write_text("Logger 7 export\n# 2024-05-01\n" + "\n".join(body[:4] + ["# paused"] + body[4:]) + "\n")
    code, _, err = run(["fit", p, "--x", "x", "--y", "y", "--degree", "1"], capsys)
    assert code == 2 and "--skip-rows 2" in err
    out_json = tmp_path / "f.json"
    code, out, err = run(["fit", p, "--x", "x", "--y", "y", "--degree", "1", "--skip-rows", "1", "--comment", "#",
                          "--exclude", "4,16", "--json", out_json], capsys)
    data = json.loads(out_json.read_text())["data"]
    assert code == 0 and "10 rows" in out      # rows 4 and 16 hold x = 1 and x = 12 (row 7 is the note)
    assert (data["x_min"], data["x_max"]) == (2.0, 11.0)


def test_semicolon_notice_names_each_columns_mark(tmp_path, capsys):
    """The streamed and the whole reader both say which decimal mark each column was read with."""
    p = tmp_path / "eu.csv"
    p.write_text("x;y;note\n" + "".join(f"{i},5;{2 * i}.25;n {i},5\n" for i in range(12)))
    for extra in ([], ["--stream"]):
        code, _, err = run(["sweep", p, "--x", "x", "--y", "y", "--degrees", "0-2", "--folds", "3", *extra], capsys)
        assert code == 0
        assert ("note: File 'eu.csv' is semicolon-separated; read column 'x' with a decimal comma, 'y' with a "
                "decimal point.") in err


def test_engine_refuses_reader_options_by_name(tmp_path, capsys):
    """--engine reads many files from their first line: --skip-rows there is refused, never ignored."""
    p = tmp_path / "a.csv"
    p.write_text(LINE)
    code, _, err = run(["sweep", p, "--x", "x", "--y", "y", "--engine", "local", "--skip-rows", "1"], capsys)
    assert code == 2 and err.strip().endswith(
        "Option --skip-rows: expected one file read whole or with --stream, got --engine (or a folder or a "
        "pattern of files). Sweeps over many files read files whose header is their first line: drop the option "
        "or sweep one file.")


def apply_rows(tmp_path, capsys, data_text):
    p = tmp_path / "d.csv"
    p.write_text(LINE)
    choice = tmp_path / "c.json"
    assert main(["sweep", str(p), "--x", "x", "--y", "y", "--degrees", "0-2", "--folds", "3",
                 "--test-fraction", "0", "--save", str(choice), "--pick-degree", "1", "--pick-lambda", "0"]) == 0
    new = tmp_path / "new.csv"
    new.write_text(data_text)
    capsys.readouterr()
    code, out, err = run(["apply", choice, new, "--x", "x", "--out", "-"], capsys)
    assert code == 0
    return list(csv.reader(io.StringIO(out)))


def test_apply_guards_formula_like_text_cells(tmp_path, capsys):
    """Copied text cells starting with = + - @ tab or CR get a leading quote (common practice: OWASP's CSV
    injection guidance); numbers, negative ones included, stay numbers."""
    text = ('x,label,=head\n1,=1+2,a\n2,+cmd,b\n3,-x,c\n4,@SUM(A1),d\n5,"\ttab",e\n6,-2.5,f\n7,plain,-7\n')
    rows = apply_rows(tmp_path, capsys, text)
    assert rows[0][:3] == ["x", "label", "'=head"]
    assert [r[1] for r in rows[1:]] == ["'=1+2", "'+cmd", "'-x", "'@SUM(A1)", "'\ttab", "-2.5", "plain"]
    assert rows[7][2] == "-7" and float(rows[6][1]) == -2.5


def test_standard_output_for_apply_schema_and_json(tmp_path, capsys):
    """'-' writes to standard output: apply's CSV, the schema, and --json (the text then goes to stderr)."""
    rows = apply_rows(tmp_path, capsys, "x\n1\n2\n")
    assert rows[0][:2] == ["x", "prediction"] and len(rows) == 3
    code, out, _ = run(["schema", "--out", "-"], capsys)
    assert code == 0 and json.loads(out)["type"] == "object"
    p = tmp_path / "d.csv"
    code, out, err = run(["fit", p, "--x", "x", "--y", "y", "--degree", "1", "--json", "-"], capsys)
    assert code == 0 and json.loads(out)["degree"] == 1 and "residual SD" in err
    code, out, err = run(["sweep", p, "--x", "x", "--y", "y", "--degrees", "0-2", "--folds", "3", "--json", "-"], capsys)
    assert code == 0 and json.loads(out)["degrees"] == [0, 1, 2] and "recommended (simplest)" in err
    assert not (tmp_path / "-").exists()


@pytest.mark.skipif(not hasattr(os, "symlink"), reason="needs symbolic links")
def test_dangling_link_at_the_output_needs_force(tmp_path, capsys):
    """A symbolic link to nothing at the output path is refused without --force, like any existing path."""
    p = tmp_path / "d.csv"
    p.write_text(LINE)
    link = tmp_path / "out.json"
    os.symlink(tmp_path / "gone.json", link)
    code, _, err = run(["fit", p, "--x", "x", "--y", "y", "--degree", "1", "--json", link], capsys)
    assert code == 2 and err.strip().endswith(
        f"error: Output '{link}': expected a path that does not exist yet, got a symbolic link to nothing "
        "(dangling). Choose another name or pass --force to overwrite.")
    assert link.is_symlink() and not (tmp_path / "gone.json").exists()
    code, _, _ = run(["fit", p, "--x", "x", "--y", "y", "--degree", "1", "--json", link, "--force"], capsys)
    assert code == 0 and json.loads(link.read_text())["degree"] == 1


def test_replicate_variance_leaves_out_excluded_rows(tmp_path, capsys):
    """fit --bias-variance --replicates with --exclude 5 prints what the same file without row 5 prints."""
    rows = [f"{x},{2 * x + (0.3 if run == 'a' else -0.2) + 0.1 * (x % 3)},{run}" for run in "abc" for x in range(8)]
    rows[2] = "2,40.0,a"                                      # row 4 (with the header): a wild reading
    full = tmp_path / "full.csv"
    full.write_text("x,y,run\n" + "\n".join(rows) + "\n")
    cut = tmp_path / "cut.csv"
    cut.write_text("x,y,run\n" + "\n".join(rows[:2] + rows[3:]) + "\n")
    args = ["--x", "x", "--y", "y", "--degree", "1", "--bias-variance", "--replicates", "run"]
    _, with_exclude, _ = run(["fit", full, *args, "--exclude", "4"], capsys)
    _, without_row, _ = run(["fit", cut, *args], capsys)
    _, with_row, _ = run(["fit", full, *args], capsys)
    line = [ln for ln in with_exclude.splitlines() if ln.startswith("from 3 repeated data sets")]
    assert line and line == [ln for ln in without_row.splitlines() if ln.startswith("from 3 repeated")]
    assert line != [ln for ln in with_row.splitlines() if ln.startswith("from 3 repeated")]
