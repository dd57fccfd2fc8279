"""The fast reader reads a file exactly as the careful reader does, or leaves it to the careful
reader: spellings of numbers, rows and blank lines, decimal marks, fingerprints, statistics."""

import hashlib
import itertools

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest

import core
from core.cells import Marks, column_numbers
from core.errors import CurvewrightError
from core.fastread import Unsure, read_block
from core.stream import iter_values, scan_file, sweep_file
from core.table import read_table


def write(tmp_path, name, content):
    p = tmp_path / name
    p.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    return p


def outcome(fn):
    """(message, None) of a refusal, else (None, result)."""
    try:
        return None, fn()
    except CurvewrightError as exc:
        return str(exc), None


def same_values(path, specs, **opts):
    """The second read by either reader: the same values, bit for bit."""
    a = list(iter_values(path, specs, fast=True, **opts))
    b = list(iter_values(path, specs, fast=False, **opts))
    for k in range(3):
        got, want = [c[k] for c in a], [c[k] for c in b]
        if want[0] is None:
            assert got[0] is None
        else:
            assert np.concatenate(got).tobytes() == np.concatenate(want).tobytes()
    return np.concatenate([c[0] for c in a])


def same_scan(a, b):
    """Two scans of one file agree on everything they learnt."""
    assert (a.rows_read, a.rows_used, a.rows_dropped, a.x_min, a.x_max, a.file_sha256, a.columns_sha256,
            a.x_name, a.y_name, a.weight_name, a.notices) == (
        b.rows_read, b.rows_used, b.rows_dropped, b.x_min, b.x_max, b.file_sha256, b.columns_sha256,
        b.x_name, b.y_name, b.weight_name, b.notices)
    np.testing.assert_array_equal(a.row_numbers, b.row_numbers)
    np.testing.assert_array_equal(a.sealed, b.sealed)


@pytest.mark.parametrize("delimiter, mark, alphabet", [("\t", ".", "05.e+- ,na"), (";", ",", "05,.e+- na")])
def test_every_spelling_pyarrow_converts_reads_as_the_careful_reader_reads_it(delimiter, mark, alphabet):
    """All cells of up to 4 characters (and known oddities): a finite value only where core.cells and float() agree."""
    cells = ["".join(t) for k in range(5) for t in itertools.product(alphabet, repeat=k)]
    cells += ["Infinity", "-inf", "nan(1)", "NAN", "-nan", "1E+05", "0x10", "1_0", "\u0661", "1\u00a0", " 1 ", "\t2",
              "1e400", "9" * 330, "0." + "0" * 400 + "1", "1.234,5", "1,234.5", "+.5e-3", "-0", "1e-320", "1,e5"]
    converted = 0
    for cell in cells:
        try:
            got = read_block(f"1{delimiter}{cell}\n".encode(), ["a", "b"], {"b": pa.float64()}, delimiter, mark)
        except Unsure:
            continue
        v = got.column("b")[0].as_py()
        vals, miss, problem = column_numbers([cell], np.array([2]), "b", Marks("f", delimiter == ";"))
        if v is None:                                  # missing for pyarrow: missing for the careful reader
            assert miss[0], cell
        elif np.isfinite(v):                           # NaN and infinities are left to the careful reader
            converted += 1
            assert not miss[0] and problem is None, cell
            assert np.float64(vals[0]).tobytes() == np.float64(v).tobytes(), cell
            assert v == float(cell.strip().replace(",", ".")), cell
    assert converted > 300


TEXTS = {
    "plain": ("x,y\n1,2\n2,3.5\n3,4e1\n4,-.5\n5,+7.\n", {}),
    "crlf, BOM, title, blank lines": ("\ufeffRun 3\r\n\r\nx,y,note\r\n1,2,a b\r\n\r\n2,3.5,c\r\n3,,d\r\n4,5,\r\n\r\n"
                                      "5,6.25,e\r\n\r\n", {"skip_rows": 1, "blank_rows": "skip"}),
    "comments above the header": ("# logger 7\n# 2024\nx,y\n1,2\n2,3\n3,5\n", {"comment": "#"}),
    "no header": ("1,2\n2,3\n\n3,5\n", {"header": False}),
    "semicolon, decimal commas": ("x;y;w\n1;2,5;1\n2;3,25;0,5\n3;4;2\n4;,5;1\n", {"weights": 3}),
    "semicolon, decimal points": ("x;y\n1;2.5\n2;3.25\n3;4\n", {}),
    "tab, padded cells": ("a\tb\n 1\t2 \n2\t\n3\t4.5\n", {"blank_rows": "skip"}),
    "nan spellings": ("x,y\n1,2\n2,NaN\n3,nan\n4,5\n5,nAN\n", {"blank_rows": "skip"}),
    "quoted header, text column": ('"t [s]","v [V]",site\n1,2,north\n2,3,s\xfcd\n3,5,ost\n', {}),
    "latin-1 header": ("temp [\xb0C];y\n1;2,5\n2;3\n3;4,75\n".encode("latin-1"), {}),
    "no final line break": ("x,y\n1,2\n2,3\n3,4.5", {}),
    "uncertainties": ("x,y,u\n1,2,0.1\n2,3,0.2\n3,5,0.1\n", {"uncertainty": 3}),
}


