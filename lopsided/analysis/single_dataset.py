"""Two methods on ONE dataset, from the per-fold scores of r repeats of k-fold cross-validation.

Fold scores of repeated cross-validation are correlated (training sets overlap), so the ordinary
paired t-test is far too confident. Two corrections, both on the n = r k paired differences
d = a - b (scores: higher is better, so d > 0 favours a):

* Corrected resampled t-test (Nadeau & Bengio 2003, Machine Learning 52:239-281, as written in
  Bouckaert & Frank 2004, PAKDD, LNCS 3056:3-12):
      t = mean(d) / sqrt((1/n + n_test/n_train) var(d)),  var with ddof = 1,  df = n - 1, two-sided p.
* Bayesian correlated t-test (Corani & Benavoli 2015, Machine Learning 100:285-304; Benavoli,
  Corani, Demšar & Zaffalon 2017, JMLR 18(77), section 4): the posterior of the mean difference mu
  is Student t with df = n - 1, location mean(d) and scale sqrt((1/n + rho/(1 - rho)) var(d)),
  rho = n_test / (n_train + n_test) (so rho/(1 - rho) = n_test/n_train). With a region of practical
  equivalence (rope) r: P(a better) = P(mu > r), P(equivalent) = P(-r <= mu <= r),
  P(b better) = P(mu < -r).

Results on one dataset are evidence about that dataset only: research evidence, not validation of a
diagnostic or safety method.
"""
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

from .compare import AnalysisError

DECISION_LEVEL = 0.95   # common practice (Benavoli et al. 2017 decide at posterior probability 0.95)


@dataclass(frozen=True)
class CorrectedT:
    """Corrected resampled t-test of a against b (Nadeau & Bengio 2003; Bouckaert & Frank 2004)."""
    mean_difference: float   # mean(a - b)
    t: float                 # +-inf when every difference is the same non-zero value; nan when all are zero
    df: int                  # n - 1
    p: float                 # two-sided; nan when every difference is zero
    correction: float        # 1/n + n_test/n_train, the factor replacing 1/n of the ordinary paired t-test
    note: str = ""           # why t is infinite or undefined, when it is


@dataclass(frozen=True)
class CorrelatedPosterior:
    """Posterior of the mean difference mu = a - b (Corani & Benavoli 2015), with a rope."""
    mean_difference: float   # location of the posterior
    scale: float             # sqrt((1/n + rho/(1 - rho)) var(d)); 0 for a point mass
    df: int                  # n - 1
    rope: float
    a_better: float          # P(mu > rope)
    equivalent: float        # P(-rope <= mu <= rope)
    b_better: float          # P(mu < -rope)
    point_mass: bool         # every difference equal: var(d) = 0 and the posterior sits on mean(d)


