"""A catalogue of malformed or awkward inputs: each gives exit code 2 and its exact message.

Every case writes its own small file(s), runs the command line and compares the
whole ``error:`` line, so a change of wording is a deliberate change here.
"""

import json
from pathlib import Path

import pytest

from app.cli import main

GOOD = "x,y\n1,2\n2,3.9\n3,6.2\n4,8.1\n5,9.8\n6,12.2\n7,13.9\n8,16.1\n9,18\n10,20.2\n11,22\n12,24.1\n"

# (id, files {name: text or bytes}, argv (with {dir} for the folder), exact error line)
CASES = [
    ("empty file", {"f.csv": ""}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv': expected a header row and data rows, got an empty file."),
    ("blank lines only", {"f.csv": "\n \n\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv': expected a header row and data rows, got an empty file."),
    ("header only", {"f.csv": "x,y\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv': expected data rows below the header, got a header only."),
    ("duplicated header", {"f.csv": "x,y,x\n1,2,3\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' header: expected distinct column names, got repeated 'x'. Rename the repeated columns."),
    ("text in y", {"f.csv": "x,y\n1,2\n2,abc\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' column 'y' row 3: expected a number, got 'abc'. Correct the cell, or empty it if the value is missing."),
    ("text in x", {"f.csv": "x,y\n1,2\nn/a,3\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' column 'x' row 3: expected a number, got 'n/a'. Correct the cell, or empty it if the value is missing."),
    ("infinite x", {"f.csv": "x,y\n1,2\ninf,3\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' column 'x' row 3: expected a finite number, got 'inf'. Replace infinite values or remove the row."),
    ("minus infinity y", {"f.csv": "x,y\n1,2\n2,3\n3,-Infinity\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' column 'y' row 4: expected a finite number, got '-Infinity'. Replace infinite values or remove the row."),
    ("NaN text is missing", {"f.csv": "x,y\n1,2\n2,NaN\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' rows 3: expected a value in every selected column, got 1 row(s) with empty cells. Fill them in, or pass --blank-rows skip to leave those rows out."),
    ("empty cells", {"f.csv": "x,y\n1,2\n,3\n3,\n4,5\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' rows 3, 4: expected a value in every selected column, got 2 row(s) with empty cells. Fill them in, or pass --blank-rows skip to leave those rows out."),
    ("all rows incomplete", {"f.csv": "x,y\n1,\n,3\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--blank-rows", "skip"],
     "File 'f.csv': expected at least one complete row, got none."),
    ("single distinct x", {"f.csv": "x,y\n2,1\n2,3\n2,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' column 'x': expected at least two distinct x values, got only 2.0. A curve cannot be fitted against a single x value."),
    ("absurd magnitude", {"f.csv": "x,y\n1,2\n1e200,3\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' column 'x' row 3: expected |value| <= 1e+150, got 1e+200. Rescale the column (change its unit)."),
    ("negative weight", {"f.csv": "x,y,w\n1,2,1\n2,3,-1\n3,4,1\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--weights", "w"],
     "File 'f.csv' column 'w' row 3: expected a positive weight, got -1. Drop the row or give it a positive weight."),
    ("zero weight", {"f.csv": "x,y,w\n1,2,1\n2,3,1\n3,4,0\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--weights", "w"],
     "File 'f.csv' column 'w' row 4: expected a positive weight, got 0. Drop the row or give it a positive weight."),
    ("zero uncertainty", {"f.csv": "x,y,u\n1,2,0.1\n2,3,0\n3,4,1\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--uncertainty", "u"],
     "File 'f.csv' column 'u' row 3: expected a positive uncertainty, got 0. Uncertainties must be > 0 (weight = 1/u^2)."),
    ("unknown column", {"f.csv": GOOD}, ["fit", "{dir}/f.csv", "--x", "temp", "--y", "y", "--degree", "1"],
     "Column 'temp' (x) in 'f.csv': expected one of 'x', 'y', got no such column. Pass --x with a column name or position."),
    ("position out of range", {"f.csv": GOOD}, ["fit", "{dir}/f.csv", "--x", "1", "--y", "3", "--degree", "1"],
     "Column '3' (y) in 'f.csv': expected one of 'x', 'y', got no such column. Pass --y with a column name or position."),
    ("ragged row", {"f.csv": "x,y\n1,2\n2,3,4\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.csv' line 3: expected 2 fields like the header, got 3. Check the delimiter and quoting of that line."),
    ("missing file", {}, ["fit", "{dir}/nope.csv", "--x", "x", "--y", "y", "--degree", "1"],
     "File '{dir}/nope.csv': expected an existing file, got nothing at that path."),
    ("too few rows per fold", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--degrees", "0-11", "--folds", "4", "--test-fraction", "0"],
     "Training rows of fold 1: expected at least degree + 1 = 12 rows, got 9. Lower the highest degree, use fewer folds or a smaller test fraction."),
    ("sealed split leaves too few rows", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--degrees", "0-6", "--folds", "3", "--test-fraction", "0.4"],
     "Training rows of fold 1: expected at least degree + 1 = 7 rows, got 6. Lower the highest degree, use fewer folds or a smaller test fraction."),
    ("too few distinct x for the degree", {"f.csv": "x,y\n1,2\n1,2.1\n2,3\n2,3.2\n3,5\n3,5.1\n"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "3"],
     "Degree 3 at lambda = 0: expected at least 4 distinct x values, got 3. Lower the degree or use lambda > 0."),
    ("negative lambda", {"f.csv": GOOD}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--lambda", "-1"],
     "Parameter 'lambda': expected finite numbers >= 0, got -1.0."),
    ("degree out of range", {"f.csv": GOOD}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "31"],
     "Parameter 'degree': expected an integer from 0 to 30, got 31."),
    ("degree range too high", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--degrees", "5-40"],
     "Option --degrees: expected degrees from 0 to 30, got '5-40'."),
    ("lambda grid not numbers", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--lambdas", "abc"],
     "Option --lambdas: expected START:STOP:COUNT or one number, got 'abc'."),
    ("lambda grid fractional count", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--lambdas", "1:10:2.5"],
     "Option --lambdas: expected START:STOP:COUNT with a whole COUNT, got '1:10:2.5'."),
    ("one fold", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--folds", "1"],
     "Parameter 'folds': expected an integer from 2 to 1000, got 1."),
    ("test fraction too large", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--test-fraction", "1.2"],
     "Parameter 'test_fraction': expected a number in [0, 1), got 1.2."),
    ("too few groups", {"f.csv": "x,y,g\n" + "".join(f"{i},{2 * i + 1},{i % 3}\n" for i in range(12))},
     ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--degrees", "0-2", "--group", "g", "--test-fraction", "0"],
     "Group column: expected at least 10 distinct groups for 10 folds, got 3 groups. Use fewer folds or ungrouped folds."),
    ("single fold value", {"f.csv": "x,y,f\n" + "".join(f"{i},{2 * i + 1},a\n" for i in range(12))},
     ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--degrees", "0-2", "--fold-ids", "f"],
     "Fold column: expected at least 2 distinct fold values, got 1."),
    ("corrupt workbook", {"f.xlsx": b"this is not a workbook"}, ["fit", "{dir}/f.xlsx", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.xlsx': expected a readable .xlsx workbook, got a file that is not a zip archive."),
    ("corrupt parquet", {"f.parquet": b"PAR1 broken"}, ["fit", "{dir}/f.parquet", "--x", "x", "--y", "y", "--degree", "1"],
     "File 'f.parquet': expected a readable Parquet file, got ArrowInvalid."),
    ("existing output", {"f.csv": GOOD, "out.json": "{}"}, ["fit", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--json", "{dir}/out.json"],
     "Output '{dir}/out.json': expected a path that does not exist yet, got an existing file. Choose another name or pass --force to overwrite."),
    ("pick needs both", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--degrees", "0-3", "--folds", "3", "--save", "{dir}/c.json", "--pick-degree", "2"],
     "Options --pick-degree and --pick-lambda: expected both or neither, got only one."),
    ("choice not JSON", {"c.json": "{not json", "f.csv": GOOD}, ["apply", "{dir}/c.json", "{dir}/f.csv", "--x", "x"],
     "Choice file: expected valid JSON, got Expecting property name enclosed in double quotes at line 1."),
    ("choice missing", {"f.csv": GOOD}, ["check", "{dir}/none.json", "{dir}/f.csv", "--x", "x", "--y", "y"],
     "Choice file '{dir}/none.json': expected an existing file, got nothing at that path."),
]


@pytest.mark.parametrize("files, argv, expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_bad_input_exit_code_and_message(tmp_path, capsys, files, argv, expected):
    for name, content in files.items():
        p = tmp_path / name
        p.write_bytes(content) if isinstance(content, bytes) else p.write_text(content)
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    code = main([a.replace("{dir}", str(tmp_path)) for a in argv])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert err[-1] == "error: " + expected.replace("{dir}", str(tmp_path))
    assert all((tmp_path / n).read_bytes() == b for n, b in before.items()), "an input file was changed"


def test_catalogue_is_large_enough():
    assert len(CASES) >= 30


def test_missing_drop_reports_the_count(tmp_path, capsys):
    (tmp_path / "f.csv").write_text(GOOD + "13,\n,5\n")
    assert main(["fit", str(tmp_path / "f.csv"), "--x", "x", "--y", "y", "--degree", "1", "--blank-rows", "skip"]) == 0
    assert "skipped 2 row(s) with blank cells (rows 14, 15)" in capsys.readouterr().err


def test_decimal_comma_semicolon_bom_latin1(tmp_path, capsys):
    """European spreadsheet exports: ';' with decimal commas, a UTF-8 BOM, Latin-1 bytes."""
    text = "Temperatur [°C];Widerstand [Ω]\n" + "".join(f"{i},5;{2 * i + 1},25\n" for i in range(12))
    (tmp_path / "bom.csv").write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    assert main(["fit", str(tmp_path / "bom.csv"), "--x", "1", "--y", "2", "--degree", "1"]) == 0
    latin = "temp [°C]\ty\n" + "".join(f"{i}\t{i * 3}\n" for i in range(5))
    (tmp_path / "latin.tsv").write_bytes(latin.encode("latin-1"))
    assert main(["fit", str(tmp_path / "latin.tsv"), "--x", "temp", "--y", "y", "--degree", "1"]) == 0
    assert "read it as Latin-1" in capsys.readouterr().err
