"""Reading a user's table into validated columns; every problem names file, row and column.

Rows are numbered as a spreadsheet shows them: the header is row 1, the
first data row is row 2.
"""

from __future__ import annotations

import hashlib
import io
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import DataError, message
from .validate import MAX_ABS
from .validate import require_spread as spread

__all__ = ["Table", "Column", "read_table", "read_frame", "parse_numbers", "pick_column", "text_format",
           "exclude_rows", "check_positive", "columns_digest", "unit_of"]

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


    @property
    def n(self) -> int:
        return int(self.x.values.size)

    def fingerprint(self) -> dict:
        xv = self.x.values
        return {"file_sha256": self.file_sha256, "columns_sha256": self.columns_sha256,
                "rows": self.n, "x_min": float(xv.min()), "x_max": float(xv.max())}


_POSITIVE = {"weights": ("a positive weight", "Drop the row or give it a positive weight"),
             "uncertainty": ("a positive uncertainty", "Uncertainties must be > 0 (weight = 1/u^2)")}


def check_positive(values: np.ndarray, role: str, column: str, fname: str, rows: np.ndarray) -> np.ndarray:
    """Weights or uncertainties must be > 0; the message names the spreadsheet row."""
    bad = np.flatnonzero(values <= 0)
    if bad.size:
        what, fix = _POSITIVE[role]
        raise DataError(message(f"File '{fname}' column '{column}' row {int(rows[bad[0]])}", what,
                                f"{values[bad[0]]:g}", fix))
    return values


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


def columns_digest(digests: dict) -> str:
    """Fingerprint of the selected columns' values: SHA-256 over "role:<sha256 of the role's
    float64 values, little-endian, in row order>" lines for the roles present, in the order
    x, y, weights, uncertainty. Streaming readers update the per-role hashes chunk by chunk."""
    h = hashlib.sha256()
    for role in ("x", "y", "weights", "uncertainty"):
        if role in digests:
            h.update(f"{role}:{digests[role].hexdigest()}\n".encode())
    return h.hexdigest()


def read_frame(path: Path, sheet=None):
    """(frame of text cells, raw bytes, notices) of one file; every problem named."""
    import pandas as pd

    if not path.exists():
        raise DataError(message(f"File '{path}'", "an existing file", "nothing at that path"))
    raw = path.read_bytes()
    notices = []
    if not raw.strip():
        raise DataError(message(f"File '{path.name}'", "a header row and data rows", "an empty file"))
    suffix = path.suffix.lower()
    if suffix in (".xlsx", ".xlsm"):
        if not raw.startswith(b"PK"):
            raise DataError(message(f"File '{path.name}'", "a readable .xlsx workbook",
                                    "a file that is not a zip archive"))
        try:
            frame = pd.read_excel(io.BytesIO(raw), sheet_name=sheet or 0, dtype=object)
        except (ValueError, KeyError, OSError) as exc:
            raise DataError(message(f"File '{path.name}'", "a readable .xlsx workbook", str(exc).split("\n")[0])) from exc
        return frame, raw, notices
    if suffix == ".parquet":
        try:
            frame = pd.read_parquet(io.BytesIO(raw))
        except Exception as exc:  # pyarrow raises many unrelated types for a corrupt file
            raise DataError(message(f"File '{path.name}'", "a readable Parquet file", type(exc).__name__)) from exc
        return frame, raw, notices
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
        notices.append(f"File '{path.name}' is not UTF-8; read it as Latin-1.")
    sep, decimal = text_format(text)
    try:
        frame = pd.read_csv(io.StringIO(text), sep=sep, decimal=decimal, dtype=str,
                            keep_default_na=False, skip_blank_lines=True)
    except pd.errors.ParserError as exc:
        m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(exc))
        if m:
            raise DataError(message(f"File '{path.name}' line {m.group(2)}", f"{m.group(1)} fields like the header",
                                    m.group(3), "Check the delimiter and quoting of that line")) from None
        raise DataError(message(f"File '{path.name}'", "rows with the same number of fields as the header",
                                str(exc).strip().split("\n")[-1])) from None
    except pd.errors.EmptyDataError as exc:
        raise DataError(message(f"File '{path.name}'", "a header row and data rows", "no columns")) from exc
    frame.attrs["decimal"] = decimal
    return frame, raw, notices


