"""The random sampling variants against their definitions."""
import numpy as np
import pytest

from lopsided.methods.resamplers import make_resampler
from lopsided.methods.resamplers.base import ResamplingError
from lopsided.methods.resamplers.random import BootstrapOver, RandomUnder, RepeatOver, TopUpOver
from lopsided.specs import parse_method


def imbalanced(n_major=90, n_minor=13, d=3, seed=0):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n_major + n_minor, d))
    X[:, 0] = np.arange(len(X))            # row id, to follow samples through resampling
    y = np.r_[np.zeros(n_major, int), np.ones(n_minor, int)]
    return X, y


def test_random_under_never_duplicates_and_balances():
    X, y = imbalanced()
    Xr, yr = RandomUnder(random_state=1).rebalance(X, y)
    assert len(np.unique(Xr[:, 0])) == len(Xr)                     # no row twice
    assert np.bincount(yr).tolist() == [13, 13]
    assert set(Xr[yr == 1, 0]) == set(X[y == 1, 0])                # minority untouched


def test_random_under_balance_half_keeps_twice_the_minority():
    X, y = imbalanced()
    _, yr = RandomUnder(balance=0.5, random_state=1).rebalance(X, y)
    assert np.bincount(yr).tolist() == [26, 13]


def test_repeat_over_copies_whole_class_then_fills_without_replacement():
    X, y = imbalanced()
    Xr, yr = RepeatOver(random_state=3).rebalance(X, y)
    assert np.bincount(yr).tolist() == [90, 90]
    ids, times = np.unique(Xr[yr == 1, 0], return_counts=True)
    assert set(ids) == set(X[y == 1, 0])
    # 90 = 6 * 13 + 12: every sample 6 or 7 times, exactly 12 of them 7 times
    assert set(times) == {6, 7} and (times == 7).sum() == 12


def test_topup_over_keeps_every_original_minority_sample():
    X, y = imbalanced()
    Xr, yr = TopUpOver(random_state=4).rebalance(X, y)
    assert np.bincount(yr).tolist() == [90, 90]
    assert set(X[y == 1, 0]) <= set(Xr[yr == 1, 0])
    np.testing.assert_array_equal(Xr[: len(X[y == 0])], X[y == 0])  # majority unchanged


def test_bootstrap_over_share_never_drawn_matches_the_bootstrap_result():
    """Drawing m from n with replacement leaves each original out with probability (1 - 1/n)^m
    (Efron & Tibshirani 1993, An Introduction to the Bootstrap, section 6.3: about 1/e at m = n)."""
    n_minor, n_major = 50, 100     # target 100 from 50: m = 100
    X, y = imbalanced(n_major, n_minor)
    missed = []
    for seed in range(400):
        Xr, yr = BootstrapOver(random_state=seed).rebalance(X, y)
        assert (yr == 1).sum() == 100
        missed.append(1 - len(np.unique(Xr[yr == 1, 0])) / n_minor)
    expected = (1 - 1 / n_minor) ** 100
    sd = np.std(missed) / np.sqrt(len(missed))
    assert abs(np.mean(missed) - expected) < 4 * sd + 1e-3


def test_bootstrap_share_is_about_one_over_e_when_m_is_about_n():
    """m = n + 1 draws from n = 100: (1 - 1/100)^101 = 0.362, within 0.01 of 1/e (Efron & Tibshirani 1993)."""
    X, y = imbalanced(n_major=101, n_minor=100)
    shares = []
    for seed in range(300):
        Xr, yr = BootstrapOver(random_state=seed).rebalance(X, y)
        shares.append(1 - len(np.unique(Xr[yr == 1, 0])) / 100)
    assert np.mean(shares) == pytest.approx((1 - 1 / 100) ** 101, abs=0.006)
    assert np.mean(shares) == pytest.approx(np.exp(-1), abs=0.012)


@pytest.mark.parametrize("name", ["random-under", "repeat-over", "bootstrap-over", "topup-over"])
def test_same_seed_same_output_other_seed_other_output(name):
    X, y = imbalanced()
    a = make_resampler(parse_method(name), 11).rebalance(X, y)
    b = make_resampler(parse_method(name), 11).rebalance(X, y)
    c = make_resampler(parse_method(name), 12).rebalance(X, y)
    np.testing.assert_array_equal(a[0], b[0])
    assert not np.array_equal(a[0], c[0])


def test_multiclass_rule_raises_each_smaller_class_to_the_largest():
    y = np.r_[np.zeros(40, int), np.ones(10, int), np.full(5, 2)]
    X = np.arange(len(y), dtype=float)[:, None]
    _, yr = RepeatOver(balance=0.5).rebalance(X, y)
    assert np.bincount(yr).tolist() == [40, 20, 20]
    _, yr = RandomUnder(balance=1.0, random_state=0).rebalance(X, y)
    assert np.bincount(yr).tolist() == [5, 5, 5]


@pytest.mark.parametrize("bad", [0, -1, 1.5, "half"])
def test_impossible_balance_is_refused(bad):
    X, y = imbalanced()
    with pytest.raises(ResamplingError, match="balance"):
        RandomUnder(balance=bad).rebalance(X, y)


def test_one_class_only_is_a_clear_error():
    X, y = imbalanced()
    with pytest.raises(ResamplingError, match="one class"):
        TopUpOver().rebalance(X[y == 0], y[y == 0])
