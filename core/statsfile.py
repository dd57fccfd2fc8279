"""The statistics file: a sweep kept as its sufficient statistics plus the fold scheme.

A JSON document (no pickle) that lets the page explore degree and lambda for data
far too large to load, without the rows:

| field | meaning |
|---|---|
| ``format``, ``version`` | ``"curvewright-statistics"``, ``1`` |
| ``created``, ``software`` | time of writing; ``{"name", "version"}`` |
| ``data`` | ``file``, ``x_column``, ``y_column``, ``columns_sha256`` |
| ``domain`` | ``center``, ``half_width``: t = (x - center) / half_width |
| ``max_degree``, ``y_shift``, ``intercept``, ``weighted`` | the accumulation's highest Legendre degree D, the response shift y0, the model, whether rows carried weights |
| ``folds`` | ``scheme``, ``k``, ``repeats``, ``seed``, ``test_fraction``, ``n_rows``, ``n_test`` |
| ``cells`` | one entry per cell in order (repeat-major folds, then the sealed cell): ``repeat``, ``fold`` (null for the sealed cell), ``count``, ``gram`` ((D+2) x (D+2) matrix of sum w b b', b = [P_0(t)..P_D(t), y - y0]) |
"""

from __future__ import annotations

import datetime as _dt
import json
from pathlib import Path

import numpy as np

from .basis import Domain
from .engine import FoldEngine, ScoringEngine, engine_from_moments
from .errors import DataError, ParameterError, message
from .files import write_atomic
from .folds import FoldPlan
from .moments import Moments

__all__ = ["save_stats", "load_stats", "FORMAT"]

FORMAT = "curvewright-statistics"


def save_stats(path, engine: ScoringEngine, data: dict, *, force: bool = False) -> Path:
    """Write an engine's per-fold statistics (k-fold engines only: leave-one-out needs the rows)."""
    if not isinstance(engine, FoldEngine):
        raise ParameterError(message(
            "Statistics file", "k-fold cross-validation (the file holds per-fold sums)",
            f"{engine.plan.scheme} scoring",
            "Leave-one-out needs the rows themselves; sweep with k-fold folds to save statistics"))
    m, plan = engine.moments, engine.plan
    k, R = plan.k, plan.repeats
    cells = []
    for c in range(m.n_cells):
        sealed = c == R * k
        cells.append({"repeat": None if sealed else c // k, "fold": None if sealed else c % k,
                      "count": int(m.counts[c]), "gram": m.gram[c].tolist()})
    from . import __version__

    doc = {"format": FORMAT, "version": 1,
           "created": _dt.datetime.now(_dt.timezone.utc).isoformat(timespec="seconds"),
           "software": {"name": "curvewright", "version": __version__}, "data": data,
           "domain": m.domain.to_dict(), "max_degree": m.max_degree, "y_shift": m.y_shift,
           "intercept": engine.intercept, "weighted": bool(m.weighted), "folds": plan.to_dict(), "cells": cells}
    return write_atomic(path, json.dumps(doc), force=force)


# A statistics file holds (repeats x k + 1) cells of (D + 2)^2 numbers; the largest the sweep can
# write (MAX_CELLS scored cells, degree 30) is far below this. Larger files are refused unread.
MAX_STATS_BYTES = 256 * 2**20
_SCHEMES = ("kfold", "hash", "group", "explicit")


def _field(name: str, expected: str, got) -> DataError:
    if isinstance(got, _Missing):
        shown = "nothing"
    elif isinstance(got, (str, bool, int, float)) or got is None:
        shown = repr(got) if len(repr(got)) <= 40 else repr(got)[:37] + "..."
    else:
        shown = f"a {type(got).__name__}"
    return DataError(message(f"Statistics file field '{name}'", expected, shown,
                             "Write the file again with `curvewright sweep --save-stats`"))


class _Missing:
    pass


def _get(doc: dict, key: str):
    return doc.get(key, _Missing()) if isinstance(doc, dict) else _Missing()


def _int(doc, key, where="", lo=0, hi=None, default=None):
    v = _get(doc, key)
    if isinstance(v, _Missing) and default is not None:
        return default
    if isinstance(v, bool) or not isinstance(v, int) or v < lo or (hi is not None and v > hi):
        raise _field(where + key, f"a whole number >= {lo}" + (f" and <= {hi}" if hi is not None else ""), v)
    return v


def _number(doc, key, where="", positive=False, lo=None, hi=None, default=None):
    v = _get(doc, key)
    if isinstance(v, _Missing) and default is not None:
        return default
    ok = isinstance(v, (int, float)) and not isinstance(v, bool) and np.isfinite(v)
    ok = ok and not (positive and v <= 0) and not (lo is not None and v < lo) and not (hi is not None and v >= hi)
    if not ok:
        what = "a finite number" + (" > 0" if positive else "") + (f" in [{lo}, {hi})" if lo is not None else "")
        raise _field(where + key, what, v)
    return float(v)


