"""Learner registry: named scikit-learn classifiers with our defaults, or any import path.

Learners that depend on feature scale (logistic regression, k-NN, SVM) carry their own
standardisation, fitted on the (resampled) training set only.
"""
import inspect

import numpy as np
from sklearn.base import BaseEstimator, ClassifierMixin, clone
from sklearn.cross_decomposition import PLSRegression
from sklearn.discriminant_analysis import LinearDiscriminantAnalysis
from sklearn.ensemble import AdaBoostClassifier, HistGradientBoostingClassifier, RandomForestClassifier
from sklearn.linear_model import LogisticRegression
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import Pipeline, make_pipeline
from sklearn.preprocessing import StandardScaler
from sklearn.svm import SVC, LinearSVC
from sklearn.tree import DecisionTreeClassifier

from .errors import MethodError
from .plugins import build
from .registry import Registry


class PLSDA(ClassifierMixin, BaseEstimator):
    """PLS discriminant analysis: PLS regression (Wold, Sjöström & Eriksson 2001) on one-hot class
    indicators; a sample goes to the class with the largest predicted indicator (for two classes,
    the same as thresholding the positive indicator at 0.5; Barker & Rayens 2003). The number of
    latent variables is capped by the training set's rank limits."""

    def __init__(self, n_components=10, scale=True):
        self.n_components = n_components
        self.scale = scale

    def fit(self, X, y):
        X, y = np.asarray(X, dtype=float), np.asarray(y)
        self.classes_ = np.unique(y)
        indicators = (y[:, None] == self.classes_[None, :]).astype(float)
        components = max(1, min(self.n_components, X.shape[1], len(X) - 1))
        self.pls_ = PLSRegression(n_components=components, scale=self.scale).fit(X, indicators)
        return self

    def decision_function(self, X):
        return self.pls_.predict(np.asarray(X, dtype=float))

    def predict(self, X):
        return self.classes_[np.argmax(self.decision_function(X), axis=1)]


def _scaled(model):
    return make_pipeline(StandardScaler(), model)


def adaboost_stumps(n_estimators=100, learning_rate=1.0):
    return AdaBoostClassifier(DecisionTreeClassifier(max_depth=1), n_estimators=n_estimators,
                              learning_rate=learning_rate)


def random_forest(n_estimators=100, max_features="sqrt", min_samples_leaf=1):
    return RandomForestClassifier(n_estimators=n_estimators, max_features=max_features,
                                  min_samples_leaf=min_samples_leaf, n_jobs=1)


def logistic_regression(C=1.0):
    return _scaled(LogisticRegression(C=C, max_iter=2000))


def linear_discriminant(shrinkage="auto"):
    return LinearDiscriminantAnalysis(solver="lsqr", shrinkage=None if shrinkage == "none" else shrinkage)


def hist_gradient_boosting(max_iter=100, learning_rate=0.1):
    return HistGradientBoostingClassifier(max_iter=max_iter, learning_rate=learning_rate)


def knn(n_neighbors=5):
    return _scaled(KNeighborsClassifier(n_neighbors=n_neighbors))


def svm_rbf(C=1.0, gamma="scale"):
    return _scaled(SVC(C=C, gamma=gamma))


def linear_svm(C=1.0):
    return _scaled(LinearSVC(C=C, max_iter=5000))


def pls_da(components=10):
    return PLSDA(n_components=components)


LEARNERS = {
    "adaboost-stumps": (adaboost_stumps, "AdaBoost (SAMME) over depth-1 trees, 100 rounds (Freund & Schapire 1997)"),
    "random-forest": (random_forest, "random forest, 100 trees, sqrt(d) features per split (Breiman 2001)"),
    "logistic-regression": (logistic_regression, "standardised L2 logistic regression, C = 1"),
    "linear-discriminant": (linear_discriminant, "linear discriminant analysis with Ledoit-Wolf shrinkage"),
    "hist-gradient-boosting": (hist_gradient_boosting, "histogram gradient boosting, 100 iterations (Ke et al. 2017)"),
    "knn": (knn, "standardised k-nearest neighbours, k = 5"),
    "svm-rbf": (svm_rbf, "standardised support vector machine, RBF kernel, C = 1"),
    "linear-svm": (linear_svm, "standardised linear support vector machine, C = 1 (Fan et al. 2008, LIBLINEAR)"),
    "pls-da": (pls_da, "PLS discriminant analysis, 10 latent variables, argmax of predicted indicators"),
}


REGISTRY = Registry("learner", LEARNERS, "lopsided.learners")
resolve = REGISTRY.resolve
describe = REGISTRY.describe


def make_learner(spec, random_state=None):
    """A fresh, unfitted classifier for ``spec``; every ``random_state`` inside it set to the seed."""
    model = build("learner", spec.title, resolve(spec.name), dict(spec.params))
    if not (hasattr(model, "fit") and hasattr(model, "predict") and hasattr(model, "get_params")):
        raise MethodError(f"learner {spec.title}: is not a scikit-learn classifier (needs fit, predict, get_params)")
    model = clone(model)
    seeds = {k: random_state for k in model.get_params(deep=True) if k.endswith("random_state")}
    return model.set_params(**seeds) if seeds else model


def check_parameters(model):
    """Check the parameters of ``model`` and of every scikit-learn estimator inside it against their
    declared constraints, raising scikit-learn's own error, once: cells then fit with scikit-learn's
    parameter validation off (``skip_parameter_validation``), which an ensemble otherwise repeats for
    every member it fits."""
    inside = model.get_params(deep=True).values() if isinstance(model, BaseEstimator) else ()
    for estimator in (model, *inside):
        if isinstance(estimator, BaseEstimator) and hasattr(estimator, "_parameter_constraints"):
            estimator._validate_params()


def weight_arguments(model, weights, title):
    """fit() keyword for per-sample weights ({} without weights); routed to a pipeline's last step."""
    if weights is None:
        return {}
    final = model.steps[-1][1] if isinstance(model, Pipeline) else model
    if "sample_weight" not in inspect.signature(final.fit).parameters:
        raise MethodError(f"learner {title}: its fit() takes no sample weights, so class weights cannot apply")
    key = f"{model.steps[-1][0]}__sample_weight" if isinstance(model, Pipeline) else "sample_weight"
    return {key: weights}
