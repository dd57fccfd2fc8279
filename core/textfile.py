"""Delimited text (comma, semicolon or tab): what the bytes are, their encoding, the delimiter,
the header, and every record with the row number a spreadsheet shows for it.

Rows are counted as a spreadsheet counts them: every line is a row (blank lines, lines
skipped with ``skip_rows`` and comment lines too); a record whose quoted cell spans several
lines is one row. Work and memory per line are bounded by ``MAX_LINE_BYTES``.
"""

from __future__ import annotations

import codecs
import csv
import io
import zipfile
from pathlib import Path

from .cells import is_number
from .errors import DataError, message

__all__ = ["MAX_LINE_BYTES", "TextSource", "describe_bytes"]

# A line of a table holds a few numbers and words; a line of a megabyte is not a row of a table
# (a file without line breaks, or a binary file): the file is refused before it is parsed, so
# work and memory per line stay bounded.
MAX_LINE_BYTES = 1_048_576
SNIFF_LINES = 20                     # lines looked at to choose the delimiter
HEAD_BYTES = 65536                   # bytes looked at to recognise the kind of file
_DELIMITERS = ("\t", ";", ",")       # preference when several fit every sampled line
NAMES = {",": "comma", ";": "semicolon", "\t": "tab"}

_MAGIC = (
    (b"\x1f\x8b", "gzip-compressed data", "Decompress it first (for example with gunzip) and read the file inside"),
    (b"BZh", "bzip2-compressed data", "Decompress it first and read the file inside"),
    (b"\xfd7zXZ\x00", "xz-compressed data", "Decompress it first and read the file inside"),
    (b"\x28\xb5\x2f\xfd", "zstd-compressed data", "Decompress it first and read the file inside"),
    (b"7z\xbc\xaf\x27\x1c", "a 7z archive", "Unpack it and read the file inside"),
    (b"PAR1", "a Parquet file", "Give it the .parquet extension"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1", "an old-style .xls workbook",
     "Save it as .xlsx or as CSV from the spreadsheet program"),
    (b"%PDF", "a PDF document", "Export the table as CSV from the program that made it"),
)


def describe_bytes(path: Path, head: bytes) -> tuple[str, str] | None:
    """(what the file is, what to do) when its first bytes show it is not a text table, else None."""
    if head.startswith((b"PK\x03\x04", b"PK\x05\x06")):
        try:
            with zipfile.ZipFile(path) as z:
                names = set(z.namelist())
        except (zipfile.BadZipFile, OSError, ValueError):
            names = set()
        if "xl/workbook.xml" in names:
            return "an .xlsx workbook", "Give it the .xlsx extension (or save the sheet as CSV)"
        if "content.xml" in names and "mimetype" in names:
            return "an OpenDocument spreadsheet", "Save it as .xlsx or as CSV from the spreadsheet program"
        return "a zip archive", "Unpack it and read the file inside"
    for magic, what, fix in _MAGIC:
        if head.startswith(magic):
            return what, fix
    return None


def _utf16_without_mark(head: bytes) -> str | None:
    """'utf-16-le'/'utf-16-be' when every other byte of the start is NUL (text with no byte-order mark)."""
    sample = head[:4096]
    sample = sample[:len(sample) - len(sample) % 2]
    if len(sample) < 4:
        return None
    even, odd = sample[0::2], sample[1::2]
    if odd.count(0) >= 0.4 * len(odd) and even.count(0) <= 0.05 * len(even):
        return "utf-16-le"
    if even.count(0) >= 0.4 * len(even) and odd.count(0) <= 0.05 * len(odd):
        return "utf-16-be"
    return None


def _line_too_long(name: str, line: int) -> DataError:
    return DataError(message(f"File '{name}' line {line}", f"lines of at most {MAX_LINE_BYTES:,} bytes",
                             "a longer line", "A table has short lines: check that this is the data file and that "
                             "its lines end with line breaks"))