def _dict(doc, key):
    v = _get(doc, key)
    if not isinstance(v, dict):
        raise _field(key, "an object", v)
    return v


def _cells(cells, R, k, D):
    """(gram, counts) of the cells, every entry checked."""
    if not isinstance(cells, list) or len(cells) != R * k + 1:
        raise _field("cells", f"{R * k + 1} cells for k = {k}, repeats = {R}",
                     len(cells) if isinstance(cells, list) else cells)
    gram = np.empty((R * k + 1, D + 2, D + 2))
    counts = np.empty(R * k + 1, dtype=np.int64)
    for i, c in enumerate(cells):
        counts[i] = _int(c, "count", where=f"cells/{i}/")
        g = _get(c, "gram")
        if not (isinstance(g, list) and len(g) == D + 2
                and all(isinstance(r, list) and len(r) == D + 2 for r in g)):
            raise _field(f"cells/{i}/gram", f"a {D + 2} x {D + 2} matrix (lists of numbers)", g)
        odd = [v for r in g for v in r if not isinstance(v, (int, float)) or isinstance(v, bool)]
        if odd:
            raise _field(f"cells/{i}/gram", "numbers only", odd[0])
        gram[i] = g
        if not np.all(np.isfinite(gram[i])):
            raise _field(f"cells/{i}/gram", "finite numbers", "an infinite or NaN entry")
    return gram, counts


def load_stats(path, *, penalty: str = "ridge", mix: float = 0.5) -> tuple[ScoringEngine, dict]:
    """(engine, data description) from a statistics file, checked field by field.

    ``penalty`` and ``mix`` choose how the statistics are scored (any penalty works
    from the same sums). Every field is checked for its type and range before use; a
    damaged file gives a DataError naming the field.
    """
    from .defaults import MAX_DEGREE

    p = Path(path)
    if not p.is_file():
        raise DataError(message(f"Statistics file '{p}'", "an existing file", "nothing at that path"))
    if p.stat().st_size > MAX_STATS_BYTES:
        raise DataError(message(f"Statistics file '{p.name}'", f"at most {MAX_STATS_BYTES // 2**20} MB",
                                f"{p.stat().st_size / 2**20:,.0f} MB"))
    try:
        doc = json.loads(p.read_bytes().decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError, RecursionError):
        raise DataError(message(f"Statistics file '{p.name}'", "valid JSON", "something else")) from None
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise DataError(message(f"Statistics file '{p.name}' field 'format'", repr(FORMAT),
                                repr(doc.get("format") if isinstance(doc, dict) else doc)))
    if doc.get("version") != 1:
        raise DataError(message("Statistics file field 'version'", "1", repr(doc.get("version"))))
    dom = _dict(doc, "domain")
    center = _number(dom, "center", "domain/")
    half = _number(dom, "half_width", "domain/", positive=True)
    D = _int(doc, "max_degree", hi=MAX_DEGREE)
    folds = _dict(doc, "folds")
    k = _int(folds, "k", "folds/", lo=2, hi=1000)
    R = _int(folds, "repeats", "folds/", lo=1, hi=1000)
    scheme = _get(folds, "scheme")
    scheme = "kfold" if isinstance(scheme, _Missing) else scheme
    if scheme not in _SCHEMES:
        raise _field("folds/scheme", "one of " + ", ".join(map(repr, _SCHEMES)), scheme)
    seed = _int(folds, "seed", "folds/", default=0)
    test_fraction = _number(folds, "test_fraction", "folds/", lo=0.0, hi=1.0, default=0.0)
    y_shift = _number(doc, "y_shift", default=0.0)
    intercept = _get(doc, "intercept")
    if not isinstance(intercept, (bool, _Missing)):
        raise _field("intercept", "true or false", intercept)
    gram, counts = _cells(_get(doc, "cells"), R, k, D)
    n_rows = _int(folds, "n_rows", "folds/", default=int(counts.sum()))
    data = _get(doc, "data")
    if not isinstance(data, (dict, _Missing)):
        raise _field("data", "an object", data)
    domain = Domain(center, half)
    # files written before the 'weighted' field existed: rows carried weights when the
    # total weight differs from the row count (their only trace)
    weighted = doc.get("weighted")
    if not isinstance(weighted, bool):
        weighted = not np.isclose(gram[:, 0, 0].sum(), counts.sum())
    mom = Moments(domain, D, y_shift, gram, counts, weighted)
    plan = FoldPlan(scheme, k, R, seed, np.zeros((R, 0), dtype=np.int16), np.zeros(0, dtype=bool),
                    test_fraction, n_rows=n_rows, n_sealed=int(counts[-1]))
    engine = engine_from_moments(mom, plan, penalty=penalty, mix=mix,
                                 intercept=True if isinstance(intercept, _Missing) else intercept)
    return engine, {} if isinstance(data, _Missing) else data