def text_format(text: str) -> tuple[str, str]:
    """Delimiter (the most frequent of , ; tab in the header line) and decimal mark
    (a comma for ';' files whose numbers are written like 1,5)."""
    first = next((ln for ln in text.splitlines() if ln.strip()), "")
    sep = max([",", ";", "\t"], key=first.count)
    if first.count(sep) == 0:
        sep = ","
    decimal = "," if sep == ";" and re.search(r"\d,\d", text) else "."
    return sep, decimal


def pick_column(columns, spec, role: str, fname: str) -> str:
    """The column meant by ``spec``: exact name, 1-based position, or bare name of 'name [unit]'."""
    cols = [str(c) for c in columns]
    if spec is None:
        raise DataError(message(f"Column for {role}", "a column name or 1-based position", "none"))
    s = str(spec)
    if s in cols:
        return s
    if s.isdigit() and 1 <= int(s) <= len(cols):
        return cols[int(s) - 1]
    bare = {re.sub(r"\s*[\[(].*$", "", c).strip(): c for c in cols}
    if s in bare:
        return bare[s]
    raise DataError(message(f"Column '{s}' ({role}) in '{fname}'", "one of " + ", ".join(repr(c) for c in cols),
                            "no such column", "Pass --" + role + " with a column name or position"))


def parse_numbers(frame, col: str, fname: str, blank_rows: str, decimal: str = ".", offset: int = 0):
    """Float values and a missing-mask of one column; the first bad cell raises with its row.

    ``offset`` is the number of data rows before this frame (for chunked reading)."""
    import pandas as pd

    raw = frame[col]
    if raw.dtype == object or pd.api.types.is_string_dtype(raw.dtype):
        text = raw.astype(str).str.strip()
        miss = raw.isna().to_numpy() | (text == "").to_numpy() | text.str.lower().isin(["nan"]).to_numpy()
        if decimal == ",":
            text = text.str.replace(".", "", regex=False).str.replace(",", ".", regex=False)
        vals = pd.to_numeric(text.where(~miss, None), errors="coerce").to_numpy(dtype=float)
    else:
        vals = pd.to_numeric(raw, errors="coerce").to_numpy(dtype=float)
        miss = np.isnan(vals)
    bad = np.flatnonzero(np.isnan(vals) & ~miss)
    if bad.size:
        i = int(bad[0])
        raise DataError(message(f"File '{fname}' column '{col}' row {i + 2 + offset}", "a number", repr(raw.iloc[i]),
                                "Correct the cell, or empty it if the value is missing"))
    inf = np.flatnonzero(np.isinf(vals))
    if inf.size:
        i = int(inf[0])
        raise DataError(message(f"File '{fname}' column '{col}' row {i + 2 + offset}", "a finite number",
                                repr(raw.iloc[i]), "Replace infinite values or remove the row"))
    big = np.flatnonzero(np.abs(np.nan_to_num(vals)) > MAX_ABS)
    if big.size:
        i = int(big[0])
        raise DataError(message(f"File '{fname}' column '{col}' row {i + 2 + offset}", f"|value| <= {MAX_ABS:g}",
                                f"{vals[i]:g}", "Rescale the column (change its unit)"))
    return vals, miss


