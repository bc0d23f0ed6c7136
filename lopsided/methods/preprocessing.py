"""Preprocessing steps a suite can list; each is fitted on the training part only.

``PREPROCESSORS`` maps a name to its ``Builtin`` record; factories return scikit-learn
transformers. A suite's list becomes one pipeline, applied before resampling. Spectral steps come
from chemotools (Cabaneros Lopez et al., scikit-learn-style chemometrics transformers), imported by
the factory that first needs it (importing chemotools also imports scikit-learn's testing helpers and
pytest: a quarter of a second at every start); a factory that takes ``axis`` receives the dataset's
feature axis (wavenumbers, cm-1).
"""
import numpy as np
from sklearn.decomposition import PCA
from sklearn.impute import SimpleImputer
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import FunctionTransformer, Normalizer, StandardScaler

from ..errors import MethodError
from ..registry import Builtin, Registry


def standardize():
    return StandardScaler()


def impute_median():
    return SimpleImputer(strategy="median")


def pca(components=10):
    return PCA(n_components=components, svd_solver="full")


def wavenumber_range(low, high, axis=None):
    """Keep the features whose axis value lies in [low, high] (e.g. 1800-900 cm-1)."""
    if axis is None:
        raise MethodError("preprocessing step range: the dataset has no feature axis (wavenumbers)")
    keep = np.flatnonzero((axis >= min(low, high)) & (axis <= max(low, high)))
    if len(keep) == 0:
        raise MethodError(f"preprocessing step range: no feature between {low} and {high} on the axis "
                          f"{axis.min():g}-{axis.max():g}")
    return FunctionTransformer(np.take, kw_args={"indices": keep, "axis": 1})


def snv():
    """Standard normal variate: each spectrum centred and scaled by its own sd (Barnes, Dhanoa & Lister 1989)."""
    from chemotools.scatter import StandardNormalVariate
    return StandardNormalVariate()


def msc():
    """Multiplicative scatter correction against the training mean spectrum (Geladi, MacDougall & Martens 1985)."""
    from chemotools.scatter import MultiplicativeScatterCorrection
    return MultiplicativeScatterCorrection(method="mean")


def unit_norm():
    """Vector normalisation: each spectrum divided by its Euclidean norm."""
    return Normalizer(norm="l2")


def savgol(window=15, order=2, derivative=0):
    """Savitzky-Golay smoothing (derivative=0) or derivatives (1, 2) (Savitzky & Golay 1964)."""
    from chemotools.derivative import SavitzkyGolay
    return SavitzkyGolay(window_length=window, polyorder=order, deriv=derivative, mode="nearest")


def als_baseline(lam=1e5, asymmetry=0.01):
    """Asymmetric least-squares baseline removal (Eilers & Boelens 2005)."""
    from chemotools.baseline import AsLs
    return AsLs(lam=lam, penalty=asymmetry)


PREPROCESSORS = {
    "standardize": Builtin(standardize, "centre each feature and scale it to unit variance"),
    "range": Builtin(wavenumber_range, "keep an axis range, ?low=900&high=1800 (cm-1)"),
    "snv": Builtin(snv, "standard normal variate, per spectrum (Barnes et al. 1989)"),
    "msc": Builtin(msc, "multiplicative scatter correction to the training mean (Geladi et al. 1985)"),
    "unit-norm": Builtin(unit_norm, "vector (unit Euclidean norm) normalisation, per spectrum"),
    "savgol": Builtin(savgol, "Savitzky-Golay smoothing or derivative, ?window=15&order=2&derivative=1 (1964)"),
    "als-baseline": Builtin(als_baseline, "asymmetric least-squares baseline removal, ?lam=1e5&asymmetry=0.01 "
                            "(Eilers & Boelens 2005)"),
    "impute-median": Builtin(impute_median, "replace missing values by the training median of the feature"),
    "pca": Builtin(pca, "principal components, ?components=10 (Pearson 1901)"),
}


REGISTRY = Registry("preprocessing step", PREPROCESSORS, "lopsided.preprocessing")
resolve = REGISTRY.resolve


def make_preprocessing(specs, axis=None):
    """A pipeline for the suite's list (None when empty); ``axis`` goes to steps that take it."""
    context = {"axis": None if axis is None else np.asarray(axis, dtype=float)}
    steps = [REGISTRY.build(spec, context) for spec in specs]
    return make_pipeline(*steps) if steps else None
