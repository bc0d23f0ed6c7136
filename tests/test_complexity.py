"""Meta-features: F1 and N1 of Ho & Basu (2002), IEEE TPAMI 24(3):289-300, on examples small enough to
compute by hand, their invariances, and the nearest-dataset distances worked out by hand."""
import math

import numpy as np
import pytest

from lopsided.analysis.complexity import (
    _stratified_subsample,
    f1_fisher_ratio,
    meta_features,
    n1_boundary_fraction,
    nearest_datasets,
)
from lopsided.errors import LopsidedError


def test_f1_by_hand():
    """Ho & Basu (2002) F1 = max_j (mu1 - mu2)^2 / (s1^2 + s2^2), variances with ddof = 0.
    Feature 1: class 0 {0, 2} (mean 1, var 1), class 1 {4, 6} (mean 5, var 1): 16 / 2 = 8.
    Feature 2: class 0 {10, 14} (mean 12, var 4), class 1 {13, 15} (mean 14, var 1): 4 / 5 = 0.8."""
    X = [[0, 10], [2, 14], [4, 13], [6, 15]]
    assert f1_fisher_ratio(X, [0, 0, 1, 1]) == pytest.approx(8.0, rel=1e-15)


def test_f1_with_three_classes_compares_the_minority_with_the_rest():
    """Minority class 0 {0, 2}: mean 1, var 1; the rest {3, 5, 4, 4, 4, 4}: mean 4, var 2/6.
    (1 - 4)^2 / (1 + 1/3) = 6.75."""
    X = np.array([[0], [2], [3], [5], [4], [4], [4], [4]], dtype=float)
    y = [0, 0, 1, 1, 1, 2, 2, 2]
    assert f1_fisher_ratio(X, y) == pytest.approx(6.75, rel=1e-14)


def test_f1_is_unchanged_by_shifting_and_rescaling_features():
    """The ratio's numerator and denominator scale by the same factor squared (definition)."""
    rng = np.random.default_rng(0)
    X = rng.normal(size=(60, 4))
    y = (rng.uniform(size=60) < 0.3).astype(int)
    X[y == 1, 2] += 1.5
    scaled = X * np.array([1e-3, -7.0, 250.0, 0.5]) + np.array([3.0, -1.0, 1e4, 0.0])
    assert f1_fisher_ratio(scaled, y) == pytest.approx(f1_fisher_ratio(X, y), rel=1e-9)


def test_f1_is_infinite_for_a_feature_without_spread_that_separates():
    """Zero within-class spread and different means: the ratio's limit is infinite."""
    assert f1_fisher_ratio([[0, 1], [0, 2], [1, 3], [1, 4]], [0, 0, 1, 1]) == math.inf


def test_n1_on_six_points_on_a_line():
    """On a line the minimum spanning tree joins neighbours: 0-1-3-4.5-7-8, labels 0 0 1 0 1 1.
    Edges 1-3, 3-4.5 and 4.5-7 join different classes: points 1, 3, 4.5, 7 -> N1 = 4/6.
    (Standardising one feature rescales all distances alike, so the tree is the same.)"""
    X = np.array([[0.0], [1.0], [3.0], [4.5], [7.0], [8.0]])
    n1, points = n1_boundary_fraction(X, [0, 0, 1, 0, 1, 1])
    assert (n1, points) == (pytest.approx(4 / 6), 6)


def test_n1_on_a_star_drawn_by_hand():
    """Points symmetric about the diagonal (equal spread in x and y, so standardising scales both
    axes alike). Tree: centre (0, 0) to (1, 0) and (0, 1) (length 1), (1, 0) to (2.5, 0) and (0, 1) to
    (0, 2.5) (1.5), centre to (-1.5, -1.5) (2.12; every other link to it is longer).
    Labels: centre 0, (1, 0) 0, (0, 1) 1, (2.5, 0) 1, (0, 2.5) 1, (-1.5, -1.5) 1.
    Crossing edges: centre-(0, 1), (1, 0)-(2.5, 0), centre-(-1.5, -1.5): 5 of 6 points -> N1 = 5/6."""
    X = [[0, 0], [1, 0], [0, 1], [2.5, 0], [0, 2.5], [-1.5, -1.5]]
    assert n1_boundary_fraction(X, [0, 0, 1, 1, 1, 1])[0] == pytest.approx(5 / 6)


def test_n1_is_smallest_for_separated_classes_and_large_for_interleaved_ones():
    """Well separated classes: the connected tree needs exactly one bridging edge, so N1 = 2/n, the
    smallest value possible (not 0: Ho & Basu's tree spans all points). Alternating labels along a line:
    every edge crosses, N1 = 1. Two overlapping clouds: well above 2/n."""
    rng = np.random.default_rng(1)
    far = np.vstack([rng.normal(0, 1, size=(30, 3)), rng.normal(50, 1, size=(10, 3))])
    labels = np.repeat([0, 1], [30, 10])
    assert n1_boundary_fraction(far, labels)[0] == pytest.approx(2 / 40)
    line = np.arange(20.0)[:, None]
    assert n1_boundary_fraction(line, np.arange(20) % 2)[0] == 1.0
    mixed = rng.normal(size=(40, 3))
    assert n1_boundary_fraction(mixed, labels)[0] > 0.3


