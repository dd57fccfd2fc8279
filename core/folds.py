"""Fold assignments and the sealed test set.

Every assignment is a deterministic function of the seed and the row order,
documented here so a user can reproduce it without this code:

* sealed test set: row i is sealed when ``hash_unit(key_i, seed, 0)`` (a splitmix64
  draw of the row's key, uniform in [0, 1)) is below ``test_fraction``. The key is
  the row's number (its spreadsheet row when read from a file, else its index), or,
  with a group column, a 64-bit hash of the group's label so a group is sealed whole.
  Membership depends on nothing but the row's own key and the seed: excluding or
  adding rows never moves another row between sealed and cross-validation. The
  sealed count is therefore about, not exactly, ``test_fraction * n``. These rows
  never enter any fold.
* k-fold, repeat r: a permutation of the remaining rows from
  ``default_rng([seed, 11, r])``; the row at permuted position i goes to fold
  ``i mod k`` (fold sizes differ by at most one).
* grouped: the distinct groups are shuffled by ``default_rng([seed, 13, r])``
  and each is put, in that order, into the fold with the fewest rows so far.
* explicit: the distinct values of the fold column, sorted, become folds 0..k-1.
* hash (the partitioned engines, ``core.blocks``): row i's fold and sealed status are
  splitmix64 draws of (i, seed, repeat), independent of how the rows are split.
"""

from __future__ import annotations

import hashlib
from dataclasses import dataclass, field

import numpy as np

from .errors import DataError, ParameterError, message
from .params import check

__all__ = ["FoldPlan", "make_plan", "cell_labels", "sealed_mask", "check_fold_rows", "hash_unit", "hash_cells",
           "group_keys"]


@dataclass(frozen=True)
class FoldPlan:
    """Which fold each row belongs to, per repeat, and which rows are sealed.

    Attributes
    ----------
    scheme : {"kfold", "group", "explicit"}
    k : int
        Folds per repeat.
    repeats : int
    seed : int
    labels : ndarray of shape (repeats, n), int16
        Fold of each row in each repeat; -1 for sealed-test rows.
    test_mask : ndarray of shape (n,), bool
    test_fraction : float
    """

    scheme: str
    k: int
    repeats: int
    seed: int
    labels: np.ndarray = field(repr=False)
    test_mask: np.ndarray = field(repr=False)
    test_fraction: float = 0.0
    n_rows: int | None = None      # set for hashed plans, whose labels are not held
    n_sealed: int | None = None
    row_keys: np.ndarray | None = field(default=None, repr=False, compare=False)   # the rows' sealed-test keys
    keys_unknown: bool = False      # rows keyed by numbers this plan does not hold (a very large streamed file)

    @property
    def sealed_rows(self) -> list | None:
        """Keys of the sealed rows (spreadsheet row numbers when the rows came from a file), or None
        when the plan does not hold its rows (partitioned engines, statistics files)."""
        if self.test_mask.size != self.n or self.keys_unknown:
            return None
        keys = np.arange(self.n) if self.row_keys is None else self.row_keys
        return [int(k) for k in np.asarray(keys)[self.test_mask]]

    @property
    def n(self) -> int:
        return int(self.test_mask.shape[0]) if self.n_rows is None else self.n_rows

    @property
    def n_test(self) -> int:
        return int(self.test_mask.sum()) if self.n_sealed is None else self.n_sealed

    def to_dict(self) -> dict:
        return {"scheme": self.scheme, "k": self.k, "repeats": self.repeats,
                "seed": self.seed, "test_fraction": self.test_fraction,
                "n_rows": self.n, "n_test": self.n_test}


_M1, _M2, _GOLD = np.uint64(0xBF58476D1CE4E5B9), np.uint64(0x94D049BB133111EB), np.uint64(0x9E3779B97F4A7C15)


def _mix(z: np.ndarray) -> np.ndarray:
    """splitmix64 finalizer on uint64 arrays (wrapping arithmetic)."""
    with np.errstate(over="ignore"):
        z = z + _GOLD
        z = (z ^ (z >> np.uint64(30))) * _M1
        z = (z ^ (z >> np.uint64(27))) * _M2
        return z ^ (z >> np.uint64(31))


