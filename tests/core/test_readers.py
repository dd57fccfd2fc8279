"""Reading files: per-column decimal marks, field counts, row numbers, headers, encodings,
comments and skipped lines, sheets, Parquet types and the caps. Every file is invented here;
expected numbers are the ones written into the file by hand."""

import datetime
import io

import numpy as np
import openpyxl
import pyarrow as pa
import pyarrow.parquet as pq
import pytest

import core.sheet
from core.errors import DataError
from core.stream import scan_file
from core.table import column_names, exclude_rows, read_frame, read_table


def write(tmp_path, name, content):
    p = tmp_path / name
    p.write_bytes(content) if isinstance(content, bytes) else p.write_text(content, encoding="utf-8")
    return p


def workbook(tmp_path, name, *sheets):
    wb = openpyxl.Workbook()
    wb.remove(wb.active)
    for title, rows in sheets:
        ws = wb.create_sheet(title)
        for r in rows:
            ws.append(list(r))
    wb.save(tmp_path / name)
    return tmp_path / name


def test_a_comma_in_a_notes_cell_leaves_decimal_points_alone(tmp_path):
    """A ';' file whose notes hold '1,5' keeps y = 3.1 (not 31): the mark is decided per column."""
    p = write(tmp_path, "n.csv", "x;y;note\n1;3.1;ok\n2;4.25;see 1,5 above\n3;5.5;\n")
    t = read_table(p, x="x", y="y")
    np.testing.assert_array_equal(t.y.values, [3.1, 4.25, 5.5])
    assert "read column 'x' with no decimal mark (whole numbers), 'y' with a decimal point." in t.notices[-1]


def test_decimal_comma_columns_and_point_columns_in_one_file(tmp_path):
    """In one ';' file x may use a decimal comma and y a decimal point; the notice says which."""
    p = write(tmp_path, "m.csv", "x;y\n0,5;1.25\n1,5;2.5\n1.234,5;3.75\n")
    t = read_table(p, x="x", y="y")
    np.testing.assert_array_equal(t.x.values, [0.5, 1.5, 1234.5])
    np.testing.assert_array_equal(t.y.values, [1.25, 2.5, 3.75])
    assert t.notices[-1] == ("File 'm.csv' is semicolon-separated; read column 'x' with a decimal comma, "
                             "'y' with a decimal point.")


def test_a_column_with_both_marks_is_refused_naming_a_row_of_each(tmp_path):
    """Both readings in one column: refused with the column, a row of each kind and how each reads."""
    p = write(tmp_path, "b.csv", "x;y\n1;2,5\n2;3,5\n3;1.500\n")
    with pytest.raises(DataError, match=r"^File 'b.csv' column 'y': expected one decimal mark in the whole column, "
                       r"got a decimal comma in row 2 \('2,5' reads as 2.5\) and a decimal point in row 4 "
                       r"\('1.500' reads as 1.5, or as 1500 if the point separates thousands\)\."):
        read_table(p, x="x", y="y")


def test_extra_leading_fields_never_become_an_index(tmp_path):
    """'1,234.5,3.469' under 'x,y' is refused with its row, never read as x = 234.5."""
    p = write(tmp_path, "t.csv", "x,y\n0.5,1.1\n1,234.5,3.469\n2,3.3\n")
    with pytest.raises(DataError, match=r"^File 't.csv' row 3: expected 2 comma-separated fields like the header "
                       r"\(row 1\), got 3\. A thousands separator"):
        read_table(p, x="x", y="y")


def test_every_data_row_wider_than_the_header_is_refused_at_the_first(tmp_path):
    """A file whose rows all carry one field more than the header is refused at row 2."""
    p = write(tmp_path, "w.csv", "x,y\n1,2,3\n2,3,4\n")
    with pytest.raises(DataError, match=r"^File 'w.csv' row 2: expected 2 comma-separated fields"):
        read_table(p, x="x", y="y")


def test_row_numbers_count_blank_lines_and_exclude_takes_them(tmp_path):
    """After a blank line the reported row is the spreadsheet's, and excluding it removes that very row."""
    p = write(tmp_path, "g.csv", "x,y\n1,2\n\n3,oops\n")
    with pytest.raises(DataError, match=r"column 'y' row 4: expected a number, got 'oops'"):
        read_table(p, x="x", y="y")
    p = write(tmp_path, "h.csv", "x,y\n1,2\n2,3\n\n4,5\n5,6\n\n7,8\n8,9.5\n")
    t = read_table(p, x="x", y="y")
    assert t.row_numbers.tolist() == [2, 3, 5, 6, 8, 9]
    kept = exclude_rows(t, [8])
    np.testing.assert_array_equal(kept.x.values, [1, 2, 4, 5, 8])


