"""Getting the page's data in: a file's rows, a large file streamed into statistics, a statistics file.

Plain functions over core (no param, no UI): each takes the values it needs and
returns a table or an engine, or raises ``CurvewrightError`` with a message
naming the file, row and column. ``app.model.PageModel`` turns those messages
into the page's status and keeps the previous data.
"""

from __future__ import annotations

import time
from pathlib import Path

from core import defaults
from core.errors import DataError
from core.table import column_names, exclude_rows, read_table, transform_table

from .columns import propose_columns

__all__ = ["STREAMABLE", "should_stream", "columns_of", "read_rows", "open_rows", "apply_exclusion",
           "parse_exclude", "load_statistics", "stream_statistics"]

STREAMABLE = (".csv", ".tsv", ".txt", ".parquet")


def should_stream(path) -> bool:
    """True for a CSV/TSV/Parquet file above ``core.defaults.STREAM_BYTES`` (read in chunks)."""
    p = Path(path)
    return p.is_file() and p.suffix.lower() in STREAMABLE and p.stat().st_size > defaults.STREAM_BYTES


def columns_of(path) -> list[str]:
    """The file's column names, in order (only the start of the file is read)."""
    return column_names(Path(path))


def read_rows(path, x, y, weights: str = "", *, weight_kind: str = "relative", group: str = "", fold: str = "",
              x_transform: str = "none", y_transform: str = "none"):
    """The file's selected columns as a ``core.table.Table`` (rows with empty cells dropped), x and y
    transformed as asked (``core.transforms``).

    ``weights`` names a column of weights, or of standard uncertainties when
    ``weight_kind`` is "uncertainty" (weights 1/u^2); ``group`` a column whose rows stay in one fold;
    ``fold`` a column giving each row's fold.
    """
    kind = {"relative": None, "uncertainty": None}
    if weights:
        kind[weight_kind] = weights
    table = read_table(path, x=x, y=y, weights=kind["relative"], uncertainty=kind["uncertainty"],
                       group=group or None, fold=fold or None, blank_rows="skip")
    return transform_table(table, x_transform, y_transform)


def open_rows(path, *, x: str = "", y: str = "", weights: str = "", weight_kind: str = "relative",
              group: str = "", fold: str = "", x_transform: str = "none", y_transform: str = "none"):
    """(column names, table, proposal note) of a newly opened file.

    The asked-for x and y columns are used when the file has both; otherwise x, y (and a column of
    y's uncertainties as weights) are proposed from the header names (``app.columns``), and the note
    says so. Other asked-for columns are kept only when the file has them.
    """
    cols = columns_of(path)
    note = ""
    if not (x in cols and y in cols and x != y):
        try:
            prop = propose_columns(cols)
        except ValueError:
            raise DataError("expected at least two columns (one for x, one for y).") from None
        x, y, weights, weight_kind = prop["x"], prop["y"], prop["weights"], prop["weight_kind"]
        note = (f"Proposed x = {x}, y = {y}" + (f", standard uncertainties from {weights}" if weights else "")
                + " from the column names; change them under Data.")
    keep = {c: (c if c in cols else "") for c in (weights, group, fold)}
    table = read_rows(path, x, y, keep[weights], weight_kind=weight_kind, group=keep[group], fold=keep[fold],
                      x_transform=x_transform, y_transform=y_transform)
    return cols, table, note


def parse_exclude(text: str, table) -> tuple[list[int], str | None]:
    """(spreadsheet rows to leave out, problem message or None) for the page's exclude field.

    Unreadable text excludes nothing; rows that are not data rows of the table
    are named in the message and skipped.
    """
    if not text.strip():
        return [], None
    try:
        rows = [int(v) for v in text.replace(";", ",").split(",") if v.strip()]
    except ValueError:
        return [], f"Could not exclude rows: expected row numbers like '7, 19', got {text!r}."
    valid = set(table.row_numbers.tolist())
    bad = [r for r in rows if r not in valid]
    if bad:
        return ([r for r in rows if r in valid],
                f"Could not exclude row {bad[0]}: it is not a data row of this table (header is row 1).")
    return rows, None


def apply_exclusion(table, text: str):
    """(table without the excluded rows, problem message or None)."""
    rows, problem = parse_exclude(text, table)
    return (exclude_rows(table, rows) if rows else table), problem


def load_statistics(path, *, penalty: str = "ridge", mix: float = 0.5):
    """(engine, data description) of a statistics file, scored with the given penalty."""
    from core.statsfile import load_stats

    return load_stats(path, penalty=penalty, mix=mix)


def stream_statistics(path, *, label: str, x: str = "", y: str = "", weights: str = "",
                      weight_kind: str = "relative", folds: int = defaults.FOLDS, repeats: int = defaults.REPEATS,
                      seed: int = defaults.SEED, test_fraction: float = defaults.TEST_FRACTION,
                      penalty: str = "ridge", mix: float = 0.5, report=None):
    """Stream a large file into the statistics: (engine, data description, closing note).

    ``report(share_done, text)`` is called after every chunk with the rows done,
    the rate and the time left (safe to call from a worker thread if it only sets
    values).
    """
    from core.stream import sweep_file

    t0 = time.perf_counter()

    def progress(done, total, secs):
        if report is None:
            return
        rate = done / secs if secs > 0 else 0.0
        left = (total - done) / rate if rate > 0 else 0.0
        report(done / max(total, 1),
               f"{label}: {done:,} of {total:,} rows, {rate:,.0f} rows/s, {left:.0f} s left")

    w = {"relative": None, "uncertainty": None}
    if weights:
        w[weight_kind] = weights
    surface, scan = sweep_file(Path(path), list(defaults.DEGREES), None, x=x or 1, y=y or 2,
                               weights=w["relative"], uncertainty=w["uncertainty"], folds=folds, repeats=repeats,
                               seed=seed, test_fraction=test_fraction, penalty=penalty, mix=mix,
                               blank_rows="skip", progress=progress)
    meta = {"file": label, "x_column": scan.x_name, "y_column": scan.y_name,
            "columns_sha256": scan.columns_sha256}
    note = f"{label}: {scan.rows_used:,} rows streamed into the statistics in {time.perf_counter() - t0:.1f} s"
    return surface.engine, meta, note
