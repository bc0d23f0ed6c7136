"""Exact and Monte Carlo permutation p-values of Friedman's test against brute force, a published
table (from memory), the chi-square limit and Demšar's rule of thumb."""
import itertools
import math
from collections import Counter
from fractions import Fraction

import numpy as np
import pytest
from scipy import stats

from lopsided.analysis.friedman_null import (
    PermutationP,
    chi2_adequate,
    exact_null,
    friedman_permutation_p,
)
from lopsided.errors import LopsidedError


def chi2_friedman(ranks):
    """Demšar (2006), JMLR 7, eq. (1), straight from the average ranks."""
    R = np.asarray(ranks, dtype=float)
    n, k = R.shape
    return 12.0 * n / (k * (k + 1)) * (np.sum(R.mean(axis=0) ** 2) - k * (k + 1) ** 2 / 4.0)


def brute_force(ranks):
    """Null of Friedman (1937) by definition: every one of the (k!)^N joint orderings of each
    row's own values, equally likely. Returns ({chi2: probability as Fraction}, distinct rank-sum
    vectors up to relabelling the methods)."""
    R = np.asarray(ranks, dtype=float)
    n, k = R.shape
    counts, states = Counter(), set()
    for orders in itertools.product(itertools.permutations(range(k)), repeat=n):
        permuted = np.array([row[list(order)] for row, order in zip(R, orders)])
        counts[round(chi2_friedman(permuted), 9)] += 1
        states.add(tuple(sorted(permuted.sum(axis=0))))
    total = math.factorial(k) ** n
    return {value: Fraction(c, total) for value, c in counts.items()}, len(states)


def upper_tail(ranks, value):
    statistic, probability = exact_null(ranks)
    return float(probability[statistic >= value - 1e-9].sum())


BRUTE_FORCE_CASES = {
    "k3_n2": [[1, 2, 3], [3, 1, 2]],
    "k3_n3": [[1, 2, 3], [1, 3, 2], [2, 1, 3]],
    "k4_n2": [[1, 2, 3, 4], [2, 1, 4, 3]],
    "k3_n4": [[1, 2, 3], [1, 2, 3], [2, 1, 3], [3, 2, 1]],
    "k2_n5": [[1, 2], [1, 2], [2, 1], [1, 2], [1, 2]],
    "mid_ranks": [[1.5, 1.5, 3, 4], [1, 2, 3, 4], [1, 3, 3, 3]],
}


@pytest.mark.parametrize("name", BRUTE_FORCE_CASES)
def test_exact_null_equals_brute_force_enumeration(name):
    """Brute force over all (k!)^N joint rankings (Friedman 1937; Hollander & Wolfe 1999, 7.1)."""
    ranks = BRUTE_FORCE_CASES[name]
    reference, n_states = brute_force(ranks)
    statistic, probability = exact_null(ranks)
    assert np.allclose(statistic, sorted(reference), rtol=0, atol=1e-9)
    assert np.allclose(probability, [float(reference[v]) for v in sorted(reference)], rtol=1e-12, atol=0)
    observed = chi2_friedman(ranks)
    tail = sum(p for v, p in reference.items() if v >= observed - 1e-9)
    result = friedman_permutation_p(ranks)
    assert result.p == pytest.approx(float(tail), rel=1e-12)
    assert (result.method, result.standard_error, result.draws, result.support) == ("exact", 0.0, 0, n_states)


def test_single_winner_datasets_match_the_multinomial_count():
    """k = 12 methods where each dataset has one winner and an 11-way tie (mid-rank 7): method j's
    rank sum is 7 N - 6 c_j, with c the winner counts of N uniform draws out of 12 (Hollander &
    Wolfe 1999, 7.1, permuting each row's own mid-ranks). Brute force over all 12^N winner
    sequences; the rank-sum range here also exercises the wide-key merge."""
    n, k = 5, 12
    ranks = np.tile([1.0] + [7.0] * (k - 1), (n, 1))
    winners = np.indices((k,) * n).reshape(n, -1).T                 # every sequence of winners
    wins = np.stack([np.count_nonzero(winners == j, axis=1) for j in range(k)], axis=1)
    rank_sums = 7 * n - 6 * wins
    chi2 = 12.0 / (n * k * (k + 1)) * np.sum(rank_sums ** 2, axis=1) - 3.0 * n * (k + 1)   # Demšar eq. 1
    values, counts = np.unique(np.round(chi2, 9), return_counts=True)
    statistic, probability = exact_null(ranks)
    assert np.allclose(statistic, values, rtol=0, atol=1e-9)
    assert np.allclose(probability, counts / k ** n, rtol=1e-12, atol=0)


