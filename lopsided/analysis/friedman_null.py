"""Permutation null distribution of the Friedman statistic, exact for small N and k.

Null hypothesis (Friedman 1937, JASA 32:675-701; Hollander & Wolfe 1999, Nonparametric
Statistical Methods, section 7.1): within each dataset every permutation of that dataset's own
rank row is equally likely, independently across datasets; with ties the row's own mid-ranks are
permuted. The statistic chi2_F = 12 N / (k (k+1)) [sum_j Rbar_j^2 - k (k+1)^2 / 4] (Demšar 2006,
JMLR 7:1-30, eq. 1) is an increasing function of S = sum_j R_j^2, R_j the rank sums. The
tie-corrected chi2 (divided by a factor fixed by each row's ties, which permutations keep) and the
Iman-Davenport F (Iman & Davenport 1980; Demšar 2006, eq. 2; increasing in chi2_F) are increasing
in S as well, so P(S >= S_observed) is the permutation p-value of all three.

Ranks are doubled so mid-ranks become integers; S is compared as an exact integer.
The exact distribution is a dynamic programme over datasets whose state is the sorted vector of
doubled rank sums so far (the null is symmetric under relabelling methods, so sorting loses
nothing). State weights are float64 probabilities: each is a sum of products of at most N factors
1/m (m = distinct permutations of a row), all terms positive, so the relative rounding error is at
most (N + number of merged terms) * 2**-53 per step, about 1e-9 in the worst case at the default
budget and far below any printed digit. (Exact integer counts would overflow int64 already at
k = 5, N = 10: 120**10 orderings.) Probabilities below about 1e-300 would lose digits; no
p-value that small changes a decision.
When the enumeration is too large, the p-value is estimated from random permutations with
p = (1 + b) / (1 + draws) (Phipson & Smyth 2010, "Permutation p-values should never be zero",
Stat. Appl. Genet. Mol. Biol. 9:39).
"""
import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

from ..errors import LopsidedError

# Budget on candidate states (states x distinct row permutations, summed over datasets) before
# merging. Measured on one core (numpy 2.4): 0.06-0.15 us per candidate, so 5e6 candidates take
# 0.3-0.75 s; e.g. N = 10, k = 5 needs 2.8e6 (0.2 s), N = 12, k = 5 needs 6.8e6 (Monte Carlo).
MAX_STATES = 5_000_000
_CHUNK = 1 << 16            # candidate states sorted and merged at once (keeps work arrays in cache)
_DRAW_BLOCK = 1_000_000     # permuted rank entries generated at once in the Monte Carlo branch


@dataclass(frozen=True)
class PermutationP:
    p: float                # P(chi2 under H0 >= observed chi2)
    method: str             # "exact" or "monte-carlo"
    standard_error: float   # 0.0 for exact; sqrt(p (1 - p) / draws) for Monte Carlo
    draws: int              # 0 for exact; number of random permutations for Monte Carlo
    support: int            # exact: number of distinct rank-sum states in the final distribution; MC: 0


def chi2_adequate(n_datasets, n_methods):
    """Whether the chi-square approximation to Friedman's statistic is trusted.

    Rule of thumb of Demšar (2006), JMLR 7, section 3.2.2: N > 10 datasets and k > 5 methods.
    """
    return bool(n_datasets > 10 and n_methods > 5)


def friedman_permutation_p(ranks, max_states=MAX_STATES, draws=20000, seed=0):
    """Permutation p-value of Friedman's test for a (datasets x methods) rank matrix.

    Exact when the dynamic programme needs at most ``max_states`` candidate states in total,
    otherwise Monte Carlo with ``draws`` random permutations from ``seed``. The same p-value
    serves chi2_F, its tie-corrected form and the Iman-Davenport F (all increasing in S).
    """
    doubled = _doubled_ranks(ranks)
    _check_count("max_states", max_states)
    _check_count("draws", draws)
    observed = _sum_of_squares(doubled.sum(axis=0))
    states = _final_states(doubled, max_states)
    if states is not None:
        sums, weights = states
        p = float(weights[_sum_of_squares(sums) >= observed].sum())
        return PermutationP(p=min(p, 1.0), method="exact", standard_error=0.0, draws=0,
                            support=len(sums))
    exceed = _count_exceeding(doubled, observed, draws, seed)
    p = (1.0 + exceed) / (1.0 + draws)
    return PermutationP(p=p, method="monte-carlo", standard_error=math.sqrt(p * (1.0 - p) / draws),
                        draws=draws, support=0)


def exact_null(ranks, max_states=MAX_STATES):
    """Exact null distribution of chi2_F (Demšar 2006, eq. 1) for the rows of ``ranks``.

    Returns (distinct statistic values ascending, their probabilities). Raises LopsidedError when
    the enumeration would need more than ``max_states`` candidate states.
    """
    doubled = _doubled_ranks(ranks)
    _check_count("max_states", max_states)
    states = _final_states(doubled, max_states)
    if states is None:
        raise LopsidedError(f"ranks: shape {doubled.shape}: exact null needs more than "
                            f"max_states={max_states} states; did you mean friedman_permutation_p, "
                            "which falls back to Monte Carlo?")
    sums, weights = states
    squares, where = np.unique(_sum_of_squares(sums), return_inverse=True)
    n, k = doubled.shape
    # chi2_F = 3 (S2 - N^2 k (k+1)^2) / (N k (k+1)) with S2 = sum of squared doubled rank sums
    statistic = 3.0 * (squares - n * n * k * (k + 1) ** 2) / (n * k * (k + 1))
    return statistic, np.bincount(where, weights=weights, minlength=len(squares))


