"""Sweeping a file too large to hold: read in chunks straight into the one-pass statistics.

Two reads of the file, one pass of statistics:

1. a scan parses the selected columns chunk by chunk, validates every value
   (messages name the row), counts rows, finds the x range and hashes the
   columns (the same fingerprint ``read_table`` gives);
2. the folds are assigned for the counted rows (``core.folds``, same seeds, so
   the result equals the in-memory sweep of the same rows), and a second read
   feeds each chunk into ``core.moments.Accumulator``.

Memory is O(chunk x columns) for parsing plus O(n) small integers for the
fold labels; no dense copy of the columns is ever held. Text, Parquet and .xlsx
files are all read in chunks, through the same readers and checks as ``read_table``.

Both reads go through the fast reader (``core.fastread``: pyarrow converts the selected columns
of a text file into numbers block by block) when it can vouch for the file, and the scan still
runs the careful checks of ``core.selection`` on what it converted. At the first doubt, or at
any problem of the file, the scan reads the file again with the careful reader, whose numbers or
message are then the result: the numbers of a file never come from both readers. ``Scan.fast``
records which reader read it, and the second read uses the same one.
"""

from __future__ import annotations

import dataclasses
import hashlib
import time
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .basis import Domain
from .engine import engine_from_moments
from .errors import DataError, ParameterError, message
from .fastread import Unsure, fast_chunks, lean_numbers
from .folds import cell_labels, make_plan, sealed_mask
from .moments import Accumulator
from .params import check, combination
from .select import Surface, surface_from_engine
from .selection import Selection
from .table import columns_digest, file_sha256, open_source, pick_column, unit_of
from .validate import single_x

__all__ = ["Scan", "scan_file", "sweep_file", "iter_chunks", "chunk_columns", "iter_values"]

KEEP_ROW_NUMBERS = 10_000_000     # a scan keeps the used rows' numbers (8 bytes each) up to this many
READERS = ("auto", "fast", "careful")


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
    fast: bool = False           # read by the fast reader (``core.fastread``), else by the careful one

    @property
    def x_unit(self):
        return unit_of(self.x_name)

    @property
    def y_unit(self):
        return unit_of(self.y_name)


class Chunk:
    """One chunk of the selected columns: the spreadsheet row of each record and each column's cells."""

    def __init__(self, rows: np.ndarray, cells: dict):
        self.rows, self.cells = rows, cells

    def __len__(self) -> int:
        return int(self.rows.size)


def iter_chunks(path, specs: dict, *, chunk_rows: int = 500_000, sheet=None, header: bool = True,
                skip_rows: int = 0, comment: str | None = None):
    """Yield (resolved names, offset, chunk, selection) chunk by chunk.

    ``offset`` counts the data records before the chunk; ``chunk`` (a ``Chunk``) holds the
    spreadsheet row numbers and the selected columns' cells; ``selection`` (one
    ``core.selection.Selection`` for the whole read) turns them into numbers (``chunk_columns``).
    The file is opened and read exactly as ``read_table`` reads it.
    """
    chunk_rows = check(chunk_rows=chunk_rows).chunk_rows
    src = open_source(path, sheet=sheet, header=header, skip_rows=skip_rows, comment=comment)
    names = {r: pick_column(src.columns, s, r, src.fname) for r, s in specs.items() if s is not None}
    src.check_types(list(names.values()))
    sel = Selection(src, names)
    offset = 0
    for rows, cells in src.chunks(list(dict.fromkeys(names.values())), chunk_rows):
        yield names, offset, Chunk(rows, cells), sel
        offset += len(rows)


def chunk_columns(names, offset, frame, decimal, fname, blank_rows):
    """Validated float columns of one chunk and the mask of complete rows:
    (x, y, weights or None, keep mask, dict of every role's kept values).

    ``frame`` and ``decimal`` are the chunk and the selection ``iter_chunks`` yields. Rows with
    empty cells are refused here at once unless ``blank_rows`` is "skip" (``scan_file`` refuses
    them after the whole file, listing all of them, as ``read_table`` does)."""
    sel = decimal
    vals, miss = sel.numbers(frame.rows, frame.cells)
    if miss.any() and blank_rows == "refuse":
        sel.note_blanks(frame.rows[miss])
        raise sel.blank_refusal()
    keep = ~miss
    out = {r: v[keep] for r, v in vals.items()}
    return out["x"], out.get("y"), sel.weights(out), keep, out


def _open(path, specs: dict, options: dict):
    """(opened source, role -> column) as ``read_table`` opens the file and picks its columns."""
    src = open_source(path, **options)
    names = {r: pick_column(src.columns, s, r, src.fname) for r, s in specs.items() if s is not None}
    src.check_types(list(names.values()))
    return src, names


