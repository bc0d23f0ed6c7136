"""Preprocessing steps a suite can list; each is fitted on the training part only.

``PREPROCESSORS`` maps a name to (factory, description); factories return scikit-learn
transformers. A suite's list becomes one pipeline, applied before resampling.
"""
from sklearn.decomposition import PCA
from sklearn.impute import SimpleImputer
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler

from .errors import MethodError, unknown
from .plugins import build, import_object


def standardize():
    return StandardScaler()


def impute_median():
    return SimpleImputer(strategy="median")


def pca(components=10):
    return PCA(n_components=components, svd_solver="full")


PREPROCESSORS = {
    "standardize": (standardize, "centre each feature and scale it to unit variance"),
    "impute-median": (impute_median, "replace missing values by the training median of the feature"),
    "pca": (pca, "principal components, ?components=10 (Pearson 1901)"),
}


def resolve(name):
    if ":" in name:
        return import_object(name)
    if name in PREPROCESSORS:
        return PREPROCESSORS[name][0]
    raise MethodError(unknown("preprocessing step", name, PREPROCESSORS))


def make_preprocessing(specs):
    """A pipeline for the suite's list, or None when the list is empty."""
    steps = [build("preprocessing step", spec.title, resolve(spec.name), dict(spec.params)) for spec in specs]
    return make_pipeline(*steps) if steps else None


def describe():
    return [(name, text) for name, (_, text) in PREPROCESSORS.items()]
