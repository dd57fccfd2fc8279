"""The scoring-engine contract, over every engine kind and every penalty it supports.

Each kind (in-memory k-fold, repeated, grouped, explicit folds, leave-one-out, a
streamed file, the partitioned engine locally and on a Dask LocalCluster, a
statistics file) must answer with the same attributes and shapes, and give the
same surface as an in-memory engine built from the same fold assignment
(1e-12 relative). Unsupported combinations are refused by name, never replaced.
"""

import subprocess
import sys

import numpy as np
import pandas as pd
import pytest

import core
from core.blocks import hash_cells
from core.engine import ScoringEngine, engine_from_moments
from core.errors import ParameterError
from core.folds import FoldPlan
from core.moments import accumulate

DEGREES = range(0, 7)
LAMS = np.array([0.0, 1e-4, 1e-2, 1.0, 30.0])
PENALTIES = [("ridge", 0.5), ("curvature", 0.5), ("lasso", 0.5), ("elastic", 0.4)]
N = 240


@pytest.fixture(scope="module")
def rows():
    """Invented load-cell-like data: x in [0, 5], weights from a stated spread."""
    rng = np.random.default_rng(21)
    x = rng.uniform(0, 5, N)
    y = np.log1p(x) + 0.2 * np.sin(3 * x) + 0.05 * rng.normal(size=N)
    w = rng.uniform(0.5, 2.0, N)
    return x, y, w


def surface_of(engine):
    return core.surface_from_engine(engine, DEGREES, LAMS)


def assert_same_surface(a, b, rtol=1e-12):
    np.testing.assert_allclose(a.fold_mse, b.fold_mse, rtol=rtol, atol=0)
    np.testing.assert_allclose(a.train_mse, b.train_mse, rtol=rtol, atol=0)
    np.testing.assert_allclose(a.effective_df, b.effective_df, rtol=rtol, atol=0)
    np.testing.assert_allclose(a.gcv_mse, b.gcv_mse, rtol=rtol, atol=0)


def assert_contract(engine, penalty, mix):
    """Attributes and shapes every engine has, and values, never mutation."""
    assert isinstance(engine, ScoringEngine)
    for name in ("plan", "penalty", "mix", "counts", "intercept", "moments", "n_train", "n_test", "domain",
                 "max_degree", "weighted"):
        assert hasattr(engine, name), name
    assert engine.penalty == penalty
    assert engine.mix == {"ridge": 0.0, "curvature": 0.0, "lasso": 1.0}.get(penalty, mix)
    cv, tr = engine.scores(3, LAMS)
    assert cv.shape == tr.shape == (engine.n_folds, LAMS.size)
    mean, se, trm = engine.cv_summary(3, LAMS)
    assert mean.shape == se.shape == trm.shape == (LAMS.size,)
    coef = engine.coefficients(3, LAMS)
    curve = engine.curve(3, 1e-2)
    assert coef.shape == (LAMS.size, 4) and isinstance(curve, core.Curve)
    np.testing.assert_array_equal(curve.coef, engine.coefficients(3, [1e-2])[0])
    assert engine.effective_df(3, LAMS).shape == engine.train_mse(3, LAMS).shape == (LAMS.size,)
    assert engine.counts.sum() == engine.n_train * engine.plan.repeats


def same_cells(rows, folds_of_row, test_mask, k, penalty, mix):
    """An in-memory engine built directly from a fold assignment (one pass, explicit cells)."""
    x, y, w = rows
    lab = np.where(test_mask, k, folds_of_row).astype(np.int32)
    plan = FoldPlan("explicit", k, 1, 0, np.where(test_mask, -1, folds_of_row)[None].astype(np.int16), test_mask)
    mom = accumulate(x, y, labels=lab[None], n_cells=k + 1, domain=core.Domain.from_range(x.min(), x.max()),
                     max_degree=6, weights=w)
    return engine_from_moments(mom, plan, penalty=penalty, mix=mix)


def kfold_pair(rows, penalty, mix):
    x, y, w = rows
    e = core.build_engine(x, y, max_degree=6, folds=5, seed=3, weights=w, test_fraction=0.2, penalty=penalty, mix=mix)
    return e, [same_cells(rows, e.plan.labels[0], e.plan.test_mask, 5, penalty, mix)]


def repeated_pair(rows, penalty, mix):
    """Repeated folds: each repeat's fold scores equal an engine with that repeat's folds."""
    x, y, w = rows
    e = core.build_engine(x, y, max_degree=6, folds=4, repeats=2, seed=1, weights=w, penalty=penalty, mix=mix)
    return e, [same_cells(rows, e.plan.labels[r], e.plan.test_mask, 4, penalty, mix) for r in range(2)]


