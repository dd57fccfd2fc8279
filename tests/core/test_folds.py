"""Fold assignments: balanced, grouped, explicit, reproducible by seed."""

import numpy as np
import pytest

from core import make_plan
from core.errors import DataError, ParameterError


def test_kfold_is_balanced_and_seeded():
    p = make_plan(103, folds=10, seed=5)
    sizes = np.bincount(p.labels[0])
    assert sizes.max() - sizes.min() <= 1 and sizes.sum() == 103
    assert np.array_equal(make_plan(103, folds=10, seed=5).labels, p.labels)
    assert not np.array_equal(make_plan(103, folds=10, seed=6).labels, p.labels)


def test_repeats_reshuffle():
    p = make_plan(50, folds=5, repeats=3, seed=1)
    assert p.labels.shape == (3, 50)
    assert not np.array_equal(p.labels[0], p.labels[1])


def test_groups_stay_in_one_fold_and_in_or_out_of_test():
    g = np.repeat(np.arange(30), 4)
    p = make_plan(120, folds=5, groups=g, test_fraction=0.2, seed=2)
    for grp in range(30):
        rows = g == grp
        assert len(set(p.labels[0, rows])) == 1
        assert len(set(p.test_mask[rows])) == 1


def test_explicit_fold_ids():
    ids = np.array(["b", "a", "c", "a", "b", "c"])
    p = make_plan(6, fold_ids=ids)
    assert p.scheme == "explicit" and p.k == 3
    assert p.labels[0].tolist() == [1, 0, 2, 0, 1, 2]


def test_bad_fold_parameters_are_named():
    with pytest.raises(ParameterError, match=r"Parameter 'folds': expected an integer from 2 to 1000, got 1"):
        make_plan(10, folds=1)
    with pytest.raises(DataError, match=r"Group column: expected at least 5 distinct groups for 5 folds, got 3 groups"):
        make_plan(9, folds=5, groups=np.repeat([1, 2, 3], 3))
    with pytest.raises(ParameterError, match=r"Parameter 'test_fraction': expected a number in \[0, 1\), got 1.5"):
        make_plan(10, test_fraction=1.5)