def test_no_header_names_columns_by_position_and_keeps_the_first_row(tmp_path):
    """--no-header reads the first line as data; columns are '1', '2'; rows start at 1."""
    p = write(tmp_path, "n.csv", "1,2.5\n2,3.5\n3,4.5\n")
    with pytest.raises(DataError, match=r"row 1: expected a header row naming the columns, got numbers only"):
        read_table(p, x=1, y=2)
    t = read_table(p, x=1, y=2, header=False)
    assert (t.x.name, t.n, t.row_numbers.tolist()) == ("1", 3, [1, 2, 3])
    np.testing.assert_array_equal(t.y.values, [2.5, 3.5, 4.5])


def test_no_header_semicolon_file_with_decimal_commas(tmp_path):
    """Without a header, '1,5;2,5' is still split at ';' (the delimiter that fits every line)."""
    p = write(tmp_path, "n.csv", "1,5;2,5\n2,5;3,75\n3,5;4\n")
    t = read_table(p, x=1, y=2, header=False)
    np.testing.assert_array_equal(t.x.values, [1.5, 2.5, 3.5])
    np.testing.assert_array_equal(t.y.values, [2.5, 3.75, 4.0])


@pytest.mark.parametrize("codec, bom", [("utf-16-le", b"\xff\xfe"), ("utf-16-be", b"\xfe\xff"),
                                        ("utf-16-le", b""), ("utf-16-be", b"")])
def test_utf16_with_or_without_a_byte_order_mark(tmp_path, codec, bom):
    """UTF-16 text (found by its mark or by its NUL bytes) reads as the same text in UTF-8 does."""
    text = "Temperatur [°C]\tWiderstand\n20,5\t100.25\n21\t101.5\n22,5\t103\n".replace(",", ".")
    p = write(tmp_path, "u.tsv", bom + text.encode(codec))
    ref = read_table(write(tmp_path, "r.tsv", text), x=1, y=2)
    t = read_table(p, x=1, y=2)
    np.testing.assert_array_equal(t.x.values, ref.x.values)
    assert t.x.name == "Temperatur [°C]" and "UTF-16" in t.notices[0]


def test_comment_and_skipped_lines_count_as_rows(tmp_path):
    """--comment and --skip-rows leave lines out but keep them in the row numbers."""
    p = write(tmp_path, "c.csv", "Run 5\n# logger 7\nx,y\n1,2\n# paused\n2,bad\n")
    with pytest.raises(DataError, match=r"row 1: expected a header row naming the columns, got one cell \('Run 5'\)"
                       r" above rows with more cells\. If the lines above the header are a title or notes, pass "
                       r"--skip-rows 2"):
        read_table(p, x="x", y="y")
    with pytest.raises(DataError, match=r"column 'y' row 6: expected a number, got 'bad'"):
        read_table(p, x="x", y="y", skip_rows=1, comment="#")


def test_text_in_a_number_cell_never_suggests_skipping_blank_rows(tmp_path):
    """The advice '--blank-rows skip' comes only for empty cells, never for text in a number cell."""
    p = write(tmp_path, "t.csv", "x,y\n1,2\n2,n/a\n3,\n")
    with pytest.raises(DataError) as err:
        read_table(p, x="x", y="y")
    assert "n/a" in str(err.value) and "--blank-rows" not in str(err.value)
    p = write(tmp_path, "e.csv", "x,y\n1,2\n2,\n3,4\n")
    with pytest.raises(DataError, match=r"pass --blank-rows skip to leave those rows out"):
        read_table(p, x="x", y="y")


def test_sheet_title_rows_skip_rows_and_the_sheet_with_data(tmp_path):
    """A sheet with a title above the header reads with --skip-rows; an empty first sheet names the others."""
    p = workbook(tmp_path, "w.xlsx", ("Cover", []), ("Data", [("Furnace run 5",), (), ("x", "y"), (1, 2.5), (2, 3.5)]))
    with pytest.raises(DataError, match=r"sheet 'Cover': expected a header row and data rows, got an empty sheet\. "
                       r"Sheets with data: 'Data'; pass --sheet with one of them\."):
        read_table(p, x="x", y="y")
    with pytest.raises(DataError, match=r"sheet 'Data' row 1: expected a header row naming the columns"):
        read_table(p, x="x", y="y", sheet="Data")
    t = read_table(p, x="x", y="y", sheet="Data", skip_rows=2)
    assert t.row_numbers.tolist() == [4, 5]
    np.testing.assert_array_equal(t.y.values, [2.5, 3.5])