def read_table(path, *, x, y=None, weights=None, uncertainty=None, group=None, fold=None,
               blank_rows: str = "refuse", sheet=None, require_spread: bool = True) -> Table:
    """Read one file and select its columns.

    Parameters
    ----------
    path : str or Path
        CSV/TSV/semicolon text (delimiter and decimal comma detected), .xlsx or .parquet.
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
    require_spread : bool
        Refuse a single distinct x (needed to fit; not to apply a saved curve).

    Raises
    ------
    DataError
        Naming the file, row and column, and the fix.
    """
    import pandas as pd

    path = Path(path)
    if blank_rows not in ("refuse", "skip"):
        raise DataError(message("Option --blank-rows", "'refuse' or 'skip'", repr(blank_rows)))
    frame, raw, notices = read_frame(path, sheet)
    fname = path.name
    cols = [str(c) for c in frame.columns]
    # pandas renames a repeated header "a" to "a.1"; report the original name
    repeated = sorted({re.sub(r"\.\d+$", "", c) for c in cols
                       if re.search(r"\.\d+$", c) and re.sub(r"\.\d+$", "", c) in cols})
    if repeated:
        raise DataError(message(f"File '{fname}' header", "distinct column names",
                                "repeated " + ", ".join(repr(n) for n in repeated),
                                "Rename the repeated columns"))
    if len(frame) == 0:
        raise DataError(message(f"File '{fname}'", "data rows below the header", "a header only"))
    frame.columns = cols
    decimal = frame.attrs.get("decimal", ".")
    roles = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    chosen = {r: pick_column(frame.columns, s, r, fname) for r, s in roles.items() if s is not None}
    numeric = {r: parse_numbers(frame, c, fname, blank_rows, decimal) for r, c in chosen.items()}
    any_missing = np.zeros(len(frame), dtype=bool)
    for r, (v, m) in numeric.items():
        any_missing |= m
    extra = {}
    for role, spec in (("group", group), ("fold", fold)):
        if spec is not None:
            c = pick_column(frame.columns, spec, role, fname)
            vals = frame[c].astype(str).str.strip().to_numpy()
            any_missing |= (vals == "") | (vals == "nan")
            extra[role] = (c, vals)
    dropped = (np.flatnonzero(any_missing) + 2).tolist()
    if dropped and blank_rows == "refuse":
        shown = ", ".join(map(str, dropped[:12])) + (" ..." if len(dropped) > 12 else "")
        raise DataError(message(f"File '{fname}' rows {shown}", "a value in every selected column",
                                f"{len(dropped)} row(s) with empty cells",
                                "Fill them in, or pass --blank-rows skip to leave those rows out"))
    keep = ~any_missing
    if keep.sum() == 0:
        raise DataError(message(f"File '{fname}'", "at least one complete row", "none"))
    xv = numeric["x"][0][keep]
    yv = numeric["y"][0][keep] if "y" in numeric else None
    w = None
    wname = None
    rows = np.flatnonzero(keep) + 2
    for role in ("weights", "uncertainty"):
        if role in numeric:
            wname = chosen[role]
            v = check_positive(numeric[role][0][keep], role, wname, fname, rows)
            w = v if role == "weights" else 1.0 / v ** 2
    if require_spread:
        spread(xv, f"File '{fname}' column '{chosen['x']}'")
    digests = {r: hashlib.sha256(np.ascontiguousarray(numeric[r][0][keep]).tobytes())
               for r in ("x", "y", "weights", "uncertainty") if r in numeric}
    h = columns_digest(digests)
    return Table(
        str(path), Column(chosen["x"], unit_of(chosen["x"]), xv),
        Column(chosen["y"], unit_of(chosen["y"]), yv) if yv is not None else None,
        w, wname,
        extra["group"][1][keep] if "group" in extra else None,
        extra["fold"][1][keep] if "fold" in extra else None,
        int(len(frame)), dropped, hashlib.sha256(raw).hexdigest(), h, tuple(notices),
        extra["group"][0] if "group" in extra else None, extra["fold"][0] if "fold" in extra else None,
        "uncertainty" if "uncertainty" in numeric else ("relative" if "weights" in numeric else None),
        np.flatnonzero(keep) + 2)
