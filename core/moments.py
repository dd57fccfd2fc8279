"""The engine: one chunked pass that accumulates per-cell sufficient statistics.

For every row i the augmented basis vector is
``b_i = [P_0(t_i), ..., P_D(t_i), y_i - y0]`` (Legendre values of mapped x,
then the response shifted by a constant y0). A *cell* is a group of rows, for
example one fold of one repeat; for each cell the pass adds
``sum_i w_i b_i b_i'`` into a (D + 2) x (D + 2) matrix, and counts the rows.
That matrix holds the weight total, the weighted sums, P'WP, P'Wy and y'Wy:
everything any degree <= D, any lambda and any fold needs.

The pass is chunked (memory O(chunk * D), never O(n * D)) and mergeable:
statistics from different chunks, files or partitions simply add
(``Moments.__add__``), which is what a distributed engine runs per partition.

Shifting y by y0 (default: the first chunk's weighted mean) keeps the sums
small; an intercept absorbs the shift exactly, and ``unshift`` restores the
raw sums for through-origin models.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .basis import Domain, legendre_columns
from .params import check

__all__ = ["Moments", "Accumulator", "accumulate", "unshift", "complement_sums", "DEFAULT_CHUNK"]

DEFAULT_CHUNK = 16384


@dataclass(frozen=True)
class Moments:
    """Per-cell statistics of one pass.

    Attributes
    ----------
    domain : Domain
        The x -> t map used for the basis (fixed for every cell).
    max_degree : int
        D, the highest Legendre degree accumulated.
    y_shift : float
        y0 subtracted from every response before accumulating.
    gram : ndarray of shape (n_cells, D + 2, D + 2)
        ``sum w b b'`` per cell; index D + 1 is the shifted response.
    counts : ndarray of shape (n_cells,), int64
        Unweighted row count per cell.
    weighted : bool
        Whether rows carried weights (recorded, never guessed from the sums).
    """

    domain: Domain
    max_degree: int
    y_shift: float
    gram: np.ndarray = field(repr=False)
    counts: np.ndarray = field(repr=False)
    weighted: bool = False

    @property
    def n_cells(self) -> int:
        return int(self.gram.shape[0])

    def __add__(self, other: "Moments") -> "Moments":
        if (self.domain != other.domain or self.max_degree != other.max_degree
                or self.y_shift != other.y_shift or self.gram.shape != other.gram.shape
                or self.weighted != other.weighted):
            raise ValueError("Moments: expected statistics of the same layout (domain, "
                             "degree, y shift, cells, weighting) to merge, got different ones.")
        return Moments(self.domain, self.max_degree, self.y_shift,
                       self.gram + other.gram, self.counts + other.counts, self.weighted)


def complement_sums(blocks: np.ndarray) -> np.ndarray:
    """For blocks[0..k-1], the sum of all blocks but f, for every f.

    Prefix and suffix sums: only additions, so no cancellation (training
    statistics of fold f are the other folds' statistics added up).
    """
    k = blocks.shape[0]
    zero = np.zeros_like(blocks[0])
    pre = [zero]
    for b in blocks[:-1]:
        pre.append(pre[-1] + b)
    suf = [zero]
    for b in blocks[:0:-1]:
        suf.append(suf[-1] + b)
    suf = suf[::-1]
    return np.stack([pre[f] + suf[f] for f in range(k)])


def unshift(M: np.ndarray, y_shift: float) -> np.ndarray:
    """Statistics for the raw response from those of the shifted one.

    With y = y0 + y': P'Wy = P'Wy' + y0 P'W1 and y'Wy = y''Wy' + 2 y0 1'Wy' + y0^2 1'W1.
    Index 0 must be P_0 = 1 and the last index the response.
    """
    if y_shift == 0.0:
        return M
    M = M.copy()
    col = M[:, -1] + y_shift * M[:, 0]
    yy = M[-1, -1] + 2.0 * y_shift * M[0, -1] + y_shift * y_shift * M[0, 0]
    M[:, -1] = col
    M[-1, :] = col
    M[-1, -1] = yy
    return M


class Accumulator:
    """Streaming accumulation of ``Moments``; feed chunks or whole arrays.

    Rows are summed in canonical blocks of ``chunk`` consecutive rows, whatever sizes
    the updates come in, so the statistics are the same bits for the same rows however
    a file is chunked (rows of an unfinished block wait in a small buffer).

    Parameters
    ----------
    domain : Domain
    max_degree : int
    n_cells : int
    y_shift : float, optional
        Defaults to the weighted mean of the first block's rows (the first ``chunk`` rows).
    chunk : int
        Rows per block (cache-sized).
    """

    def __init__(self, domain: Domain, max_degree: int, n_cells: int, *,
                 y_shift: float | None = None, chunk: int = DEFAULT_CHUNK):
        self.domain = domain
        self.max_degree = check(max_degree=max_degree).max_degree
        self.weighted = False
        self.n_cells = int(n_cells)
        self.y_shift = y_shift
        self.chunk = int(chunk)
        p = self.max_degree + 2
        self._gram = np.zeros((self.n_cells, p, p))
        self._counts = np.zeros(self.n_cells, dtype=np.int64)
        self._buf = np.empty((self.chunk, p), order="F")
        self._pending: list = []          # (x, y, w, labels) pieces of the unfinished block

    def _pending_rows(self) -> int:
        return sum(len(p[0]) for p in self._pending)

    def update(self, x: np.ndarray, y: np.ndarray, weights: np.ndarray | None,
               labels: np.ndarray) -> None:
        """Add rows. ``labels`` has shape (L, m): each row is one assignment of
        the m rows to cells (-1 = skip); a row is added once per assignment."""
        x = np.asarray(x, dtype=np.float64)
        y = np.asarray(y, dtype=np.float64)
        w = None if weights is None else np.asarray(weights, dtype=np.float64)
        labels = np.atleast_2d(labels)
        self.weighted = self.weighted or w is not None
        pos = 0
        if self._pending:                        # complete the waiting block first
            take = min(self.chunk - self._pending_rows(), len(x))
            self._pending.append((x[:take], y[:take], None if w is None else w[:take], labels[:, :take]))
            pos = take
            if self._pending_rows() == self.chunk:
                self._flush()
        while len(x) - pos >= self.chunk:        # whole blocks straight from the input
            stop = pos + self.chunk
            self._block(x[pos:stop], y[pos:stop], None if w is None else w[pos:stop], labels[:, pos:stop])
            pos = stop
        if pos < len(x):
            self._pending.append((x[pos:], y[pos:], None if w is None else w[pos:], labels[:, pos:]))

    def _flush(self) -> None:
        parts = self._pending
        self._pending = []
        w = None if parts[0][2] is None else np.concatenate([p[2] for p in parts])
        self._block(np.concatenate([p[0] for p in parts]), np.concatenate([p[1] for p in parts]), w,
                    np.concatenate([p[3] for p in parts], axis=1))

    def _block(self, x, y, w, labels) -> None:
        if self.y_shift is None:
            self.y_shift = float(np.mean(y) if w is None else np.average(y, weights=w)) if len(y) else 0.0
        m = len(x)
        D = self.max_degree
        B = self._buf[:m]
        legendre_columns(self.domain.map(x), D, out=B[:, : D + 1])
        np.subtract(y, self.y_shift, out=B[:, D + 1])
        if w is not None:
            B *= np.sqrt(w)[:, None]
        for lab in labels:
            if self.n_cells == 1 and not (lab < 0).any():
                self._gram[0] += B.T @ B
                self._counts[0] += m
                continue
            order = np.argsort(lab, kind="stable")
            cnt = np.bincount(lab + 1, minlength=self.n_cells + 1)
            Bs = B[order]
            pos = int(cnt[0])  # skipped rows (-1) sort first
            for c in np.flatnonzero(cnt[1:]):
                n_c = int(cnt[c + 1])
                blk = Bs[pos: pos + n_c]
                self._gram[c] += blk.T @ blk
                self._counts[c] += n_c
                pos += n_c

    def result(self) -> Moments:
        """The statistics of every row added so far (the last, partial block included)."""
        if self._pending:
            self._flush()
        return Moments(self.domain, self.max_degree, float(self.y_shift or 0.0),
                       self._gram.copy(), self._counts.copy(), self.weighted)


def accumulate(x, y, *, labels, n_cells: int, domain: Domain, max_degree: int,
               weights=None, y_shift: float | None = None, chunk: int = DEFAULT_CHUNK) -> Moments:
    """One pass over in-memory arrays (see ``Accumulator``).

    Runs with one BLAS thread, as the streamed pass does: the sums are the same bits (the blocks are
    canonical), and a second thread waiting for a busy core can stall each small product many times over.
    """
    from threadpoolctl import threadpool_limits

    acc = Accumulator(domain, max_degree, n_cells, y_shift=y_shift, chunk=chunk)
    with threadpool_limits(1, user_api="blas"):
        acc.update(x, y, weights, labels)
    return acc.result()
