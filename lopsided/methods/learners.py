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

from ..errors import MethodError
from ..registry import Builtin, Registry


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
    "adaboost-stumps": Builtin(adaboost_stumps, "AdaBoost (SAMME) over depth-1 trees (Freund & Schapire 1997)",
                               ("freund1997", "zhu2009")),
    "random-forest": Builtin(random_forest, "random forest of unpruned trees on bootstrap samples (Breiman 2001)",
                             ("breiman2001",)),
    "logistic-regression": Builtin(logistic_regression, "standardised L2-penalised logistic regression", ("cox1958",)),
    "linear-discriminant": Builtin(linear_discriminant, "linear discriminant analysis with Ledoit-Wolf shrinkage",
                                   ("fisher1936", "ledoit2004")),
    "hist-gradient-boosting": Builtin(hist_gradient_boosting, "histogram gradient boosting (Ke et al. 2017)",
                                      ("friedman2001", "ke2017")),
    "knn": Builtin(knn, "standardised k-nearest neighbours", ("cover1967",)),
    "svm-rbf": Builtin(svm_rbf, "standardised support vector machine, RBF kernel", ("cortes1995", "chang2011")),
    "linear-svm": Builtin(linear_svm, "standardised linear support vector machine (Fan et al. 2008, LIBLINEAR)",
                          ("cortes1995", "fan2008")),
    "pls-da": Builtin(pls_da, "PLS discriminant analysis: argmax of the predicted class indicators",
                      ("barker2003", "wold2001")),
}


REGISTRY = Registry("learner", LEARNERS, "lopsided.learners")
resolve = REGISTRY.resolve


def make_learner(spec, random_state=None):
    """A fresh, unfitted classifier for ``spec``; every ``random_state`` inside it set to the seed."""
    model = REGISTRY.build(spec)
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