def hash_unit(index: np.ndarray, seed: int, stream: int) -> np.ndarray:
    """Uniform draws in [0, 1) that depend only on (row index, seed, stream)."""
    key = _mix(np.array([(seed * 1_000_003 + stream * 7_919 + 12_345) % 2**64], dtype=np.uint64))[0]
    z = _mix(np.asarray(index, dtype=np.uint64) ^ key)
    return (z >> np.uint64(11)).astype(np.float64) * (1.0 / 9007199254740992.0)


def hash_cells(index: np.ndarray, *, seed: int, k: int, repeats: int, test_fraction: float) -> np.ndarray:
    """Cell labels of shape (repeats, m): ``r * k + fold``; sealed rows -> ``R * k`` (repeat 0), -1 after."""
    sealed = hash_unit(index, seed, 0) < test_fraction
    labels = np.empty((repeats, len(index)), dtype=np.int32)
    for r in range(repeats):
        fold = np.minimum((hash_unit(index, seed, 1 + r) * k).astype(np.int32), k - 1)
        labels[r] = r * k + fold
        labels[r, sealed] = repeats * k if r == 0 else -1
    return labels


def group_keys(groups) -> np.ndarray:
    """A 64-bit key per row from its group's label (BLAKE2b of the label's text), shape (n,)."""
    uniq, inv = np.unique(np.asarray(groups).astype(str), return_inverse=True)
    keys = np.array([int.from_bytes(hashlib.blake2b(u.encode("utf-8"), digest_size=8).digest(), "little")
                     for u in uniq.tolist()], dtype=np.uint64)
    return keys[inv]


def sealed_mask(n: int, test_fraction: float, seed: int, groups=None, keys=None) -> np.ndarray:
    """Which of n rows are sealed away (see module docstring); inputs trusted."""
    if test_fraction <= 0:
        return np.zeros(n, dtype=bool)
    if groups is not None:
        keys = group_keys(groups)
    elif keys is None:
        keys = np.arange(n)
    return hash_unit(np.asarray(keys).astype(np.uint64), seed, 0) < test_fraction


