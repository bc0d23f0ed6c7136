"""One-dataset comparisons from repeated k-fold scores: the corrected resampled t-test (Nadeau & Bengio
2003, Machine Learning 52:239-281, formula as in Bouckaert & Frank 2004) and the Bayesian correlated
t-test (Corani & Benavoli 2015, Machine Learning 100:285-304; Benavoli et al. 2017, JMLR 18(77), s. 4),
checked against hand arithmetic, scipy.stats.ttest_rel and their stated properties."""
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from lopsided.analysis.single_dataset import (
    compare_to_best,
    corrected_t_test,
    correlated_posterior,
    read_best_comparison,
)
from lopsided.errors import LopsidedError

# Worked example: r = 2 repeats x k = 3 folds of a 30-row dataset, so n_train = 20, n_test = 10.
A = [0.82, 0.85, 0.80, 0.84, 0.81, 0.83]
B = [0.80, 0.81, 0.80, 0.81, 0.80, 0.81]
# d = A - B = [0.02, 0.04, 0.00, 0.03, 0.01, 0.02]; n = 6
# mean(d) = 0.12 / 6 = 0.02
# squared deviations: 0, 0.0004, 0.0004, 0.0001, 0.0001, 0 -> sum 0.001; var(d) = 0.001 / 5 = 0.0002
# correction = 1/n + n_test/n_train = 1/6 + 10/20 = 2/3
# t = 0.02 / sqrt(2/3 * 0.0002) = 0.02 / sqrt(0.0004 / 3) = sqrt(3);  df = 5
# rho = 10 / 30 = 1/3, rho / (1 - rho) = 1/2: the posterior scale is the same sqrt(0.0004 / 3)
SCALE = math.sqrt(0.0004 / 3)


def test_corrected_t_test_matches_the_hand_computation():
    """Bouckaert & Frank (2004), corrected repeated k-fold t statistic; arithmetic above."""
    result = corrected_t_test(A, B, n_train=20, n_test=10)
    assert result.mean_difference == pytest.approx(0.02, abs=1e-15)
    assert result.correction == pytest.approx(2 / 3, rel=1e-15)
    assert result.t == pytest.approx(math.sqrt(3), rel=1e-12)
    assert result.df == 5
    assert result.p == pytest.approx(2 * stats.t.sf(math.sqrt(3), 5), rel=1e-12)   # scipy: the tail only
    assert result.note == ""


def test_correlated_posterior_matches_the_hand_computation():
    """Benavoli et al. (2017), section 4: mu ~ St(df = 5, loc 0.02, scale sqrt(0.0004 / 3)), rope 0.01."""
    result = correlated_posterior(A, B, n_train=20, n_test=10, rope=0.01)
    assert result.scale == pytest.approx(SCALE, rel=1e-12)
    # P(mu > 0.01): (0.01 - 0.02) / SCALE = -sqrt(3)/2;  P(mu < -0.01): (-0.01 - 0.02) / SCALE = -3 sqrt(3)/2
    assert result.a_better == pytest.approx(stats.t.cdf(math.sqrt(3) / 2, 5), rel=1e-12)
    assert result.b_better == pytest.approx(stats.t.cdf(-3 * math.sqrt(3) / 2, 5), rel=1e-12)
    assert result.a_better + result.equivalent + result.b_better == pytest.approx(1.0, abs=1e-15)
    assert not result.point_mass


def test_swapping_the_methods_swaps_the_probabilities():
    """Symmetry of the Student posterior about its location: d -> -d exchanges the two tails."""
    forward = correlated_posterior(A, B, 20, 10, rope=0.01)
    backward = correlated_posterior(B, A, 20, 10, rope=0.01)
    assert backward.a_better == pytest.approx(forward.b_better, rel=1e-12)
    assert backward.b_better == pytest.approx(forward.a_better, rel=1e-12)
    assert backward.equivalent == pytest.approx(forward.equivalent, rel=1e-12)
    t_forward, t_backward = corrected_t_test(A, B, 20, 10), corrected_t_test(B, A, 20, 10)
    assert t_backward.t == pytest.approx(-t_forward.t, rel=1e-12) and t_backward.p == pytest.approx(t_forward.p)


def test_rope_zero_gives_one_minus_the_one_sided_p_value():
    """Benavoli et al. (2017), section 4: with no rope, P(mu > 0) equals 1 - the one-sided p of the
    corrected t-test (same Student t, same scale), and nothing is 'equivalent'."""
    posterior = correlated_posterior(A, B, 20, 10, rope=0.0)
    test = corrected_t_test(A, B, 20, 10)
    assert posterior.a_better == pytest.approx(1 - test.p / 2, rel=1e-12)
    assert posterior.b_better == pytest.approx(test.p / 2, rel=1e-12)
    assert posterior.equivalent == pytest.approx(0.0, abs=1e-15)


def test_a_wide_rope_makes_the_methods_equivalent():
    """A rope far wider than the posterior spread puts almost all mass inside it (definition)."""
    assert correlated_posterior(A, B, 20, 10, rope=0.5).equivalent > 0.999


