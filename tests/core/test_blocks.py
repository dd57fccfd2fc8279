"""Partition-independent statistics: hashed folds, canonical blocks, double-double sums."""

import numpy as np
import pytest

import core
from core.basis import Domain
from core.blocks import BlockAccumulator, hash_cells, hash_unit
from core.distributed import sweep_chunks


def rows(n=40000, seed=0):
    rng = np.random.default_rng(seed)
    x = rng.uniform(-1, 4, n)
    return x, np.exp(-x) * np.cos(3 * x) + 0.05 * rng.normal(size=n)


def accumulate(x, y, cuts, order=None):
    parts = []
    for a, b in zip(cuts[:-1], cuts[1:]):
        acc = BlockAccumulator(Domain.from_range(-1, 4), 12, 0.1, seed=3, k=5, repeats=2, test_fraction=0.15,
                               block_rows=2048)
        acc.add_rows(a, x[a:b], y[a:b])
        parts.append(acc)
    order = order or range(len(parts))
    order = list(order)
    total = parts[order[0]]
    for i in order[1:]:
        total.merge(parts[i])
    return total.finish()


def test_statistics_do_not_depend_on_partitioning_or_merge_order():
    """The same rows split 1, 4 or 9 ways and merged in any order give identical bits."""
    x, y = rows()
    one = accumulate(x, y, [0, x.size])
    four = accumulate(x, y, [0, 5000, 5001, 22222, x.size], order=[2, 0, 3, 1])
    nine = accumulate(x, y, list(range(0, x.size, 4500)) + [x.size], order=[8, 1, 5, 0, 2, 7, 3, 6, 4])
    assert np.array_equal(one.gram, four.gram) and np.array_equal(one.gram, nine.gram)
    assert np.array_equal(one.counts, nine.counts)


def test_hashed_folds_are_per_row_and_balanced():
    idx = np.arange(200000)
    lab = hash_cells(idx, seed=9, k=10, repeats=1, test_fraction=0.2)[0]
    assert np.array_equal(lab[1234:5678], hash_cells(idx[1234:5678], seed=9, k=10, repeats=1, test_fraction=0.2)[0])
    sealed = lab == 10
    assert abs(sealed.mean() - 0.2) < 0.005
    sizes = np.bincount(lab[~sealed])
    assert sizes.min() > 0.97 * sizes.mean()
    u = hash_unit(idx, 1, 1)
    assert 0 <= u.min() and u.max() < 1 and abs(u.mean() - 0.5) < 0.005


def test_block_engine_equals_in_memory_engine_with_the_same_folds():
    """Same rows and the hashed fold ids given explicitly to the in-memory engine: same surface."""
    x, y = rows(20000)
    lams = [1e-4, 1e-2, 1.0]
    s = sweep_chunks(((x[a:a + 3000], y[a:a + 3000]) for a in range(0, x.size, 3000)), range(0, 9), lams,
                     domain=Domain.from_range(x.min(), x.max()), folds=4, seed=5)
    ids = hash_cells(np.arange(x.size), seed=5, k=4, repeats=1, test_fraction=0.0)[0]
    ref = core.sweep(x, y, range(0, 9), lams, fold_ids=ids)
    np.testing.assert_allclose(s.fold_mse, ref.fold_mse, rtol=1e-10)
    assert s.folds["scheme"] == "hash" and s.folds["n_rows"] == x.size
