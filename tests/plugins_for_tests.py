"""Throw-away resamplers used by the tests (importable as plugins_for_tests:Name)."""
import os
import signal
import sys
import time
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


class Misbehaving:
    """Base of the resamplers below: each misbehaves in one way, then would pass the data through."""

    def __init__(self, random_state=None):
        self.random_state = random_state


class Sleeps(Misbehaving):
    """Hangs in a blocking call."""

    def fit_resample(self, X, y):
        time.sleep(600)
        return X, y


class Spins(Misbehaving):
    """Hangs in a Python loop that catches every Exception."""

    def fit_resample(self, X, y):
        while True:
            try:
                sum(range(1000))
            except Exception:
                pass


class DeafSleeps(Misbehaving):
    """Hangs where no time limit inside the process can reach it (SIGALRM blocked, then a long sleep):
    only killing its worker ends it."""

    def fit_resample(self, X, y):
        signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGALRM})
        time.sleep(600)
        return X, y


class Exits(Misbehaving):
    def fit_resample(self, X, y):
        sys.exit(3)


class EndsItsProcess(Misbehaving):
    def fit_resample(self, X, y):
        os._exit(9)


class Chatters(Misbehaving):
    """Prints about 3 MB, then passes the data through."""

    def fit_resample(self, X, y):
        for _ in range(3000):
            print("chatter " * 125)
        return X, y


class Mutates(Misbehaving):
    """Overwrites its input arrays, then returns copies of what it was given."""

    def fit_resample(self, X, y):
        original = X.copy(), y.copy()
        X[:] = 0.0
        y[:] = y[0]
        return original


class NamesItsProcess(Misbehaving):
    """Writes its process id to the file ``pids`` (one line per call), pauses ``pause`` seconds, then
    passes the data through: a test can kill the worker that runs it."""

    def __init__(self, pids="", pause=2.0, random_state=None):
        super().__init__(random_state)
        self.pids, self.pause = pids, pause

    def fit_resample(self, X, y):
        with open(self.pids, "a") as handle:
            handle.write(f"{os.getpid()}\n")
        time.sleep(self.pause)
        return X, y


def stumps_of_negative_depth(n_estimators=3):
    """A learner (by import path) whose member trees carry a parameter scikit-learn refuses: only each
    member's own fit would check it."""
    from sklearn.ensemble import AdaBoostClassifier
    from sklearn.tree import DecisionTreeClassifier
    return AdaBoostClassifier(DecisionTreeClassifier(max_depth=-1), n_estimators=n_estimators)
