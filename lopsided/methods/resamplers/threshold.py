"""Threshold moving: the baseline every rebalancing method should beat. No row is added or removed; the
learner is fitted on the training part as it is, and only its decision threshold for the minority class is
moved, to the value that maximises a threshold-dependent metric over out-of-fold scores of an inner
cross-validation *of the training part* (stratified, grouped when the data have groups). The test part is
never seen: the runner hands this method the training rows and their groups only.

Sources: moving the threshold instead of the data (Provost 2000, "Machine learning from imbalanced data sets
101", AAAI workshop; Collell, Prelec & Patil 2018, Neurocomputing 275:330; from memory). The threshold-free
metrics (average precision, ROC AUC) of the refitted model are those of no resampling with the same seed: a
moved threshold changes which cases are called positive, not how they are ranked.
"""
import warnings

import numpy as np
from sklearn.base import BaseEstimator, ClassifierMixin, clone
from sklearn.model_selection import StratifiedGroupKFold, StratifiedKFold
from sklearn.utils.metaestimators import available_if

from .base import ResamplingError, check_xy


def _rates(tp, fp, positives, negatives):
    fn, tn = positives - tp, negatives - fp
    return fn, tn, tp / positives, tn / negatives


def _balanced_accuracy(tp, fp, positives, negatives):
    _, _, tpr, tnr = _rates(tp, fp, positives, negatives)
    return (tpr + tnr) / 2


def _g_mean(tp, fp, positives, negatives):
    _, _, tpr, tnr = _rates(tp, fp, positives, negatives)
    return np.sqrt(tpr * tnr)


def _mcc(tp, fp, positives, negatives):
    fn, tn, _, _ = _rates(tp, fp, positives, negatives)
    spread = np.sqrt((tp + fp) * (tp + fn) * (tn + fp) * (tn + fn))
    return np.divide(tp * tn - fp * fn, spread, out=np.zeros_like(spread), where=spread > 0)


def _f1(tp, fp, positives, negatives):
    fn = positives - tp
    return 2 * tp / (2 * tp + fp + fn)


# The metrics of lopsided.metrics that depend on a threshold, as functions of the confusion counts of the
# minority class (binary case; the same definitions as metrics.score_cell).
BY_COUNTS = {
    "balanced_accuracy": _balanced_accuracy,
    "g_mean": _g_mean,
    "mcc": _mcc,
    "f1_minority": _f1,
    "sensitivity": lambda tp, fp, p, n: _rates(tp, fp, p, n)[2],
    "specificity": lambda tp, fp, p, n: _rates(tp, fp, p, n)[3],
}