@pytest.mark.parametrize("name", list(TEXTS))
def test_fast_reader_reads_these_files_as_the_careful_reader(tmp_path, name):
    """Rows, numbers, row numbers, sealed rows, dropped rows, notices and fingerprints of the careful reader."""
    text, opts = TEXTS[name]
    p = write(tmp_path, "f.csv", text)
    w, u = opts.pop("weights", None), opts.pop("uncertainty", None)
    kw = dict(x=1, y=2, weights=w, uncertainty=u, sealed=(4, 0.4), **opts)
    fast = scan_file(p, reader="fast", **kw)
    careful = scan_file(p, reader="careful", **kw)
    assert fast.fast and not careful.fast
    same_scan(fast, careful)
    t = read_table(p, x=1, y=2, weights=w, uncertainty=u, **opts)
    assert (fast.columns_sha256, fast.rows_dropped, fast.notices) == (t.columns_sha256, t.rows_dropped, t.notices)
    np.testing.assert_array_equal(fast.row_numbers, t.row_numbers)
    x = same_values(p, {"x": 1, "y": 2, "weights": w, "uncertainty": u}, **opts)
    np.testing.assert_array_equal(x, t.x.values)


REFERRED = {
    "a quoted cell": 'x,y\n1,"2"\n2,3\n3,4\n',
    "a quoted cell over two lines": 'x,y,note\n1,2,"a\n3"\n2,3,b\n3,4,c\n',
    "a lone carriage return": "x,y\n1,2\r2,3\n3,4\n",
    "a comment line among the data": "x,y\n1,2\n# pause\n2,3\n3,4\n",
    "a padded nan": "x,y\n1,2\n2, nan\n3,4\n",
    "a signed nan": "x,y\n1,2\n2,-nan\n3,4\n",
    "an infinite value": "x,y\n1,2\n2,inf\n3,4\n",
    "a blank cell of spaces": "x,y\n1,2\n2,  \n3,4\n",
    "a line of spaces": "x,y\n1,2\n   \n3,4\n",
    "a ragged row": "x,y\n1,2\n2,3,4\n3,4\n",
    "a decimal comma in a comma file": "x\ty\n1\t2,5\n2\t3\n3\t4\n",
    "both marks in a block": "x;y\n1;2,5\n2;3.5\n3;4,5\n",
    "a thousands point and a comma": "x;y\n1;1.234,5\n2;3,5\n3;4,5\n",
    "a text column with a comma": "x;y;note\n1;2.5;see 1,5\n2;3.5;ok\n",
    "UTF-16": "x,y\n1,2\n2,3\n3,4\n".encode("utf-16"),
    "one column": "x\n1\n2\n3\n",
    "a header only": "x,y\n",
    "a zero weight": "x,y,w\n1,2,1\n2,3,0\n3,4,1\n",
}


@pytest.mark.parametrize("name", list(REFERRED))
def test_files_left_to_the_careful_reader_read_as_it_reads_them(tmp_path, name):
    """What the fast reader cannot vouch for is read (or refused) by the careful reader, with its message."""
    p = write(tmp_path, "f.csv", REFERRED[name])
    kw = dict(x=1, y=2, weights=3 if "weight" in name else None, blank_rows="skip", require_spread=False)
    with pytest.raises((Unsure, CurvewrightError)):
        scan_file(p, reader="fast", **kw)
    err, auto = outcome(lambda: scan_file(p, **kw))
    err2, careful = outcome(lambda: scan_file(p, reader="careful", **kw))
    assert err == err2
    if careful is not None:
        assert not auto.fast
        same_scan(auto, careful)


def test_decimal_marks_met_in_different_blocks(tmp_path):
    """A ';' column with points in one block and commas in a later one is refused as the careful reader refuses it."""
    rows = [f"{i};{i}.5" for i in range(8000)] + [f"{i};{i},5" for i in range(8000, 9000)]
    p = write(tmp_path, "m.csv", "x;y\n" + "\n".join(rows) + "\n")
    with pytest.raises(Unsure):
        scan_file(p, x="x", y="y", chunk_rows=2048, reader="fast")
    err, _ = outcome(lambda: scan_file(p, x="x", y="y", chunk_rows=2048))
    assert err == outcome(lambda: read_table(p, x="x", y="y"))[0]
    assert "a decimal point in row 2 ('0.5' reads as 0.5)" in err and "a decimal comma in row 8002" in err


