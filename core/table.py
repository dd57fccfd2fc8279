"""Reading a user's table into validated columns; every problem names file, row and column.

Rows are numbered as a spreadsheet shows them: the header is row 1 and every line counts,
blank lines, skipped lines and comment lines included. The readers of each format live in
``core.textfile`` (CSV, semicolon, tab), ``core.sheet`` (.xlsx) and ``core.columnar``
(Parquet); ``core.selection`` turns the selected columns into numbers for this module and for
the streamed reader (``core.stream``) alike, so both read a file the same way.
"""

from __future__ import annotations

import hashlib
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import DataError, message
from .selection import Selection, check_positive
from .validate import require_spread as spread

__all__ = ["Table", "Column", "read_table", "read_frame", "open_source", "column_names", "pick_column",
           "exclude_rows", "check_positive", "columns_digest", "unit_of", "file_sha256", "READ_ROWS"]

READ_ROWS = 65_536           # rows parsed at a time when a whole file is read

_UNIT = re.compile(r"^\s*(?P<name>.*?)\s*[\[(](?P<unit>[^\])]+)[\])]\s*$")


def unit_of(header: str) -> str | None:
    """Unit written in a header such as ``load [kN]`` or ``T (degC)``, else None."""
    m = _UNIT.match(str(header))
    return m.group("unit").strip() if m else None


@dataclass(frozen=True)
class Column:
    name: str
    unit: str | None
    values: np.ndarray = field(repr=False)


@dataclass(frozen=True)
class Table:
    """Selected, validated columns of one file, with an audit fingerprint."""

    path: str
    x: Column
    y: Column | None
    weights: np.ndarray | None = field(repr=False)
    weight_column: str | None
    groups: np.ndarray | None = field(repr=False)
    folds: np.ndarray | None = field(repr=False)
    rows_read: int
    rows_dropped: list = field(repr=False)
    file_sha256: str
    columns_sha256: str
    notices: tuple = ()
    group_column: str | None = None
    fold_column: str | None = None
    weight_kind: str | None = None
    row_numbers: np.ndarray | None = field(default=None, repr=False)   # spreadsheet row of each kept row
    excluded_rows: tuple = ()
    transforms: tuple = ("none", "none")    # x and y as given in the file were transformed by these
    raw_x: np.ndarray | None = field(default=None, repr=False)   # x as in the file, when transformed


    @property
    def n(self) -> int:
        return int(self.x.values.size)

    def fingerprint(self) -> dict:
        xv = self.x.values
        return {"file_sha256": self.file_sha256, "columns_sha256": self.columns_sha256,
                "rows": self.n, "x_min": float(xv.min()), "x_max": float(xv.max())}


def exclude_rows(table: "Table", rows) -> "Table":
    """The table without the given spreadsheet rows (header = row 1); recorded, never silent.

    Raises
    ------
    DataError
        A row number that is not a data row of the table.
    """
    import dataclasses

    rows = sorted({int(r) for r in rows})
    if not rows:
        return table
    have = set(table.row_numbers.tolist())
    missing = [r for r in rows if r not in have]
    if missing:
        raise DataError(message(f"Option --exclude row {missing[0]}", "a data row of the table (header is row 1)",
                                "no such row", "Give spreadsheet row numbers of rows that were read"))
    keep = ~np.isin(table.row_numbers, rows)

    def cut(a):
        return None if a is None else a[keep]
    return dataclasses.replace(
        table, x=dataclasses.replace(table.x, values=table.x.values[keep]),
        y=None if table.y is None else dataclasses.replace(table.y, values=table.y.values[keep]),
        weights=cut(table.weights), groups=cut(table.groups), folds=cut(table.folds),
        row_numbers=table.row_numbers[keep], excluded_rows=tuple(rows))


def transform_table(table: "Table", x_transform: str = "none", y_transform: str = "none") -> "Table":
    """The table with x and y replaced by their transforms (``core.transforms``), or a refusal naming the
    first row a transform cannot take. The fingerprint stays that of the file's own columns."""
    import dataclasses

    from .transforms import apply, get

    tx, ty = get(x_transform), get(y_transform)
    if tx.identity and ty.identity:
        return table
    if not ty.identity and table.weight_kind == "uncertainty":
        raise DataError(message("Option --y-transform", "no stated uncertainties (they are in y's own units)",
                                f"--uncertainty with the {ty.name} transform",
                                "Give relative weights (--weights) for the transformed y, or leave y untransformed"))
    name = Path(table.path).name
    x = apply(tx, table.x.values, column=table.x.name, file=name, rows=table.row_numbers)
    y = table.y
    if y is not None:
        y = dataclasses.replace(y, values=apply(ty, y.values, column=y.name, file=name, rows=table.row_numbers))
    return dataclasses.replace(table, x=dataclasses.replace(table.x, values=x), y=y,
                               transforms=(tx.name, ty.name), raw_x=table.x.values)