def scan_file(path, *, x, y, weights=None, uncertainty=None, blank_rows: str = "refuse",
              chunk_rows: int = 500_000, require_spread: bool = True, sheet=None, header: bool = True,
              skip_rows: int = 0, comment: str | None = None, sealed=None, reader: str = "auto") -> Scan:
    """First read: validate, count, x range, fingerprints (see module docstring).

    ``sealed=(seed, test_fraction)`` also decides each used row's sealed membership from its
    spreadsheet row number (``core.folds.sealed_mask``), exactly as for the rows in memory.
    ``reader="auto"``: the fast reader reads the file when it can vouch for it; otherwise, or when
    the file has any problem, the careful reader reads it again and its result (or message)
    stands. ``"careful"`` reads with the careful reader only; ``"fast"`` with the fast one only
    (raising ``core.fastread.Unsure`` where it cannot vouch: for tests and benchmarks).
    """
    path = Path(path)
    if blank_rows not in ("refuse", "skip"):
        raise DataError(message("Option --blank-rows", "'refuse' or 'skip'", repr(blank_rows)))
    if reader not in READERS:
        raise ParameterError(message("Parameter 'reader'", "'auto', 'fast' or 'careful'", repr(reader)))
    specs = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    src, names = _open(path, specs, dict(sheet=sheet, header=header, skip_rows=skip_rows, comment=comment))
    args = (path, src, names, blank_rows, chunk_rows, require_spread, sealed)
    if reader != "careful" and src.kind in ("text", "parquet"):    # sources holding no state of a read
        try:
            return _scan(*args, fast=True)
        except Exception:  # noqa: BLE001 - Unsure, a problem of the file or a pyarrow error: the
            # careful reader judges the file, with its own message (the typed batches of a Parquet
            # file are the careful reader's own, so a refusal of one stands as it is)
            if reader == "fast" or src.kind == "parquet":
                raise
    elif reader == "fast":
        raise Unsure(f"a {src.kind} source")
    return _scan(*args, fast=False)


def _scan(path, src, names, blank_rows, chunk_rows, require_spread, sealed, *, fast: bool) -> Scan:
    digests = {r: hashlib.sha256() for r in names}
    n_read = n_used = 0
    dropped = []
    lo, hi = np.inf, -np.inf
    masks, keys = [], []
    sel = Selection(src, names)
    columns = list(dict.fromkeys(names.values()))
    chunks = fast_chunks(src, columns, chunk_rows, sel.marks) if fast else src.chunks(columns, chunk_rows)
    for rows, cells in chunks:
        vals, miss = sel.numbers(rows, cells)
        sel.note_blanks(rows[miss])
        keep = ~miss
        n_read += len(rows)
        dropped.extend(rows[miss].tolist())
        xv = vals["x"][keep]
        n_used += xv.size
        if sealed is not None:
            kept_rows = rows[keep]
            masks.append(sealed_mask(xv.size, sealed[1], sealed[0], keys=kept_rows))
            if n_used <= KEEP_ROW_NUMBERS:
                keys.append(kept_rows)
        if xv.size:
            lo, hi = min(lo, float(xv.min())), max(hi, float(xv.max()))
        for role, h in digests.items():
            h.update(np.ascontiguousarray(vals[role][keep]).tobytes())
    fname = path.name
    if n_read == 0:
        raise DataError(message(f"File '{fname}'", "data rows below the header", "a header only"))
    sel.finish(blank_rows)
    if n_used == 0:
        raise DataError(message(f"File '{fname}'", "at least one complete row", "none"))
    if require_spread and not lo < hi:
        raise single_x(f"File '{fname}' column '{names['x']}'", lo)
    wname = names.get("uncertainty", names.get("weights"))
    notices = tuple(sel.source_notices) + tuple(n for n in [sel.notice()] if n)
    return Scan(str(path), n_read, n_used, dropped, lo, hi, file_sha256(path), columns_digest(digests),
                names["x"], names.get("y"), wname, notices, np.concatenate(masks) if masks else None,
                np.concatenate(keys) if keys and n_used <= KEEP_ROW_NUMBERS else None, fast)


def _changed(fname: str) -> DataError:
    return DataError(message(f"File '{fname}'", "the rows of the first read on the second read", "other rows",
                             "The file changed while it was being read"))