def test_many_blocks_with_blank_lines_and_comma_marks(tmp_path):
    """Blocks of 64 KiB: rows, marks and values across block edges and blank lines, as the careful reader reads them."""
    rng = np.random.default_rng(3)
    lines = ["x;y;w"]
    for i in range(30000):
        lines.append(f"{i};{rng.normal():.9f};{rng.uniform(0.5, 2):.3f}".replace(".", ",") if i % 7 else
                     f"{i};{rng.integers(-50, 50)};1")
        if i % 997 == 0:
            lines.append("")
    p = write(tmp_path, "b.csv", "\r\n".join(lines) + "\r\n")
    kw = dict(x="x", y="y", weights="w", sealed=(1, 0.3), chunk_rows=2048)
    fast = scan_file(p, reader="fast", **kw)
    same_scan(fast, scan_file(p, reader="careful", **kw))
    assert fast.notices[-1].endswith("'x' with no decimal mark (whole numbers), 'y' with a decimal comma, "
                                     "'w' with a decimal comma.")
    same_values(p, {"x": "x", "y": "y", "weights": "w"}, chunk_rows=2048)


def test_fingerprint_pinned(tmp_path):
    """The fingerprint of an invented file is today's, by hand-written numbers and by both readers."""
    p = write(tmp_path, "run 7.csv", "time [s];signal [mV];w\r\n0,5;1,25;1\r\n1,0;2,5;2\r\n\r\n1,5;3,75;1\r\n2;5;0,5\r\n")
    pinned = "8839ef11a30f800ab3b95bf40b3ae5dc9cc2a343e56e607c9f1dc23e9add9cc9"
    by_hand = hashlib.sha256()
    for role, v in (("x", [0.5, 1.0, 1.5, 2.0]), ("y", [1.25, 2.5, 3.75, 5.0]), ("weights", [1.0, 2.0, 1.0, 0.5])):
        by_hand.update(f"{role}:{hashlib.sha256(np.array(v, dtype='<f8').tobytes()).hexdigest()}\n".encode())
    assert by_hand.hexdigest() == pinned
    sc = scan_file(p, x="time", y="signal", weights="w", sealed=(0, 0.5), reader="fast")
    assert sc.fast and sc.columns_sha256 == pinned == read_table(p, x="time", y="signal", weights="w").columns_sha256
    np.testing.assert_array_equal(sc.row_numbers, [2, 3, 5, 6])


@pytest.fixture
def logged(tmp_path):
    rng = np.random.default_rng(8)
    x = rng.uniform(-2, 3, 4000)
    frame = pd.DataFrame({"time [s]": x, "signal [V]": np.tanh(x) + 0.1 * rng.normal(size=x.size),
                          "w": rng.uniform(0.5, 2, x.size)})
    frame.loc[rng.choice(x.size, 40, replace=False), "signal [V]"] = np.nan
    p = tmp_path / "log.csv"
    frame.to_csv(p, index=False)
    return p, frame


def test_streamed_statistics_are_the_same_bits_by_either_reader(logged):
    """sweep_file by the fast and the careful reader: identical surfaces, equal to the in-memory sweep."""
    p, _ = logged
    kw = dict(x="time", y="signal", weights="w", folds=5, seed=3, test_fraction=0.2, blank_rows="skip", chunk_rows=700)
    a, sa = sweep_file(p, range(0, 9), [1e-4, 1e-2, 1.0], reader="fast", **kw)
    b, sb = sweep_file(p, range(0, 9), [1e-4, 1e-2, 1.0], reader="careful", **kw)
    assert sa.fast and not sb.fast
    same_scan(sa, sb)
    np.testing.assert_array_equal(a.fold_mse, b.fold_mse)
    np.testing.assert_array_equal(a.engine.moments.gram, b.engine.moments.gram)
    t = read_table(p, x="time", y="signal", weights="w", blank_rows="skip")
    ref = core.sweep(t.x.values, t.y.values, range(0, 9), [1e-4, 1e-2, 1.0], folds=5, seed=3, weights=t.weights,
                     row_keys=t.row_numbers, test_fraction=0.2)
    np.testing.assert_array_equal(a.fold_mse, ref.fold_mse)


def test_parquet_second_read_gives_the_careful_values(logged, tmp_path):
    """Parquet with integer, float and missing values: the lean second read equals the careful one."""
    _, frame = logged
    frame = frame.assign(n=np.arange(len(frame)) % 97 + 1)
    p = tmp_path / "log.parquet"
    frame.to_parquet(p)
    kw = dict(x="n", y="signal", weights="w", folds=4, blank_rows="skip", chunk_rows=999)
    a, sa = sweep_file(p, [1, 3], [0.1], reader="fast", **kw)
    b, sb = sweep_file(p, [1, 3], [0.1], reader="careful", **kw)
    same_scan(sa, sb)
    np.testing.assert_array_equal(a.engine.moments.gram, b.engine.moments.gram)


