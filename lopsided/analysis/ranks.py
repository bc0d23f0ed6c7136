"""Average ranks over datasets and the rank-based omnibus tests.

Rank 1 is best. Ties get mid-ranks. Formulas: Demšar (2006), "Statistical comparisons
of classifiers over multiple data sets", JMLR 7:1-30, section 3.2.2; tie correction as in
Hollander & Wolfe (1999), Nonparametric Statistical Methods, section 7.1 (what scipy uses).
"""
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats


def rank_rows(matrix, higher_is_better=True):
    """Per-dataset ranks (1 = best, mid-ranks for ties), same shape and labels as ``matrix``."""
    values = matrix.to_numpy(dtype=float)
    ranks = stats.rankdata(-values if higher_is_better else values, axis=1)
    return pd.DataFrame(ranks, index=matrix.index, columns=matrix.columns)


@dataclass(frozen=True)
class FriedmanResult:
    chi2: float                 # Demšar (2006), eq. (1), no tie correction
    p: float
    chi2_tie_corrected: float   # chi2 / (1 - sum(t^3 - t) / (N k (k^2 - 1)))
    p_tie_corrected: float
    iman_davenport_F: float     # Iman & Davenport (1980); Demšar (2006), eq. (2)
    iman_davenport_p: float
    n_datasets: int
    n_methods: int


def friedman(ranks):
    """Friedman and Iman-Davenport tests from a rank matrix (datasets x methods)."""
    R = ranks.to_numpy(dtype=float)
    n, k = R.shape
    mean_ranks = R.mean(axis=0)
    chi2 = 12.0 * n / (k * (k + 1)) * (np.sum(mean_ranks ** 2) - k * (k + 1) ** 2 / 4.0)
    ties = sum(np.sum(c ** 3 - c) for c in (np.unique(row, return_counts=True)[1] for row in R))
    denominator = 1.0 - ties / (n * k * (k * k - 1))
    chi2_tc = chi2 / denominator if denominator > 0 else float("nan")
    dof1, dof2 = k - 1, (k - 1) * (n - 1)
    spread = n * (k - 1) - chi2
    if spread > 1e-12:
        F = (n - 1) * chi2 / spread
        p_F = float(stats.f.sf(F, dof1, dof2)) if dof2 > 0 else float("nan")
    else:   # every dataset ranks the methods identically
        F, p_F = float("inf"), 0.0
    return FriedmanResult(
        chi2=float(chi2), p=float(stats.chi2.sf(chi2, dof1)),
        chi2_tie_corrected=float(chi2_tc),
        p_tie_corrected=float(stats.chi2.sf(chi2_tc, dof1)) if np.isfinite(chi2_tc) else float("nan"),
        iman_davenport_F=float(F), iman_davenport_p=p_F, n_datasets=n, n_methods=k,
    )


def bootstrap_rank_intervals(ranks, samples=2000, level=0.95, seed=0):
    """Percentile intervals of each method's average rank, resampling datasets with replacement.

    Reference: Efron & Tibshirani (1993), An Introduction to the Bootstrap, ch. 13.
    Ranks are kept from the full comparison (a dataset's ranks travel with it).
    """
    R = ranks.to_numpy(dtype=float)
    rng = np.random.default_rng(seed)
    picks = rng.integers(0, len(R), size=(samples, len(R)))
    means = R[picks].mean(axis=1)
    tail = (1.0 - level) / 2.0
    low, high = np.quantile(means, [tail, 1.0 - tail], axis=0)
    return pd.DataFrame({"low": low, "high": high}, index=ranks.columns)