def grouped_pair(rows, penalty, mix):
    x, y, w = rows
    g = np.arange(N) // 3
    e = core.build_engine(x, y, max_degree=6, folds=5, groups=g, seed=2, weights=w, test_fraction=0.1,
                          penalty=penalty, mix=mix)
    lab = e.plan.labels[0]
    assert all(len(set(lab[g == k])) == 1 for k in range(N // 3))          # replicates stay together
    assert all(len(set(e.plan.test_mask[g == k])) == 1 for k in range(N // 3))
    return e, [same_cells(rows, lab, e.plan.test_mask, 5, penalty, mix)]


def explicit_pair(rows, penalty, mix):
    x, y, w = rows
    names = np.array(list("abcd"))
    ids = names[np.arange(N) % 4]
    e = core.build_engine(x, y, max_degree=6, fold_ids=ids, weights=w, penalty=penalty, mix=mix)
    return e, [same_cells(rows, np.searchsorted(names, ids), np.zeros(N, bool), 4, penalty, mix)]


def stream_pair(rows, penalty, mix, tmp_path):
    from core.stream import sweep_file

    x, y, w = rows
    p = tmp_path / "rows.csv"
    pd.DataFrame({"x": x, "y": y, "w": w}).to_csv(p, index=False, float_format="%.17g")
    s, _ = sweep_file(p, DEGREES, LAMS, x="x", y="y", weights="w", folds=5, seed=3, test_fraction=0.2,
                      penalty=penalty, mix=mix, chunk_rows=100)
    ref = core.build_engine(x, y, max_degree=6, folds=5, seed=3, weights=w, test_fraction=0.2,
                            penalty=penalty, mix=mix, row_keys=np.arange(N) + 2)     # spreadsheet rows
    return s.engine, [ref]


def stats_pair(rows, penalty, mix, tmp_path):
    from core.statsfile import load_stats, save_stats

    x, y, w = rows
    ref = core.build_engine(x, y, max_degree=6, folds=5, seed=3, weights=w, test_fraction=0.2)
    save_stats(tmp_path / "s.json", ref, {"x_column": "x", "y_column": "y"})
    e, _ = load_stats(tmp_path / "s.json", penalty=penalty, mix=mix)
    assert e.weighted
    return e, [ref.with_penalty(penalty, mix)]


def hashed_reference(x, y, w, penalty, mix, y_shift):
    """An in-memory engine on the partitioned engines' hashed cells (plain sums, one process)."""
    lab = hash_cells(np.arange(x.size), seed=4, k=5, repeats=1, test_fraction=0.1)
    mom = accumulate(x, y, labels=lab, n_cells=6, domain=core.Domain.from_range(x.min(), x.max()),
                     max_degree=6, weights=w, y_shift=y_shift)
    plan = FoldPlan("hash", 5, 1, 4, np.zeros((1, 0), np.int16), np.zeros(0, bool), 0.1,
                    n_rows=x.size, n_sealed=int(mom.counts[5]))
    return engine_from_moments(mom, plan, penalty=penalty, mix=mix)


def partitioned_pair(rows, penalty, mix, tmp_path, engine="local", client=None):
    from core.distributed import sweep_files

    x, y, w = rows
    paths = []
    for i, (a, b) in enumerate(((0, 100), (100, 101), (101, N))):
        p = tmp_path / f"part{i}.csv"
        pd.DataFrame({"x": x[a:b], "y": y[a:b], "w": w[a:b]}).to_csv(p, index=False, float_format="%.17g")
        paths.append(p)
    s, _ = sweep_files(paths, DEGREES, LAMS, x="x", y="y", weights="w", folds=5, seed=4, test_fraction=0.1,
                       penalty=penalty, mix=mix, engine=engine, client=client, block_rows=64)
    return s.engine, [hashed_reference(x, y, w, penalty, mix, s.engine.moments.y_shift)]


KINDS = {"kfold": kfold_pair, "repeated": repeated_pair, "grouped": grouped_pair, "explicit": explicit_pair}


@pytest.mark.parametrize("penalty, mix", PENALTIES)
@pytest.mark.parametrize("kind", sorted(KINDS))
def test_in_memory_kinds_keep_the_contract(rows, kind, penalty, mix):
    """k-fold, repeated, grouped and explicit engines: the contract, and each fold's scores equal an
    explicit-fold engine built from the same assignment."""
    e, refs = KINDS[kind](rows, penalty, mix)
    assert_contract(e, penalty, mix)
    got = surface_of(e)
    k = e.plan.k
    for r, ref in enumerate(refs):
        want = surface_of(ref)
        np.testing.assert_allclose(got.fold_mse[:, :, r * k:(r + 1) * k], want.fold_mse, rtol=1e-12)
    if len(refs) == 1:
        assert_same_surface(got, surface_of(refs[0]))


@pytest.mark.parametrize("penalty, mix", PENALTIES)
@pytest.mark.parametrize("kind", ["stream", "stats", "local"])
def test_file_fed_kinds_equal_in_memory(rows, tmp_path, kind, penalty, mix):
    """A streamed file, a statistics file and the partitioned engine (three files, blocks cut by file
    edges): the contract, and the surface of the in-memory engine on the same cells to 1e-12."""
    if kind == "stream":
        e, refs = stream_pair(rows, penalty, mix, tmp_path)
    elif kind == "stats":
        e, refs = stats_pair(rows, penalty, mix, tmp_path)
    else:
        e, refs = partitioned_pair(rows, penalty, mix, tmp_path)
    assert_contract(e, penalty, mix)
    assert_same_surface(surface_of(e), surface_of(refs[0]))


def test_dask_engine_keeps_the_contract(rows, tmp_path):
    """The Dask engine (LocalCluster on 127.0.0.1) with ridge and lasso equals the in-memory engine."""
    distributed = pytest.importorskip("distributed")
    cluster = distributed.LocalCluster(n_workers=1, threads_per_worker=1, host="127.0.0.1",
                                       dashboard_address=None, processes=True)
    client = distributed.Client(cluster)
    try:
        for penalty, mix in (PENALTIES[0], PENALTIES[2]):
            e, refs = partitioned_pair(rows, penalty, mix, tmp_path, engine="dask", client=client)
            assert_contract(e, penalty, mix)
            assert_same_surface(surface_of(e), surface_of(refs[0]))
    finally:
        client.close()
        cluster.close()


def test_leave_one_out_keeps_the_contract(rows):
    """LOO (ridge): the contract; at lambda = 0 the standardization does not matter, so its score equals
    n-fold cross-validation with single-row explicit folds (least squares is invariant to scaling)."""
    x, y, w = rows
    e = core.build_engine(x[:60], y[:60], max_degree=6, folds="loo", weights=w[:60])
    assert_contract(e, "ridge", 0.5)
    ref = core.build_engine(x[:60], y[:60], max_degree=6, fold_ids=np.arange(60), weights=w[:60])
    for d in (1, 3, 6):
        # within a fold the LOO loss is w_i e_i^2 / mean(w); the explicit fold's MSE is e_i^2
        np.testing.assert_allclose(e.scores(d, [0.0])[0][:, 0] * w[:60].mean() / w[:60],
                                   ref.scores(d, [0.0])[0][:, 0], rtol=1e-9)


@pytest.mark.parametrize("kwargs, text", [
    (dict(penalty="lasso"), "penalty='lasso'"),
    (dict(penalty="elastic", mix=0.3), "penalty='elastic'"),
    (dict(repeats=3), "repeats=3"),
    (dict(fold_ids=np.arange(N) % 3), "fold_ids"),
    (dict(groups=np.arange(N) // 2), "groups"),
])
def test_leave_one_out_refuses_what_it_cannot_do(rows, kwargs, text):
    """LOO with an L1 penalty, repeats, explicit folds or groups is refused by name (never ridge LOO instead)."""
    x, y, w = rows
    with pytest.raises(ParameterError, match=r"Leave-one-out \(folds='loo'\): expected a ridge or curvature penalty with "
                                             r"single rows as folds, got .*" + text):
        core.sweep(x, y, DEGREES, LAMS, folds="loo", **kwargs)
    with pytest.raises(ParameterError, match="penalty='lasso'"):
        core.build_engine(x, y, max_degree=3, folds="loo").with_penalty("lasso")


def test_statistics_file_of_leave_one_out_is_refused(rows, tmp_path):
    """Leave-one-out needs the rows: saving its statistics is refused with the reason and the fix."""
    from core.statsfile import save_stats

    x, y, _ = rows
    e = core.build_engine(x, y, max_degree=3, folds="loo")
    with pytest.raises(ParameterError, match="Statistics file: expected k-fold cross-validation"):
        save_stats(tmp_path / "s.json", e, {})
    assert not (tmp_path / "s.json").exists()


def test_changing_the_penalty_makes_a_new_engine(rows):
    """Engines are values: with_penalty leaves the engine (and any surface holding it) unchanged."""
    x, y, w = rows
    e = core.build_engine(x, y, max_degree=6, folds=5, weights=w)
    s = surface_of(e)
    before = s.cv_mse.copy()
    lasso = e.with_penalty("lasso")
    assert lasso is not e and e.penalty == "ridge" and s.engine.penalty == "ridge"
    np.testing.assert_array_equal(surface_of(e).cv_mse, before)
    ref = core.sweep(x, y, DEGREES, LAMS, folds=5, weights=w, penalty="lasso")
    np.testing.assert_allclose(surface_of(lasso).cv_mse, ref.cv_mse, rtol=1e-12)


def test_core_has_no_import_circle():
    """No module of core imports (directly or through others) a module that imports it back."""
    code = r"""
import ast, pathlib, sys
root = pathlib.Path('core')
graph = {}
for f in root.glob('*.py'):
    mod = f.stem
    deps = set()
    for node in ast.walk(ast.parse(f.read_text())):
        if isinstance(node, ast.ImportFrom) and node.level == 1:
            if node.module:
                deps.add(node.module.split('.')[0])
            else:
                deps.update(a.name for a in node.names)
    graph[mod] = deps & {p.stem for p in root.glob('*.py')}
def reach(a, seen):
    for b in graph.get(a, ()):
        if b not in seen:
            seen.add(b); reach(b, seen)
    return seen
bad = [m for m in graph if m in reach(m, set())]
print(','.join(sorted(bad)))
"""
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True,
                         cwd=__import__("pathlib").Path(__file__).resolve().parents[2])
    assert out.stdout.strip() == ""
