"""The one-pass statistics: mergeable, chunk-invariant, memory bounded by the chunk."""

import numpy as np

import core
from core.basis import Domain


def rows(n=5000, seed=0):
    rng = np.random.default_rng(seed)
    x = rng.uniform(-3, 9, n)
    return x, np.cos(x) + rng.normal(size=n), rng.integers(0, 4, n)


def test_partial_statistics_add_up_to_the_whole():
    """Accumulating three partitions separately and adding equals one pass over all rows."""
    x, y, lab = rows()
    dom = Domain.from_range(x.min(), x.max())
    whole = core.accumulate(x, y, labels=lab[None], n_cells=4, domain=dom, max_degree=12, y_shift=0.5)
    parts = [core.accumulate(x[a:b], y[a:b], labels=lab[None, a:b], n_cells=4, domain=dom,
                             max_degree=12, y_shift=0.5) for a, b in ((0, 1000), (1000, 3333), (3333, 5000))]
    merged = parts[0] + parts[1] + parts[2]
    np.testing.assert_allclose(merged.gram, whole.gram, rtol=1e-12, atol=1e-9)
    assert np.array_equal(merged.counts, whole.counts)


def test_chunk_size_does_not_change_the_statistics():
    x, y, lab = rows()
    dom = Domain.from_range(x.min(), x.max())
    a = core.accumulate(x, y, labels=lab[None], n_cells=4, domain=dom, max_degree=8, chunk=97, y_shift=0.0)
    b = core.accumulate(x, y, labels=lab[None], n_cells=4, domain=dom, max_degree=8, chunk=100000, y_shift=0.0)
    np.testing.assert_allclose(a.gram, b.gram, rtol=1e-12, atol=1e-9)


def test_statistics_equal_direct_gram_per_cell():
    """Each cell holds sum w b b' of its rows (b = Legendre values and shifted y)."""
    x, y, lab = rows(800)
    w = np.linspace(0.5, 2, x.size)
    dom = Domain.from_range(x.min(), x.max())
    m = core.accumulate(x, y, labels=lab[None], n_cells=4, domain=dom, max_degree=5, weights=w, y_shift=0.25)
    P = np.polynomial.legendre.legvander(dom.map(x), 5)
    B = np.column_stack([P, y - 0.25])
    for c in range(4):
        sel = lab == c
        np.testing.assert_allclose(m.gram[c], (B[sel] * w[sel, None]).T @ B[sel], rtol=1e-12, atol=1e-10)
        assert m.counts[c] == sel.sum()


def test_skipped_rows_are_not_counted():
    x, y, lab = rows(100)
    lab = lab.copy(); lab[:10] = -1
    dom = Domain.from_range(x.min(), x.max())
    m = core.accumulate(x, y, labels=lab[None], n_cells=4, domain=dom, max_degree=2)
    assert m.counts.sum() == 90
