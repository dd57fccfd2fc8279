"""The fast reader of the streamed sweeps: the selected columns of delimited text converted by
pyarrow's CSV reader straight into float64, block by block, with no Python work per cell (Parquet
files are read in typed batches already, by ``core.columnar``).

It reads a file only as far as it can show that the careful reader (``core.textfile`` splitting
the records, ``core.cells`` deciding the numbers, through ``core.selection``) reads it the same
way, and raises ``Unsure`` at the first doubt: the caller then reads that file with the careful
reader, which gives its own numbers or its own message. What is shown, for each block of the
lines below the header:

* The bytes: UTF-8 or Latin-1 text (as the careful reader decided them; UTF-16 and UTF-32 go the
  careful way); no quote character, so every line is one record and every delimiter separates two
  cells; line breaks ``\\n`` or ``\\r\\n`` only (a lone ``\\r`` also ends a line for the careful
  reader); every line shorter than the careful reader's cap on a cell; no comment character at
  all when comment lines are left out.
* The rows: pyarrow leaves out empty lines, which the careful reader counts and skips too, so a
  record's spreadsheet row is its line number; when pyarrow returns fewer records than the block
  has lines, the empty lines are located and every other line must be a record. A line with
  another number of cells than the header is a pyarrow error, hence ``Unsure``.
* The numbers: every spelling pyarrow converts to a finite float64 with the column's decimal mark
  is one ``core.cells`` accepts, with the same value to the bit (tests/core/test_fastread.py
  enumerates the short spellings and compares long ones with Python's float()); empty cells and
  ``nan`` in any case are missing for both; any other NaN, and every problem of a value (infinite, too large, not
  positive), is left to the careful checks of ``core.selection``, which the scan still runs on the
  typed columns.
* The decimal marks of a semicolon-separated file: a block holding both a comma and a point is
  ``Unsure``; otherwise the block is converted with the mark it holds, and the first cell with a
  mark in each selected column is noted in the read's ``core.cells.Marks`` as the careful reader
  notes it (its notice is then the careful reader's; a column found with both marks is ``Unsure``).
"""

from __future__ import annotations

import csv
import itertools

import numpy as np

from .textfile import MAX_LINE_BYTES

__all__ = ["Unsure", "fast_chunks", "lean_numbers", "read_block", "block_bytes"]

_BOM = b"\xef\xbb\xbf"
# the spellings the careful reader reads as a missing value, besides the empty cell (it trims the
# cell first; a padded one reaches pyarrow's parser as NaN and is refused below)
_MISSING = [""] + ["".join(c) for c in itertools.product("nN", "aA", "nN")]
_MIN_BLOCK, _MAX_BLOCK = 1 << 16, 32 << 20


class Unsure(Exception):
    """The fast reader cannot show that it reads this file as the careful reader does."""


def block_bytes(chunk_rows: int) -> int:
    """Bytes of text read at a time for about ``chunk_rows`` rows (64 KiB to 32 MiB)."""
    return int(min(_MAX_BLOCK, max(_MIN_BLOCK, 32 * int(chunk_rows))))


def fast_chunks(src, columns, chunk_rows: int, marks=None):
    """Yield (spreadsheet rows, {column: pyarrow array}) of the data records, as ``src.chunks``
    does, or raise ``Unsure``. ``marks`` (the read's ``core.cells.Marks``) receives the decimal
    marks met in a semicolon-separated file."""
    kind = getattr(src, "kind", None)
    if kind == "parquet":
        yield from src.chunks(columns, chunk_rows)      # typed batches: the careful reader is fast here
    elif kind == "text":
        yield from _TextBlocks(src, list(dict.fromkeys(columns)), marks).chunks(block_bytes(chunk_rows))
    else:
        raise Unsure(f"a {kind} source")


def lean_numbers(cells: dict, names: dict):
    """(values of every role, mask of rows with a missing value) of typed columns, or None when a
    column holds text. The values are those ``core.cells`` gives (the same cast to float64, NaN
    where missing), without its checks: for a file the scan has already read and checked."""
    import pyarrow as pa
    import pyarrow.compute as pc

    vals, miss = {}, None
    for role, col in names.items():
        a = cells[col]
        t = a.type
        if not (pa.types.is_floating(t) or pa.types.is_integer(t) or pa.types.is_decimal(t)):
            return None
        v = np.asarray(pc.cast(a, pa.float64()).to_numpy(zero_copy_only=False), dtype=np.float64)
        vals[role] = v
        m = np.isnan(v)
        miss = m if miss is None else miss | m
    return vals, miss


