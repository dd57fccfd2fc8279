"""Sweeping a file too large to hold: read in chunks straight into the one-pass statistics.

Two reads of the file, one pass of statistics:

1. a scan parses the selected columns chunk by chunk, validates every value
   (messages name the row), counts rows, finds the x range and hashes the
   columns (the same fingerprint ``read_table`` gives);
2. the folds are assigned for the counted rows (``core.folds``, same seeds, so
   the result equals the in-memory sweep of the same rows), and a second read
   feeds each chunk into ``core.moments.Accumulator``.

Memory is O(chunk x columns) for parsing plus O(n) small integers for the
fold labels; no dense copy of the columns is ever held. CSV/TSV/semicolon text
and Parquet stream; .xlsx is read whole.
"""

from __future__ import annotations

import dataclasses
import hashlib
import re
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .basis import Domain
from .engine import engine_from_moments
from .errors import DataError, message
from .folds import cell_labels, make_plan, sealed_mask
from .moments import Accumulator
from .params import check, combination
from .select import Surface, surface_from_engine
from .table import check_positive, columns_digest, parse_numbers, pick_column, read_frame, text_format, unit_of
from .validate import single_x

__all__ = ["Scan", "scan_file", "sweep_file", "iter_chunks", "chunk_columns"]

KEEP_ROW_NUMBERS = 10_000_000     # a scan keeps the used rows' numbers (8 bytes each) up to this many


@dataclass(frozen=True)
class Scan:
    """What the first read learnt about the file."""

    path: str
    rows_read: int
    rows_used: int
    rows_dropped: list = field(repr=False)
    x_min: float
    x_max: float
    file_sha256: str
    columns_sha256: str
    x_name: str
    y_name: str
    weight_name: str | None
    notices: tuple = ()
    sealed: np.ndarray | None = field(default=None, repr=False)   # sealed mask of the used rows, when asked
    row_numbers: np.ndarray | None = field(default=None, repr=False)   # spreadsheet rows of the used rows

    @property
    def x_unit(self):
        return unit_of(self.x_name)

    @property
    def y_unit(self):
        return unit_of(self.y_name)


def _sniff(path: Path):
    head = path.open("rb").read(65536)
    notices = []
    try:
        head.decode("utf-8")
        encoding = "utf-8-sig"
    except UnicodeDecodeError:
        encoding = "latin-1"
        notices.append(f"File '{path.name}' is not UTF-8; read it as Latin-1.")
    text = head.decode(encoding, errors="ignore")
    if not text.strip():
        raise DataError(message(f"File '{path.name}'", "a header row and data rows", "an empty file"))
    sep, decimal = text_format(text)
    return encoding, sep, decimal, notices


def iter_chunks(path, specs: dict, *, chunk_rows: int = 500_000):
    """Yield (resolved names, offset, frame of the selected columns as text) chunk by chunk."""
    import pandas as pd

    path = Path(path)
    if not path.is_file():
        raise DataError(message(f"File '{path}'", "an existing file", "nothing at that path"))
    suffix = path.suffix.lower()
    if suffix == ".parquet":
        import pyarrow.parquet as pq

        try:
            pf = pq.ParquetFile(path)
        except Exception as exc:  # pyarrow raises many unrelated types for a corrupt file
            raise DataError(message(f"File '{path.name}'", "a readable Parquet file", type(exc).__name__)) from None
        cols = list(pf.schema_arrow.names)
        names = {r: pick_column(cols, s, r, path.name) for r, s in specs.items() if s is not None}
        offset = 0
        for batch in pf.iter_batches(batch_size=chunk_rows, columns=sorted(set(names.values()))):
            frame = batch.to_pandas()
            yield names, offset, frame, "."
            offset += len(frame)
        return
    if suffix in (".xlsx", ".xlsm"):
        frame, _, _ = read_frame(path)
        cols = [str(c) for c in frame.columns]
        frame.columns = cols
        names = {r: pick_column(cols, s, r, path.name) for r, s in specs.items() if s is not None}
        yield names, 0, frame, "."
        return
    encoding, sep, decimal, _ = _sniff(path)
    header = pd.read_csv(path, sep=sep, nrows=0, encoding=encoding)
    cols = [str(c) for c in header.columns]
    names = {r: pick_column(cols, s, r, path.name) for r, s in specs.items() if s is not None}
    reader = pd.read_csv(path, sep=sep, dtype=str, keep_default_na=False, encoding=encoding,
                         usecols=sorted(set(names.values())), chunksize=chunk_rows, skip_blank_lines=True)
    offset = 0
    try:
        for frame in reader:
            yield names, offset, frame, decimal
            offset += len(frame)
    except pd.errors.ParserError as exc:
        m = re.search(r"Expected (\d+) fields in line (\d+), saw (\d+)", str(exc))
        where = f" line {m.group(2)}" if m else ""
        raise DataError(message(f"File '{path.name}'{where}", "rows with the same number of fields as the header",
                                f"{m.group(3)} fields" if m else str(exc).strip().split("\n")[-1],
                                "Check the delimiter and quoting of that line")) from None