def make_plan(n: int, *, folds: int = 10, repeats: int = 1, groups=None, fold_ids=None,
              seed: int = 0, test_fraction: float = 0.0, row_keys=None, sealed=None) -> FoldPlan:
    """Assign rows to folds (and to the sealed test set).

    Parameters
    ----------
    n : int
        Number of rows.
    folds : int
        k for k-fold and grouped folds (ignored with ``fold_ids``).
    repeats : int
        Independent re-shuffles of k-fold (or grouped) assignment.
    groups : array_like of shape (n,), optional
        Rows sharing a value stay in one fold (and together in or out of the
        sealed test set).
    fold_ids : array_like of shape (n,), optional
        Explicit fold of each row; its distinct values define the folds.
    seed : int
    test_fraction : float
        Share of rows sealed away before folding (each row decided by its own key).
    row_keys : array_like of shape (n,), optional
        Each row's key for the sealed test (default 0..n-1); pass spreadsheet row numbers so
        that excluding a row never moves another between sealed and cross-validation.
    sealed : ndarray of shape (n,), bool, optional
        The sealed mask when already decided by the same rule (a streamed file's scan).

    Raises
    ------
    ParameterError
        Bad k, repeats or fraction, or too few rows/groups for k folds.
    """
    p = check(seed=seed, repeats=repeats, test_fraction=test_fraction)
    seed, repeats, test_fraction = p.seed, p.repeats, p.test_fraction
    if groups is not None and fold_ids is not None:
        raise ParameterError("Parameters 'groups' and 'fold_ids': expected at most one of them, got both.")
    if groups is not None:
        groups = np.asarray(groups)
        if groups.shape != (n,):
            raise DataError(message("Group column", f"{n} values (one per row)", groups.shape[0]))
    if row_keys is not None:
        row_keys = np.asarray(row_keys)
        if row_keys.shape != (n,):
            raise DataError(message("Row keys", f"{n} values (one per row)", row_keys.shape))
    test_mask = sealed_mask(n, test_fraction, seed, groups, row_keys) if sealed is None else np.asarray(sealed)
    train = np.flatnonzero(~test_mask)
    m = train.size
    labels = np.full((repeats, n), -1, dtype=np.int16)

    if fold_ids is not None:
        fold_ids = np.asarray(fold_ids)
        if fold_ids.shape != (n,):
            raise DataError(message("Fold column", f"{n} values (one per row)", fold_ids.shape[0]))
        if repeats != 1:
            raise ParameterError(message("Parameter 'repeats'", "1 with explicit fold ids", repeats))
        uniq, inv = np.unique(fold_ids[train], return_inverse=True)
        k = len(uniq)
        if k < 2:
            raise DataError(message("Fold column", "at least 2 distinct fold values", k))
        labels[0, train] = inv
        return FoldPlan("explicit", k, 1, seed, labels, test_mask, float(test_fraction), row_keys=row_keys)

    k = check(folds=folds).folds
    if groups is not None:
        uniq, inv = np.unique(groups[train], return_inverse=True)
        if len(uniq) < k:
            raise DataError(message(
                "Group column", f"at least {k} distinct groups for {k} folds",
                f"{len(uniq)} groups", "Use fewer folds or ungrouped folds"))
        sizes = np.bincount(inv)
        for r in range(repeats):
            order = np.random.default_rng([seed, 13, r]).permutation(len(uniq))
            load = np.zeros(k, dtype=np.int64)
            fold_of_group = np.empty(len(uniq), dtype=np.int16)
            for g in order:
                f = int(np.argmin(load))
                fold_of_group[g] = f
                load[f] += sizes[g]
            labels[r, train] = fold_of_group[inv]
        return FoldPlan("group", k, repeats, seed, labels, test_mask, float(test_fraction), row_keys=row_keys)

    if m < k:
        raise DataError(message(
            f"Rows for {k}-fold cross-validation", f"at least {k} rows outside the sealed test set",
            m, "Use fewer folds or a smaller test fraction"))
    pos = np.resize(np.arange(k, dtype=np.int16), m)
    whole = m == n
    for r in range(repeats):
        perm = np.random.default_rng([seed, 11, r]).permutation(m)
        labels[r, perm if whole else train[perm]] = pos
    return FoldPlan("kfold", k, repeats, seed, labels, test_mask, float(test_fraction), row_keys=row_keys)


def cell_labels(plan: FoldPlan, max_degree: int) -> np.ndarray:
    """Cell of every row for each repeat (``r * k + fold``; sealed rows -> ``R * k`` in repeat 0).

    Raises
    ------
    DataError
        When a fold's training rows are fewer than max_degree + 1 (the one place this
        data check lives for row-held plans).
    """
    k, R = plan.k, plan.repeats
    if R == 1:
        labels = plan.labels.copy()
    else:
        labels = plan.labels.astype(np.int32)
        for r in range(1, R):
            labels[r, labels[r] >= 0] += r * k
    if plan.n_test:
        labels[0, plan.test_mask] = R * k
    counts = np.concatenate([np.bincount(plan.labels[r][plan.labels[r] >= 0], minlength=k)
                             for r in range(R)])
    check_fold_rows(plan.n - plan.n_test - counts, k, max_degree)
    return labels


def check_fold_rows(train_rows: np.ndarray, k: int, max_degree: int) -> None:
    """Refuse folds whose training rows are fewer than max_degree + 1 (``train_rows`` per fold,
    repeat-major)."""
    need = max_degree + 1
    train_rows = np.asarray(train_rows)
    if train_rows.min() < need:
        i = int(np.argmin(train_rows))
        repeats = train_rows.size // k
        raise DataError(message(
            f"Training rows of fold {i % k + 1}" + (f" (repeat {i // k + 1})" if repeats > 1 else ""),
            f"at least degree + 1 = {need} rows", int(train_rows[i]),
            "Lower the highest degree, use fewer folds or a smaller test fraction"))