def read_block(blk: bytes, names, types: dict, delimiter: str, decimal: str = "."):
    """pyarrow's reading of whole lines of records (no header) with the columns ``names``: the
    columns of ``types`` (name -> pyarrow type) converted with the decimal mark ``decimal``, empty
    cells and 'nan' in any case missing, quotes not special; ``Unsure`` when pyarrow refuses."""
    import pyarrow as pa
    import pyarrow.csv as pcsv

    try:
        return pcsv.read_csv(
            pa.BufferReader(blk),
            read_options=pcsv.ReadOptions(column_names=list(names), use_threads=True),
            parse_options=pcsv.ParseOptions(delimiter=delimiter, quote_char=False, double_quote=False,
                                            escape_char=False, newlines_in_values=False, ignore_empty_lines=True),
            convert_options=pcsv.ConvertOptions(column_types=types, include_columns=list(types), null_values=_MISSING,
                                                strings_can_be_null=False, quoted_strings_can_be_null=False,
                                                decimal_point=decimal))
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError) as exc:
        raise Unsure(str(exc)[:80]) from None


def _record(text: str, delimiter: str) -> list:
    """The cells of one line read alone; ``Unsure`` when its quotes may reach past the line."""
    if '"' not in text:
        return text.split(delimiter)
    try:
        return next(csv.reader([text], delimiter=delimiter, strict=True), [])
    except csv.Error:
        raise Unsure("quotes in the lines above the data") from None


def _blank(rec: list) -> bool:
    return not rec or (len(rec) == 1 and not rec[0].strip())


def _data_start(src) -> tuple[int, int]:
    """(byte offset, line number) of the first line below the header (of the first row without
    one), found by the careful reader's rules: skipped lines, comment lines and blank lines first."""
    codec = {"utf-8-sig": "utf-8", "latin-1": "latin-1"}.get(src.encoding)
    if codec is None:
        raise Unsure(f"{src.encoding} text")
    with src.path.open("rb") as fh:
        offset = line = 0
        while True:
            raw = fh.readline(MAX_LINE_BYTES + 2)
            if not raw:
                raise Unsure("no data records")
            start, offset, line = offset, offset + len(raw), line + 1
            skip = 3 if line == 1 and codec == "utf-8" and raw.startswith(_BOM) else 0
            body = raw[skip:]
            body = body[:-2] if body.endswith(b"\r\n") else body[:-1] if body.endswith(b"\n") else body
            if b"\r" in body:
                raise Unsure("a lone carriage return")
            if line <= src.skip_rows:
                continue
            try:
                text = body.decode(codec)
            except UnicodeDecodeError:
                raise Unsure("undecodable bytes") from None
            if src.comment and text.startswith(src.comment):
                continue
            rec = _record(text, src.delimiter)
            if _blank(rec):
                continue
            if src.header:
                if [c.strip() or str(i + 1) for i, c in enumerate(rec)] != list(src.columns):
                    raise Unsure("a header the careful reader names otherwise")
                return offset, line + 1
            if len(rec) != len(src.columns):
                raise Unsure("a first row of another width")
            return start + skip, line


def _blocks(path, offset: int, size: int):
    """The file's bytes from ``offset`` in blocks of whole lines (the last may lack its line break)."""
    with open(path, "rb") as fh:
        fh.seek(offset)
        tail = b""
        while True:
            data = fh.read(size)
            if not data:
                if tail:
                    yield tail
                return
            data = tail + data if tail else data
            cut = data.rfind(b"\n") + 1
            if cut == 0:
                tail = data                      # one line longer than a block (lines are capped)
                continue
            yield data[:cut]
            tail = data[cut:]