def iter_values(path, specs: dict, *, blank_rows: str = "refuse", chunk_rows: int = 500_000, fast: bool = False,
                sheet=None, header: bool = True, skip_rows: int = 0, comment: str | None = None):
    """Yield (x, y, weights or None) of the complete rows, chunk by chunk: the second read of a file
    ``scan_file`` has read and checked, by the reader that read it (``fast`` is its ``Scan.fast``).

    The careful reader checks every chunk again; the fast one takes the values as the scan found
    them, and refuses as a change of the file a missing value where the scan refused them, a value
    that is not finite, or a block it can no longer vouch for."""
    options = dict(sheet=sheet, header=header, skip_rows=skip_rows, comment=comment)
    fname = Path(path).name
    if not fast:
        for names, offset, frame, sel in iter_chunks(path, specs, chunk_rows=chunk_rows, **options):
            xv, yv, w, _, _ = chunk_columns(names, offset, frame, sel, fname, blank_rows)
            yield xv, yv, w
        return
    src, names = _open(path, specs, options)
    sel = Selection(src, names)
    try:
        for rows, cells in fast_chunks(src, list(dict.fromkeys(names.values())), chunk_rows, sel.marks):
            got = lean_numbers(cells, sel.names)
            vals, miss = got if got is not None else sel.numbers(rows, cells)
            if blank_rows == "refuse" and miss.any():
                raise _changed(fname)
            kept = {r: v[~miss] for r, v in vals.items()}
            if not all(np.isfinite(v).all() for v in kept.values()):
                raise _changed(fname)
            yield kept["x"], kept.get("y"), sel.weights(kept)
    except Unsure:
        raise _changed(fname) from None


def sweep_file(path, degrees, lambdas=None, *, x, y, weights=None, uncertainty=None, folds: int = 10,
               repeats: int = 1, seed: int = 0, test_fraction: float = 0.0, intercept: bool = True,
               penalty: str = "ridge", mix: float = 0.5, blank_rows: str = "refuse", chunk_rows: int = 500_000,
               progress=None, sheet=None, header: bool = True, skip_rows: int = 0,
               comment: str | None = None, reader: str = "auto") -> tuple[Surface, Scan]:
    """``core.sweep`` over a file read in chunks; returns (surface, scan).

    The same folds, statistics and engine (``core.engine.engine_from_moments``,
    any penalty) as the in-memory sweep of the same rows. Grouped, explicit and
    leave-one-out folds need the rows and are not offered here.
    ``progress(rows_done, rows_total, seconds)`` is called after every chunk of the
    statistics pass when given. ``sheet``, ``header``, ``skip_rows`` and ``comment`` are the
    reader options of ``read_table``; ``reader`` chooses the reader as for ``scan_file``.
    """
    p = check(degrees=degrees, folds=folds, repeats=repeats, seed=seed, test_fraction=test_fraction,
              intercept=intercept, chunk_rows=chunk_rows, **({} if lambdas is None else {"lambdas": lambdas}))
    combination(penalty=penalty, mix=mix)
    max_degree = int(p.degrees.max())
    options = dict(sheet=sheet, header=header, skip_rows=skip_rows, comment=comment)
    sc = scan_file(path, x=x, y=y, weights=weights, uncertainty=uncertainty, blank_rows=blank_rows,
                   chunk_rows=p.chunk_rows, sealed=(p.seed, p.test_fraction), reader=reader, **options)
    plan = make_plan(sc.rows_used, folds=p.folds, repeats=p.repeats, seed=p.seed, test_fraction=p.test_fraction,
                     sealed=sc.sealed, row_keys=sc.row_numbers)
    if sc.row_numbers is None:
        plan = dataclasses.replace(plan, keys_unknown=True)
    labels = cell_labels(plan, max_degree)
    acc = Accumulator(Domain.from_range(sc.x_min, sc.x_max), max_degree, plan.repeats * plan.k + 1)
    specs = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    pos = 0
    t0 = time.perf_counter()
    from threadpoolctl import threadpool_limits

    # one BLAS thread: the same sums, and no stall when the cores are busy with other work (a
    # second BLAS thread spinning for each small product of a block waits for a core)
    with threadpool_limits(1, user_api="blas"):
        for xv, yv, w in iter_values(path, specs, blank_rows=blank_rows, chunk_rows=p.chunk_rows, fast=sc.fast,
                                     **options):
            acc.update(xv, yv, w, labels[:, pos:pos + xv.size])
            pos += xv.size
            if progress is not None:
                progress(pos, sc.rows_used, time.perf_counter() - t0)
    if pos != sc.rows_used:
        raise DataError(message(f"File '{Path(path).name}'", f"{sc.rows_used} rows on the second read",
                                pos, "The file changed while it was being read"))
    engine = engine_from_moments(acc.result(), plan, penalty=penalty, mix=mix, intercept=p.intercept)
    return surface_from_engine(engine, p.degrees, None if lambdas is None else p.lambdas), sc
