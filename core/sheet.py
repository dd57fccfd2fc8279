"""One worksheet of an .xlsx workbook, read row by row (openpyxl, read-only) with bounded work.

Rows are the sheet's own row numbers. Refused with a message: a file that is not a workbook, a
workbook that unpacks to more than ``MAX_UNZIPPED_BYTES``, a sheet of more than ``MAX_SHEET_ROWS``
rows, an empty sheet (naming the sheets that hold data), a title row above the header, numbers
where the header belongs, and formulas whose results were never stored in the file.
"""

from __future__ import annotations

import re
import warnings
import zipfile
from pathlib import Path

import numpy as np

from .cells import is_number
from .errors import DataError, message
from .textfile import describe_bytes

__all__ = ["SheetSource", "MAX_SHEET_ROWS", "MAX_UNZIPPED_BYTES"]

# The most rows a worksheet holds in the spreadsheet programs that write .xlsx; a sheet claiming
# more was not written by one, and reading it would only take time.
MAX_SHEET_ROWS = 1_048_576
# Unpacked size of all parts of the workbook: a sheet of a million rows of a few numbers unpacks to
# a few hundred MB; a small file that unpacks to much more is refused before it is parsed.
MAX_UNZIPPED_BYTES = 512 * 2**20
_LOOK_AHEAD = 20
_FORMULA = re.compile(rb"<(?:\w+:)?f[\s>/]")


def _formulas_in(z: zipfile.ZipFile) -> bool:
    """Whether any worksheet part holds a formula (scanned in blocks, never unpacked whole)."""
    for info in z.infolist():
        if info.filename.startswith("xl/worksheets/") and info.filename.endswith(".xml"):
            tail = b""
            with z.open(info) as fh:
                for block in iter(lambda: fh.read(1 << 20), b""):
                    if _FORMULA.search(tail + block):
                        return True
                    tail = block[-16:]
    return False


def _damaged(fname: str, where: str, exc: Exception) -> Exception:
    """The refusal of a workbook the parser could not read (an OSError of the system passes on)."""
    if isinstance(exc, OSError) and not isinstance(exc, zipfile.BadZipFile) and exc.errno is not None:
        return exc
    text = str(exc).split("\n")[0][:80] or type(exc).__name__
    return DataError(message(f"File '{fname}'{where}", "a readable .xlsx workbook", text,
                             "Open it in a spreadsheet program and save it again as .xlsx"))


def _blank(row) -> bool:
    return all(v is None or (isinstance(v, str) and not v.strip()) for v in row)