def _short_lines(blk: bytes, limit: int) -> None:
    """``Unsure`` unless every line is shorter than ``limit`` (so is every cell): each window of
    limit // 2 bytes must hold a line break (a longer line would cover one whole window)."""
    w = max(limit // 2, 1)
    for i in range(0, len(blk) - w + 1, w):
        if blk.find(b"\n", i, i + w) < 0:
            raise Unsure("a very long line")


def _record_lines(blk: bytes, first_line: int, n: int) -> np.ndarray:
    """Line numbers of the records of a block holding empty lines (pyarrow leaves those out)."""
    a = np.frombuffer(blk, dtype=np.uint8)
    ends = np.flatnonzero(a == 10)
    if not blk.endswith(b"\n"):
        ends = np.append(ends, a.size)
    starts = np.concatenate([[0], ends[:-1] + 1])
    length = ends - starts
    first = a[np.minimum(starts, a.size - 1)]
    empty = (length == 0) | ((length == 1) & (first == 13))
    rows = first_line + np.flatnonzero(~empty)
    if rows.size != n:
        raise Unsure("records that are not one a line")
    return rows.astype(np.int64)


class _TextBlocks:
    """The data records of a ``core.textfile.TextSource``, converted by pyarrow block by block."""

    def __init__(self, src, columns, marks):
        if len(src.columns) < 2:
            raise Unsure("a single column")
        if src.comment is not None and not src.comment.isascii():
            raise Unsure("a comment character outside ASCII")
        self.src, self.columns, self.marks = src, columns, marks
        self.comment = src.comment.encode() if src.comment else None
        self.offset, self.first_line = _data_start(src)
        self.limit = min(csv.field_size_limit(), MAX_LINE_BYTES)

    def chunks(self, size: int):
        line = self.first_line
        for blk in _blocks(self.src.path, self.offset, size):
            lines = blk.count(b"\n") + (0 if blk.endswith(b"\n") else 1)
            rows, cells = self._convert(blk, line, lines)
            line += lines
            if rows.size:
                yield rows, cells

    def _read(self, blk: bytes, types: dict, decimal: str):
        return read_block(blk, self.src.columns, types, self.src.delimiter, decimal)

    def _convert(self, blk: bytes, line: int, lines: int):
        import pyarrow as pa
        import pyarrow.compute as pc

        if b'"' in blk:
            raise Unsure("quotes")
        if b"\r" in blk and blk.count(b"\r") != blk.count(b"\r\n"):
            raise Unsure("a lone carriage return")
        if self.comment and self.comment in blk:
            raise Unsure("the comment character among the data")
        _short_lines(blk, self.limit)
        decimal = "."
        if self.src.comma_decimal:
            has_comma, has_point = b"," in blk, b"." in blk
            if has_comma and has_point:
                raise Unsure("both decimal marks in one block")
            decimal = "," if has_comma else "."
        table = self._read(blk, {c: pa.float64() for c in self.columns}, decimal)
        n = table.num_rows
        rows = np.arange(line, line + n, dtype=np.int64) if n == lines else _record_lines(blk, line, n)
        cells = {c: table.column(c) for c in self.columns}
        for a in cells.values():
            if a.null_count < len(a) and pc.sum(pc.is_nan(a)).as_py():
                raise Unsure("a NaN spelling the careful reader may refuse")
        if self.src.comma_decimal and self.marks is not None:
            self._note_marks(blk, cells, rows, decimal)
        return rows, cells

    def _note_marks(self, blk: bytes, cells: dict, rows: np.ndarray, decimal: str) -> None:
        """Note the first cell with the block's decimal mark in each selected column that had none yet."""
        import pyarrow as pa
        import pyarrow.compute as pc

        kind, mark = ("comma", ",") if decimal == "," else ("point", ".")
        want = [c for c in self.columns if kind not in self.marks.first.get(c, {})]
        if want and mark.encode() in blk:
            texts = self._read(blk, {c: pa.string() for c in want}, decimal)
            for c in want:
                i = pc.index(pc.match_substring(texts.column(c), mark), True).as_py()
                if i >= 0:
                    cell = texts.column(c)[i].as_py().strip()
                    self.marks.first.setdefault(c, {})[kind] = (int(rows[i]), cell, float(cells[c][i].as_py()))
        if any(len(self.marks.first.get(c, {})) == 2 for c in self.columns):
            raise Unsure("a column with both decimal marks")