def test_equal_differences_give_a_point_mass_without_dividing_by_zero():
    """var(d) = 0: the posterior is a point mass at mean(d) (Corani & Benavoli 2015, scale -> 0)."""
    a = [0.75, 0.5, 0.625, 0.875]
    b = [x - 0.03125 for x in a]       # binary fractions: d = 0.03125 exactly on every fold
    with np.errstate(all="raise"):
        far = correlated_posterior(a, b, 30, 10, rope=0.01)
        near = correlated_posterior(a, b, 30, 10, rope=0.05)
        test = corrected_t_test(a, b, 30, 10)
        tie = corrected_t_test(a, a, 30, 10)
        tie_posterior = correlated_posterior(a, a, 30, 10, rope=0.0)
    assert far.point_mass and far.scale == 0.0
    assert (far.a_better, far.equivalent, far.b_better) == (1.0, 0.0, 0.0)
    assert (near.a_better, near.equivalent, near.b_better) == (0.0, 1.0, 0.0)
    assert test.t == math.inf and test.p == 0.0 and "var(d) = 0" in test.note
    assert math.isnan(tie.t) and math.isnan(tie.p) and "same on every fold" in tie.note
    assert (tie_posterior.a_better, tie_posterior.equivalent, tie_posterior.b_better) == (0.0, 1.0, 0.0)


def test_without_overlap_the_corrected_test_is_the_paired_t_test():
    """rho -> 0 (n_test / n_train -> 0): the correction 1/n + n_test/n_train -> 1/n, the ordinary
    paired t-test (Student 1908; scipy.stats.ttest_rel)."""
    rng = np.random.default_rng(3)
    a = rng.uniform(0.6, 0.9, size=15)
    b = a - rng.normal(0.01, 0.02, size=15)
    ours = corrected_t_test(a, b, n_train=1e12, n_test=1)
    reference = stats.ttest_rel(a, b)
    assert ours.t == pytest.approx(reference.statistic, rel=1e-9)
    assert ours.p == pytest.approx(reference.pvalue, rel=1e-9)
    assert ours.df == reference.df


def fold_table(rows):
    """Methods x (repeat, fold) for 2 repeats x 3 folds."""
    columns = pd.MultiIndex.from_product([range(2), range(3)], names=["repeat", "fold"])
    return pd.DataFrame(list(rows.values()), index=list(rows), columns=columns)


def test_compare_to_best_tests_every_method_against_the_top_mean():
    """Each row equals the direct two-method tests with a = the best (definition of the comparison)."""
    noise = [0.003, -0.002, 0.001, -0.003, 0.002, -0.001]
    scores = {
        "weighted-trees": A,
        "plain-trees": [x - 0.001 + e for x, e in zip(A, noise)],   # within a rope of 0.01
        "nearest-centroid": [x - 0.10 + e for x, e in zip(A, noise)],   # far below
        "svm": B,
    }
    result = compare_to_best(fold_table(scores), n_train=20, n_test=10, rope=0.01)
    assert result.best == "weighted-trees" and result.best_mean == pytest.approx(np.mean(A))
    assert [r.method for r in result.rows] == ["plain-trees", "svm", "nearest-centroid"]
    svm = next(r for r in result.rows if r.method == "svm")
    assert svm.t_test == corrected_t_test(A, B, 20, 10)
    assert svm.posterior == correlated_posterior(A, B, 20, 10, 0.01)
    frame = result.as_frame()
    assert list(frame["method"]) == ["weighted-trees", "plain-trees", "svm", "nearest-centroid"]
    assert frame.loc[2, "minus_best"] == pytest.approx(-0.02)
    said = read_best_comparison(result)
    assert said.equivalent == ("plain-trees",)
    assert said.worse == ("nearest-centroid",)
    assert said.undecided == ("svm",)
    assert "nearest-centroid" in said.significantly_worse and "plain-trees" not in said.significantly_worse
    assert any("not validation" in s for s in said.sentences)


def test_lower_is_better_picks_the_lowest_mean():
    """For a loss the best is the lowest mean; the tests read 'better' the same way (negated scores)."""
    loss = {"a": [0.2, 0.3, 0.25, 0.2, 0.3, 0.25], "b": [0.1, 0.2, 0.15, 0.1, 0.2, 0.15]}
    result = compare_to_best(fold_table(loss), 20, 10, higher_is_better=False)
    assert result.best == "b"
    row = result.rows[0]
    assert row.posterior.a_better > 0.99 and row.t_test.mean_difference == pytest.approx(0.1)
    assert result.as_frame().loc[1, "minus_best"] == pytest.approx(0.1)


def test_bad_input_is_refused_with_the_field_named():
    with pytest.raises(LopsidedError, match="rope"):
        correlated_posterior(A, B, 20, 10, rope=-0.1)
    with pytest.raises(LopsidedError, match="n_test"):
        corrected_t_test(A, B, 20, 0)
    with pytest.raises(LopsidedError, match="equal length"):
        corrected_t_test(A, B[:5], 20, 10)
    gappy = fold_table({"a": A, "b": [np.nan] + B[1:]})
    with pytest.raises(LopsidedError, match="b: 1 of 6"):
        compare_to_best(gappy, 20, 10)
    with pytest.raises(LopsidedError, match="fold labels"):
        corrected_t_test(pd.Series(A), pd.Series(B, index=range(1, 7)), 20, 10)
