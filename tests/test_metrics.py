"""Each metric against scikit-learn's metric functions or its published definition."""
import warnings

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sklearn import metrics as skm
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.ensemble import AdaBoostClassifier, RandomForestClassifier
from sklearn.tree import DecisionTreeClassifier

from lopsided.errors import MethodError
from lopsided.methods.metrics import class_scores, predictions_and_scores, score_cell


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


def sklearn_reference(y, pred, scores, minority, n_classes):
    """Every metric from scikit-learn's own metric functions (the reference), inside lopsided's NaN rules:
    a curve metric is NaN when the test part holds one class only or a score is not finite."""
    def curve_metric(metric, truth, score):
        if truth.all() or not truth.any() or not np.isfinite(score).all():
            return np.nan
        return metric(truth, score)

    is_pos, pred_pos = y == minority, pred == minority
    recalls = skm.recall_score(y, pred, labels=np.arange(n_classes), average=None, zero_division=np.nan)
    present = skm.recall_score(y, pred, labels=np.unique(y), average=None)
    if n_classes == 2:
        auc = curve_metric(skm.roc_auc_score, y == 1, scores[:, 1] - scores[:, 0])
    else:
        per_class = [curve_metric(skm.roc_auc_score, y == c, scores[:, c]) for c in range(n_classes)]
        auc = np.nan if np.all(np.isnan(per_class)) else np.nanmean(per_class)
    reference = {
        "balanced_accuracy": skm.balanced_accuracy_score(y, pred),
        "g_mean": np.prod(present) ** (1 / len(present)),     # Kubat & Matwin (1997) on scikit-learn's recalls
        "mcc": skm.matthews_corrcoef(y, pred),
        "f1_minority": skm.f1_score(is_pos, pred_pos, zero_division=0.0),
        "average_precision": curve_metric(skm.average_precision_score, is_pos, scores[:, minority]),
        "roc_auc": auc,
        "sensitivity": skm.recall_score(is_pos, pred_pos) if is_pos.any() else np.nan,
        "specificity": skm.recall_score(~is_pos, ~pred_pos) if (~is_pos).any() else np.nan,
    }
    reference.update({f"recall:c{c}": r for c, r in enumerate(recalls)})
    return reference


def assert_matches_sklearn(y, pred, scores, minority):
    """score_cell equals the scikit-learn reference to 1e-12 on every metric (NaN where it is NaN)."""
    n_classes = scores.shape[1]
    got = score_cell(y, pred, scores, minority, class_names=tuple(f"c{c}" for c in range(n_classes)))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")     # scikit-learn warns on the degenerate parts it is checked on
        want = sklearn_reference(y, pred, scores, minority, n_classes)
    assert got.keys() == want.keys()
    for name, value in want.items():
        if np.isnan(value):
            assert np.isnan(got[name]), (name, got[name])
        else:
            assert abs(got[name] - value) <= 1e-12, (name, got[name], value)
    return got


def random_part(rng, n_classes, size, ties, predictions, missing_column, one_class):
    """A test part as the runner hands it over: labels, predictions and `class_scores`-style scores."""
    weights = rng.dirichlet(np.full(n_classes, 0.7))
    y = np.full(size, rng.integers(n_classes)) if one_class else rng.choice(n_classes, size=size, p=weights)
    scores = rng.normal(size=(size, n_classes))
    scores[np.arange(size), y] += rng.uniform(0, 2)
    if rng.random() < 0.5:                  # probabilities, as from predict_proba
        scores = np.exp(scores) / np.exp(scores).sum(axis=1, keepdims=True)
    if ties:                                # few distinct values: many tied scores
        scores = np.round(scores, int(rng.integers(0, 2)))
    if missing_column:                      # a class the model never saw, filled as class_scores fills it
        scores[:, rng.integers(n_classes)] = -np.inf
    pred = scores.argmax(axis=1)
    if predictions == "constant":
        pred = np.full(size, rng.integers(n_classes))
    elif predictions == "one class never predicted":
        absent = rng.integers(n_classes)
        pred[pred == absent] = (absent + 1) % n_classes
    return y, pred, scores