def _scan_bytes(path: Path, *, utf8: bool, nul: bool) -> bool:
    """One pass over the bytes in blocks: refuse a line longer than MAX_LINE_BYTES (and, with
    ``nul``, a NUL byte), naming its line; return whether the bytes are UTF-8 (when ``utf8``)."""
    import numpy as np

    dec = codecs.getincrementaldecoder("utf-8")() if utf8 else None
    is_utf8, pos, last, lines = utf8, 0, -1, 0
    with path.open("rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            if is_utf8:
                try:
                    dec.decode(block)
                except UnicodeDecodeError:
                    is_utf8 = False
            a = np.frombuffer(block, dtype=np.uint8)
            if nul and b"\x00" in block:
                at = block.index(b"\x00")
                raise DataError(message(f"File '{path.name}' line {lines + int(np.count_nonzero(a[:at] == 10)) + 1}",
                                        "text", "binary data (NUL bytes)", "Check that this is the data file"))
            breaks = np.flatnonzero((a == 10) | (a == 13)) + pos
            ends = np.concatenate([breaks, [pos + a.size]])
            gaps = np.diff(np.concatenate([[last], ends])) - 1
            long = np.flatnonzero(gaps > MAX_LINE_BYTES)
            if long.size:                       # a whole line, or the unfinished last one, is too long
                start = (last if long[0] == 0 else breaks[long[0] - 1]) + 1 - pos
                raise _line_too_long(path.name, lines + int(np.count_nonzero(a[:max(start, 0)] == 10)) + 1)
            if breaks.size:
                last = int(breaks[-1])
            lines += int(np.count_nonzero(a == 10))
            pos += a.size
    if is_utf8:
        try:
            dec.decode(b"", final=True)
        except UnicodeDecodeError:
            is_utf8 = False
    return is_utf8


def _encoding(path: Path, head: bytes) -> tuple[str, str | None]:
    """(codec, notice or None): byte-order marks, UTF-16 by its NUL pattern, UTF-8, else Latin-1.
    Every line is checked against the length cap on the way."""
    name = path.name
    wide = None
    if head.startswith((b"\xff\xfe\x00\x00", b"\x00\x00\xfe\xff")):
        wide = "utf-32", f"File '{name}' is UTF-32 text (it starts with a byte-order mark); read it as such."
    elif head.startswith((b"\xff\xfe", b"\xfe\xff")):
        wide = "utf-16", f"File '{name}' is UTF-16 text (it starts with a byte-order mark); read it as such."
    elif _utf16_without_mark(head):
        wide = _utf16_without_mark(head), (f"File '{name}' is UTF-16 text without a byte-order mark (every other "
                                           "byte is zero); read it as such.")
    if wide:
        _scan_bytes(path, utf8=False, nul=False)
        return wide
    if b"\x00" in head:
        raise DataError(message(f"File '{name}'", "a text table (CSV, semicolon- or tab-separated)",
                                "binary data (NUL bytes)", "Check that this is the data file; export it as CSV"))
    if _scan_bytes(path, utf8=True, nul=True):
        return "utf-8-sig", None
    if head.startswith(b"\xef\xbb\xbf"):
        raise DataError(message(f"File '{name}'", "UTF-8 text throughout (it starts with a UTF-8 mark)",
                                "bytes that are not UTF-8", "Save the file again as UTF-8"))
    return "latin-1", f"File '{name}' is not UTF-8; read it as Latin-1."


class _Lines:
    """The file's lines after the skipped ones, comment lines left out (for the first lines and
    for files with comment lines; other files are read by the csv module directly).

    ``dropped`` counts the lines skipped or left out so far (they still count as rows)."""

    def __init__(self, source: "TextSource", fh):
        self.source, self.fh, self.dropped, self.line = source, fh, 0, 0

    def __iter__(self):
        src, fh = self.source, self.fh
        comment = src.comment
        while True:
            line = fh.readline(MAX_LINE_BYTES + 2)
            if not line:
                return
            self.line += 1
            if self.line <= src.skip_rows or (comment and line.startswith(comment)):
                self.dropped += 1
                continue
            yield line


class _Skipped:
    """The line count of a file read by the csv module directly: only the skipped lines."""

    def __init__(self, dropped: int):
        self.dropped = dropped


class TextSource:
    """A delimited text file opened for reading: ``columns``, ``delimiter``, ``notices``,
    ``first_row`` (row of the header, or of the first row when there is none) and ``chunks``."""

    kind = "text"

    def __init__(self, path, *, header: bool = True, skip_rows: int = 0, comment: str | None = None):
        self.path = Path(path)
        self.fname = self.path.name
        self.skip_rows, self.comment, self.header = skip_rows, comment, header
        with self.path.open("rb") as fh:
            head = fh.read(HEAD_BYTES)
        if not head.strip():
            raise DataError(message(f"File '{self.fname}'", "a header row and data rows", "an empty file"))
        other = describe_bytes(self.path, head)
        if other:
            raise DataError(message(f"File '{self.fname}'", "a text table (CSV, semicolon- or tab-separated)",
                                    other[0], other[1]))
        self.encoding, notice = _encoding(self.path, head)
        self.notices = [notice] if notice else []
        sample = self._sample()
        self.delimiter = _delimiter([ln for _, ln in sample])
        self.comma_decimal = self.delimiter == ";"
        first = next(csv.reader([sample[0][1]], delimiter=self.delimiter))
        self._check_first_line(sample, first)
        self.columns = self._names(first)

    # ---- opening ------------------------------------------------------------------------------

    def _open(self):
        return io.TextIOWrapper(self.path.open("rb"), encoding=self.encoding, newline="")

    def _sample(self) -> list[tuple[int, str]]:
        """(line number, line) of the first non-blank lines after skipped and comment lines."""
        out, blank_or_dropped = [], False
        with self._open() as fh:
            lines = _Lines(self, fh)
            try:
                for line in lines:
                    if line.strip():
                        out.append((lines.line, line))
                        if len(out) >= SNIFF_LINES:
                            break
            except UnicodeDecodeError as exc:
                raise self._refused_row(exc, lines.line + 1) from None
            blank_or_dropped = lines.dropped > 0
        if not out:
            if blank_or_dropped:
                raise DataError(message(f"File '{self.fname}'", "a header row and data rows",
                                        "only skipped or comment lines", "Lower --skip-rows or check --comment"))
            raise DataError(message(f"File '{self.fname}'", "a header row and data rows", "an empty file"))
        return out

    def _check_first_line(self, sample, first):
        """Refuse a first line that is a title, a comment or numbers where column names belong."""
        row = sample[0][0]
        if not self.header:
            return
        filled = [c for c in first if c.strip()]
        wider = next((n for n, ln in sample[1:]
                      if sum(1 for c in next(csv.reader([ln], delimiter=self.delimiter)) if c.strip())
                      > max(len(filled), 1)), None)
        if len(filled) <= 1 and wider is not None:
            text = filled[0].strip() if filled else ""
            if text[:1] and text[0] in "#%!*/" and not self.comment:
                fix = f"Pass --comment '{text[0]}' to leave out the lines that start with it"
            else:
                fix = f"If the lines above the header are a title or notes, pass --skip-rows {wider - 1}"
            raise DataError(message(f"File '{self.fname}' row {row}", "a header row naming the columns",
                                    f"one cell ({text[:40]!r}) above rows with more cells", fix))
        if filled and len(filled) == len(first) and all(is_number(c, self.comma_decimal) for c in first):
            shown = ", ".join(repr(c.strip()) for c in first[:4]) + (", ..." if len(first) > 4 else "")
            raise DataError(message(f"File '{self.fname}' row {row}", "a header row naming the columns",
                                    f"numbers only ({shown})",
                                    "Pass --no-header if the file has no header row (columns are then named "
                                    "1, 2, ...)"))

    def _names(self, first) -> list[str]:
        if not self.header:
            return [str(i + 1) for i in range(len(first))]
        names = [c.strip() or str(i + 1) for i, c in enumerate(first)]
        seen, repeated = set(), []
        for n in names:
            if n in seen and n not in repeated:
                repeated.append(n)
            seen.add(n)
        if repeated:
            raise DataError(message(f"File '{self.fname}' header", "distinct column names",
                                    "repeated " + ", ".join(repr(n) for n in repeated), "Rename the repeated columns"))
        return names

    # ---- reading ------------------------------------------------------------------------------

    def check_types(self, columns) -> None:
        """Every cell of a text file is text; numbers are read cell by cell."""

    def _reader(self, fh):
        """(csv reader, line counter): comment lines need a line filter; otherwise the skipped
        lines are read here and the csv module reads the rest of the file itself."""
        if self.comment:
            lines = _Lines(self, fh)
            return csv.reader(lines, delimiter=self.delimiter), lines
        for _ in range(self.skip_rows):
            if not fh.readline(MAX_LINE_BYTES + 2):
                break
        return csv.reader(fh, delimiter=self.delimiter), _Skipped(self.skip_rows)

    def _refused_row(self, exc, row) -> DataError:
        if isinstance(exc, UnicodeDecodeError):
            return DataError(message(f"File '{self.fname}' row {row}", f"text in the file's encoding ({self.encoding})",
                                     "bytes that do not decode", "Save the file again as UTF-8"))
        text = str(exc)
        if "field larger than field limit" in text:
            return DataError(message(f"File '{self.fname}' row {row}",
                                     f"cells of at most {csv.field_size_limit():,} characters", "a longer cell",
                                     "An unclosed quote (\") joins the following lines into one cell: "
                                     "close it or remove it"))
        return DataError(message(f"File '{self.fname}' row {row}", "a readable row", text,
                                 "Check the quoting of that row"))

    def chunks(self, columns, chunk_rows: int):
        """Yield (row numbers, {column: list of cell texts}) for the data records, ``chunk_rows`` at a time.

        A row the file cannot be read past is refused only after the rows before it have been
        yielded, so problems are met in row order whatever the chunk size."""
        width = len(self.columns)
        idx = [self.columns.index(c) for c in columns]
        # cells go straight into one list per column: strings are not tracked by the garbage
        # collector, lists of records would be (and slow the read several times over)
        rows, cols, header_row, n = [], [[] for _ in idx], None, 0
        pairs = list(zip(cols, idx))
        with self._open() as fh:
            reader, count = self._reader(fh)
            try:
                for rec in reader:
                    n += 1
                    if len(rec) != width or width == 1:
                        if not rec or (len(rec) == 1 and not rec[0].strip()):
                            continue                                  # a blank line: counted, not read
                    if self.header and header_row is None:
                        header_row = n + count.dropped
                        continue
                    if len(rec) != width:
                        raise self._ragged(n + count.dropped, len(rec), header_row)
                    rows.append(n + count.dropped)
                    for col, i in pairs:
                        col.append(rec[i])
                    if len(rows) >= chunk_rows:
                        yield self._chunk(rows, cols, columns)
                        rows, cols = [], [[] for _ in idx]
                        pairs = list(zip(cols, idx))
            except (DataError, csv.Error, UnicodeDecodeError) as exc:
                if rows:
                    yield self._chunk(rows, cols, columns)
                if isinstance(exc, DataError):
                    raise
                raise self._refused_row(exc, n + count.dropped + 1) from None
        if rows:
            yield self._chunk(rows, cols, columns)

    @staticmethod
    def _chunk(rows, cols, columns):
        import numpy as np

        return np.asarray(rows, dtype=np.int64), dict(zip(columns, cols))

    def _ragged(self, row, got, header_row) -> DataError:
        width = len(self.columns)
        like = f"the header (row {header_row})" if header_row else "the first row"
        fix = "Check the delimiter and the quoting of that row"
        if got > width:
            fix = ("A thousands separator (1,234.5) or an unquoted delimiter in a text cell splits a cell in two: "
                   "check the delimiter and the quoting of that row")
        return DataError(message(f"File '{self.fname}' row {row}",
                                 f"{width} {NAMES[self.delimiter]}-separated fields like {like}", got, fix))


def _delimiter(lines: list[str]) -> str:
    """The delimiter: of tab, semicolon and comma, the first (in that order) that splits every sampled
    line into the same number (> 1) of fields; failing that, the most frequent in the first line."""
    for d in _DELIMITERS:
        try:
            counts = {len(next(csv.reader([ln], delimiter=d))) for ln in lines}
        except (csv.Error, StopIteration):
            continue
        if len(counts) == 1 and counts.pop() > 1:
            return d
    first = lines[0]
    best = max((",", ";", "\t"), key=first.count)
    return best if first.count(best) else ","