def best_threshold(scores, positive, metric):
    """The threshold t (call a row positive when its score >= t) that maximises ``metric`` on these rows.

    Every distinct score is a candidate cut, plus "no row positive"; among cuts with the best value the
    middle one is taken (the median position), and t lies halfway between the cut's score and the next
    lower distinct score, so the rows used here are classified exactly as at the cut.
    """
    scores, positive = np.asarray(scores, dtype=float), np.asarray(positive, dtype=bool)
    order = np.argsort(-scores, kind="stable")
    ranked = scores[order]
    last = np.append(np.flatnonzero(ranked[1:] != ranked[:-1]), len(ranked) - 1)   # end of each distinct score
    tp = np.concatenate([[0], np.cumsum(positive[order])[last]]).astype(float)
    fp = np.concatenate([[0], last + 1]) - tp
    value = BY_COUNTS[metric](tp, fp, float(positive.sum()), float((~positive).sum()))
    best = np.flatnonzero(value == np.nanmax(value))
    cut = int(best[(len(best) - 1) // 2])
    if cut == 0:
        return float(np.nextafter(ranked[0], np.inf))               # no row positive
    if cut == len(last):
        return -np.inf                                                # every row positive
    return float((ranked[last[cut - 1]] + ranked[last[cut]]) / 2)


class MovedThreshold(ClassifierMixin, BaseEstimator):
    """A fitted classifier whose minority-class threshold was chosen by inner cross-validation; see the
    module docstring. ``predict_proba`` and ``decision_function`` are the refitted model's own."""

    def __init__(self, model, metric="balanced_accuracy", folds=3, groups=None, random_state=None):
        self.model = model
        self.metric = metric
        self.folds = folds
        self.groups = groups
        self.random_state = random_state

    def fit(self, X, y, **fit_params):
        labels, counts = np.unique(y, return_counts=True)
        if len(labels) != 2:
            raise ResamplingError(f"threshold moving is defined here for two classes; the training part has "
                                  f"{len(labels)}")
        self.classes_, self.positive_ = labels, labels[np.argmin(counts)]
        self.model_ = clone(self.model).fit(X, y, **fit_params)
        splits = self._splits(y)
        if splits is None:
            self.threshold_ = None
            return self
        scores = np.empty(len(y))
        for inner_train, inner_test in splits:
            inner = clone(self.model).fit(X[inner_train], y[inner_train], **_rows(fit_params, inner_train))
            scores[inner_test] = self._score(inner, X[inner_test])
        self.threshold_ = best_threshold(scores, y == self.positive_, self.metric)
        return self

    def _splits(self, y):
        """The inner folds, or None (with a warning the cell keeps) when the training part has fewer than 2
        minority rows, or groups, to cross-validate over: the learner then keeps its own threshold."""
        minority = y == self.positive_
        units = int(minority.sum()) if self.groups is None else len(np.unique(np.asarray(self.groups)[minority]))
        folds = min(self.folds, units)
        if folds < 2:
            unit = "row" if self.groups is None else "group"
            warnings.warn(f"threshold moving: the training part has {units} minority {unit}, too few for an inner "
                          "cross-validation; the learner's own threshold was kept", RuntimeWarning, stacklevel=2)
            return None
        if self.groups is None:
            return StratifiedKFold(folds, shuffle=True, random_state=self.random_state).split(y, y)
        splitter = StratifiedGroupKFold(folds, shuffle=True, random_state=self.random_state)
        return splitter.split(y, y, groups=self.groups)

    def _score(self, model, X):
        """The positive class's probability, or its decision value, for each row: a one-column decision is the
        second class's; with one column per class (PLS-DA's indicators) the positive's minus the other's, so
        that 0 is the learner's own argmax threshold."""
        column = int(np.flatnonzero(model.classes_ == self.positive_)[0])
        if hasattr(model, "predict_proba"):
            return model.predict_proba(X)[:, column]
        decision = np.asarray(model.decision_function(X), dtype=float)
        if decision.ndim == 2:
            return decision[:, column] - decision[:, 1 - column]
        return decision if column == 1 else -decision

    def predict(self, X):
        if self.threshold_ is None:
            return self.model_.predict(X)
        called = self._score(self.model_, X) >= self.threshold_
        other = self.classes_[self.classes_ != self.positive_][0]
        return np.where(called, self.positive_, other)

    @available_if(lambda self: hasattr(self.model_, "predict_proba"))
    def predict_proba(self, X):
        return self.model_.predict_proba(X)

    @available_if(lambda self: hasattr(self.model_, "decision_function"))
    def decision_function(self, X):
        return self.model_.decision_function(X)


def _rows(fit_params, rows):
    """Per-sample fit parameters (e.g. sample weights) cut to ``rows``."""
    return {k: np.asarray(v)[rows] if np.ndim(v) else v for k, v in fit_params.items()}


class ThresholdMoving:
    """No resampling; asks the runner to fit the learner through ``MovedThreshold`` (see the module
    docstring). ``metric``: the threshold-dependent metric the threshold maximises (a suite fills in its
    headline metric when none is given); ``folds``: inner cross-validation folds (3, fewer when the training
    part has fewer minority rows or groups)."""

    tunes_for_metric = True

    def __init__(self, metric="balanced_accuracy", folds=3, random_state=None):
        self.metric = metric
        self.folds = folds
        self.random_state = random_state

    def rebalance(self, X, y):
        if self.metric not in BY_COUNTS:
            raise ResamplingError(f"metric={self.metric!r}: threshold moving maximises a metric that depends on the "
                                  f"threshold: {', '.join(BY_COUNTS)}")
        if not isinstance(self.folds, int) or self.folds < 2:
            raise ResamplingError(f"folds={self.folds!r} must be a whole number >= 2")
        return check_xy(X, y)

    def adjust_learner(self, model, groups=None):
        """The learner wrapped so that its threshold is chosen on the training rows it is fitted on."""
        return MovedThreshold(model, self.metric, self.folds, groups, self.random_state)
