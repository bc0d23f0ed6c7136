"""Post-hoc comparisons after a Friedman test.

Nemenyi (1963) all-pairs and Bonferroni-Dunn (Dunn 1961) against a control, as in
Demšar (2006), JMLR 7, section 3.2.2: two methods differ when their average ranks differ
by at least CD = q_alpha * sqrt(k (k + 1) / (6 N)). Nemenyi's q_alpha is the studentized
range quantile for k groups and infinite degrees of freedom divided by sqrt(2); the
Bonferroni-Dunn one is the two-sided normal quantile at alpha / (k - 1).
Pairwise Wilcoxon signed-rank tests (Wilcoxon 1945) with Holm's step-down correction
(Holm 1979) as recommended by Benavoli, Corani & Mangili (2016), JMLR 17:1-10.
"""
import functools
import itertools
from dataclasses import dataclass

import numpy as np
from scipy import stats


def rank_standard_error(k, n):
    return float(np.sqrt(k * (k + 1) / (6.0 * n)))


def nemenyi_q(alpha, k):
    """Critical value q_alpha of the Nemenyi test (Demšar 2006, Table 5a)."""
    return float(stats.studentized_range.ppf(1.0 - alpha, k, np.inf) / np.sqrt(2.0))


def bonferroni_dunn_q(alpha, k):
    """Critical value of the Bonferroni-Dunn test against one control (Demšar 2006, Table 5b)."""
    return float(stats.norm.ppf(1.0 - alpha / (2.0 * (k - 1))))


@dataclass(frozen=True)
class CriticalDifference:
    q_alpha: float
    cd: float
    alpha: float
    test: str


def nemenyi_cd(alpha, k, n):
    q = nemenyi_q(alpha, k)
    return CriticalDifference(q, q * rank_standard_error(k, n), alpha, "Nemenyi")


def bonferroni_dunn_cd(alpha, k, n):
    q = bonferroni_dunn_q(alpha, k)
    return CriticalDifference(q, q * rank_standard_error(k, n), alpha, "Bonferroni-Dunn")


def nemenyi_p(mean_ranks, n):
    """(k x k) matrix of Nemenyi p-values: P(range of k standard normals >= |dR| sqrt(2) / se)."""
    ranks = np.asarray(mean_ranks, dtype=float)
    k = len(ranks)
    z = np.abs(ranks[:, None] - ranks[None, :]) / rank_standard_error(k, n)
    p = stats.studentized_range.sf(z * np.sqrt(2.0), k, np.inf)
    np.fill_diagonal(p, 1.0)
    return np.clip(p, 0.0, 1.0)


def bonferroni_dunn_p(mean_ranks, n, control):
    """Bonferroni-adjusted two-sided p-values of every method against the control index."""
    ranks = np.asarray(mean_ranks, dtype=float)
    k = len(ranks)
    z = (ranks - ranks[control]) / rank_standard_error(k, n)
    p = np.minimum(1.0, 2.0 * stats.norm.sf(np.abs(z)) * (k - 1))
    p[control] = 1.0
    return p


def holm(p_values):
    """Holm (1979) step-down adjusted p-values, in the input order."""
    p = np.asarray(p_values, dtype=float)
    m = len(p)
    order = np.argsort(p, kind="mergesort")
    stepped = np.maximum.accumulate((m - np.arange(m)) * p[order])
    adjusted = np.empty(m)
    adjusted[order] = np.minimum(1.0, stepped)
    return adjusted


def wilcoxon_p(a, b):
    """Two-sided Wilcoxon signed-rank p-value of paired scores (zeros dropped, Wilcoxon 1945).

    The choice of null distribution follows scipy.stats.wilcoxon's 'auto' rule, so the p-values
    agree with it: exact when there are no ties or zeros and n <= 50; the exact sign-flip
    permutation distribution when there are ties or zeros and n <= 13; otherwise the normal
    approximation with tie correction and no continuity correction. 1.0 when every pair is equal.
    """
    d = np.asarray(a, dtype=float) - np.asarray(b, dtype=float)
    nonzero = d[d != 0]
    n = len(nonzero)
    if n == 0:
        return 1.0
    ranks = stats.rankdata(np.abs(nonzero))
    r_plus = float(ranks[nonzero > 0].sum())
    _, tie_sizes = np.unique(np.abs(nonzero), return_counts=True)
    has_ties, has_zeros = bool((tie_sizes > 1).any()), n < len(d)
    if not (has_ties or has_zeros) and len(d) <= 50:
        counts = _signed_rank_null(n)
        total = counts.sum()
        upper = counts[int(np.floor(r_plus)):].sum() / total
        lower = counts[: int(np.ceil(r_plus)) + 1].sum() / total
        return float(min(1.0, 2.0 * min(upper, lower)))
    if len(d) <= 13:
        signs = (np.arange(2 ** n)[:, None] >> np.arange(n)) & 1
        null = signs @ ranks        # mid-ranks are multiples of 1/2: these sums are exact in floating point
        lower, upper = np.mean(null <= r_plus), np.mean(null >= r_plus)
        return float(min(1.0, 2.0 * min(lower, upper)))
    mean = n * (n + 1) / 4.0
    spread = np.sqrt((n * (n + 1) * (2 * n + 1) - np.sum(tie_sizes ** 3 - tie_sizes) / 2.0) / 24.0)
    return float(2.0 * stats.norm.sf(abs(r_plus - mean) / spread))


@functools.lru_cache(maxsize=64)
def _signed_rank_null(n):
    """Counts of each rank sum 0..n(n+1)/2 over all 2^n sign patterns (no ties)."""
    counts = np.zeros(n * (n + 1) // 2 + 1)
    counts[0] = 1.0
    for rank in range(1, n + 1):
        counts[rank:] = counts[rank:] + counts[:-rank].copy()
    return counts


def cliques(mean_ranks, cd):
    """Maximal runs of methods (sorted by rank) whose rank spread is below ``cd``: the CD-plot bars.

    Returns lists of positions into the rank-sorted order; single methods are not listed.
    """
    ranks = np.sort(np.asarray(mean_ranks, dtype=float))
    runs = []
    for start in range(len(ranks)):
        end = start
        while end + 1 < len(ranks) and ranks[end + 1] - ranks[start] < cd:
            end += 1
        if end > start and not any(s <= start and end <= e for s, e in runs):
            runs.append((start, end))
    return [list(range(s, e + 1)) for s, e in runs]


def all_pairs(names):
    return list(itertools.combinations(range(len(names)), 2))
