"""One column's cells as numbers: the spellings accepted, the decimal mark of each column, and the
first cell that is not a usable number (with its row).

Accepted: ``12``, ``-3.5``, ``.5``, ``1e-3`` (ASCII digits only; no thousands separators). In a
semicolon-separated file a cell may also use a decimal comma (``3,1``, ``1.234,5``). The mark is
decided per column from that column's cells alone; a column holding both a decimal comma and a
decimal point is refused, naming a row of each. Empty cells and ``NaN`` are missing values.
"""

from __future__ import annotations

import datetime as _dt
import re

import numpy as np

from .validate import MAX_ABS

__all__ = ["Marks", "column_numbers", "is_number", "number_or_none"]

_POINT = r"[+-]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_COMMA = r"[+-]?(?:(?:[0-9]{1,3}(?:\.[0-9]{3})+|[0-9]+),[0-9]*|,[0-9]+)(?:[eE][+-]?[0-9]+)?"
_INF = r"[+-]?[iI][nN][fF](?:[iI][nN][iI][tT][yY])?"
_POINT_RE, _COMMA_RE = re.compile(_POINT, re.ASCII), re.compile(_COMMA, re.ASCII)
_GROUPED_POINT = re.compile(r"[+-]?[0-9]{1,3}(?:\.[0-9]{3})+", re.ASCII)
_GROUPED_COMMA = re.compile(r"[+-]?[0-9]{1,3}(?:,[0-9]{3})+(?:\.[0-9]*)?", re.ASCII)
_DATE_TEXT = re.compile(r"\d{4}-\d{1,2}-\d{1,2}([ T].*)?|\d{1,2}[./]\d{1,2}[./]\d{2,4}( .*)?|\d{1,2}:\d{2}(:\d{2})?",
                        re.ASCII)
_SHEET_ERRORS = ("#DIV/0!", "#N/A", "#VALUE!", "#REF!", "#NAME?", "#NUM!", "#NULL!", "#SPILL!", "#CALC!")
_DATES = (_dt.datetime, _dt.date, _dt.time, _dt.timedelta)


def _comma_value(text: str) -> float:
    return float(text.replace(".", "").replace(",", "."))


def number_or_none(text: str, comma_decimal: bool = False) -> float | None:
    """The number a cell's text spells (see module docstring), or None."""
    t = text.strip()
    if _POINT_RE.fullmatch(t):
        return float(t)
    if comma_decimal and _COMMA_RE.fullmatch(t):
        return _comma_value(t)
    return None


def is_number(text: str, comma_decimal: bool = False) -> bool:
    """Whether a cell's text spells a number (a decimal comma counts when ``comma_decimal``)."""
    return number_or_none(text, comma_decimal) is not None


class Marks:
    """The first cell with a decimal comma and with a decimal point of each column, for one read."""

    def __init__(self, fname: str, comma_decimal: bool):
        self.fname, self.comma_decimal = fname, comma_decimal
        self.first: dict = {}

    def notice(self, columns) -> str | None:
        """Which decimal mark each column was read with (semicolon-separated files only)."""
        if not self.comma_decimal:
            return None
        parts = []
        for c in dict.fromkeys(columns):
            seen = self.first.get(c, {})
            kind = ("a decimal comma" if "comma" in seen else "a decimal point" if "point" in seen
                    else "no decimal mark (whole numbers)")
            parts.append(f"'{c}' with {kind}")
        return f"File '{self.fname}' is semicolon-separated; read column " + ", ".join(parts) + "."

    def _mixed(self, column) -> str:
        from .errors import message

        def said(kind, row, cell, value):
            mark = "a decimal comma" if kind == "comma" else "a decimal point"
            other = ""
            if kind == "point" and _GROUPED_POINT.fullmatch(cell):
                other = f", or as {_comma_value(cell):.15g} if the point separates thousands"
            return row, f"{mark} in row {row} ({cell!r} reads as {value:.15g}{other})"
        seen = self.first[column]
        parts = sorted(said(k, *seen[k]) for k in ("comma", "point"))
        return message(f"File '{self.fname}' column '{column}'", "one decimal mark in the whole column",
                       " and ".join(p for _, p in parts), "Write every number in the column with the same mark")