def test_formulas_without_stored_results_are_refused(tmp_path):
    """openpyxl writes formulas without results; reading them says to save the workbook in a spreadsheet program."""
    p = workbook(tmp_path, "f.xlsx", ("S", [("x", "y"), (1, 2), (2, "=A3*2")]))
    with pytest.raises(DataError, match=r"sheet 'S' cell B3: expected a stored result of its formula, got a formula "
                       r"without one \('=A3\*2'\)\. Open the workbook in a spreadsheet program and save it there"):
        read_table(p, x="x", y="y")


def test_sheet_row_cap_is_stated(tmp_path, monkeypatch):
    """A sheet longer than the row cap is refused (the cap lowered here to keep the test small)."""
    p = workbook(tmp_path, "big.xlsx", ("S", [("x", "y")] + [(i, 2 * i) for i in range(10)]))
    monkeypatch.setattr(core.sheet, "MAX_SHEET_ROWS", 5)
    with pytest.raises(DataError, match=r"^File 'big.xlsx' sheet 'S': expected at most 5 rows, got more\. "
                       r"Save the sheet as CSV"):
        read_table(p, x="x", y="y")


def test_unpacked_size_cap_is_stated(tmp_path, monkeypatch):
    """A workbook unpacking to more than the cap is refused before it is parsed."""
    p = workbook(tmp_path, "z.xlsx", ("S", [("x", "y"), (1, 2), (2, 3)]))
    monkeypatch.setattr(core.sheet, "MAX_UNZIPPED_BYTES", 1000)
    with pytest.raises(DataError, match=r"^File 'z.xlsx': expected a workbook of at most 0 MB unpacked"):
        read_table(p, x="x", y="y")


def test_parquet_dates_are_refused_like_sheet_dates(tmp_path):
    """A timestamp column of a Parquet file is refused by name and type, as a date cell of a sheet is."""
    p = tmp_path / "t.parquet"
    when = [datetime.datetime(2024, 5, 1, h) for h in range(4)]
    pq.write_table(pa.table({"when": pa.array(when, pa.timestamp("ns")), "y": [1.0, 2.0, 3.0, 4.0]}), p)
    with pytest.raises(DataError, match=r"^File 't.parquet' column 'when': expected numbers, got timestamp\[ns\] "
                       r"values \(dates and times\)"):
        read_table(p, x="when", y="y")
    s = workbook(tmp_path, "d.xlsx", ("S", [("when", "y")] + [(w, i) for i, w in enumerate(when)]))
    with pytest.raises(DataError, match=r"column 'when' row 2: expected a number, got 2024-05-01 00:00:00 "
                       r"\(a date or time\)"):
        read_table(s, x="when", y="y")


def test_line_length_is_capped(tmp_path, monkeypatch):
    """A line longer than the cap is refused naming the line (cap lowered here)."""
    import core.textfile

    monkeypatch.setattr(core.textfile, "MAX_LINE_BYTES", 50)
    p = write(tmp_path, "l.csv", "x,y\n1,2\n" + "3," + "4" * 60 + "\n")
    with pytest.raises(DataError, match=r"^File 'l.csv' line 3: expected lines of at most 50 bytes"):
        read_table(p, x="x", y="y")


def test_read_frame_and_column_names_follow_the_same_rules(tmp_path):
    """The whole-frame reader (used by apply) sees the rows and numbering of read_table."""
    p = write(tmp_path, "c.csv", "# note\nx,y,label\n1,2,a\n\n3,4,b\n")
    frame, _ = read_frame(p, comment="#")
    assert frame.index.tolist() == [3, 5] and frame["label"].tolist() == ["a", "b"]
    assert column_names(p, comment="#") == ["x", "y", "label"]


def test_streamed_scan_reads_like_read_table(tmp_path):
    """scan_file over tiny chunks gives read_table's rows, fingerprint, dropped rows and notices."""
    text = "title\n# c\nx;y;w\n1;2,5;1\n\n2;;1\n3;4,5;2\n# c\n4;5,5;1\n5;6,25;1\n"
    p = write(tmp_path, "s.csv", text)
    opts = dict(skip_rows=1, comment="#", blank_rows="skip")
    t = read_table(p, x="x", y="y", weights="w", **opts)
    for chunk in (1, 2, 3, 100):
        sc = scan_file(p, x="x", y="y", weights="w", chunk_rows=chunk, **opts)
        assert sc.rows_dropped == t.rows_dropped == [6]
        assert (sc.rows_used, sc.columns_sha256, sc.notices) == (t.n, t.columns_sha256, t.notices)


