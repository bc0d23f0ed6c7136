"""Splits and sweep points: nested subsets, fixed test parts, grouped splitting, infeasible points."""
import numpy as np
import pytest

from lopsided.datasets import load_dataset
from lopsided.planning.plan import plan
from lopsided.planning.protocol import Infeasible, class_orders, fold_splits, point_counts, point_rows
from lopsided.planning.suite import load_suite


def counts_of(y, rows):
    return np.bincount(y[rows], minlength=2).tolist()


def test_sizes_are_nested_prefixes_at_one_ratio():
    data = load_dataset("sklearn:digits?positive=0")
    train, _ = fold_splits(data, 3, seed=5)[0]
    orders = class_orders(data.y, train, seed=9)
    available = {c: len(r) for c, r in orders.items()}
    previous = set()
    for size in (60, 120, 240, 480):
        rows = point_rows(orders, point_counts(available, data.minority, 5, size, 5))
        assert len(rows) == size
        assert previous <= set(rows)          # a smaller set is a subset of the larger one
        majority, minority = counts_of(data.y, rows)
        assert majority / minority == pytest.approx(5, rel=0.05)
        previous = set(rows)


def test_ratio_points_share_their_samples_and_hit_the_ratio():
    data = load_dataset("sklearn:digits?positive=0")
    train, _ = fold_splits(data, 3, seed=5)[0]
    orders = class_orders(data.y, train, seed=9)
    available = {c: len(r) for c, r in orders.items()}
    minority_rows = []
    for ratio in (1, 2, 5, 9):
        rows = point_rows(orders, point_counts(available, data.minority, ratio, "all", 5))
        majority, minority = counts_of(data.y, rows)
        assert majority / minority == pytest.approx(ratio, rel=0.02)
        minority_rows.append(set(rows[data.y[rows] == data.minority]))
    # larger ratios at 'all' keep the minority and add majority rows from the same fixed order
    assert minority_rows[0] == minority_rows[1]


def test_infeasible_point_is_reported_not_altered():
    available = {0: 100, 1: 10}
    assert isinstance(point_counts(available, 1, 1, 40, 5), Infeasible)      # needs 20 minority, has 10
    assert isinstance(point_counts(available, 1, 50, "all", 5), Infeasible)  # 2 minority < 5
    assert point_counts(available, 1, 1, 20, 5) == {1: 10, 0: 10}
    assert isinstance(point_counts(available, 1, "natural", 500, 5), Infeasible)
    assert isinstance(point_counts({0: 40}, 1, 2, "all", 5), Infeasible)              # no minority row at all


def test_test_part_is_the_same_for_every_point_and_resampler(write_suite):
    suite = load_suite(write_suite(ratios='["natural", 1, 2]'))
    datasets = {r: load_dataset(r) for r in suite.datasets}
    units = plan(suite, datasets).units
    by_fold = {}
    for unit in units:
        where = (unit.coords.dataset, unit.coords.repeat, unit.coords.fold)
        by_fold.setdefault(where, set()).add(unit.test.tobytes())
        assert not set(unit.train) & set(unit.test)
    assert all(len(tests) == 1 for tests in by_fold.values())


def test_grouped_split_keeps_each_donor_on_one_side():
    data = load_dataset("spectra:serum?donors=40&ratio=3&replicates=4&region=fingerprint&step=16")
    assert data.groups is not None
    for train, test in fold_splits(data, 4, seed=1):
        assert not set(data.groups[train]) & set(data.groups[test])
        assert set(data.y[test]) == {0, 1}


def test_same_seed_same_splits_other_seed_other_splits():
    data = load_dataset("sklearn:wine?positive=2")
    a, b, c = (fold_splits(data, 3, s) for s in (1, 1, 2))
    assert all(np.array_equal(x[1], y[1]) for x, y in zip(a, b))
    assert not all(np.array_equal(x[1], y[1]) for x, y in zip(a, c))