def _shown(cell) -> str:
    """A cell for a message: quoted, and cut after 40 characters."""
    text = str(cell)
    return repr(text) if len(text) <= 40 else repr(text[:40]) + " ..."


def _bad_text_fix(cell: str, comma_decimal: bool) -> str:
    t = cell.strip()
    if "\n" in t or "\r" in t:
        return "An unclosed quote (\") joins the following lines into this cell: close it or remove it"
    if _DATE_TEXT.fullmatch(t):
        return "A date or time is not a number: convert the column to numbers (for example hours since the start) first"
    if t.upper() in _SHEET_ERRORS:
        return "The cell holds a spreadsheet error: correct the formula that produced it"
    if _GROUPED_COMMA.fullmatch(t) and not (comma_decimal and _COMMA_RE.fullmatch(t)):
        return "Write numbers without thousands separators"
    if not comma_decimal and _COMMA_RE.fullmatch(t):
        return ("Decimal commas are read in semicolon-separated files only: write the number with a decimal "
                "point")
    return "Correct the cell, or empty it if the value is missing"


def column_numbers(cells, rows: np.ndarray, column: str, marks: Marks):
    """(values, missing, problem) of one column of one chunk.

    ``cells`` is a list of cell texts, a list of spreadsheet values or a pyarrow array; ``rows``
    the spreadsheet row of each. ``problem`` is (row, message) of the first unusable cell, or None.
    """
    import pyarrow as pa

    if isinstance(cells, (pa.Array, pa.ChunkedArray)):
        return _arrow(cells, rows, column, marks)
    try:
        arr = pa.array(cells, type=pa.string())
    except (pa.ArrowInvalid, pa.ArrowTypeError):
        return _values(cells, rows, column, marks)
    return _text(arr, cells, rows, column, marks)


def _arrow(a, rows, column, marks):
    import pyarrow as pa
    import pyarrow.compute as pc

    if isinstance(a, pa.ChunkedArray):
        a = a.combine_chunks()
    if pa.types.is_dictionary(a.type):
        a = a.dictionary_decode()
    if pa.types.is_string(a.type) or pa.types.is_large_string(a.type):
        return _text(a.cast(pa.string()), None, rows, column, marks)
    # integers beyond 2^53 round to the nearest double, as the same digits written as text do (float()); a
    # "safe" cast would refuse them with an arrow error instead of a value
    vals = pc.cast(a, pa.float64(), safe=not pa.types.is_integer(a.type)).to_numpy(zero_copy_only=False)
    vals = vals.astype(np.float64, copy=True)
    miss = np.isnan(vals)
    return vals, miss, _limits(vals, rows, column, marks, lambda i: repr(float(vals[i])))


