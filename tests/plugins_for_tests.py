"""Throw-away resamplers used by the tests (importable as plugins_for_tests:Name)."""
import uuid
from pathlib import Path

import numpy as np


class Recording:
    """Passes data through and records the row ids (column 0) it was shown: one .npy file per call in
    the folder ``record`` (files, not process memory, so it works on any backend)."""

    def __init__(self, record, random_state=None):
        self.record = record
        self.random_state = random_state

    def fit_resample(self, X, y):
        np.save(Path(self.record) / f"{uuid.uuid4().hex}.npy", X[:, 0].astype(int))
        return X, y


class Exploding:
    def __init__(self, random_state=None):
        self.random_state = random_state

    def fit_resample(self, X, y):
        raise RuntimeError("this resampler always fails")


class DropsAFeature:
    def fit_resample(self, X, y):
        return X[:, 1:], y


class InventsALabel:
    def fit_resample(self, X, y):
        return X, np.where(np.arange(len(y)) == 0, 7, y)


class ReturnsNaN:
    def fit_resample(self, X, y):
        X = X.copy()
        X[0, 0] = np.nan
        return X, y


class LosesAClass:
    def fit_resample(self, X, y):
        keep = y == y.max()
        return X[keep], y[keep]


class Halves:
    """Keeps every other majority row (deterministic)."""

    def __init__(self, random_state=None):
        self.random_state = random_state

    def fit_resample(self, X, y):
        counts = np.bincount(y)
        major = np.flatnonzero(y == counts.argmax())
        keep = np.sort(np.r_[np.flatnonzero(y != counts.argmax()), major[::2]])
        return X[keep], y[keep]