def _differences(a, b):
    """d = a - b as floats, paired by position (or by label when both are pandas Series)."""
    if isinstance(a, pd.Series) and isinstance(b, pd.Series):
        if not a.index.equals(b.index):
            raise AnalysisError("a, b: the fold labels differ; pair the scores by (repeat, fold)")
    x, y = np.asarray(a, dtype=float), np.asarray(b, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise AnalysisError(f"a, b: need two 1-D score arrays of equal length; got shapes {x.shape} and {y.shape}")
    if len(x) < 2:
        raise AnalysisError(f"a, b: need at least 2 paired fold scores; got {len(x)}")
    if not (np.isfinite(x).all() and np.isfinite(y).all()):
        raise AnalysisError("a, b: scores must be finite numbers (a failed fold leaves a gap: rerun or drop it)")
    return x - y


def _check_sizes(n_train, n_test):
    if not (np.isfinite(n_train) and n_train > 0):
        raise AnalysisError(f"n_train: {n_train} must be a positive number (training rows per fold)")
    if not (np.isfinite(n_test) and n_test > 0):
        raise AnalysisError(f"n_test: {n_test} must be a positive number (test rows per fold)")


def corrected_t_test(a, b, n_train: float, n_test: float) -> CorrectedT:
    """Corrected resampled t-test (Nadeau & Bengio 2003; formula as in Bouckaert & Frank 2004).

    Parameters
    ----------
    a, b : array-like of float, shape (n,)
        Scores of two methods on the same n = r k folds, paired by (repeat, fold); higher is better.
        Two pandas Series must carry the same index.
    n_train, n_test : float
        Training and test rows of one fold (with stratified folds sizes differ by at most one row: pass
        the means).

    Returns
    -------
    CorrectedT
        t = mean(d) / sqrt((1/n + n_test/n_train) var(d)), df = n - 1, two-sided p from Student t.
        When every difference is equal (var(d) = 0) nothing is divided: t is +-inf with p = 0 for a
        non-zero difference, nan with p = nan when the two methods tie on every fold; ``note`` says so.
    """
    _check_sizes(n_train, n_test)
    d = _differences(a, b)
    n = len(d)
    mean, var = float(d.mean()), float(d.var(ddof=1))
    correction = 1.0 / n + n_test / n_train
    if var == 0.0:
        if mean == 0.0:
            return CorrectedT(0.0, float("nan"), n - 1, float("nan"), correction,
                              "the two methods score the same on every fold: there is no difference to test")
        return CorrectedT(mean, float(np.copysign(np.inf, mean)), n - 1, 0.0, correction,
                          "every fold gives the same non-zero difference: var(d) = 0, t is infinite")
    t = mean / np.sqrt(correction * var)
    return CorrectedT(mean, float(t), n - 1, float(2.0 * stats.t.sf(abs(t), n - 1)), correction)


def correlated_posterior(a, b, n_train: float, n_test: float, rope: float = 0.01) -> CorrelatedPosterior:
    """Bayesian correlated t-test (Corani & Benavoli 2015; Benavoli et al. 2017, JMLR 18(77), section 4).

    Parameters
    ----------
    a, b : array-like of float, shape (n,)
        Scores of two methods on the same n = r k folds, paired by (repeat, fold); higher is better.
    n_train, n_test : float
        Training and test rows of one fold; rho = n_test / (n_train + n_test).
    rope : float
        Half-width of the region of practical equivalence, in score units (0.01 = one point of a
        score in [0, 1]); zero or positive.

    Returns
    -------
    CorrelatedPosterior
        P(a better) = P(mu > rope), P(equivalent) = P(-rope <= mu <= rope), P(b better) = P(mu < -rope)
        under mu ~ Student t(df = n - 1, loc = mean(d), scale = sqrt((1/n + rho/(1 - rho)) var(d))).
        With var(d) = 0 the posterior is a point mass at mean(d) (``point_mass`` is True) and the three
        probabilities are 0 or 1. With rope = 0, P(equivalent) = 0 unless the posterior is a point mass.
    """
    if not (np.isfinite(rope) and rope >= 0):
        raise AnalysisError(f"rope: {rope} must be zero or positive")
    _check_sizes(n_train, n_test)
    d = _differences(a, b)
    n = len(d)
    mean, var = float(d.mean()), float(d.var(ddof=1))
    rho = n_test / (n_train + n_test)
    if var == 0.0:
        above, below = float(mean > rope), float(mean < -rope)
        return CorrelatedPosterior(mean, 0.0, n - 1, rope, above, 1.0 - above - below, below, True)
    scale = float(np.sqrt((1.0 / n + rho / (1.0 - rho)) * var))
    above = float(stats.t.sf((rope - mean) / scale, n - 1))
    below = float(stats.t.cdf((-rope - mean) / scale, n - 1))
    return CorrelatedPosterior(mean, scale, n - 1, rope, above, max(0.0, 1.0 - above - below), below, False)


@dataclass(frozen=True)
class VersusBest:
    """One method against the best: a = the best method, b = this method (so d = best - method)."""
    method: str
    mean: float
    t_test: CorrectedT
    posterior: CorrelatedPosterior


@dataclass(frozen=True)
class BestComparison:
    """Every method of one dataset against the best one by mean fold score."""
    best: str
    best_mean: float
    rows: tuple[VersusBest, ...]   # the other methods, best mean first
    n_folds: int                   # n = r k paired scores per method
    n_train: float
    n_test: float
    rope: float
    alpha: float
    higher_is_better: bool

    def as_frame(self) -> pd.DataFrame:
        """One tidy row per method (the best first, with empty test columns), for tables and JSON.

        ``minus_best`` is the method's mean minus the best mean in the score's own units (negative for
        scores where higher is better, positive for losses).
        """
        sign = 1.0 if self.higher_is_better else -1.0
        records = [{"method": self.best, "mean": self.best_mean}]
        for row in self.rows:
            t, post = row.t_test, row.posterior
            records.append({"method": row.method, "mean": row.mean,
                            "minus_best": -sign * t.mean_difference, "t": t.t, "df": t.df, "p": t.p,
                            "p_best_better": post.a_better, "p_equivalent": post.equivalent,
                            "p_method_better": post.b_better})
        return pd.DataFrame.from_records(records)


def compare_to_best(fold_scores: pd.DataFrame, n_train: float, n_test: float, rope: float = 0.01,
                    alpha: float = 0.05, higher_is_better: bool = True) -> BestComparison:
    """Each method against the best one (highest mean fold score) on one dataset, by both tests.

    Parameters
    ----------
    fold_scores : pandas.DataFrame
        Methods as rows, one column per (repeat, fold) (e.g. a two-level column index); every method
        scored on every column.
    n_train, n_test : float
        Training and test rows of one fold (means when folds differ by a row).
    rope : float
        Region of practical equivalence for the Bayesian correlated t-test, in score units.
    alpha : float
        Significance level for the corrected resampled t-test, used by ``read_best_comparison``.
    higher_is_better : bool
        False for losses and error rates: the scores are negated before testing, so "best" is the lowest
        mean and every probability still reads "better" in the usual sense.

    Returns
    -------
    BestComparison
        The best method (ties broken by name), and per other method its corrected t-test and posterior
        with a = the best, b = the method. Rows are ordered best mean first.
    """
    if not 0 < alpha < 1:
        raise AnalysisError(f"alpha: {alpha} must lie between 0 and 1")
    if not fold_scores.index.is_unique:
        duplicated = sorted({str(m) for m in fold_scores.index[fold_scores.index.duplicated()]})
        raise AnalysisError(f"fold_scores: method names must be unique; repeated: {', '.join(duplicated)}")
    if not fold_scores.columns.is_unique:
        raise AnalysisError("fold_scores: the (repeat, fold) columns must be unique")
    if fold_scores.shape[0] < 2:
        raise AnalysisError(f"fold_scores: need at least 2 methods (rows); got {fold_scores.shape[0]}")
    values = fold_scores.to_numpy(dtype=float)
    gaps = ~np.isfinite(values)
    if gaps.any():
        listed = "; ".join(f"{m}: {int(g.sum())} of {len(g)}" for m, g in zip(fold_scores.index, gaps) if g.any())
        raise AnalysisError(f"fold_scores: missing or non-finite fold scores ({listed}); the tests need every "
                            "method on every (repeat, fold): rerun the failed folds or leave the method out")
    oriented = values if higher_is_better else -values
    names = [str(m) for m in fold_scores.index]
    means = oriented.mean(axis=1)
    order = sorted(range(len(names)), key=lambda i: (-means[i], names[i]))
    best = order[0]
    rows = tuple(VersusBest(names[i], float(values[i].mean()),
                            corrected_t_test(oriented[best], oriented[i], n_train, n_test),
                            correlated_posterior(oriented[best], oriented[i], n_train, n_test, rope))
                 for i in order[1:])
    return BestComparison(names[best], float(values[best].mean()), rows, values.shape[1], float(n_train),
                          float(n_test), float(rope), float(alpha), higher_is_better)


@dataclass(frozen=True)
class BestReading:
    """Plain-words reading of a BestComparison."""
    best: str
    equivalent: tuple[str, ...]           # P(equivalent to the best) >= level
    worse: tuple[str, ...]                # P(the best is practically better) >= level
    undecided: tuple[str, ...]            # neither: more folds, repeats or data needed to tell
    significantly_worse: tuple[str, ...]  # corrected resampled t-test p < alpha (a difference of any size)
    sentences: tuple[str, ...]


def read_best_comparison(comparison: BestComparison, level: float = DECISION_LEVEL) -> BestReading:
    """Which methods are practically equivalent to the best, which practically worse, which undecided.

    Parameters
    ----------
    comparison : BestComparison
        From ``compare_to_best``.
    level : float
        Posterior probability needed to call a method equivalent or worse (0.95: common practice).

    Returns
    -------
    BestReading
        The Bayesian correlated t-test with the comparison's rope decides "equivalent", "worse" and
        "undecided"; the corrected t-test (p < alpha) is listed separately: it says whether a difference
        exists, not whether it matters.
    """
    if not 0.5 < level < 1:
        raise AnalysisError(f"level: {level} must lie between 0.5 and 1")
    c = comparison
    equivalent = tuple(r.method for r in c.rows if r.posterior.equivalent >= level)
    worse = tuple(r.method for r in c.rows if r.posterior.a_better >= level)
    undecided = tuple(r.method for r in c.rows if r.method not in equivalent + worse)
    significant = tuple(r.method for r in c.rows if r.t_test.p < c.alpha)
    rope = f"within {c.rope:g} of the best"
    lines = [f"{c.best} has the best mean score ({c.best_mean:.4g}) over {c.n_folds} folds."]
    if equivalent:
        lines.append(f"Practically equivalent to {c.best} ({rope}, posterior probability >= {level:g}): "
                     f"{', '.join(equivalent)}.")
    if worse:
        lines.append(f"Practically worse than {c.best} (by more than {c.rope:g}, posterior probability >= {level:g}): "
                     f"{', '.join(worse)}.")
    if undecided:
        lines.append(f"Not decided at {level:g} (more repeats or data needed): {', '.join(undecided)}.")
    if significant:
        lines.append(f"Corrected resampled t-test, p < {c.alpha:g} against {c.best}: {', '.join(significant)}.")
    else:
        lines.append(f"No method differs from {c.best} by the corrected resampled t-test at p < {c.alpha:g}.")
    lines.append("These statements are about this one dataset: research evidence, not validation of a diagnostic "
                 "or safety method.")
    return BestReading(c.best, equivalent, worse, undecided, significant, tuple(lines))