def test_sheet_values_read_as_numbers(tmp_path):
    """Numbers, numeric texts and empty cells of a sheet read as the numbers typed."""
    p = workbook(tmp_path, "v.xlsx", ("S", [("x", "y"), (1, "2.5"), (2, 3), (3, None), (4, 4.75)]))
    t = read_table(p, x="x", y="y", blank_rows="skip")
    np.testing.assert_array_equal(t.y.values, [2.5, 3.0, 4.75])
    assert t.rows_dropped == [4]


def test_parquet_strings_and_numbers(tmp_path):
    """A Parquet string column holding numbers reads like the same text in a CSV."""
    b = io.BytesIO()
    pq.write_table(pa.table({"x": ["1", "2.5", None, "4"], "y": [1.0, 2.0, 3.0, float("nan")]}), b)
    p = write(tmp_path, "p.parquet", b.getvalue())
    t = read_table(p, x="x", y="y", blank_rows="skip")
    np.testing.assert_array_equal(t.x.values, [1.0, 2.5])
    assert t.rows_dropped == [4, 5]


def test_a_number_that_names_one_column_and_places_another_is_refused(tmp_path):
    """'--y 1' where column 2 is named '1' could mean either column: refused, never guessed."""
    p = write(tmp_path, "a.csv", "x,1\n1,2\n2,3\n")
    with pytest.raises(DataError, match=r"^Column '1' \(y\) in 'a.csv': expected one meaning, got both the column "
                       r"named '1' \(position 2\) and the column at position 1 \('x'\)\. Pass --y with the name"):
        read_table(p, x="x", y="1")


def test_numbers_read_exactly_as_python_reads_them(tmp_path):
    """Seeded random numbers in many spellings read to the same doubles as Python's float() of the text."""
    rng = np.random.default_rng(42)
    v = rng.standard_normal(3000) * 10.0 ** rng.integers(-30, 30, 3000)
    texts = [f"{a:.17g}" for a in v[:1000]] + [f"{a:+.6e}" for a in v[1000:2000]] + [repr(float(a)) for a in v[2000:]]
    texts += ["007", ".5", "5.", "-0", "1E+05", "+.25e-3"]
    p = write(tmp_path, "n.csv", "x,y\n" + "".join(f"{i},{t}\n" for i, t in enumerate(texts)))
    t = read_table(p, x="x", y="y")
    assert t.y.values.tolist() == [float(s) for s in texts]
    q = write(tmp_path, "c.csv", "x;y\n" + "".join(f"{i};{s.replace('.', ',')}\n" for i, s in enumerate(texts[:1000])))
    assert read_table(q, x="x", y="y").y.values.tolist() == [float(s) for s in texts[:1000]]


def test_damaged_workbook_parts_are_refused_cleanly(tmp_path):
    """A workbook whose sheet XML is broken gives a DataError naming the file, not a parser traceback."""
    import zipfile

    good = workbook(tmp_path, "g.xlsx", ("S", [("x", "y"), (1, 2), (2, 3)]))
    bad = tmp_path / "b.xlsx"
    with zipfile.ZipFile(good) as src, zipfile.ZipFile(bad, "w") as dst:
        for item in src.infolist():
            data = src.read(item)
            dst.writestr(item, b"<worksheet><sheetData><row r=" if "worksheets/sheet" in item.filename else data)
    with pytest.raises(DataError, match=r"^File 'b.xlsx'( sheet 'S')?: expected a readable .xlsx workbook, got .+\. "
                       r"Open it in a spreadsheet program and save it again as .xlsx\.$"):
        read_table(bad, x="x", y="y")


def test_parquet_integers_beyond_2_to_the_53_round_like_their_text(tmp_path):
    """An int64 column with a value beyond 2^53 reads as the nearest double, exactly as the same digits written
    in a CSV do (Python's float() of the text), instead of escaping as an arrow error."""
    p = tmp_path / "big.parquet"
    pq.write_table(pa.table({"x": pa.array([1, 2, 3, 2 ** 60 + 1], pa.int64()), "y": [1.0, 2.0, 2.5, 4.0]}), p)
    t = read_table(p, x="x", y="y")
    assert t.x.values[-1] == float(str(2 ** 60 + 1))