class SheetSource:
    """A worksheet opened for reading: ``columns``, ``notices``, ``first_row`` and ``chunks``."""

    kind = "sheet"
    comma_decimal = False

    def __init__(self, path, *, sheet=None, header: bool = True, skip_rows: int = 0, comment: str | None = None):
        self.path = Path(path)
        self.fname = self.path.name
        self.header, self.skip_rows, self.comment = header, skip_rows, comment
        self.notices: list = []
        self._check_container()
        import openpyxl

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            try:
                wb = openpyxl.load_workbook(self.path, read_only=True, data_only=True)
                names = list(wb.sheetnames)
                wb.close()
            except Exception as exc:  # the workbook parser raises many unrelated types for a damaged file
                raise _damaged(self.fname, "", exc) from None
        if not names:
            raise DataError(message(f"File '{self.fname}'", "a workbook with a sheet", "none"))
        if sheet is not None and str(sheet) not in names:
            raise DataError(message(f"File '{self.fname}' sheet '{sheet}'", "one of " + ", ".join(map(repr, names)),
                                    "no such sheet", "Pass --sheet with one of those names"))
        self.sheet = str(sheet) if sheet is not None else names[0]
        self._all_sheets = names
        self._open_header()

    def _check_container(self):
        with self.path.open("rb") as fh:
            head = fh.read(4096)
        if not head.startswith(b"PK"):
            other = describe_bytes(self.path, head)
            fix = other[1] if other else ("If it is a CSV or text file, give it the .csv extension"
                                          if head.strip() and b"\x00" not in head else None)
            raise DataError(message(f"File '{self.fname}'", "a readable .xlsx workbook",
                                    other[0] if other else "a file that is not a zip archive", fix))
        try:
            with zipfile.ZipFile(self.path) as z:
                size = sum(i.file_size for i in z.infolist())
                if size > MAX_UNZIPPED_BYTES:
                    raise DataError(message(f"File '{self.fname}'",
                                            f"a workbook of at most {MAX_UNZIPPED_BYTES // 2**20} MB unpacked",
                                            f"{size / 2**20:,.0f} MB",
                                            "Save the sheet as CSV (CSV files of any length are read)"))
                self._formulas = _formulas_in(z)
        except DataError:
            raise
        except Exception as exc:  # zipfile and zlib raise several types for a damaged archive
            if isinstance(exc, OSError) and not isinstance(exc, zipfile.BadZipFile) and exc.errno is not None:
                raise
            raise DataError(message(f"File '{self.fname}'", "a readable .xlsx workbook",
                                    "a damaged zip archive")) from None

    # ---- rows -----------------------------------------------------------------------------------

    def _rows(self):
        """(sheet row, values) of every row, lock-step with the formulas when the workbook has any."""
        import openpyxl

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            wb = openpyxl.load_workbook(self.path, read_only=True, data_only=True)
            wf = openpyxl.load_workbook(self.path, read_only=True, data_only=False) if self._formulas else None
        try:
            values = wb[self.sheet].iter_rows(values_only=True)
            forms = wf[self.sheet].iter_rows(values_only=True) if wf else None
            for n, row in enumerate(values, start=1):
                if n > MAX_SHEET_ROWS:
                    raise DataError(message(f"File '{self.fname}' sheet '{self.sheet}'",
                                            f"at most {MAX_SHEET_ROWS:,} rows", "more",
                                            "Save the sheet as CSV (CSV files of any length are read)"))
                if forms is not None:
                    self._stored(n, row, next(forms, ()))
                yield n, row
        except DataError:
            raise
        except Exception as exc:  # a damaged part shows only when it is read
            raise _damaged(self.fname, f" sheet '{self.sheet}'", exc) from None
        finally:
            wb.close()
            if wf:
                wf.close()

    def _stored(self, n, row, formulas):
        for j, (v, f) in enumerate(zip(row, formulas)):
            if v is None and isinstance(f, str) and f.startswith("="):
                from openpyxl.utils import get_column_letter

                raise DataError(message(f"File '{self.fname}' sheet '{self.sheet}' cell {get_column_letter(j + 1)}{n}",
                                        "a stored result of its formula", f"a formula without one ({f[:40]!r})",
                                        "Open the workbook in a spreadsheet program and save it there, so the "
                                        "results of formulas are stored in the file"))

    def _kept(self):
        """(row, values) of the rows after the skipped ones, without comment and blank rows."""
        for n, row in self._rows():
            if n <= self.skip_rows or _blank(row):
                continue
            if self.comment and isinstance(row[0], str) and row[0].startswith(self.comment):
                continue
            yield n, row

    def _open_header(self):
        it = self._kept()
        first = next(it, None)
        if first is None:
            raise self._empty()
        row, cells = first
        ahead = []
        for item in it:
            ahead.append(item)
            if len(ahead) >= _LOOK_AHEAD:
                break
        it.close()
        filled = [v for v in cells if v is not None and str(v).strip()]
        if self.header:
            wider = next((n for n, r in ahead if sum(v is not None for v in r) > max(len(filled), 1)), None)
            if len(filled) <= 1 and wider is not None:
                raise DataError(message(f"File '{self.fname}' sheet '{self.sheet}' row {row}",
                                        "a header row naming the columns",
                                        f"one cell ({str(filled[0]).strip()[:40]!r}) above rows with more cells",
                                        "If the rows above the header are a title or notes, pass "
                                        f"--skip-rows {wider - 1}"))
            if all(isinstance(v, (int, float)) and not isinstance(v, bool) or isinstance(v, str) and is_number(v)
                   for v in filled):
                shown = ", ".join(repr(v) for v in filled[:4]) + (", ..." if len(filled) > 4 else "")
                raise DataError(message(f"File '{self.fname}' sheet '{self.sheet}' row {row}",
                                        "a header row naming the columns", f"numbers only ({shown})",
                                        "Pass --no-header if the sheet has no header row (columns are then "
                                        "named 1, 2, ...)"))
        width = max((j + 1 for j, v in enumerate(cells) if v is not None and str(v).strip()), default=1)
        if not self.header:
            width = max([width] + [max((j + 1 for j, v in enumerate(r) if v is not None), default=1)
                                   for _, r in ahead])
            self.columns = [str(i + 1) for i in range(width)]
            self.first_row, self.header_row, self._data_from = row, None, row
        else:
            self.columns = self._names(cells[:width])
            self.first_row, self.header_row, self._data_from = row, row, row + 1

    def _names(self, cells) -> list[str]:
        names = [str(v).strip() if v is not None and str(v).strip() else str(i + 1) for i, v in enumerate(cells)]
        repeated = sorted({n for n in names if names.count(n) > 1})
        if repeated:
            raise DataError(message(f"File '{self.fname}' sheet '{self.sheet}' header", "distinct column names",
                                    "repeated " + ", ".join(repr(n) for n in repeated), "Rename the repeated columns"))
        return names

    def _empty(self) -> DataError:
        others = [s for s in self._all_sheets if s != self.sheet and self._has_data(s)]
        where = f"File '{self.fname}' sheet '{self.sheet}'"
        if others:
            return DataError(message(where, "a header row and data rows", "an empty sheet",
                                     "Sheets with data: " + ", ".join(map(repr, others))
                                     + "; pass --sheet with one of them"))
        return DataError(message(where, "a header row and data rows", "an empty sheet"))

    def _has_data(self, name) -> bool:
        import openpyxl

        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            wb = openpyxl.load_workbook(self.path, read_only=True, data_only=True)
        try:
            for n, row in enumerate(wb[name].iter_rows(values_only=True), start=1):
                if n > MAX_SHEET_ROWS:
                    return False
                if not _blank(row):
                    return True
            return False
        except Exception:  # a damaged sheet is not offered as one with data
            return False
        finally:
            wb.close()

    def check_types(self, columns) -> None:
        """Cell types are checked cell by cell (a sheet's column has no single type)."""

    def chunks(self, columns, chunk_rows: int):
        """Yield (row numbers, {column: list of cell values}) for the data rows, ``chunk_rows`` at a time."""
        idx = [self.columns.index(c) for c in columns]
        width = len(self.columns)
        rows, out, beyond = [], [[] for _ in idx], None
        try:
            for n, row in self._kept():
                if n < self._data_from:
                    continue
                if beyond is None and any(v is not None for v in row[width:]):
                    beyond = n
                    self.notices.append(f"File '{self.fname}' sheet '{self.sheet}': cells to the right of the last "
                                        f"named column were left out (first in row {n}).")
                rows.append(n)
                for k, i in enumerate(idx):
                    out[k].append(row[i] if i < len(row) else None)
                if len(rows) >= chunk_rows:
                    yield np.asarray(rows, dtype=np.int64), dict(zip(columns, out))
                    rows, out = [], [[] for _ in idx]
        except DataError:
            if rows:       # the rows before a refused one first: problems are met in row order
                yield np.asarray(rows, dtype=np.int64), dict(zip(columns, out))
            raise
        if rows:
            yield np.asarray(rows, dtype=np.int64), dict(zip(columns, out))
