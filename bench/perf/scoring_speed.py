"""Time to score one cell: lopsided's `score_cell` (one confusion matrix, one sort per score column) against
the same metrics from scikit-learn's metric functions called one after another, as lopsided did before.

Test parts of 100, 1,000 and 10,000 rows, two and three classes (imbalanced, tied scores included). The two
are timed in interleaved rounds and the medians compared; both must give the same numbers (to 1e-12).
Target: under 1 ms per cell up to 10,000 rows.

    python bench/perf/scoring_speed.py [--rounds 7]
"""
import argparse
import os
import statistics
import time
import warnings

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
from sklearn.metrics import average_precision_score, confusion_matrix, f1_score, matthews_corrcoef, roc_auc_score  # noqa: E402

from lopsided.methods.metrics import score_cell  # noqa: E402

ROWS = (100, 1_000, 10_000)
CALLS = {100: 40, 1_000: 20, 10_000: 5}     # calls per timing, so each timing lasts a few milliseconds


def sklearn_cell(y_true, y_pred, scores, minority, class_names):
    """The same metrics from scikit-learn's metric functions (the sequence lopsided used to call)."""
    n_classes = len(class_names)
    matrix = confusion_matrix(y_true, y_pred, labels=np.arange(n_classes))
    support = matrix.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        recalls = np.where(support > 0, np.diag(matrix) / support, np.nan)
    present = recalls[~np.isnan(recalls)]
    is_pos, pred_pos = y_true == minority, y_pred == minority

    def curve(metric, truth, score):
        if truth.all() or not truth.any() or not np.isfinite(score).all():
            return float("nan")
        return float(metric(truth, score))

    if n_classes == 2:
        auc = curve(roc_auc_score, y_true == 1, scores[:, 1] - scores[:, 0])
    else:
        per_class = [curve(roc_auc_score, y_true == c, scores[:, c]) for c in range(n_classes)]
        auc = float("nan") if np.all(np.isnan(per_class)) else float(np.nanmean(per_class))
    result = {
        "balanced_accuracy": float(present.mean()),
        "g_mean": float(np.prod(present) ** (1.0 / len(present))),
        "mcc": float(matthews_corrcoef(y_true, y_pred)),
        "f1_minority": float(f1_score(is_pos, pred_pos, zero_division=0.0)),
        "average_precision": curve(average_precision_score, is_pos, scores[:, minority]),
        "roc_auc": auc,
        "sensitivity": float(pred_pos[is_pos].mean()) if is_pos.any() else float("nan"),
        "specificity": float((~pred_pos[~is_pos]).mean()) if (~is_pos).any() else float("nan"),
    }
    result.update({f"recall:{name}": float(r) for name, r in zip(class_names, recalls)})
    return result


def test_part(rows, n_classes, rng):
    """Labels with a 1:9 (two classes) or 6:3:1 (three classes) mix, scores as probabilities with ties."""
    shares = [0.9, 0.1] if n_classes == 2 else [0.6, 0.3, 0.1]
    y = rng.choice(n_classes, size=rows, p=shares)
    logits = rng.normal(size=(rows, n_classes))
    logits[np.arange(rows), y] += 1.0
    scores = np.round(np.exp(logits) / np.exp(logits).sum(axis=1, keepdims=True), 3)
    names = tuple(f"class {c}" for c in range(n_classes))
    return y, scores.argmax(axis=1), scores, n_classes - 1, names


def per_call(score, part, calls):
    started = time.perf_counter()
    for _ in range(calls):
        score(*part)
    return (time.perf_counter() - started) / calls


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--rounds", type=int, default=7)
    args = parser.parse_args()
    rng = np.random.default_rng(0)
    cases = [(rows, k, test_part(rows, k, rng)) for rows in ROWS for k in (2, 3)]
    warnings.simplefilter("ignore")
    for _, _, part in cases:
        ours, theirs = score_cell(*part), sklearn_cell(*part)
        assert ours.keys() == theirs.keys()
        assert all(abs(ours[m] - theirs[m]) <= 1e-12 or (np.isnan(ours[m]) and np.isnan(theirs[m])) for m in ours)
    times = {(rows, k): ([], []) for rows, k, _ in cases}
    for _ in range(args.rounds):
        for rows, k, part in cases:
            ours, theirs = times[rows, k]
            theirs.append(per_call(sklearn_cell, part, CALLS[rows]))
            ours.append(per_call(score_cell, part, CALLS[rows]))
    print(f"median of {args.rounds} interleaved rounds, milliseconds per cell (same numbers to 1e-12: yes)")
    print(f"{'rows':>7} {'classes':>7} {'scikit-learn':>12} {'lopsided':>9} {'speed-up':>9} {'under 1 ms':>10}")
    for rows, k, _ in cases:
        ours, theirs = (statistics.median(t) * 1e3 for t in times[rows, k])
        verdict = "yes" if ours < 1 else "no"
        print(f"{rows:>7,} {k:>7} {theirs:>12.3f} {ours:>9.3f} {theirs / ours:>8.1f}x {verdict:>10}")


if __name__ == "__main__":
    main()
