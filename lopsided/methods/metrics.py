"""Scores of one fitted cell on its test part. The minority class is the positive class.

Definitions: balanced accuracy = mean per-class recall (Brodersen et al. 2010); G-mean =
geometric mean of per-class recalls (Kubat & Matwin 1997); MCC (Matthews 1975, multi-class
form Gorodkin 2004); F1 of the minority class; average precision = sum_n (R_n - R_{n-1}) P_n
(the step-wise area under the precision-recall curve); ROC AUC (binary; macro one-vs-rest
for more classes). Sensitivity / specificity: recall of the minority class / recall of
everything else taken together. All are higher-is-better.

Computation: every count-based metric comes from one confusion matrix (one np.bincount), and
both curve metrics of a score column from one sort of that column, with a threshold at each
distinct score value (ties fall together), as scikit-learn's metric functions define them. Both
are made once per test part (``Outcome``); ``METRICS`` holds each metric's function of it.
"""
from dataclasses import dataclass

import numpy as np
from sklearn.ensemble import AdaBoostClassifier, RandomForestClassifier

from ..errors import MethodError
from ..registry import Builtin, Registry

NAMES = {   # how pages and sentences name each metric
    "balanced_accuracy": "balanced accuracy",
    "g_mean": "G-mean",
    "mcc": "MCC",
    "f1_minority": "minority F1",
    "average_precision": "average precision",
    "roc_auc": "ROC AUC",
    "sensitivity": "sensitivity",
    "specificity": "specificity",
}


def metric_name(metric):
    """'balanced accuracy' for 'balanced_accuracy'; 'recall of X' for 'recall:X'; other names as given."""
    return NAMES.get(metric) or (f"recall of {metric[7:]}" if metric.startswith("recall:") else metric)


NAN = float("nan")


def _by_probability(model, X, n_classes):
    """scikit-learn's forests: ``predict`` is ``classes_.take(argmax(predict_proba))`` (ForestClassifier),
    first class on ties, so one walk of the trees gives both."""
    probabilities = model.predict_proba(X)
    return model.classes_.take(np.argmax(probabilities, axis=1)), _spread(model, probabilities, len(X), n_classes)


def _by_decision(model, X, n_classes):
    """scikit-learn's AdaBoost (SAMME): ``predict`` and ``predict_proba`` each run ``decision_function``
    over every member; both are computed here from one run of it, with the formulas of their source
    (Zhu, Zou, Rosset & Hastie 2009: probabilities = softmax(decision / (K - 1)))."""
    decision = model.decision_function(X)
    if model.n_classes_ == 2:
        predicted = model.classes_.take(decision > 0, axis=0)
    else:
        predicted = model.classes_.take(np.argmax(decision, axis=1), axis=0)
    probabilities = model._compute_proba_from_decision(decision, model.n_classes_)   # may scale decision in place
    return predicted, _spread(model, probabilities, len(X), n_classes)


def _one_pass(model):
    """The function giving a model's predictions and probabilities from one pass over its members, if
    the model's own ``predict`` and ``predict_proba`` are the scikit-learn methods it reproduces."""
    kind = type(model)
    if kind.predict is RandomForestClassifier.predict and getattr(model, "n_outputs_", 1) == 1:
        return _by_probability
    if (kind.predict is AdaBoostClassifier.predict and kind.predict_proba is AdaBoostClassifier.predict_proba
            and getattr(model, "n_classes_", 0) >= 2):
        return _by_decision
    return None


def predictions_and_scores(model, X, n_classes):
    """(class indices the model predicts, ``class_scores``) for the rows of X. A forest's trees and an
    AdaBoost ensemble's members are walked once for both (``_one_pass``); other models predict and
    score with a call each, so their predictions stay exactly their own."""
    one_pass = _one_pass(model)
    if one_pass is not None:
        predicted, scores = one_pass(model, X, n_classes)
        return np.asarray(predicted).astype(np.int64), scores
    return np.asarray(model.predict(X)).astype(np.int64), class_scores(model, X, n_classes)


def class_scores(model, X, n_classes):
    """(n, n_classes) continuous scores: probabilities if the model has them, else decision values."""
    if hasattr(model, "predict_proba"):
        return _spread(model, model.predict_proba(X), len(X), n_classes)
    labels = np.asarray(model.classes_, dtype=int)
    out = np.full((len(X), n_classes), -np.inf)
    decision = np.asarray(model.decision_function(X), dtype=float)
    if decision.ndim == 1:
        out[:, labels[1]], out[:, labels[0]] = decision, -decision
    else:
        out[:, labels] = decision
    return out


def _spread(model, probabilities, n_rows, n_classes):
    """The model's probability columns at its classes' places among all n_classes (-inf elsewhere)."""
    out = np.full((n_rows, n_classes), -np.inf)
    out[:, np.asarray(model.classes_, dtype=int)] = probabilities
    return out


def confusion(y_true, y_pred, n_classes):
    """Counts with rows = true class, columns = predicted class, from one np.bincount."""
    if y_pred.min() < 0 or y_pred.max() >= n_classes:
        raise MethodError(f"predictions: labels outside the class indices 0..{n_classes - 1}; "
                          f"got {sorted(set(y_pred[(y_pred < 0) | (y_pred >= n_classes)].tolist()))}")
    counts = np.bincount(y_true * n_classes + y_pred, minlength=n_classes * n_classes)
    return counts.reshape(n_classes, n_classes)


@dataclass(frozen=True)
class Outcome:
    """What every metric of one test part is computed from, made once (``outcome``)."""

    matrix: np.ndarray          # confusion counts, rows = true class, columns = predicted class
    recalls: np.ndarray         # per class; NaN for a class absent from the test part
    present: np.ndarray         # the recalls of the classes present
    minority: int
    hits: np.integer            # minority rows predicted minority
    actual: np.integer          # minority rows
    predicted: np.integer       # rows predicted minority
    negatives: np.integer       # rows of the other classes
    y_true: np.ndarray
    scores: np.ndarray
    minority_curve: tuple | None    # _curve of the minority's scores