@settings(max_examples=400, deadline=None)
@given(seed=st.integers(0, 2 ** 32 - 1), n_classes=st.sampled_from([2, 3]), size=st.integers(2, 2000),
       ties=st.booleans(), predictions=st.sampled_from(["from scores", "constant", "one class never predicted"]),
       missing_column=st.booleans(), one_class=st.booleans())
def test_every_metric_equals_scikit_learn_on_random_test_parts(seed, n_classes, size, ties, predictions,
                                                               missing_column, one_class):
    """Reference: scikit-learn's metric functions (sklearn_reference above), to 1e-12."""
    rng = np.random.default_rng(seed)
    y, pred, scores = random_part(rng, n_classes, size, ties, predictions, missing_column, one_class)
    assert_matches_sklearn(y, pred, scores, minority=int(rng.integers(n_classes)))


def test_two_rows_ranked_right_score_one():
    """Smallest test part. Reference: scikit-learn; plus the definitions (perfect ranking: AUC = AP = 1)."""
    y = np.array([0, 1])
    got = assert_matches_sklearn(y, y, np.array([[0.9, 0.1], [0.2, 0.8]]), minority=1)
    assert got["roc_auc"] == 1.0 and got["average_precision"] == 1.0 and got["mcc"] == 1.0


def test_all_scores_tied_give_chance_auc_and_prevalence_ap():
    """One threshold only. Reference: scikit-learn; definitions: AUC = 0.5 (Hanley & McNeil 1982, ties count
    one half), AP = precision at full recall = prevalence (3/10)."""
    y = np.r_[np.zeros(7, int), np.ones(3, int)]
    got = assert_matches_sklearn(y, np.zeros(10, int), np.full((10, 2), 0.5), minority=1)
    assert got["roc_auc"] == 0.5 and got["average_precision"] == pytest.approx(0.3)


def test_constant_predictions_give_mcc_zero_and_f1_zero():
    """scikit-learn's matthews_corrcoef returns 0 when one margin has a single class; F1 with
    zero_division=0 when the minority is never predicted (scikit-learn f1_score)."""
    rng = np.random.default_rng(11)
    y = rng.choice(3, size=60, p=[0.6, 0.3, 0.1])
    got = assert_matches_sklearn(y, np.zeros(60, int), rng.dirichlet(np.ones(3), size=60), minority=2)
    assert got["mcc"] == 0.0 and got["f1_minority"] == 0.0 and got["sensitivity"] == 0.0


def test_minority_absent_from_the_test_part():
    """No minority row: sensitivity and average precision undefined (NaN), F1 = 0 by zero_division,
    ROC AUC undefined in the binary case. Reference: scikit-learn."""
    y = np.zeros(8, int)
    pred = np.r_[np.zeros(6, int), np.ones(2, int)]
    got = assert_matches_sklearn(y, pred, np.c_[1.0 - pred * 0.7, pred * 0.7], minority=1)
    assert np.isnan(got["sensitivity"]) and np.isnan(got["average_precision"]) and np.isnan(got["roc_auc"])
    assert got["f1_minority"] == 0.0 and got["specificity"] == 0.75 and np.isnan(got["recall:c1"])


def test_a_class_the_model_never_saw_drops_out_of_the_macro_auc():
    """class_scores gives -inf to a class missing from training; its one-vs-rest AUC is undefined and the
    macro mean runs over the others. Reference: scikit-learn roc_auc_score per class."""
    rng = np.random.default_rng(4)
    y = rng.choice(3, size=90, p=[0.5, 0.3, 0.2])
    scores = rng.dirichlet(np.ones(3), size=90)
    scores[np.arange(90), y] += 0.5
    scores[:, 1] = -np.inf
    got = assert_matches_sklearn(y, scores.argmax(axis=1), scores, minority=2)
    want = np.mean([skm.roc_auc_score(y == c, scores[:, c]) for c in (0, 2)])
    assert got["roc_auc"] == pytest.approx(want, abs=1e-12) and got["recall:c1"] == 0.0