def test_two_identical_rankings_of_three_methods():
    """P(two independent uniform rankings of 3 items coincide) = 1/3! = 1/6 (counting argument);
    identical rankings give the largest chi2, so that is the p-value."""
    result = friedman_permutation_p([[1, 2, 3], [1, 2, 3]])
    assert result.p == pytest.approx(1 / 6, rel=1e-15)


# Exact upper-tail probabilities P(chi2_r >= value) of Friedman's statistic, Friedman (1937),
# JASA 32:675-701, as reprinted in Siegel (1956), Nonparametric Statistics for the Behavioral
# Sciences, Table N. FROM MEMORY (no network): (k, N, chi2_r, printed p).
SIEGEL_TABLE_N = [
    (3, 2, 4.0, ".167"), (3, 2, 3.0, ".500"),
    (3, 3, 6.00, ".028"), (3, 3, 4.667, ".194"), (3, 3, 2.667, ".361"),
    (3, 4, 8.0, ".0046"), (3, 4, 6.5, ".042"),
    (3, 5, 6.4, ".039"), (3, 5, 8.4, ".0085"),
    (3, 6, 7.00, ".029"), (3, 6, 8.33, ".012"),
    (4, 2, 6.0, ".042"), (4, 2, 5.4, ".167"),
    (4, 3, 9.0, ".0017"), (4, 3, 7.4, ".033"),
]


@pytest.mark.parametrize("k, n, value, printed", SIEGEL_TABLE_N)
def test_exact_tail_matches_published_table_from_memory(k, n, value, printed):
    ranks = np.tile(np.arange(1, k + 1), (n, 1))          # any valid rows: the null is the same
    statistic, _ = exact_null(ranks)
    attained = statistic[np.abs(statistic - value) < 0.005]   # table values are rounded (14/3 -> 4.667)
    assert len(attained) == 1
    digits = len(printed) - 1
    assert abs(upper_tail(ranks, attained[0]) - float(printed)) <= 0.5 * 10.0 ** -digits + 1e-12


def test_monte_carlo_agrees_with_exact_and_is_reproducible():
    """Monte Carlo p = (1 + b) / (1 + draws), Phipson & Smyth (2010), SAGMB 9:39; |MC - exact| < 4 SE
    holds with probability > 0.9999 (normal approximation, common practice)."""
    ranks = [[1, 2, 3, 4], [1, 3, 2, 4], [2, 1, 3, 4], [1.5, 1.5, 4, 3], [3, 1, 2, 4]]
    exact = friedman_permutation_p(ranks)
    assert exact.method == "exact" and 0.01 < exact.p < 0.2
    forced = friedman_permutation_p(ranks, max_states=1, draws=20000, seed=5)
    assert forced.method == "monte-carlo" and forced.draws == 20000 and forced.support == 0
    assert forced.standard_error == pytest.approx(math.sqrt(forced.p * (1 - forced.p) / 20000), rel=1e-12)
    assert abs(forced.p - exact.p) < 4 * forced.standard_error
    assert friedman_permutation_p(ranks, max_states=1, draws=20000, seed=5) == forced
    # (1 + b) / (1 + draws) with b an integer count
    b = forced.p * 20001 - 1
    assert b == pytest.approx(round(b), abs=1e-6)


