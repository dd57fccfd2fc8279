"""A catalogue of malformed or awkward inputs: each gives exit code 2 and its exact message.

Every case writes its own small file(s), runs the command line and compares the
whole ``error:`` line, so a change of wording is a deliberate change here.
"""

import datetime
import gzip
import io
import json
from pathlib import Path

import openpyxl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from app.cli import main

GOOD = "x,y\n1,2\n2,3.9\n3,6.2\n4,8.1\n5,9.8\n6,12.2\n7,13.9\n8,16.1\n9,18\n10,20.2\n11,22\n12,24.1\n"


def xlsx(*sheets) -> bytes:
    """An invented workbook: (sheet title, rows) pairs, written by openpyxl (formulas get no stored result)."""
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for title, rows in sheets:
        ws = wb.create_sheet(title)
        for r in rows:
            ws.append(list(r))
    b = io.BytesIO()
    wb.save(b)
    return b.getvalue()


def parquet(**cols) -> bytes:
    b = io.BytesIO()
    pq.write_table(pa.table(cols), b)
    return b.getvalue()


def fit(name="f.csv", *extra):
    return ["fit", "{dir}/" + name, "--x", "x", "--y", "y", "--degree", "1", *extra]


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
     "File 'f.csv' row 3: expected 2 comma-separated fields like the header (row 1), got 3. A thousands separator "
     "(1,234.5) or an unquoted delimiter in a text cell splits a cell in two: check the delimiter and the quoting "
     "of that row."),
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
     "File 'f.xlsx': expected a readable .xlsx workbook, got a file that is not a zip archive. If it is a CSV or "
     "text file, give it the .csv extension."),
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


