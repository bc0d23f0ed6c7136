"""How much one method buys over another, in the metric's own units: effect sizes beside the ranks.

Ranks treat a difference of 0.001 and one of 0.2 alike; these do not. For two methods scored on the same
datasets (higher is better), with d_i = method - reference on dataset i:

* the mean difference over datasets with a 95 % interval: a percentile bootstrap, datasets resampled with
  replacement (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 13), from ``T_BELOW`` units up;
  below that the Student t interval mean +- t_{n-1} s / sqrt(n), since a percentile bootstrap of a mean of few
  units is too narrow (it behaves like mean +- 1.96 sqrt((n - 1) / n) s / sqrt(n): about 87 % coverage at n = 6);
* the same over dataset *families* (sets cut from one original dataset are not independent): one mean
  difference per family, families resampled (a cluster bootstrap; Davison & Hinkley 1997, Bootstrap Methods
  and their Application, section 3.8; from memory), given only with at least ``MIN_UNITS`` families;
* wins / ties / losses over datasets, a tie being |d_i| <= the stated tolerance (the region of practical
  equivalence of the Bayesian tests, 0.01 by default: one point on a 0-1 score).

An interval describes these datasets: it is not a test, and not corrected for the leaderboard's other
comparisons (the leaderboard's claims come from its tests). No interval is given from fewer than
``MIN_UNITS`` datasets or families.
"""
from dataclasses import dataclass

import numpy as np
from scipy import stats

from .compare import MIN_DATASETS

MIN_UNITS = MIN_DATASETS   # our rule: no interval from fewer datasets or families than this
T_BELOW = 20               # common practice: fewer units than this get the Student t interval, not the bootstrap
SAMPLES = 4000   # bootstrap draws: each interval end has a Monte Carlo sd of about 0.04 bootstrap sd (normal theory)
LEVEL = 0.95


@dataclass(frozen=True)
class Interval:
    """A mean difference with its percentile bootstrap interval, over ``n`` independent units."""

    mean: float
    low: float | None       # None when there are too few units for an interval (``note`` says why)
    high: float | None
    n: int
    note: str = ""

    @property
    def excludes_zero(self):
        return self.low is not None and self.high is not None and (self.low > 0 or self.high < 0)


@dataclass(frozen=True)
class Effect:
    """``method`` against ``reference`` on one metric (higher is better): d = method - reference."""

    method: str
    reference: str
    datasets: Interval
    families: Interval | None   # None when the datasets carry no family labels
    wins: int
    ties: int
    losses: int
    tolerance: float

    def as_json(self):
        def block(i):
            return None if i is None else {"mean": i.mean, "low": i.low, "high": i.high, "n": i.n, "note": i.note}
        return {"method": self.method, "reference": self.reference, "datasets": block(self.datasets),
                "families": block(self.families), "wins": self.wins, "ties": self.ties, "losses": self.losses,
                "tie_tolerance": self.tolerance}


def bootstrap_mean(values, samples=SAMPLES, level=LEVEL, seed=0, least=MIN_UNITS, unit="datasets"):
    """Mean of ``values`` with a 95 % interval: percentile bootstrap from T_BELOW values, Student t below
    (see the module docstring); None below ``least`` values."""
    values = np.asarray(values, dtype=float)
    mean = float(values.mean())
    if len(values) < least:
        return Interval(mean, None, None, len(values), f"fewer than {least} {unit}: no interval")
    if len(values) < T_BELOW:
        half = stats.t.ppf(0.5 + level / 2, len(values) - 1) * values.std(ddof=1) / np.sqrt(len(values))
        return Interval(mean, float(mean - half), float(mean + half), len(values), "Student t interval")
    rng = np.random.default_rng(seed)
    means = values[rng.integers(0, len(values), size=(samples, len(values)))].mean(axis=1)
    tail = (1.0 - level) / 2.0
    low, high = np.quantile(means, [tail, 1.0 - tail])
    return Interval(mean, float(low), float(high), len(values))


def paired_effect(method, reference, scores, families=None, tolerance=0.01, seed=0):
    """Effect of column ``method`` over column ``reference`` of ``scores`` (datasets x methods, complete).

    ``families``: {dataset: family}; with it the family-level interval is added.
    """
    d = (scores[method] - scores[reference]).to_numpy(dtype=float)
    settled = np.round(d, 10)       # 0.51 - 0.50 is 0.010000000000000009 in floating point: a tie at 0.01
    wins, losses = int(np.sum(settled > tolerance)), int(np.sum(settled < -tolerance))
    by_family = None
    if families is not None:
        labels = np.array([families.get(name, name) for name in scores.index])
        means = np.array([d[labels == f].mean() for f in np.unique(labels)])
        by_family = bootstrap_mean(means, seed=seed, unit="families")
    return Effect(method, reference, bootstrap_mean(d, seed=seed), by_family, wins, len(d) - wins - losses, losses,
                  tolerance)


def fold_interval(differences, n_train, n_test, level=LEVEL):
    """Mean of per-fold differences with the corrected resampled t interval (Nadeau & Bengio 2003, as
    written in Bouckaert & Frank 2004): mean +- t_{n-1} sqrt((1/n + n_test/n_train) var(d)).

    For one dataset's repeated cross-validation folds, whose training parts overlap. Returns an Interval over
    n folds (no interval below 2 folds; a zero-width one when every difference is the same)."""
    d = np.asarray(differences, dtype=float)
    mean = float(d.mean())
    if len(d) < 2:
        return Interval(mean, None, None, len(d), "fewer than 2 folds: no interval")
    half = stats.t.ppf(0.5 + level / 2, len(d) - 1) * np.sqrt((1 / len(d) + n_test / n_train) * d.var(ddof=1))
    return Interval(mean, float(mean - half), float(mean + half), len(d))
