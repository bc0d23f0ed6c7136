"""Average ranks over datasets and the rank-based omnibus tests.

Rank 1 is best. Ties get mid-ranks. Formulas: Demšar (2006), "Statistical comparisons
of classifiers over multiple data sets", JMLR 7:1-30, section 3.2.2; tie correction as in
Hollander & Wolfe (1999), Nonparametric Statistical Methods, section 7.1 (what scipy uses).
"""
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from .friedman_null import PermutationP, chi2_adequate, friedman_permutation_p


def rank_rows(matrix, higher_is_better=True):
    """Per-dataset ranks (1 = best, mid-ranks for ties), same shape and labels as ``matrix``."""
    values = matrix.to_numpy(dtype=float)
    ranks = stats.rankdata(-values if higher_is_better else values, axis=1)
    return pd.DataFrame(ranks, index=matrix.index, columns=matrix.columns)


@dataclass(frozen=True)
class FriedmanResult:
    chi2: float                 # Demšar (2006), eq. (1), no tie correction
    p: float                    # chi-square approximation, k - 1 degrees of freedom
    chi2_tie_corrected: float   # chi2 / (1 - sum(t^3 - t) / (N k (k^2 - 1)))
    p_tie_corrected: float
    iman_davenport_F: float | None   # Iman & Davenport (1980); Demšar (2006), eq. (2); None when undefined
    iman_davenport_p: float | None
    n_datasets: int
    n_methods: int
    iman_davenport_note: str = ""    # why F is undefined, when it is
    permutation: PermutationP | None = None   # exact / Monte Carlo p where the chi-square rule fails

    @property
    def decision_p(self):
        """The p-value that decides: the permutation p where the chi-square approximation is poor
        (Demšar's rule: N > 10 and k > 5 for chi-square) or F is undefined, else Iman-Davenport's."""
        return self.permutation.p if self.permutation is not None else self.iman_davenport_p

    @property
    def decision_test(self):
        """Which test gave ``decision_p``, in words."""
        if self.permutation is None:
            return "Iman-Davenport F test p"
        if self.permutation.method == "exact":
            return "Friedman, exact permutation p"
        return f"Friedman, Monte Carlo permutation p ({self.permutation.draws} draws, SE {self.permutation.standard_error:.2g})"


def friedman(ranks, permutation_seed=0):
    """Friedman and Iman-Davenport tests from a rank matrix (datasets x methods), plus the exact
    (or Monte Carlo) permutation p-value whenever chi-square is not adequate (friedman_null.py)."""
    R = ranks.to_numpy(dtype=float)
    n, k = R.shape
    mean_ranks = R.mean(axis=0)
    chi2 = 12.0 * n / (k * (k + 1)) * (np.sum(mean_ranks ** 2) - k * (k + 1) ** 2 / 4.0)
    ties = sum(np.sum(c ** 3 - c) for c in (np.unique(row, return_counts=True)[1] for row in R))
    denominator = 1.0 - ties / (n * k * (k * k - 1))
    chi2_tc = chi2 / denominator if denominator > 0 else float("nan")
    dof1, dof2 = k - 1, (k - 1) * (n - 1)
    spread = n * (k - 1) - chi2
    F = p_F = None
    note = ""
    if dof2 == 0:
        note = "undefined with one dataset"
    elif spread <= 1e-12 * n * k:
        note = ("undefined: every dataset ranks the methods identically (chi2_F = N (k - 1), "
                "so F would divide by zero); the permutation p-value decides")
    else:
        F = float((n - 1) * chi2 / spread)
        p_F = float(stats.f.sf(F, dof1, dof2))
    permutation = None
    if not chi2_adequate(n, k) or F is None:
        permutation = friedman_permutation_p(R, seed=permutation_seed)
    return FriedmanResult(
        chi2=float(chi2), p=float(stats.chi2.sf(chi2, dof1)),
        chi2_tie_corrected=float(chi2_tc),
        p_tie_corrected=float(stats.chi2.sf(chi2_tc, dof1)) if np.isfinite(chi2_tc) else float("nan"),
        iman_davenport_F=F, iman_davenport_p=p_F, n_datasets=n, n_methods=k,
        iman_davenport_note=note, permutation=permutation,
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