# Silent misreads, unreadable kinds of file, reader options, caps and outputs: each invented here.
NEW_CASES = [
 ("semicolon column with both decimal marks", {"f.csv": "x;y\n1;3,1\n2;4,2\n3;5.2\n4;6,1\n"}, fit(),
     "File 'f.csv' column 'y': expected one decimal mark in the whole column, got a decimal comma in row 2 ('3,1' reads as 3.1) and a decimal point in row 4 ('5.2' reads as 5.2). Write every number in the column with the same mark."),
 ("semicolon point that may separate thousands", {"f.csv": "x;y\n1;1,5\n2;1.250\n3;2,5\n"}, fit(),
     "File 'f.csv' column 'y': expected one decimal mark in the whole column, got a decimal comma in row 2 ('1,5' reads as 1.5) and a decimal point in row 3 ('1.250' reads as 1.25, or as 1250 if the point separates thousands). Write every number in the column with the same mark."),
 ("row with more fields than the header", {"f.csv": "x,y\n1,234.5,3.469\n2,3.1\n3,4.4\n"}, fit(),
     "File 'f.csv' row 2: expected 2 comma-separated fields like the header (row 1), got 3. A thousands separator (1,234.5) or an unquoted delimiter in a text cell splits a cell in two: check the delimiter and the quoting of that row."),
 ("row with fewer fields than the header", {"f.csv": "x,y,w\n1,2,1\n2,3\n3,4,1\n"}, fit(),
     "File 'f.csv' row 3: expected 3 comma-separated fields like the header (row 1), got 2. Check the delimiter and the quoting of that row."),
 ("numbers where the header belongs", {"f.csv": "1,2\n2,3.1\n3,4\n"}, ["fit", "{dir}/f.csv", "--x", "1", "--y", "2", "--degree", "1"],
     "File 'f.csv' row 1: expected a header row naming the columns, got numbers only ('1', '2'). Pass --no-header if the file has no header row (columns are then named 1, 2, ...)."),
 ("comment lines above the header", {"f.csv": "# logger 7\n# 2024-05-01\n" + GOOD}, fit(),
     "File 'f.csv' row 1: expected a header row naming the columns, got one cell ('# logger 7') above rows with more cells. Pass --comment '#' to leave out the lines that start with it."),
 ("title line above the header", {"f.csv": "Calibration of sensor B\n\n" + GOOD}, fit(),
     "File 'f.csv' row 1: expected a header row naming the columns, got one cell ('Calibration of sensor B') above rows with more cells. If the lines above the header are a title or notes, pass --skip-rows 2."),
 ("only comment lines", {"f.csv": "# a\n# b\n"}, fit("f.csv", "--comment", "#"),
     "File 'f.csv': expected a header row and data rows, got only skipped or comment lines. Lower --skip-rows or check --comment."),
 ("skipped past the end", {"f.csv": GOOD}, fit("f.csv", "--skip-rows", "40"),
     "File 'f.csv': expected a header row and data rows, got only skipped or comment lines. Lower --skip-rows or check --comment."),
 ("workbook named .csv", {"f.csv": xlsx(("Data", [("x", "y"), (1, 2), (2, 3)]))}, fit(),
     "File 'f.csv': expected a text table (CSV, semicolon- or tab-separated), got an .xlsx workbook. Give it the .xlsx extension (or save the sheet as CSV)."),
 ("gzip content", {"f.csv": gzip.compress(GOOD.encode(), mtime=0)}, fit(),
     "File 'f.csv': expected a text table (CSV, semicolon- or tab-separated), got gzip-compressed data. Decompress it first (for example with gunzip) and read the file inside."),
 ("zip archive named .csv", {"f.csv": b"PK\x05\x06" + b"\x00" * 18}, fit(),
     "File 'f.csv': expected a text table (CSV, semicolon- or tab-separated), got a zip archive. Unpack it and read the file inside."),
 ("old xls named .csv", {"f.csv": b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 64}, fit(),
     "File 'f.csv': expected a text table (CSV, semicolon- or tab-separated), got an old-style .xls workbook. Save it as .xlsx or as CSV from the spreadsheet program."),
 ("parquet named .csv", {"f.csv": parquet(x=[1.0, 2.0], y=[2.0, 3.0])}, fit(),
     "File 'f.csv': expected a text table (CSV, semicolon- or tab-separated), got a Parquet file. Give it the .parquet extension."),
 ("binary bytes", {"f.csv": b"x,y\n1,2\x00\x00\x01\n"}, fit(),
     "File 'f.csv': expected a text table (CSV, semicolon- or tab-separated), got binary data (NUL bytes). Check that this is the data file; export it as CSV."),
 ("bad bytes after a UTF-8 mark", {"f.csv": b"\xef\xbb\xbfx,y\n1,2\n2,\xff3\n"}, fit(),
     "File 'f.csv': expected UTF-8 text throughout (it starts with a UTF-8 mark), got bytes that are not UTF-8. Save the file again as UTF-8."),
 ("line too long", {"f.csv": "x,y\n" + "1," * 600_000 + "\n"}, fit(),
     "File 'f.csv' line 2: expected lines of at most 1,048,576 bytes, got a longer line. A table has short lines: check that this is the data file and that its lines end with line breaks."),
 ("unclosed quote", {"f.csv": 'x,y\n1,2\n2,"3\n3,4\n4,5\n'}, fit(),
     'File \'f.csv\' column \'y\' row 3: expected a number, got \'3\\n3,4\\n4,5\\n\'. An unclosed quote (") joins the following lines into this cell: close it or remove it.'),
 ("thousands separator in a quoted cell", {"f.csv": 'x,y\n1,2\n2,"1,234.5"\n3,4\n'}, fit(),
     "File 'f.csv' column 'y' row 3: expected a number, got '1,234.5'. Write numbers without thousands separators."),
 ("decimal comma in a comma-separated file", {"f.csv": 'x,y\n1,2\n2,"3,5"\n3,4\n'}, fit(),
     "File 'f.csv' column 'y' row 3: expected a number, got '3,5'. Decimal commas are read in semicolon-separated files only: write the number with a decimal point."),
 ("empty first sheet", {"f.xlsx": xlsx(("Cover", []), ("Data", [("x", "y"), (1, 2), (2, 3)]), ("Notes", [("seen",)]))}, fit("f.xlsx"),
     "File 'f.xlsx' sheet 'Cover': expected a header row and data rows, got an empty sheet. Sheets with data: 'Data', 'Notes'; pass --sheet with one of them."),
 ("empty workbook", {"f.xlsx": xlsx(("Cover", []))}, fit("f.xlsx"),
     "File 'f.xlsx' sheet 'Cover': expected a header row and data rows, got an empty sheet."),
 ("no such sheet", {"f.xlsx": xlsx(("Data", [("x", "y"), (1, 2), (2, 3)]))}, fit("f.xlsx", "--sheet", "Run 2"),
     "File 'f.xlsx' sheet 'Run 2': expected one of 'Data', got no such sheet. Pass --sheet with one of those names."),
 ("title rows above a sheet header", {"f.xlsx": xlsx(("Data", [("Run 5 of the furnace",), (), ("x", "y"), (1, 2), (2, 3), (3, 5)]))}, fit("f.xlsx"),
     "File 'f.xlsx' sheet 'Data' row 1: expected a header row naming the columns, got one cell ('Run 5 of the furnace') above rows with more cells. If the rows above the header are a title or notes, pass --skip-rows 2."),
 ("formula without a stored result", {"f.xlsx": xlsx(("Data", [("x", "y"), (1, "=A2*2"), (2, "=A3*2")]))}, fit("f.xlsx"),
     "File 'f.xlsx' sheet 'Data' cell B2: expected a stored result of its formula, got a formula without one ('=A2*2'). Open the workbook in a spreadsheet program and save it there, so the results of formulas are stored in the file."),
 ("date in a sheet cell", {"f.xlsx": xlsx(("Data", [("x", "y"), (datetime.datetime(2024, 5, 1, 8, 30), 2), (2, 3)]))}, fit("f.xlsx"),
     "File 'f.xlsx' column 'x' row 2: expected a number, got 2024-05-01 08:30:00 (a date or time). Convert the column to numbers (for example hours since the start) first."),
 ("true/false in a sheet cell", {"f.xlsx": xlsx(("Data", [("x", "y"), (1, True), (2, 3)]))}, fit("f.xlsx"),
     "File 'f.xlsx' column 'y' row 2: expected a number, got TRUE (a true/false cell). Enter numbers in the column."),
 ("spreadsheet error in a sheet cell", {"f.xlsx": xlsx(("Data", [("x", "y"), (1, "#DIV/0!"), (2, 3)]))}, fit("f.xlsx"),
     "File 'f.xlsx' column 'y' row 2: expected a number, got '#DIV/0!'. The cell holds a spreadsheet error: correct the formula that produced it."),
 ("parquet timestamp column", {"f.parquet": parquet(x=pa.array([datetime.datetime(2024, 5, 1, h) for h in range(4)], pa.timestamp("s")), y=[1.0, 2.0, 3.0, 4.0])}, fit("f.parquet"),
     "File 'f.parquet' column 'x': expected numbers, got timestamp[ms] values (dates and times). Convert the column to numbers (for example seconds since the start) first."),
 ("parquet date column", {"f.parquet": parquet(x=pa.array([datetime.date(2024, 5, d) for d in range(1, 5)]), y=[1.0, 2.0, 3.0, 4.0])}, fit("f.parquet"),
     "File 'f.parquet' column 'x': expected numbers, got date32[day] values (dates and times). Convert the column to numbers (for example seconds since the start) first."),
 ("parquet true/false column", {"f.parquet": parquet(x=[1.0, 2.0, 3.0], y=[True, False, True])}, fit("f.parquet"),
     "File 'f.parquet' column 'y': expected numbers, got bool values (true/false values). Store the column as numbers."),
 ("no-header option on parquet", {"f.parquet": parquet(x=[1.0, 2.0, 3.0], y=[1.0, 2.0, 3.0])}, fit("f.parquet", "--no-header"),
     'Option --no-header: expected a text file or a sheet, got a Parquet file. Parquet files name their columns themselves: leave the option out.'),
 ("sheet option on a csv file", {"f.csv": GOOD}, fit("f.csv", "--sheet", "Data"),
     'Option --sheet: expected an .xlsx workbook, got a .csv file. Leave out --sheet for this file.'),
 ("negative skip rows", {"f.csv": GOOD}, fit("f.csv", "--skip-rows", "-1"),
     'Option --skip-rows: expected a whole number >= 0, got -1.'),
 ("comment character that starts numbers", {"f.csv": GOOD}, fit("f.csv", "--comment", "-"),
     "Option --comment: expected one character that cannot start a row of data (not a digit, sign, point, quote, space or delimiter), got '-'."),
 ("tiny uncertainty", {"f.csv": "x,y,u\n1,2,0.1\n2,3,1e-90\n3,4,1\n"}, fit("f.csv", "--uncertainty", "u"),
     "File 'f.csv' column 'u' row 3: expected an uncertainty of at least 1e-75 (its weight 1/u^2 must stay <= 1e+150), got 1e-90. Rescale the column (change its unit)."),
 ("sweep too many cells", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--folds", "100", "--repeats", "100", "--degrees", "0-30", "--lambdas", "1e-3:1e3:30"],
     'Options --folds, --repeats, --degrees and --lambdas: expected at most 1,000,000 cells to score (folds x repeats x degrees x lambdas), got 100 x 100 x 31 x 30 = 9,300,000. Use fewer folds, repeats, degrees or lambdas.'),
 ("learn too many cells", {"f.csv": GOOD}, ["learn", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1", "--folds", "1000", "--repeats", "1000", "--sizes", "0.1:1:10"],
     'Options --folds, --repeats and --sizes: expected at most 1,000,000 cells to score (folds x repeats x sizes), got 1,000 x 1,000 x 10 = 10,000,000. Use fewer folds, repeats or sizes.'),
 ("zero chunk rows", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--chunk-rows", "0"],
     'Option --chunk-rows: expected a whole number from 1 to 100,000,000, got 0.'),
 ("existing folder at the output", {"f.csv": GOOD, "out/keep.txt": "x"}, fit("f.csv", "--json", "{dir}/out"),
     "Output '{dir}/out': expected a path that does not exist yet, got an existing folder. Choose another name or pass --force to overwrite."),
 ("choice to standard output", {"f.csv": GOOD}, ["sweep", "{dir}/f.csv", "--x", "x", "--y", "y", "--save", "-"],
     "Option --save: expected a file name, got '-'. 'sweep' writes --save to a file only."),
 ("blank rows after text in the same file", {"f.csv": "x,y\n1,2\n2,\n\n4,abc\n5,6\n"}, fit(),
     "File 'f.csv' column 'y' row 5: expected a number, got 'abc'. Correct the cell, or empty it if the value is missing."),
 ("decimal comma, notes column untouched, then empty cell", {"f.csv": "x;y;note\n1;3,1;see 1,5\n2;;ok\n3;5,2;x\n"}, fit(),
     "File 'f.csv' rows 3: expected a value in every selected column, got 1 row(s) with empty cells. Fill them in, or pass --blank-rows skip to leave those rows out."),
]

NEW_CASES += [
    ("learn sizes beyond the grid cap", {"f.csv": GOOD}, ["learn", "{dir}/f.csv", "--x", "x", "--y", "y", "--degree", "1",
                                                         "--sizes", "0.1:1:100000"],
     "Option --sizes: expected a COUNT of at most 1000, got '0.1:1:100000'."),
    ("date text in a csv cell", {"f.csv": "x,y\n1,2\n2024-05-01,3\n"}, fit(),
     "File 'f.csv' column 'x' row 3: expected a number, got '2024-05-01'. A date or time is not a number: convert "
     "the column to numbers (for example hours since the start) first."),
]
CASES += NEW_CASES


@pytest.mark.parametrize("files, argv, expected", [c[1:] for c in CASES], ids=[c[0] for c in CASES])
def test_bad_input_exit_code_and_message(tmp_path, capsys, files, argv, expected):
    """Each malformed input exits 2 with exactly its message, and no input file is changed."""
    for name, content in files.items():
        p = tmp_path / name
        p.parent.mkdir(parents=True, exist_ok=True)
        p.write_bytes(content) if isinstance(content, bytes) else p.write_text(content)
    before = {p: p.read_bytes() for p in tmp_path.rglob("*") if p.is_file()}
    code = main([a.replace("{dir}", str(tmp_path)) for a in argv])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert err[-1] == "error: " + expected.replace("{dir}", str(tmp_path))
    assert all(p.read_bytes() == b for p, b in before.items()), "an input file was changed"
    assert {p for p in tmp_path.rglob("*") if p.is_file()} == set(before), "a file was written"


def test_catalogue_is_large_enough():
    """The catalogue keeps covering the known kinds of bad input."""
    assert len(CASES) >= 80
    assert len({c[0] for c in CASES}) == len(CASES)


def test_missing_drop_reports_the_count(tmp_path, capsys):
    """--blank-rows skip reads the file and says how many rows (and which) were left out."""
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