def test_seeded_random_files_read_alike(tmp_path):
    """Invented files of random shape and spelling: the fast reader reads most, always as the careful reader."""
    rng = np.random.default_rng(11)
    spellings = ["{:.6g}", "{:.3f}", "{:.2e}", "{:+.4f}", "{:.0f}", " {:.5g}"]
    odd = ["", "NaN", "nan", " ", "inf", "1e400", "abc", "-nan", "+.5", "5.", ".5e1"]
    fast_used = 0
    for case in range(60):
        delim = rng.choice([",", ";", "\t"])
        comma = delim == ";" and rng.random() < 0.5
        eol = "\r\n" if rng.random() < 0.3 else "\n"
        n = int(rng.integers(3, 40))
        body = []
        for i in range(n):
            cells = []
            for _ in range(3):
                c = rng.choice(spellings).format(rng.normal() * 10.0 ** rng.integers(-3, 4))
                c = c.replace(".", ",") if comma else c
                cells.append(rng.choice(odd) if rng.random() < 0.02 else c)
            body.append(delim.join(cells))
            if rng.random() < 0.05:
                body.append("")
        text = delim.join(["x", "y", "w"]) + eol + eol.join(body) + (eol if rng.random() < 0.8 else "")
        p = write(tmp_path, f"r{case}.csv", text)
        kw = dict(x="x", y="y", blank_rows="skip", require_spread=False, sealed=(case, 0.25), chunk_rows=2)
        err, auto = outcome(lambda: scan_file(p, **kw))
        err2, careful = outcome(lambda: scan_file(p, reader="careful", **kw))
        assert err == err2 == outcome(lambda: read_table(p, x="x", y="y", blank_rows="skip",
                                                         require_spread=False))[0], text
        if careful is not None:
            same_scan(auto, careful)
            fast_used += auto.fast
    assert fast_used >= 30


def test_long_and_extreme_spellings_read_as_python_reads_them(tmp_path):
    """Mantissas of up to 25 digits, exponents near both ends, subnormals: every value is float()'s, bit for bit."""
    rng = np.random.default_rng(5)
    cells = []
    while len(cells) < 3000:
        digits = "".join(rng.choice(list("0123456789"), size=int(rng.integers(1, 26))))
        cut = int(rng.integers(0, len(digits) + 1))
        cell = (str(rng.choice(["", "-", "+"])) + (digits[:cut] + "." + digits[cut:] if rng.random() < 0.8 else digits)
                + (f"e{int(rng.integers(-340, 150))}" if rng.random() < 0.6 else ""))
        if abs(float(cell)) <= 1e150:
            cells.append(cell)
    p = write(tmp_path, "long.csv", "i,v\n" + "".join(f"{i},{c}\n" for i, c in enumerate(cells)))
    sc = scan_file(p, x="i", y="v", reader="fast")
    assert sc.fast and sc.columns_sha256 == read_table(p, x="i", y="v").columns_sha256
    got = np.concatenate([part[1] for part in iter_values(p, {"x": "i", "y": "v"}, fast=True)])
    assert got.tobytes() == np.array([float(c) for c in cells]).tobytes()


def test_many_files_sweep_alike_by_either_reader(tmp_path):
    """sweep_files over CSV parts read fast equals the sweep over the same numbers in quoted cells (read carefully)."""
    import csv

    from core.distributed import sweep_files

    rng = np.random.default_rng(2)
    plain, quoted = [], []
    for i in range(3):
        x = rng.uniform(0, 4, 3000)
        frame = pd.DataFrame({"x": x, "y": np.cos(x) + 0.1 * rng.normal(size=x.size)})
        plain.append(tmp_path / f"p{i}.csv")
        quoted.append(tmp_path / f"q{i}.csv")
        frame.to_csv(plain[-1], index=False)
        frame.to_csv(quoted[-1], index=False, quoting=csv.QUOTE_ALL)
    assert scan_file(plain[0], x="x", y="y").fast and not scan_file(quoted[0], x="x", y="y").fast
    a, ia = sweep_files(plain, range(0, 6), [1e-3, 1.0], x="x", y="y", folds=4, test_fraction=0.2, chunk_rows=1000)
    b, ib = sweep_files(quoted, range(0, 6), [1e-3, 1.0], x="x", y="y", folds=4, test_fraction=0.2, chunk_rows=1000)
    np.testing.assert_array_equal(a.fold_mse, b.fold_mse)
    assert ia["columns_sha256"] == ib["columns_sha256"] and ia["rows_used"] == ib["rows_used"] == 9000
