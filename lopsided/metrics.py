"""Scores of one fitted cell on its test part. The minority class is the positive class.

Definitions: balanced accuracy = mean per-class recall (Brodersen et al. 2010); G-mean =
geometric mean of per-class recalls (Kubat & Matwin 1997); MCC (Matthews 1975, multi-class
form Gorodkin 2004); F1 of the minority class; average precision = sum_n (R_n - R_{n-1}) P_n
(the step-wise area under the precision-recall curve); ROC AUC (binary; macro one-vs-rest
for more classes). Sensitivity / specificity: recall of the minority class / recall of
everything else taken together. All are higher-is-better.
"""
import numpy as np
from sklearn.metrics import average_precision_score, confusion_matrix, f1_score, matthews_corrcoef, roc_auc_score

METRICS = {
    "balanced_accuracy": "mean of per-class recalls",
    "g_mean": "geometric mean of per-class recalls",
    "mcc": "Matthews correlation coefficient",
    "f1_minority": "F1 score of the minority class",
    "average_precision": "area under the precision-recall curve of the minority class (average precision)",
    "roc_auc": "area under the ROC curve (macro one-vs-rest for more than two classes)",
    "sensitivity": "recall of the minority class",
    "specificity": "recall of all other classes taken together",
}


def class_scores(model, X, n_classes):
    """(n, n_classes) continuous scores: probabilities if the model has them, else decision values."""
    out = np.full((len(X), n_classes), -np.inf)
    labels = np.asarray(model.classes_, dtype=int)
    if hasattr(model, "predict_proba"):
        out[:, labels] = model.predict_proba(X)
        return out
    decision = np.asarray(model.decision_function(X), dtype=float)
    if decision.ndim == 1:
        out[:, labels[1]], out[:, labels[0]] = decision, -decision
    else:
        out[:, labels] = decision
    return out


def per_class_recall(y_true, y_pred, n_classes):
    matrix = confusion_matrix(y_true, y_pred, labels=np.arange(n_classes))
    support = matrix.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(support > 0, np.diag(matrix) / support, np.nan)


def score_cell(y_true, y_pred, scores, minority, class_names):
    """Every metric for one test part, plus the recall of each class ('recall:NAME')."""
    n_classes = len(class_names)
    recalls = per_class_recall(y_true, y_pred, n_classes)
    present = recalls[~np.isnan(recalls)]
    is_pos, pred_pos = y_true == minority, y_pred == minority
    result = {
        "balanced_accuracy": float(present.mean()),
        "g_mean": float(np.prod(present) ** (1.0 / len(present))),
        "mcc": float(matthews_corrcoef(y_true, y_pred)),
        "f1_minority": float(f1_score(is_pos, pred_pos, zero_division=0.0)),
        "average_precision": _safe(average_precision_score, is_pos, scores[:, minority]),
        "roc_auc": _auc(y_true, scores, n_classes),
        "sensitivity": float(pred_pos[is_pos].mean()) if is_pos.any() else float("nan"),
        "specificity": float((~pred_pos[~is_pos]).mean()) if (~is_pos).any() else float("nan"),
    }
    result.update({f"recall:{name}": float(r) for name, r in zip(class_names, recalls)})
    return result


def _auc(y_true, scores, n_classes):
    if n_classes == 2:
        return _safe(roc_auc_score, y_true == 1, scores[:, 1] - scores[:, 0])
    per_class = [_safe(roc_auc_score, y_true == c, scores[:, c]) for c in range(n_classes)]
    return float(np.nanmean(per_class)) if not np.all(np.isnan(per_class)) else float("nan")


def _safe(metric, truth, score):
    """NaN when the metric is undefined (one class in the test part, or no finite scores)."""
    if truth.all() or not truth.any() or not np.isfinite(score).all():
        return float("nan")
    return float(metric(truth, score))