def test_many_methods_go_monte_carlo_and_never_report_zero():
    """k = 24 methods over N = 13 datasets: 24! orderings per row, far past any enumeration;
    a permutation p-value is never zero (Phipson & Smyth 2010)."""
    ranks = np.tile(np.arange(1, 25), (13, 1))            # every dataset agrees: the largest chi2
    result = friedman_permutation_p(ranks, draws=2000)
    assert isinstance(result, PermutationP)
    assert result.method == "monte-carlo" and result.draws == 2000
    assert result.p == pytest.approx(1 / 2001)


def test_exact_null_refuses_oversized_enumeration():
    with pytest.raises(LopsidedError, match="max_states"):
        exact_null(np.tile(np.arange(1, 25), (13, 1)))


def test_large_sample_tail_agrees_with_chi_square():
    """N = 30, k = 3: Friedman (1937) shows chi2_r tends to chi-square with k - 1 degrees of
    freedom. In the tail where decisions are made (exact p <= 0.2) every attainable value agrees
    within 0.02 (our tolerance, common practice). Nearer the centre P(chi2 >= observed) includes
    the atom at the observed value (up to 0.09 here), so gaps up to 0.05 are expected there."""
    statistic, probability = exact_null(np.tile([1, 2, 3], (30, 1)))
    tail = np.cumsum(probability[::-1])[::-1]
    decisive = tail <= 0.2
    assert decisive.sum() > 50
    assert np.max(np.abs(tail[decisive] - stats.chi2.sf(statistic[decisive], 2))) < 0.02


@pytest.mark.parametrize("seed, shift", [(2026, 0.5), (2028, 0.3)])
def test_random_thirty_datasets_agree_with_chi_square(seed, shift):
    """Scores normal(0, 1) + shift * method index, ranked per dataset (N = 30, k = 3, seeds as
    given; both land near p = 0.05). Friedman (1937) limit; tolerance 0.02 (common practice)."""
    rng = np.random.default_rng(seed)
    ranks = stats.rankdata(-(rng.normal(size=(30, 3)) + shift * np.arange(3)), axis=1)
    result = friedman_permutation_p(ranks)
    assert result.method == "exact" and result.p < 0.2
    assert abs(result.p - stats.chi2.sf(chi2_friedman(ranks), 2)) < 0.02


@pytest.mark.parametrize("n, k, expected", [
    (11, 6, True), (30, 10, True), (10, 6, False), (11, 5, False), (5, 3, False), (100, 5, False),
])
def test_chi2_adequate_follows_demsar_rule_of_thumb(n, k, expected):
    """Demšar (2006), JMLR 7, section 3.2.2: chi-square is fine for N > 10 and k > 5."""
    assert chi2_adequate(n, k) is expected


@pytest.mark.parametrize("ranks, field", [
    ([[1, 2, 2]], "row 0"),                 # not mid-ranks (should be 1, 2.5, 2.5)
    ([[1, 2], [0, 3]], "row 1"),
    ([1, 2, 3, 4], "shape"),
    ([[1], [1]], "shape"),
])
def test_bad_rank_matrices_are_refused(ranks, field):
    with pytest.raises(LopsidedError, match=f"ranks: {field}"):
        friedman_permutation_p(ranks)


@pytest.mark.parametrize("n, k", [(3, 3), (4, 3), (5, 4), (10, 5)])
def test_full_agreement_has_probability_one_over_k_factorial_to_the_n_minus_one(n, k):
    """Only the N - 1 later rankings all equal to the first reach the largest chi2 = N (k - 1)
    (counting argument, no ties): p = (1 / k!)^(N - 1)."""
    result = friedman_permutation_p(np.tile(np.arange(1, k + 1), (n, 1)))
    assert result.method == "exact"
    assert result.p == pytest.approx(math.factorial(k) ** -(n - 1), rel=1e-9)


def test_non_numeric_ranks_are_refused():
    with pytest.raises(LopsidedError, match="ranks: values: not a numeric"):
        exact_null([["first", "second"]])


@pytest.mark.parametrize("option", [{"draws": 0}, {"max_states": -1}, {"draws": 2.5}])
def test_bad_options_are_refused(option):
    with pytest.raises(LopsidedError, match="must be a positive integer"):
        friedman_permutation_p([[1, 2], [2, 1]], **option)