def test_duplicate_rows_keep_an_edge():
    """scipy reads a zero distance as 'no edge'; duplicates must still be joined (definition of the tree).
    Two pairs of duplicates with different labels at 0 and at 10: both pairs are crossing edges, N1 = 1.
    Duplicates of one class, then 1 and 3 of the other: one crossing edge, N1 = 2/4."""
    assert n1_boundary_fraction([[0.0], [0.0], [10.0], [10.0]], [0, 1, 0, 1])[0] == 1.0
    assert n1_boundary_fraction([[0.0], [0.0], [1.0], [3.0]], [0, 0, 1, 1])[0] == 0.5


def test_large_data_use_a_fixed_stratified_subsample():
    """Above max_points, N1 comes from a reproducible stratified sample (largest-remainder quotas)."""
    rng = np.random.default_rng(2)
    X = rng.normal(size=(80, 2))
    y = np.repeat([0, 1], [60, 20])
    first, again = n1_boundary_fraction(X, y, max_points=50), n1_boundary_fraction(X, y, max_points=50)
    assert first == again and first[1] == 50
    rows = _stratified_subsample(np.repeat([0, 1], [60, 20]), np.array([60, 20]), 50, seed=0)
    assert np.bincount(y[rows]).tolist() == [38, 12]      # 37.5 / 12.5, the tie goes to the first class
    rare = _stratified_subsample(np.repeat([0, 1], [1000, 1]), np.array([1000, 1]), 50, seed=0)
    assert np.bincount(np.repeat([0, 1], [1000, 1])[rare]).tolist() == [50, 1]   # the minority never vanishes


def test_meta_features_of_a_small_screening_set():
    """Counts by hand: 4 of 10 rows in the minority, 3 donors."""
    X = np.array([[0.1, 1.0], [0.2, 1.1], [0.3, 0.9], [0.4, 1.0], [0.5, 1.2], [0.6, 1.0],
                  [2.0, 0.1], [2.1, 0.2], [2.2, 0.0], [2.3, 0.1]])
    y = np.repeat([0, 1], [6, 4])
    result = meta_features(X, y, groups=["d1", "d1", "d2", "d2", "d3", "d3", "d1", "d2", "d3", "d3"])
    assert (result.n, result.d, result.minority_count, result.n_classes, result.n_groups) == (10, 2, 4, 2, 3)
    assert result.imbalance_ratio == 1.5
    assert result.n1 == pytest.approx(2 / 10) and result.n1_points == 10
    assert result.f1 == f1_fisher_ratio(X, y)
    assert meta_features(X, y).n_groups is None


def test_nearest_datasets_by_hand():
    """Only IR and F1 differ. log IR = 0, 1, 3: mean 4/3, sd sqrt(14)/3 -> offsets 3/sqrt(14), 9/sqrt(14).
    1/(1 + F1) = 1, 0.5, 0 (F1 = 0, 1, inf): mean 0.5, sd sqrt(1/6) -> offsets sqrt(1.5), sqrt(6)."""
    common = {"n": 200, "d": 12, "n1": 0.2}
    target = {"imbalance_ratio": 1.0, "f1": 0.0, **common}
    others = {"serum-films": {"imbalance_ratio": math.e, "f1": 1.0, **common},
              "microplastics": {"imbalance_ratio": math.e ** 3, "f1": math.inf, **common}}
    result = nearest_datasets(target, others, k=5)
    assert [r.name for r in result] == ["serum-films", "microplastics"]
    assert result[0].distance == pytest.approx(math.sqrt(9 / 14 + 1.5), rel=1e-12)
    assert result[1].distance == pytest.approx(math.sqrt(81 / 14 + 6), rel=1e-12)
    assert len(nearest_datasets(target, others, k=1)) == 1


def test_nearest_datasets_takes_meta_feature_dicts_and_names_missing_keys():
    rng = np.random.default_rng(4)
    X, y = rng.normal(size=(30, 3)), np.repeat([0, 1], [24, 6])
    mine = meta_features(X, y).as_dict()
    assert nearest_datasets(mine, {"copy": dict(mine), "other": {**mine, "n": 3000}})[0].distance == 0.0
    with pytest.raises(LopsidedError, match=r"others\['bad'\]: missing meta-feature\(s\) imbalance_ratio.*did you mean"):
        nearest_datasets(mine, {"bad": {"imbalance": 3.0, "n": 10, "d": 2, "f1": 1.0, "n1": 0.1}})


def test_bad_input_is_refused():
    with pytest.raises(LopsidedError, match="at least 2 classes"):
        f1_fisher_ratio([[0.0], [1.0]], [1, 1])
    with pytest.raises(LopsidedError, match="finite"):
        meta_features([[0.0], [np.nan]], [0, 1])
    with pytest.raises(LopsidedError, match="groups"):
        meta_features([[0.0], [1.0]], [0, 1], groups=["a"])
