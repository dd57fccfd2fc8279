"""Sweeps over many files or a generated stream, in one process or on a Dask cluster.

Both engines compute exactly the same statistics (``core.blocks``: hashed folds,
canonical blocks, double-double sums), so the surface does not depend on the
engine, the number of workers or how the rows were partitioned.

* ``engine="local"``: files read one after another in chunks in this process.
* ``engine="dask"``: one task per file scans it (rows, x range, fingerprint,
  validation), the driver fixes the global row offsets, the domain and the
  response shift, then one task per file accumulates its statistics; partial
  blocks at file edges travel as rows and are completed on the driver. Without a
  scheduler address a ``dask.distributed.LocalCluster`` on 127.0.0.1 is started.
  Tasks are pure, so a task lost with a worker is recomputed by Dask; a task that
  fails for good raises, never leaving a partial surface.
"""

from __future__ import annotations

import hashlib
import time
from pathlib import Path

import numpy as np

from .basis import Domain
from .blocks import BLOCK_ROWS, BlockAccumulator
from .engine import engine_from_moments
from .errors import DataError, ParameterError, message
from .folds import FoldPlan, check_fold_rows
from .params import check, combination
from .select import Surface, surface_from_engine
from .stream import chunk_columns, iter_chunks, iter_values, scan_file
from .validate import single_x

__all__ = ["sweep_files", "sweep_chunks", "expand_paths"]


def expand_paths(spec) -> list[Path]:
    """A file, a folder (its .csv/.tsv/.parquet files) or a glob, sorted by name."""
    p = Path(spec)
    if p.is_dir():
        files = sorted(q for q in p.iterdir() if q.suffix.lower() in (".csv", ".tsv", ".txt", ".parquet"))
    elif any(ch in str(spec) for ch in "*?["):
        files = sorted(Path(q) for q in __import__("glob").glob(str(spec)))
    else:
        files = [p]
    if not files:
        raise DataError(message(f"Data '{spec}'", "a file, a folder of CSV/Parquet files or a glob", "no files"))
    return files


def _file_stats(path, offset, specs, blank_rows, chunk_rows, acc_args, fast=False, acc=None, on_chunk=None):
    """One file's statistics (a Dask task, or a step of the local engine given ``acc``).

    Returns the accumulator, edge rows of partial blocks still pending. ``on_chunk(rows)`` is
    called with the rows of the file done so far. The file is read by the reader its scan used
    (``fast``: ``Scan.fast``; ``core.stream.iter_values``).
    """
    acc = BlockAccumulator(**acc_args) if acc is None else acc
    pos = offset
    for xv, yv, w in iter_values(path, specs, blank_rows=blank_rows, chunk_rows=chunk_rows, fast=fast):
        acc.add_rows(pos, xv, yv, w)
        pos += xv.size
        if on_chunk is not None:
            on_chunk(pos - offset)
    return acc


def _plan(k, repeats, seed, test_fraction, counts) -> FoldPlan:
    n_test = int(counts[repeats * k])
    n = int(counts[:k].sum()) + n_test
    return FoldPlan("hash", k, repeats, seed, np.zeros((repeats, 0), dtype=np.int16), np.zeros(0, dtype=bool),
                    float(test_fraction), n_rows=n, n_sealed=n_test)


def _check(degrees, lambdas, folds, repeats, seed, test_fraction, intercept, penalty, mix):
    p = check(degrees=degrees, folds=folds, repeats=repeats, seed=seed, test_fraction=test_fraction,
              intercept=intercept, **({} if lambdas is None else {"lambdas": lambdas}))
    p.lambdas = None if lambdas is None else p.lambdas
    combination(penalty=penalty, mix=mix)
    return p


def _engine_from(acc: BlockAccumulator, p, penalty, mix):
    mom = acc.finish()
    counts = mom.counts
    k, R = p.folds, p.repeats
    train = np.concatenate([counts[r * k:(r + 1) * k].sum() - counts[r * k:(r + 1) * k] for r in range(R)])
    check_fold_rows(train, k, int(p.degrees.max()))
    return engine_from_moments(mom, _plan(k, R, p.seed, p.test_fraction, counts), penalty=penalty, mix=mix,
                               intercept=p.intercept)