def chunk_columns(names, offset, frame, decimal, fname, blank_rows):
    """Validated float columns of one chunk and the mask of complete rows:
    (x, y, weights or None, keep mask, dict of every role's kept values)."""
    vals, miss = {}, np.zeros(len(frame), dtype=bool)
    for role in ("x", "y", "weights", "uncertainty"):
        if role in names:
            v, m = parse_numbers(frame, names[role], fname, blank_rows, decimal, offset=offset)
            vals[role] = v
            miss |= m
    if miss.any() and blank_rows == "refuse":
        rows = (np.flatnonzero(miss) + offset + 2).tolist()
        shown = ", ".join(map(str, rows[:12])) + (" ..." if len(rows) > 12 else "")
        raise DataError(message(f"File '{fname}' rows {shown}", "a value in every selected column",
                                f"{len(rows)} row(s) with empty cells in this part of the file",
                                "Fill them in, or pass --blank-rows skip to leave those rows out"))
    keep = ~miss
    out = {r: v[keep] for r, v in vals.items()}
    rows = np.flatnonzero(keep) + offset + 2
    for role in ("weights", "uncertainty"):
        if role in out:
            check_positive(out[role], role, names[role], fname, rows)
    w = out.get("weights")
    if "uncertainty" in out:
        w = 1.0 / out["uncertainty"] ** 2
    return out["x"], out["y"], w, keep, out


def scan_file(path, *, x, y, weights=None, uncertainty=None, blank_rows: str = "refuse",
              chunk_rows: int = 500_000, require_spread: bool = True, sealed=None) -> Scan:
    """First read: validate, count, x range, fingerprints (see module docstring).

    ``sealed=(seed, test_fraction)`` also decides each used row's sealed membership from its
    spreadsheet row number (``core.folds.sealed_mask``), exactly as for the rows in memory.
    """
    path = Path(path)
    specs = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    digests = {r: hashlib.sha256() for r, s in specs.items() if s is not None}
    n_read = n_used = 0
    dropped = []
    lo, hi = np.inf, -np.inf
    names = {}
    masks, keys = [], []
    for names, offset, frame, decimal in iter_chunks(path, specs, chunk_rows=chunk_rows):
        xv, yv, w, keep, cols = chunk_columns(names, offset, frame, decimal, path.name, blank_rows)
        n_read += len(frame)
        n_used += xv.size
        dropped.extend((np.flatnonzero(~keep) + offset + 2).tolist())
        if sealed is not None:
            rows = np.flatnonzero(keep) + offset + 2
            masks.append(sealed_mask(xv.size, sealed[1], sealed[0], keys=rows))
            if n_used <= KEEP_ROW_NUMBERS:
                keys.append(rows)
        if xv.size:
            lo, hi = min(lo, float(xv.min())), max(hi, float(xv.max()))
        for role, h in digests.items():
            h.update(np.ascontiguousarray(cols[role]).tobytes())
    if n_read == 0:
        raise DataError(message(f"File '{path.name}'", "data rows below the header", "a header only"))
    if n_used == 0:
        raise DataError(message(f"File '{path.name}'", "at least one complete row", "none"))
    if require_spread and not lo < hi:
        raise single_x(f"File '{path.name}' column '{names['x']}'", lo)
    fh = hashlib.sha256()
    with path.open("rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            fh.update(block)
    wname = names.get("uncertainty", names.get("weights"))
    return Scan(str(path), n_read, n_used, dropped, lo, hi, fh.hexdigest(), columns_digest(digests),
                names["x"], names["y"], wname, (), np.concatenate(masks) if masks else None,
                np.concatenate(keys) if keys and n_used <= KEEP_ROW_NUMBERS else None)


def sweep_file(path, degrees, lambdas=None, *, x, y, weights=None, uncertainty=None, folds: int = 10,
               repeats: int = 1, seed: int = 0, test_fraction: float = 0.0, intercept: bool = True,
               penalty: str = "ridge", mix: float = 0.5, blank_rows: str = "refuse", chunk_rows: int = 500_000,
               progress=None) -> tuple[Surface, Scan]:
    """``core.sweep`` over a file read in chunks; returns (surface, scan).

    The same folds, statistics and engine (``core.engine.engine_from_moments``,
    any penalty) as the in-memory sweep of the same rows. Grouped, explicit and
    leave-one-out folds need the rows and are not offered here.
    ``progress(rows_done, rows_total, seconds)`` is called after every chunk of the
    statistics pass when given.
    """
    p = check(degrees=degrees, folds=folds, repeats=repeats, seed=seed, test_fraction=test_fraction,
              intercept=intercept, chunk_rows=chunk_rows, **({} if lambdas is None else {"lambdas": lambdas}))
    combination(penalty=penalty, mix=mix)
    max_degree = int(p.degrees.max())
    sc = scan_file(path, x=x, y=y, weights=weights, uncertainty=uncertainty, blank_rows=blank_rows,
                   chunk_rows=p.chunk_rows, sealed=(p.seed, p.test_fraction))
    plan = make_plan(sc.rows_used, folds=p.folds, repeats=p.repeats, seed=p.seed, test_fraction=p.test_fraction,
                     sealed=sc.sealed, row_keys=sc.row_numbers)
    if sc.row_numbers is None:
        plan = dataclasses.replace(plan, keys_unknown=True)
    labels = cell_labels(plan, max_degree)
    acc = Accumulator(Domain.from_range(sc.x_min, sc.x_max), max_degree, plan.repeats * plan.k + 1)
    specs = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    pos = 0
    t0 = time.perf_counter()
    for names, offset, frame, decimal in iter_chunks(path, specs, chunk_rows=p.chunk_rows):
        xv, yv, w, _, _ = chunk_columns(names, offset, frame, decimal, Path(path).name, blank_rows)
        acc.update(xv, yv, w, labels[:, pos:pos + xv.size])
        pos += xv.size
        if progress is not None:
            progress(pos, sc.rows_used, time.perf_counter() - t0)
    if pos != sc.rows_used:
        raise DataError(message(f"File '{Path(path).name}'", f"{sc.rows_used} rows on the second read",
                                pos, "The file changed while it was being read"))
    engine = engine_from_moments(acc.result(), plan, penalty=penalty, mix=mix, intercept=p.intercept)
    return surface_from_engine(engine, p.degrees, None if lambdas is None else p.lambdas), sc