def outcome(y_true, y_pred, scores, minority, n_classes):
    """The test part's confusion matrix (one np.bincount), recalls and minority ranking curve (one sort)."""
    matrix = confusion(y_true, y_pred, n_classes)
    support = matrix.sum(axis=1)
    recalls = np.full(n_classes, np.nan)
    np.divide(np.diag(matrix), support, out=recalls, where=support > 0)
    actual = support[minority]
    return Outcome(matrix=matrix, recalls=recalls, present=recalls[support > 0], minority=minority,
                   hits=matrix[minority, minority], actual=actual, predicted=matrix[:, minority].sum(),
                   negatives=len(y_true) - actual, y_true=y_true, scores=scores,
                   minority_curve=_curve(y_true == minority, scores[:, minority]))


def balanced_accuracy(o):
    return float(o.present.mean())


def g_mean(o):
    return float(np.prod(o.present) ** (1.0 / len(o.present)))


def mcc(o):
    return _mcc(o.matrix)


def f1_minority(o):
    return float(2.0 * o.hits / (o.actual + o.predicted)) if o.actual + o.predicted else 0.0


def average_precision(o):
    return _average_precision(o.minority_curve)


def roc_auc(o):
    return _roc_auc(o.y_true, o.scores, o.minority, o.minority_curve)


def sensitivity(o):
    return float(o.recalls[o.minority])


def specificity(o):
    return float((o.negatives - o.predicted + o.hits) / o.negatives) if o.negatives else NAN


METRICS = {
    "balanced_accuracy": Builtin(balanced_accuracy, "mean of per-class recalls"),
    "g_mean": Builtin(g_mean, "geometric mean of per-class recalls"),
    "mcc": Builtin(mcc, "Matthews correlation coefficient"),
    "f1_minority": Builtin(f1_minority, "F1 score of the minority class"),
    "average_precision": Builtin(average_precision, "area under the precision-recall curve of the minority class "
                                 "(average precision)"),
    "roc_auc": Builtin(roc_auc, "area under the ROC curve (macro one-vs-rest for more than two classes)"),
    "sensitivity": Builtin(sensitivity, "recall of the minority class"),
    "specificity": Builtin(specificity, "recall of all other classes taken together"),
}
REGISTRY = Registry("metric", METRICS, None, import_paths=False)


def score_cell(y_true, y_pred, scores, minority, class_names):
    """Every metric for one test part, plus the recall of each class ('recall:NAME')."""
    part = outcome(y_true, y_pred, scores, minority, len(class_names))
    result = {name: entry.factory(part) for name, entry in METRICS.items()}
    result.update({f"recall:{name}": float(r) for name, r in zip(class_names, part.recalls)})
    return result


def _mcc(matrix):
    """Gorodkin (2004) R_K, in scikit-learn's order of operations; 0 when either margin has one class only."""
    true_sum = matrix.sum(axis=1, dtype=np.float64)
    pred_sum = matrix.sum(axis=0, dtype=np.float64)
    n = pred_sum.sum()
    cov_true_pred = np.trace(matrix, dtype=np.float64) * n - true_sum @ pred_sum
    cov_pred_pred = n ** 2 - pred_sum @ pred_sum
    cov_true_true = n ** 2 - true_sum @ true_sum
    product = cov_pred_pred * cov_true_true
    return float(cov_true_pred / np.sqrt(product)) if product else 0.0


def _roc_auc(y_true, scores, minority, minority_curve):
    """Binary: class 1 against class 0 on the score difference; more classes: macro mean one-vs-rest."""
    n_classes = scores.shape[1]
    if n_classes == 2:
        return _roc_area(_curve(y_true == 1, scores[:, 1] - scores[:, 0]))
    areas = [_roc_area(minority_curve if c == minority else _curve(y_true == c, scores[:, c]))
             for c in range(n_classes)]
    return NAN if np.all(np.isnan(areas)) else float(np.nanmean(areas))


def _curve(truth, score):
    """Cumulative (true positives, false positives) at each distinct score, highest first, from one sort.

    None when the curves are undefined: one class only in the test part, or a score that is not finite.
    """
    positives = np.count_nonzero(truth)
    if positives == 0 or positives == len(truth) or not np.isfinite(score).all():
        return None
    order = np.argsort(score)[::-1]
    ranked = score[order]
    last = np.append(np.flatnonzero(ranked[1:] != ranked[:-1]), len(ranked) - 1)
    true_pos = np.cumsum(truth[order])[last]
    return true_pos, last + 1 - true_pos


def _average_precision(curve):
    """sum_n (R_n - R_{n-1}) P_n over the distinct thresholds (scikit-learn's average_precision_score)."""
    if curve is None:
        return NAN
    true_pos, false_pos = curve
    recall = true_pos / true_pos[-1]
    precision = true_pos / (true_pos + false_pos)
    return float(np.sum(np.diff(recall, prepend=0.0) * precision))


def _roc_area(curve):
    """Trapezoids between successive distinct thresholds, summed exactly in integers and divided once.

    Equal to the Mann-Whitney U statistic with mid-ranks for ties over (positives x negatives)
    (Hanley & McNeil 1982, Radiology 143:29-36).
    """
    if curve is None:
        return NAN
    true_pos, false_pos = curve
    widths = np.diff(false_pos, prepend=0)
    heights = true_pos + np.append(0, true_pos[:-1])
    return float(int(widths @ heights) / (2 * int(true_pos[-1]) * int(false_pos[-1])))