def sweep_files(paths, degrees, lambdas=None, *, x, y, weights=None, uncertainty=None, folds: int = 10,
                repeats: int = 1, seed: int = 0, test_fraction: float = 0.0, intercept: bool = True,
                penalty: str = "ridge", mix: float = 0.5, blank_rows: str = "refuse", engine: str = "local",
                scheduler: str | None = None, client=None, chunk_rows: int = 200_000, block_rows: int = BLOCK_ROWS,
                progress=None) -> tuple[Surface, dict]:
    """Cross-validated surface over the rows of several files (in order), by either engine.

    Any penalty (the statistics are the same; ``core.engine.engine_from_moments``).
    Returns (surface, info) with info holding rows, x range, fingerprints, file list.
    ``progress(rows_done, rows_total, seconds)`` is called as work completes.
    """
    prm = _check(degrees, lambdas, folds, repeats, seed, test_fraction, intercept, penalty, mix)
    max_degree = int(prm.degrees.max())
    if engine not in ("local", "dask"):
        raise ParameterError(message("Option --engine", "local or dask", repr(engine)))
    paths = [Path(p) for p in paths]
    specs = {"x": x, "y": y, "weights": weights, "uncertainty": uncertainty}
    scan_kw = dict(x=x, y=y, weights=weights, uncertainty=uncertainty, blank_rows=blank_rows, chunk_rows=chunk_rows,
                   require_spread=False)
    t0 = time.perf_counter()
    own_cluster = None
    if engine == "dask":
        client, own_cluster = _client(client, scheduler)
    try:
        if engine == "dask":
            scans = client.gather(client.map(lambda p: scan_file(p, **scan_kw), paths, pure=False))
        else:
            scans = [scan_file(p, **scan_kw) for p in paths]
        offsets = np.concatenate([[0], np.cumsum([s.rows_used for s in scans])]).astype(np.int64)
        total = int(offsets[-1])
        lo, hi = min(s.x_min for s in scans), max(s.x_max for s in scans)
        if not lo < hi:
            raise single_x(f"Column '{scans[0].x_name}'", lo)
        acc_args = dict(domain=Domain.from_range(lo, hi), max_degree=max_degree, y_shift=0.0, seed=seed,
                        k=folds, repeats=repeats, test_fraction=test_fraction, block_rows=block_rows)
        # a response shift both engines agree on: the first file's first rows
        first = next(iter_chunks(paths[0], specs, chunk_rows=min(chunk_rows, 4096)))
        yv = chunk_columns(*first[:2], first[2], first[3], paths[0].name, blank_rows)[1]
        acc_args["y_shift"] = float(np.round(np.mean(yv), 6)) if yv.size else 0.0
        if engine == "dask":
            from distributed import as_completed

            futures = client.map(_file_stats, [str(p) for p in paths], offsets[:-1].tolist(),
                                 [specs] * len(paths), [blank_rows] * len(paths), [chunk_rows] * len(paths),
                                 [acc_args] * len(paths), [s.fast for s in scans], pure=False)
            parts = {}
            index = {f.key: i for i, f in enumerate(futures)}
            done_rows = 0
            for fut in as_completed(futures):
                i = index[fut.key]
                parts[i] = fut.result()
                done_rows += scans[i].rows_used
                if progress is not None:
                    progress(done_rows, total, time.perf_counter() - t0)
            acc = parts[0]
            for i in range(1, len(paths)):
                acc.merge(parts[i])
        else:
            acc = BlockAccumulator(**acc_args)
            done_rows = 0
            for p, off, sc in zip(paths, offsets[:-1], scans):
                report = None if progress is None else \
                    (lambda rows, base=done_rows: progress(base + rows, total, time.perf_counter() - t0))
                _file_stats(p, int(off), specs, blank_rows, chunk_rows, acc_args, sc.fast, acc=acc, on_chunk=report)
                done_rows += sc.rows_used
    finally:
        if own_cluster is not None:
            client.close()
            own_cluster.close()
    eng = _engine_from(acc, prm, penalty, mix)
    h = hashlib.sha256()
    for s in scans:
        h.update(s.columns_sha256.encode())
    fh = hashlib.sha256()
    for s in scans:
        fh.update(s.file_sha256.encode())
    info = {"files": [str(p) for p in paths], "rows_used": total,
            "rows_dropped": [r for s in scans for r in s.rows_dropped][:1000],
            "x_range": [lo, hi], "columns_sha256": scans[0].columns_sha256 if len(scans) == 1 else h.hexdigest(),
            "file_sha256": scans[0].file_sha256 if len(scans) == 1 else fh.hexdigest(),
            "x_name": scans[0].x_name, "y_name": scans[0].y_name, "weight_name": scans[0].weight_name,
            "engine": engine}
    return surface_from_engine(eng, prm.degrees, prm.lambdas), info


def _client(client, scheduler):
    if client is not None:
        return client, None
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise ParameterError(message("Option --engine dask", "the dask[distributed] package", "none",
                                     "pip install 'dask[distributed]'")) from None
    if scheduler:
        return Client(scheduler), None
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, host="127.0.0.1", dashboard_address=None,
                           processes=True)
    return Client(cluster), cluster


def sweep_chunks(chunks, degrees, lambdas=None, *, domain: Domain, y_shift: float = 0.0, folds: int = 10,
                 repeats: int = 1, seed: int = 0, test_fraction: float = 0.0, intercept: bool = True,
                 penalty: str = "ridge", mix: float = 0.5, block_rows: int = BLOCK_ROWS, progress=None) -> Surface:
    """True streaming: rows from an iterator of (x, y[, w]) chunks with a declared domain.

    One pass; memory is one chunk plus the statistics (no per-row arrays are kept).
    """
    p = _check(degrees, lambdas, folds, repeats, seed, test_fraction, intercept, penalty, mix)
    max_degree = int(p.degrees.max())
    acc = BlockAccumulator(domain, max_degree, y_shift, seed=seed, k=folds, repeats=repeats,
                           test_fraction=test_fraction, block_rows=block_rows)
    pos = 0
    t0 = time.perf_counter()
    for chunk in chunks:
        xv, yv = chunk[0], chunk[1]
        w = chunk[2] if len(chunk) > 2 else None
        acc.add_rows(pos, xv, yv, w)
        pos += len(xv)
        if progress is not None:
            progress(pos, None, time.perf_counter() - t0)
    eng = _engine_from(acc, p, penalty, mix)
    return surface_from_engine(eng, p.degrees, p.lambdas)
