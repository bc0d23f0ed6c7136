"""Each metric against scikit-learn's metric functions or its published definition."""
import numpy as np
import pytest
from sklearn import metrics as skm

from lopsided.metrics import score_cell


@pytest.fixture
def binary_case():
    rng = np.random.default_rng(3)
    y = np.r_[np.zeros(80, int), np.ones(20, int)]
    score = rng.normal(size=100) + 1.2 * y
    proba = np.c_[1 - 1 / (1 + np.exp(-score)), 1 / (1 + np.exp(-score))]
    pred = (score > 0.6).astype(int)
    return y, pred, proba


def test_binary_metrics_match_scikit_learn(binary_case):
    y, pred, proba = binary_case
    got = score_cell(y, pred, proba, minority=1, class_names=("rest", "rare"))
    assert got["balanced_accuracy"] == pytest.approx(skm.balanced_accuracy_score(y, pred))
    assert got["mcc"] == pytest.approx(skm.matthews_corrcoef(y, pred))
    assert got["f1_minority"] == pytest.approx(skm.f1_score(y, pred, pos_label=1))
    assert got["average_precision"] == pytest.approx(skm.average_precision_score(y, proba[:, 1]))
    assert got["roc_auc"] == pytest.approx(skm.roc_auc_score(y, proba[:, 1]))
    assert got["sensitivity"] == pytest.approx(skm.recall_score(y, pred, pos_label=1))
    assert got["specificity"] == pytest.approx(skm.recall_score(y, pred, pos_label=0))


def test_g_mean_is_the_geometric_mean_of_sensitivity_and_specificity():
    """Kubat & Matwin (1997), ICML, section 2: g = sqrt(acc+ * acc-). Hand example: 8/10 and 45/90."""
    y = np.r_[np.zeros(90, int), np.ones(10, int)]
    pred = np.r_[np.zeros(45, int), np.ones(45, int), np.ones(8, int), np.zeros(2, int)]
    proba = np.c_[1 - pred, pred].astype(float)
    got = score_cell(y, pred, proba, minority=1, class_names=("a", "b"))
    assert got["g_mean"] == pytest.approx(np.sqrt(0.8 * 0.5))
    assert got["sensitivity"] == pytest.approx(0.8) and got["specificity"] == pytest.approx(0.5)


def test_multiclass_metrics_match_scikit_learn():
    rng = np.random.default_rng(5)
    y = rng.choice(3, size=150, p=[0.6, 0.3, 0.1])
    proba = rng.dirichlet(np.ones(3), size=150)
    proba[np.arange(150), y] += 0.6
    proba /= proba.sum(axis=1, keepdims=True)
    pred = proba.argmax(axis=1)
    got = score_cell(y, pred, proba, minority=2, class_names=("x", "y", "z"))
    assert got["balanced_accuracy"] == pytest.approx(skm.balanced_accuracy_score(y, pred))
    assert got["mcc"] == pytest.approx(skm.matthews_corrcoef(y, pred))
    assert got["roc_auc"] == pytest.approx(skm.roc_auc_score(y, proba, multi_class="ovr", average="macro"))
    recalls = skm.recall_score(y, pred, average=None)
    assert [got[f"recall:{c}"] for c in "xyz"] == pytest.approx(list(recalls))
    assert got["g_mean"] == pytest.approx(np.prod(recalls) ** (1 / 3))
    assert got["f1_minority"] == pytest.approx(skm.f1_score(y == 2, pred == 2))


def test_undefined_auc_is_nan_not_a_number_made_up():
    y = np.zeros(10, int)
    got = score_cell(y, y, np.c_[np.ones(10), np.zeros(10)], minority=1, class_names=("a", "b"))
    assert np.isnan(got["roc_auc"]) and np.isnan(got["average_precision"])