def columns_digest(digests: dict) -> str:
    """Fingerprint of the selected columns' values: SHA-256 over "role:<sha256 of the role's
    float64 values, little-endian, in row order>" lines for the roles present, in the order
    x, y, weights, uncertainty. Streaming readers update the per-role hashes chunk by chunk."""
    h = hashlib.sha256()
    for role in ("x", "y", "weights", "uncertainty"):
        if role in digests:
            h.update(f"{role}:{digests[role].hexdigest()}\n".encode())
    return h.hexdigest()


def pick_column(columns, spec, role: str, fname: str) -> str:
    """The column meant by ``spec``: exact name, 1-based position, or bare name of 'name [unit]'."""
    cols = [str(c) for c in columns]
    if spec is None:
        raise DataError(message(f"Column for {role}", "a column name or 1-based position", "none"))
    s = str(spec)
    if s in cols:
        if s.isdigit() and 1 <= int(s) <= len(cols) and cols[int(s) - 1] != s:
            raise DataError(message(f"Column '{s}' ({role}) in '{fname}'", "one meaning",
                                    f"both the column named '{s}' (position {cols.index(s) + 1}) and the column "
                                    f"at position {s} ('{cols[int(s) - 1]}')",
                                    f"Pass --{role} with the name of the column you mean"))
        return s
    if s.isdigit() and 1 <= int(s) <= len(cols):
        return cols[int(s) - 1]
    bare = {re.sub(r"\s*[\[(].*$", "", c).strip(): c for c in cols}
    if s in bare:
        return bare[s]
    raise DataError(message(f"Column '{s}' ({role}) in '{fname}'", "one of " + ", ".join(repr(c) for c in cols),
                            "no such column", "Pass --" + role + " with a column name or position"))




def _check_options(header, skip_rows, comment, sheet, suffix) -> None:
    """The reader options, checked before the file is opened (one wording for page and command line)."""
    if not isinstance(header, (bool, np.bool_)):
        raise DataError(message("Option --no-header", "True or False", repr(header)))
    if isinstance(skip_rows, bool) or not isinstance(skip_rows, (int, np.integer)) or skip_rows < 0:
        raise DataError(message("Option --skip-rows", "a whole number >= 0", repr(skip_rows)))
    if comment is not None and (not isinstance(comment, str) or len(comment) != 1
                                or comment in "0123456789+-.,;\t\"' \r\n"):
        raise DataError(message("Option --comment", "one character that cannot start a row of data "
                                "(not a digit, sign, point, quote, space or delimiter)", repr(comment)))
    if sheet is not None and suffix not in (".xlsx", ".xlsm"):
        raise DataError(message("Option --sheet", "an .xlsx workbook", f"a {suffix or 'text'} file",
                                "Leave out --sheet for this file"))


def open_source(path, *, sheet=None, header: bool = True, skip_rows: int = 0, comment: str | None = None):
    """The reader for one file by its extension: .xlsx/.xlsm, .parquet, else delimited text.

    The source has ``fname``, ``columns``, ``notices``, ``comma_decimal``, ``check_types(columns)``
    and ``chunks(columns, chunk_rows)`` yielding (spreadsheet rows, {column: cells}).
    """
    path = Path(path)
    suffix = path.suffix.lower()
    _check_options(header, skip_rows, comment, sheet, suffix)
    if not path.exists():
        raise DataError(message(f"File '{path}'", "an existing file", "nothing at that path"))
    if suffix in (".xlsx", ".xlsm"):
        from .sheet import SheetSource

        return SheetSource(path, sheet=sheet, header=bool(header), skip_rows=int(skip_rows), comment=comment)
    if suffix == ".parquet":
        from .columnar import ParquetSource

        used = [o for o, on in (("--no-header", not header), ("--skip-rows", skip_rows), ("--comment", comment)) if on]
        if used:
            raise DataError(message(f"Option {used[0]}", "a text file or a sheet", "a Parquet file",
                                    "Parquet files name their columns themselves: leave the option out"))
        return ParquetSource(path)
    from .textfile import TextSource

    return TextSource(path, header=bool(header), skip_rows=int(skip_rows), comment=comment)


def column_names(path, **options) -> list[str]:
    """The column names of a file (as ``read_table`` would name them), reading only its start."""
    return list(open_source(path, **options).columns)


