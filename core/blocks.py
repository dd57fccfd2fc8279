"""Partition-independent statistics: hashed folds, canonical row blocks, double-double sums.

For engines that split the rows across processes (``core.distributed``) the result
must not depend on how the rows were split. Three things make it so:

* **Hashed folds.** Row i (0-based over all files in order) goes to fold
  ``floor(k * u)`` with ``u = splitmix64(i, seed, repeat) / 2^64``, and to the
  sealed test set when its own draw is below the test fraction: a function of the
  row alone, so any process can assign it.
* **Canonical blocks.** Rows are grouped into blocks of ``block_rows`` consecutive
  global indices; each block's per-cell Gram matrix is computed from exactly its
  rows, in order, by single-threaded BLAS, so the same block gives the same bits
  wherever it is computed. A block cut by a partition edge is sent, as rows, to the
  process that merges, and computed there once it is whole.
* **Double-double sums.** Block matrices are summed with an error-free two-sum
  (a high and a low word per entry), so the order in which blocks and partitions
  are added changes the total only at the 1e-32 level.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .basis import Domain, legendre_columns
from .folds import hash_cells, hash_unit
from .moments import Moments

__all__ = ["hash_unit", "hash_cells", "BlockAccumulator", "BLOCK_ROWS"]

BLOCK_ROWS = 8192


def _one_blas_thread():
    """Single-threaded BLAS for the statements inside (set once per call of the accumulator, not
    per block: finding the BLAS libraries costs about a millisecond)."""
    from threadpoolctl import threadpool_limits

    return threadpool_limits(1, user_api="blas")


@dataclass
class _Pending:
    """Rows of a block seen only in part so far: (first global index, x, y, w) pieces."""
    pieces: list = field(default_factory=list)

    @property
    def rows(self) -> int:
        return sum(len(p[1]) for p in self.pieces)


class BlockAccumulator:
    """Statistics over canonical blocks with double-double sums (see module docstring).

    Parameters
    ----------
    domain, max_degree, y_shift : as for ``core.moments``; must be the same in every process.
    seed, k, repeats, test_fraction : the hashed fold scheme.
    block_rows : int
    """

    def __init__(self, domain: Domain, max_degree: int, y_shift: float, *, seed: int, k: int, repeats: int,
                 test_fraction: float, block_rows: int = BLOCK_ROWS):
        self.domain, self.D, self.y_shift = domain, int(max_degree), float(y_shift)
        self.seed, self.k, self.R, self.test_fraction = int(seed), int(k), int(repeats), float(test_fraction)
        self.block_rows = int(block_rows)
        self.n_cells = self.R * self.k + 1
        p = self.D + 2
        self.hi = np.zeros((self.n_cells, p, p))
        self.lo = np.zeros((self.n_cells, p, p))
        self.counts = np.zeros(self.n_cells, dtype=np.int64)
        self.pending: dict[int, _Pending] = {}
        self.weighted = False
        self._buf = None                      # the block's basis matrix, column-major, reused

    def __getstate__(self):
        state = dict(self.__dict__)
        state["_buf"] = None                  # a partition's result travels without its work buffer
        return state

    # ---- adding rows ------------------------------------------------------------------
    def add_rows(self, start: int, x, y, w=None) -> None:
        """Rows with global indices start, start + 1, ... (in order)."""
        x = np.asarray(x, dtype=np.float64)
        y = np.asarray(y, dtype=np.float64)
        w = None if w is None else np.asarray(w, dtype=np.float64)
        self.weighted = self.weighted or w is not None
        G = self.block_rows
        pos = 0
        n = len(x)
        with _one_blas_thread():
            while pos < n:
                g = start + pos
                b = g // G
                end = min(n, pos + (b + 1) * G - g)
                piece = (g, x[pos:end], y[pos:end], None if w is None else w[pos:end])
                if g == b * G and end - pos == G:
                    self._block(*piece)
                else:
                    pend = self.pending.setdefault(b, _Pending())
                    pend.pieces.append(piece)
                    if pend.rows == G:
                        self._complete(b)
                pos = end

    def _complete(self, b: int) -> None:
        pieces = sorted(self.pending.pop(b).pieces, key=lambda p: p[0])
        x = np.concatenate([p[1] for p in pieces])
        y = np.concatenate([p[2] for p in pieces])
        w = None if pieces[0][3] is None else np.concatenate([p[3] for p in pieces])
        self._block(pieces[0][0], x, y, w)

    def _block(self, start: int, x, y, w) -> None:
        """One block's per-cell sums: the rows of each cell, in row order, as one (rows x (D + 2))
        matrix whose Gram matrix single-threaded BLAS forms (callers hold ``_one_blas_thread``)."""
        m = len(x)
        D = self.D
        if self._buf is None or self._buf.shape[0] < m:
            self._buf = np.empty((max(m, self.block_rows), D + 2), order="F")
        t = self.domain.map(x)
        labels = hash_cells(np.arange(start, start + m), seed=self.seed, k=self.k, repeats=self.R,
                            test_fraction=self.test_fraction)
        small = self.n_cells < 2**15          # 16-bit keys sort by radix, in linear time
        for lab in labels:
            # the rows of every cell together, each cell's rows in their own order
            order = np.argsort(lab.astype(np.int16) if small else lab, kind="stable")
            cnt = np.bincount(lab + 1, minlength=self.n_cells + 1)
            B = self._buf[:m]
            legendre_columns(t[order], D, out=B[:, : D + 1])
            np.subtract(y[order], self.y_shift, out=B[:, D + 1])
            if w is not None:
                B *= np.sqrt(w[order])[:, None]
            pos = int(cnt[0])                 # rows of no cell (-1) sort first
            for c in np.flatnonzero(cnt[1:]):
                blk = B[pos:pos + int(cnt[c + 1])]
                self._add(c, blk.T @ blk)
                self.counts[c] += len(blk)
                pos += len(blk)

    def _add(self, c: int, g: np.ndarray) -> None:
        s = self.hi[c] + g
        bp = s - self.hi[c]
        err = (self.hi[c] - (s - bp)) + (g - bp)
        self.hi[c] = s
        self.lo[c] += err

    # ---- combining ----------------------------------------------------------------------
    def merge(self, other: "BlockAccumulator") -> "BlockAccumulator":
        """Add another accumulator's sums and pending rows into this one (returns self)."""
        for c in range(self.n_cells):
            self._add(c, other.hi[c])
            self.lo[c] += other.lo[c]
        self.counts += other.counts
        self.weighted = self.weighted or other.weighted
        with _one_blas_thread():
            for b, pend in other.pending.items():
                mine = self.pending.setdefault(b, _Pending())
                mine.pieces.extend(pend.pieces)
                if mine.rows == self.block_rows:
                    self._complete(b)
        return self

    def finish(self) -> Moments:
        """Compute the remaining partial blocks (the data's last one) and return the statistics."""
        with _one_blas_thread():
            for b in sorted(self.pending):
                self._complete(b)
        return Moments(self.domain, self.D, self.y_shift, self.hi + self.lo, self.counts.copy(), self.weighted)