def _text(a, raw, rows, column, marks):
    """Cells as a pyarrow string array (``raw``: the original texts for messages, or None)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    t = pc.utf8_trim_whitespace(a)

    def mask(m):
        return np.asarray(pc.fill_null(m, False).to_numpy(zero_copy_only=False), dtype=bool)
    n = len(t)
    miss = np.asarray(pc.fill_null(pc.equal(t, ""), True).to_numpy(zero_copy_only=False), dtype=bool)
    miss |= mask(pc.equal(pc.utf8_lower(t), "nan"))
    point = mask(pc.match_substring_regex(t, f"^{_POINT}$"))
    comma = mask(pc.match_substring_regex(t, f"^{_COMMA}$")) if marks.comma_decimal else np.zeros(n, bool)
    inf = mask(pc.match_substring_regex(t, f"^{_INF}$"))
    vals = np.full(n, np.nan)
    if point.any():
        vals[point] = pc.cast(pc.filter(t, pa.array(point)), pa.float64()).to_numpy(zero_copy_only=False)
    if comma.any():
        s = pc.filter(t, pa.array(comma))
        s = pc.replace_substring(pc.replace_substring(s, ".", ""), ",", ".")
        vals[comma] = pc.cast(s, pa.float64()).to_numpy(zero_copy_only=False)
    if inf.any():
        neg = mask(pc.starts_with(t, "-"))
        vals[inf] = np.where(neg[inf], -np.inf, np.inf)

    def cell(i):
        return raw[i] if raw is not None else a[int(i)].as_py()
    problems = []
    bad = np.flatnonzero(~(miss | point | comma | inf))
    if bad.size:
        i = int(bad[0])
        problems.append((int(rows[i]), _number_message(column, rows[i], _shown(cell(i)),
                                                         _bad_text_fix(cell(i), marks.comma_decimal), marks)))
    if marks.comma_decimal:
        dot = point & mask(pc.match_substring_regex(t, r"\."))
        seen = marks.first.setdefault(column, {})
        for kind, m in (("comma", comma), ("point", dot)):
            if kind not in seen and m.any():
                i = int(np.flatnonzero(m)[0])
                seen[kind] = (int(rows[i]), str(cell(i)).strip(), float(vals[i]))
        if len(seen) == 2:
            row = max(seen["comma"][0], seen["point"][0])
            if row >= rows[0]:
                problems.append((row, marks._mixed(column)))
    lim = _limits(vals, rows, column, marks, lambda i: _shown(cell(i)))
    if lim:
        problems.append(lim)
    return vals, miss, min(problems) if problems else None


def _values(cells, rows, column, marks):
    """Cells as spreadsheet values: numbers, texts, None, dates, true/false."""
    n = len(cells)
    vals, miss = np.full(n, np.nan), np.zeros(n, dtype=bool)
    first_bad = None
    texts = []
    for i, v in enumerate(cells):
        if v is None:
            miss[i] = True
        elif isinstance(v, str):
            texts.append(i)
        elif isinstance(v, (bool, np.bool_)):
            first_bad = first_bad or (i, f"{str(v).upper()} (a true/false cell)", "Enter numbers in the column")
        elif isinstance(v, (int, float, np.integer, np.floating)):
            try:
                f = float(v)
            except OverflowError:
                f = np.inf
            if f != f:
                miss[i] = True
            else:
                vals[i] = f
        elif isinstance(v, _DATES):
            first_bad = first_bad or (i, f"{v} (a date or time)",
                                      "Convert the column to numbers (for example hours since the start) first")
        else:
            first_bad = first_bad or (i, _shown(v), "Correct the cell")
    problems = []
    if first_bad:
        i, got, fix = first_bad
        problems.append((int(rows[i]), _number_message(column, rows[i], got, fix, marks)))
    if texts:
        idx = np.asarray(texts)
        sub = [cells[i] for i in texts]
        import pyarrow as pa

        v, m, p = _text(pa.array(sub, type=pa.string()), sub, rows[idx], column, marks)
        vals[idx], miss[idx] = v, m
        if p:
            problems.append(p)
    lim = _limits(vals, rows, column, marks,
                  lambda i: _shown(cells[i]) if isinstance(cells[i], str) else f"{vals[i]:g}")
    if lim:
        problems.append(lim)
    return vals, miss, min(problems) if problems else None


def _number_message(column, row, got, fix, marks) -> str:
    from .errors import message

    return message(f"File '{marks.fname}' column '{column}' row {int(row)}", "a number", got, fix)


def _limits(vals, rows, column, marks, shown):
    """(row, message) of the first infinite or absurdly large value, or None."""
    from .errors import message

    where = f"File '{marks.fname}' column '{column}' row"
    inf = np.flatnonzero(np.isinf(vals))
    with np.errstate(invalid="ignore"):
        big = np.flatnonzero(np.isfinite(vals) & (np.abs(vals) > MAX_ABS))
    out = []
    if inf.size:
        i = int(inf[0])
        out.append((int(rows[i]), message(f"{where} {int(rows[i])}", "a finite number", shown(i),
                                          "Replace infinite values or remove the row")))
    if big.size:
        i = int(big[0])
        out.append((int(rows[i]), message(f"{where} {int(rows[i])}", f"|value| <= {MAX_ABS:g}", f"{vals[i]:g}",
                                          "Rescale the column (change its unit)")))
    return min(out) if out else None