@pytest.mark.parametrize("bad", [np.nan, np.inf])
def test_a_score_that_is_not_finite_makes_curve_metrics_nan(bad):
    """lopsided's rule (module docstring): no curve from scores that are not numbers."""
    y = np.array([0, 0, 1, 1, 0])
    scores = np.array([[0.9, 0.1], [0.6, 0.4], [0.3, 0.7], [0.2, 0.8], [0.5, 0.5]])
    scores[0, 1] = bad
    got = score_cell(y, np.array([0, 0, 1, 1, 1]), scores, minority=1, class_names=("a", "b"))
    assert np.isnan(got["average_precision"]) and np.isnan(got["roc_auc"])
    assert got["sensitivity"] == 1.0 and got["specificity"] == pytest.approx(2 / 3)


def test_prediction_outside_the_classes_is_refused():
    """A learner that predicts a label the dataset does not have fails its cell with a clear message."""
    y = np.array([0, 1, 0, 1])
    with pytest.raises(MethodError, match=r"outside the class indices 0\.\.1; got \[2\]"):
        score_cell(y, np.array([0, 2, 0, 1]), np.zeros((4, 2)), minority=1, class_names=("a", "b"))


class Contrary(ClassifierMixin, BaseEstimator):
    """Predicts class 0 while its probabilities favour class 1: predictions must stay its own."""

    def fit(self, X, y):
        self.classes_ = np.unique(y)
        return self

    def predict(self, X):
        return np.zeros(len(X), dtype=int)

    def predict_proba(self, X):
        return np.tile([0.2, 0.8], (len(X), 1))


class CountedForest(RandomForestClassifier):
    def predict_proba(self, X):
        self.walks = getattr(self, "walks", 0) + 1
        return super().predict_proba(X)


def test_a_forest_is_walked_once_and_predicts_as_its_own_predict_does():
    """A forest's predict() is the argmax of its predict_proba() (scikit-learn's ForestClassifier), so one
    pass gives both; 2 trees on noisy labels leave many 0.5 / 0.5 ties, which must go to the first class as
    its own predict sends them. Missing classes get -inf scores, as class_scores gives them."""
    rng = np.random.default_rng(0)
    X, y = rng.normal(size=(300, 3)), rng.integers(0, 2, 300) * 2          # classes 0 and 2 of 3
    forest = CountedForest(n_estimators=2, random_state=1).fit(X, y)
    predicted, scores = predictions_and_scores(forest, X, 3)
    assert forest.walks == 1
    proba = forest.predict_proba(X)
    assert (proba[:, 0] == proba[:, 1]).sum() > 20                        # the ties are there
    assert np.array_equal(predicted, forest.predict(X))
    assert np.array_equal(scores, class_scores(forest, X, 3)) and np.isinf(scores[:, 1]).all()
    contrary = Contrary().fit(X, y // 2)
    predicted, scores = predictions_and_scores(contrary, X, 2)
    assert (predicted == 0).all() and (scores[:, 1] == 0.8).all()


class CountedBoost(AdaBoostClassifier):
    def decision_function(self, X):
        self.runs = getattr(self, "runs", 0) + 1
        return super().decision_function(X)


@pytest.mark.parametrize("n_classes", [2, 3])
def test_adaboost_runs_its_members_once_and_predicts_and_scores_as_its_own_methods_do(n_classes):
    """AdaBoost's predict() and predict_proba() each run decision_function() over every member
    (scikit-learn's AdaBoostClassifier, SAMME); one run gives both. With every member's weight set equal,
    rows where the members split evenly have a decision of exactly 0, which predict() sends to the first
    class; the one-pass predictions must do the same, and the scores must equal predict_proba() bit for bit."""
    rng = np.random.default_rng(3)
    X, y = rng.normal(size=(400, 4)), rng.integers(0, n_classes, 400)
    boost = CountedBoost(DecisionTreeClassifier(max_depth=1), n_estimators=4, random_state=0).fit(X, y)
    boost.estimator_weights_[:] = 1.0
    predicted, scores = predictions_and_scores(boost, X, n_classes)
    assert boost.runs == 1
    if n_classes == 2:
        assert (boost.decision_function(X) == 0).sum() > 20                  # the ties are there
    assert np.array_equal(predicted, boost.predict(X))
    assert np.array_equal(scores, boost.predict_proba(X))