def file_sha256(path) -> str:
    """SHA-256 of the file's bytes, read in blocks."""
    h = hashlib.sha256()
    with Path(path).open("rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def read_frame(path, *, sheet=None, header: bool = True, skip_rows: int = 0, comment: str | None = None):
    """(every column of the data rows as a pandas frame indexed by spreadsheet row, notices).

    Cells are as read: texts for text files, the sheet's values, Parquet's typed columns."""
    import pandas as pd

    src = open_source(path, sheet=sheet, header=header, skip_rows=skip_rows, comment=comment)
    parts = []
    for rows, cells in src.chunks(src.columns, READ_ROWS):
        cols = {}
        for c, v in cells.items():
            cols[c] = v.to_pandas() if hasattr(v, "to_pandas") else pd.Series(v, dtype=object)
            cols[c].index = rows
        parts.append(pd.DataFrame(cols, columns=src.columns))
    frame = pd.concat(parts) if parts else pd.DataFrame(columns=src.columns)
    return frame, tuple(src.notices)


def read_table(path, *, x, y=None, weights=None, uncertainty=None, group=None, fold=None,
               blank_rows: str = "refuse", sheet=None, require_spread: bool = True, header: bool = True,
               skip_rows: int = 0, comment: str | None = None, x_option: str = "x") -> Table:
    """Read one file and select its columns.

    Parameters
    ----------
    path : str or Path
        Comma-, semicolon- or tab-separated text (delimiter and each column's decimal mark
        detected), .xlsx or .parquet. See docs/file-formats.md for the rules.
    x, y : str or int
        Column name (or 1-based position; a bare name also finds ``name [unit]``).
    weights : str, optional
        Weight column (positive).
    uncertainty : str, optional
        Standard-uncertainty column u; weights become 1 / u^2.
    group, fold : str, optional
        Group column (grouped folds) or explicit fold column.
    blank_rows : {"refuse", "skip"}
        Refuse rows with empty/NaN cells (listing them) or skip them (recorded).
    sheet : str, optional
        Worksheet of an .xlsx file (default: the first).
    require_spread : bool
        Refuse a single distinct x (needed to fit; not to apply a saved curve).
    header : bool
        False: the first row is data and columns are named by position ("1", "2", ...).
    skip_rows : int
        Lines (sheet rows) above the header to leave out; they still count in row numbers.
    comment : str, optional
        Lines starting with this character are left out (and still counted).
    x_option : str
        The option that named the ``x`` column, for messages (``invert`` reads its readings as --y).

    Raises
    ------
    DataError
        Naming the file, row and column, and the fix.
    """
    path = Path(path)
    if blank_rows not in ("refuse", "skip"):
        raise DataError(message("Option --blank-rows", "'refuse' or 'skip'", repr(blank_rows)))
    src = open_source(path, sheet=sheet, header=header, skip_rows=skip_rows, comment=comment)
    fname = src.fname
    roles = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    chosen = {r: pick_column(src.columns, s, x_option if r == "x" else r, fname) for r, s in roles.items()
              if s is not None}
    src.check_types(list(chosen.values()))
    extra = {r: pick_column(src.columns, s, r, fname) for r, s in (("group", group), ("fold", fold)) if s is not None}
    sel = Selection(src, chosen)
    parts = {r: [] for r in list(chosen) + list(extra) + ["rows"]}
    dropped, n_read = [], 0
    for rows, cells in src.chunks(list(dict.fromkeys([*chosen.values(), *extra.values()])), READ_ROWS):
        vals, miss = sel.numbers(rows, cells)
        labels = {}
        for role, c in extra.items():
            labels[role] = np.array([_label(v) for v in _as_list(cells[c])], dtype=object)
            miss = miss | (labels[role] == "")
        sel.note_blanks(rows[miss])
        dropped.extend(rows[miss].tolist())
        keep = ~miss
        n_read += len(rows)
        for role, v in {**vals, **labels}.items():
            parts[role].append(v[keep])
        parts["rows"].append(rows[keep])
    if n_read == 0:
        raise DataError(message(f"File '{fname}'", "data rows below the header", "a header only"))
    sel.finish(blank_rows)
    kept = {r: np.concatenate(v) for r, v in parts.items()}
    if kept["rows"].size == 0:
        raise DataError(message(f"File '{fname}'", "at least one complete row", "none"))
    xv = kept["x"]
    if require_spread:
        spread(xv, f"File '{fname}' column '{chosen['x']}'")
    digests = {r: hashlib.sha256(np.ascontiguousarray(kept[r]).tobytes()) for r in chosen}
    notices = list(src.notices) + [n for n in [sel.notice()] if n]
    wname = chosen.get("uncertainty", chosen.get("weights"))
    return Table(
        str(path), Column(chosen["x"], unit_of(chosen["x"]), xv),
        Column(chosen["y"], unit_of(chosen["y"]), kept["y"]) if "y" in chosen else None,
        sel.weights(kept), wname, kept.get("group"), kept.get("fold"), n_read, dropped,
        file_sha256(path), columns_digest(digests), tuple(notices),
        extra.get("group"), extra.get("fold"),
        "uncertainty" if "uncertainty" in chosen else ("relative" if "weights" in chosen else None),
        kept["rows"])


def _as_list(cells):
    return cells.to_pylist() if hasattr(cells, "to_pylist") else cells


def _label(v) -> str:
    """A group or fold cell as text ('' for an empty cell)."""
    if v is None:
        return ""
    if isinstance(v, float) and v != v:
        return ""
    t = str(v).strip()
    return "" if t.lower() == "nan" else t
