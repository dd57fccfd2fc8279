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


def _need(doc, key, kind, where=""):
    if key not in doc or not isinstance(doc[key], kind):
        raise DataError(message(f"Statistics file field '{where}{key}'", f"a {getattr(kind, '__name__', kind)}",
                                "nothing" if key not in doc else type(doc[key]).__name__))
    return doc[key]


def load_stats(path, *, penalty: str = "ridge", mix: float = 0.5) -> tuple[ScoringEngine, dict]:
    """(engine, data description) from a statistics file, checked field by field.

    ``penalty`` and ``mix`` choose how the statistics are scored (any penalty works
    from the same sums).
    """
    p = Path(path)
    if not p.is_file():
        raise DataError(message(f"Statistics file '{p}'", "an existing file", "nothing at that path"))
    try:
        doc = json.loads(p.read_bytes().decode("utf-8"))
    except (UnicodeDecodeError, json.JSONDecodeError):
        raise DataError(message(f"Statistics file '{p.name}'", "valid JSON", "something else")) from None
    if not isinstance(doc, dict) or doc.get("format") != FORMAT:
        raise DataError(message(f"Statistics file '{p.name}' field 'format'", repr(FORMAT),
                                repr(doc.get("format") if isinstance(doc, dict) else doc)))
    if doc.get("version") != 1:
        raise DataError(message("Statistics file field 'version'", "1", repr(doc.get("version"))))
    dom = _need(doc, "domain", dict)
    D = _need(doc, "max_degree", int)
    folds = _need(doc, "folds", dict)
    cells = _need(doc, "cells", list)
    k, R = int(folds.get("k", 0)), int(folds.get("repeats", 0))
    if len(cells) != R * k + 1:
        raise DataError(message("Statistics file field 'cells'", f"{R * k + 1} cells for k = {k}, repeats = {R}",
                                len(cells)))
    try:
        gram = np.array([c["gram"] for c in cells], dtype=float)
        counts = np.array([c["count"] for c in cells], dtype=np.int64)
    except (KeyError, TypeError, ValueError):
        raise DataError(message("Statistics file field 'cells'", "entries with 'count' and a square 'gram'",
                                "something else")) from None
    if gram.shape != (R * k + 1, D + 2, D + 2) or not np.all(np.isfinite(gram)):
        raise DataError(message("Statistics file field 'cells/gram'", f"finite {D + 2} x {D + 2} matrices",
                                f"shape {gram.shape}"))
    domain = Domain(float(dom["center"]), float(dom["half_width"]))
    # files written before the 'weighted' field existed: rows carried weights when the
    # total weight differs from the row count (their only trace)
    weighted = doc.get("weighted")
    if not isinstance(weighted, bool):
        weighted = not np.isclose(gram[:, 0, 0].sum(), counts.sum())
    mom = Moments(domain, D, float(doc.get("y_shift", 0.0)), gram, counts, weighted)
    plan = FoldPlan(folds.get("scheme", "kfold"), k, R, int(folds.get("seed", 0)),
                    np.zeros((R, 0), dtype=np.int16), np.zeros(0, dtype=bool),
                    float(folds.get("test_fraction", 0.0)), n_rows=int(folds.get("n_rows", counts.sum())),
                    n_sealed=int(counts[-1]))
    engine = engine_from_moments(mom, plan, penalty=penalty, mix=mix, intercept=bool(doc.get("intercept", True)))
    return engine, doc.get("data", {})
