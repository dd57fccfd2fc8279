"""Fuzzing the file readers: only project errors escape, and the streamed reader reads every file
exactly as read_table does (same rows, row numbers, values, or the same refusal)."""

import string

import numpy as np
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from core.errors import CurvewrightError
from core.stream import chunk_columns, iter_chunks, scan_file
from core.table import read_table

NUMBERS = st.one_of(
    st.integers(-999, 99999).map(str),
    st.floats(-1e6, 1e6, allow_nan=False).map(lambda v: f"{v:.6g}"),
    st.floats(-1e3, 1e3, allow_nan=False).map(lambda v: f"{v:.3f}".replace(".", ",")),
    st.sampled_from(["1,234.5", "1.234,5", "", " ", "NaN", "inf", "abc", "n/a", '"3,5"', '"a;b"', "1e400", "-0"]),
)
LINE = st.one_of(
    st.lists(NUMBERS, min_size=1, max_size=4).flatmap(
        lambda cells: st.sampled_from([",", ";", "\t"]).map(lambda d: d.join(cells))),
    st.sampled_from(["", "# note, 1,5", "#", "x,y", "x;y", "x\ty", "title", "  "]),
    st.text(alphabet=string.digits + ".,;-+eE \t\"'#xyNaIinf", max_size=30),
)
ENCODINGS = st.sampled_from([("utf-8", b""), ("utf-8", b"\xef\xbb\xbf"), ("utf-16-le", b"\xff\xfe"),
                             ("utf-16-le", b""), ("utf-16-be", b"\xfe\xff"), ("latin-1", b"")])
HEADERS = st.sampled_from(["x,y", "x;y", "x\ty", "x,y,w", "x;y;note", None])


def streamed(path, opts, chunk_rows):
    """(rows, x, y) from iter_chunks + chunk_columns, the way the streamed sweep reads."""
    rows, xs, ys = [], [], []
    for names, offset, chunk, sel in iter_chunks(path, {"x": 1, "y": 2}, chunk_rows=chunk_rows, **opts):
        x, y, _, keep, _ = chunk_columns(names, offset, chunk, sel, path.name, "skip")
        rows.append(chunk.rows[keep])
        xs.append(x)
        ys.append(y)
    cat = (lambda a: np.concatenate(a) if a else np.zeros(0))
    return cat(rows), cat(xs), cat(ys)


def outcome(fn):
    try:
        return fn(), None
    except CurvewrightError as exc:
        assert str(exc) and "\n" not in str(exc).replace("\\n", "")
        return None, str(exc)


def check_same(path, opts, chunk_rows):
    """read_table and the streamed readers agree on this file (values or message)."""
    t, err = outcome(lambda: read_table(path, x=1, y=2, blank_rows="skip", **opts))
    sc, err2 = outcome(lambda: scan_file(path, x=1, y=2, blank_rows="skip", chunk_rows=chunk_rows, **opts))
    assert err == err2
    if t is None:
        return
    rows, x, y = streamed(path, opts, chunk_rows)
    np.testing.assert_array_equal(rows, t.row_numbers)
    np.testing.assert_array_equal(x, t.x.values)
    np.testing.assert_array_equal(y, t.y.values)
    assert (sc.rows_used, sc.rows_dropped, sc.columns_sha256, sc.notices) == (
        t.n, t.rows_dropped, t.columns_sha256, t.notices)
    assert np.all(np.isfinite(t.x.values)) and np.all(np.isfinite(t.y.values))


@settings(max_examples=120, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(header=HEADERS, lines=st.lists(LINE, max_size=12), enc=ENCODINGS, chunk_rows=st.integers(1, 5),
       comment=st.sampled_from([None, "#"]), skip=st.integers(0, 2), no_header=st.booleans())
def test_csv_like_files_read_alike_streamed_or_whole(tmp_path, header, lines, enc, chunk_rows, comment, skip,
                                                     no_header):
    """Semicolons, commas in numbers, blank and comment lines, marks and UTF-16: the same reading both ways."""
    codec, bom = enc
    text = "\n".join(([header] if header else []) + lines) + "\n"
    try:
        data = bom + text.encode(codec)
    except UnicodeEncodeError:
        return
    path = tmp_path / "f.csv"
    path.write_bytes(data)
    check_same(path, {"comment": comment, "skip_rows": skip, "header": not no_header}, chunk_rows)


BYTES = st.one_of(
    st.binary(max_size=300),
    st.binary(max_size=150).map(lambda b: bytes(v for c in b for v in (c, 0))),            # UTF-16-like
    st.tuples(st.binary(max_size=150), st.booleans()).map(                                   # odd-length too
        lambda t: bytes(v for c in t[0] for v in (0, c))[:-1 if t[1] else None]),
    st.text(alphabet="0123456789,;.\n\r\t\"#xy ", max_size=200).map(lambda s: s.encode("utf-8")),
)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(data=BYTES, chunk_rows=st.integers(1, 4))
def test_random_bytes_raise_only_project_errors(tmp_path, data, chunk_rows):
    """Random bytes: a project error or a table, and the streamed reader agrees either way."""
    path = tmp_path / "f.csv"
    path.write_bytes(data)
    check_same(path, {}, chunk_rows)
