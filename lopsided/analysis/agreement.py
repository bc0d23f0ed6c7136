"""Do several rankings agree? Kendall's W over judges, Kendall's tau between two rankings.

* Kendall's coefficient of concordance W (Kendall & Babington Smith 1939, Ann. Math. Statist. 10:275):
  m judges rank the same k objects; with rank sums R_j, S = sum_j (R_j - m (k + 1) / 2)^2 and
  W = 12 S / (m^2 (k^3 - k)), 0 (no agreement) to 1 (identical rankings). Ties use mid-ranks, with the
  correction W = 12 S / (m^2 (k^3 - k) - m sum(t^3 - t)) (Siegel & Castellan 1988, section 9.4; from memory).
  Test of W = 0: m (k - 1) W is approximately chi-square with k - 1 degrees of freedom (the Friedman
  statistic: W = chi2_F / (m (k - 1))).
* Kendall's tau-b between two rankings (scipy.stats.kendalltau).
"""
from dataclasses import dataclass

import numpy as np
from scipy import stats


@dataclass(frozen=True)
class Concordance:
    w: float          # Kendall's W, 0..1
    chi2: float       # m (k - 1) W
    dof: int          # k - 1
    p: float          # chi-square approximation
    judges: int       # m
    objects: int      # k


def kendall_w(scores, higher_is_better=True):
    """Kendall's W of the rows (judges) of ``scores`` (m x k), each row ranked, mid-ranks for ties."""
    values = np.asarray(scores, dtype=float)
    m, k = values.shape
    ranks = stats.rankdata(-values if higher_is_better else values, axis=1)
    sums = ranks.sum(axis=0)
    s = float(np.sum((sums - m * (k + 1) / 2.0) ** 2))
    ties = sum(float(np.sum(c ** 3 - c)) for c in (np.unique(row, return_counts=True)[1] for row in ranks))
    denominator = m ** 2 * (k ** 3 - k) - m * ties
    w = 12.0 * s / denominator if denominator > 0 else float("nan")
    chi2 = m * (k - 1) * w
    return Concordance(w, chi2, k - 1, float(stats.chi2.sf(chi2, k - 1)) if np.isfinite(chi2) else float("nan"),
                       m, k)


def kendall_tau(first, second):
    """Kendall's tau-b between two score (or rank) vectors over the same objects, with its p-value."""
    result = stats.kendalltau(np.asarray(first, dtype=float), np.asarray(second, dtype=float))
    return float(result.statistic), float(result.pvalue)