def _check_count(name, value):
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)) or value < 1:
        raise LopsidedError(f"{name}: {value!r} must be a positive integer")


def _doubled_ranks(ranks):
    """Validated rank matrix times two, as int32 (mid-ranks like 1.5 become 3)."""
    try:
        values = np.asarray(ranks, dtype=float)
    except (TypeError, ValueError) as exc:
        raise LopsidedError(f"ranks: values: not a numeric datasets x methods matrix ({exc})") from None
    if values.ndim != 2 or values.shape[0] < 1 or values.shape[1] < 2:
        raise LopsidedError(f"ranks: shape {values.shape}: need datasets x methods with at least "
                            "1 dataset and 2 methods")
    for i, row in enumerate(values):
        if not (np.all(np.isfinite(row)) and np.allclose(stats.rankdata(row), row, rtol=0, atol=1e-9)):
            raise LopsidedError(f"ranks: row {i}: {row.tolist()} are not ranks 1..k with mid-ranks "
                                "for ties; did you mean to rank the scores first (ranks.rank_rows)?")
    return np.rint(2.0 * values).astype(np.int32)   # sums stay below 2 N k, far inside int32


def _sum_of_squares(sums):
    return np.sum(sums.astype(np.int64) ** 2, axis=-1)


def _distinct_permutations(row):
    """Every distinct permutation of ``row`` (m x k), built position by position."""
    values, counts = np.unique(row, return_counts=True)
    partial = np.zeros((1, 0), dtype=np.intp)
    left = counts[None, :]
    for _ in range(len(row)):
        grown, remaining = [], []
        for g in range(len(values)):
            keep = left[:, g] > 0
            grown.append(np.hstack([partial[keep], np.full((keep.sum(), 1), g)]))
            rest = left[keep].copy()
            rest[:, g] -= 1
            remaining.append(rest)
        partial, left = np.vstack(grown), np.vstack(remaining)
    return values[partial]


def _permutation_count(row):
    """k! / prod(t!) over tie groups: the number of distinct permutations (exact integer)."""
    return math.factorial(len(row)) // math.prod(
        math.factorial(int(c)) for c in np.unique(row, return_counts=True)[1])


def _merge(candidates, weights):
    """Sum the weights of equal rows of ``candidates`` (rows sorted, equal row sums)."""
    low = int(candidates.min())
    radix = int(candidates.max()) - low + 1
    if radix ** (candidates.shape[1] - 1) < 2 ** 62:   # mixed-radix key; the last entry follows from the sum
        keys = np.zeros(len(candidates), dtype=np.int64)
        for column in candidates[:, :-1].T:
            keys = keys * radix + (column - low)
    else:
        keys = np.unique(candidates, axis=0, return_inverse=True)[1].ravel()
    order = np.argsort(keys)
    keys = keys[order]
    starts = np.flatnonzero(np.r_[True, keys[1:] != keys[:-1]])
    return candidates[order[starts]], np.add.reduceat(weights[order], starts)


def _final_states(doubled, max_states):
    """(sorted doubled rank-sum vectors, probabilities) after all datasets, or None over budget."""
    sizes = [_permutation_count(row) for row in doubled]
    order = sorted(range(len(sizes)), key=lambda i: -sizes[i])
    # The first dataset is free: from the zero state every permutation sorts to the same vector.
    sums = np.sort(doubled[order[0]])[None, :]
    weights = np.ones(1)
    spent = 0
    for i in order[1:]:
        spent += len(sums) * sizes[i]
        if spent > max_states:
            return None
        moves = _distinct_permutations(doubled[i])
        step = max(1, _CHUNK // len(moves))    # states per chunk, so the work arrays stay small
        parts = [_merge(np.sort((sums[j:j + step, None, :] + moves).reshape(-1, sums.shape[1]), axis=1),
                        np.repeat(weights[j:j + step] / len(moves), len(moves)))
                 for j in range(0, len(sums), step)]
        sums, weights = (_merge(np.vstack([p[0] for p in parts]), np.concatenate([p[1] for p in parts]))
                         if len(parts) > 1 else parts[0])
    return sums, weights


def _count_exceeding(doubled, observed, draws, seed):
    """How many of ``draws`` random within-row permutations reach S >= observed."""
    rng = np.random.default_rng(seed)
    n, k = doubled.shape
    block = max(1, _DRAW_BLOCK // (n * k))
    exceed = 0
    for start in range(0, draws, block):
        size = min(block, draws - start)
        shuffle = np.argsort(rng.random((size, n, k)), axis=2)
        sums = np.take_along_axis(np.broadcast_to(doubled, (size, n, k)), shuffle, axis=2).sum(axis=1)
        exceed += int(np.count_nonzero(_sum_of_squares(sums) >= observed))
    return exceed
