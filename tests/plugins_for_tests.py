"""Throw-away resamplers used by the tests (importable as plugins_for_tests:Name)."""
import os
import signal
import sys
import time
import uuid
from pathlib import Path

import numpy as np

from lopsided.methods.resamplers.random import RandomUnder


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


class RecordingGroups:
    """Passes data through and records the groups it was given with the training rows: one .npy per call
    with groups."""

    def __init__(self, record, random_state=None):
        self.record = record
        self.random_state = random_state

    def fit_resample(self, X, y, groups=None):
        if groups is not None:                      # data without groups: nothing to record
            np.save(Path(self.record) / f"{uuid.uuid4().hex}.npy", np.asarray(groups).astype(str))
        return X, y


class RecordingLearner:
    """A nearest-centroid classifier that records the row ids (column 0) it is fitted on and scores: files
    fit-*.npy and score-*.npy in ``record``."""

    def __init__(self, record="", random_state=None):
        self.record = record
        self.random_state = random_state

    def get_params(self, deep=True):
        return {"record": self.record, "random_state": self.random_state}

    def set_params(self, **params):
        for name, value in params.items():
            setattr(self, name, value)
        return self

    def fit(self, X, y):
        np.save(Path(self.record) / f"fit-{uuid.uuid4().hex}.npy", X[:, 0].astype(int))
        self.classes_ = np.unique(y)
        self.centres_ = np.array([X[y == c, 1:].mean(axis=0) for c in self.classes_])
        return self

    def predict_proba(self, X):
        np.save(Path(self.record) / f"score-{uuid.uuid4().hex}.npy", X[:, 0].astype(int))
        distance = ((X[:, None, 1:] - self.centres_[None]) ** 2).sum(axis=2)
        weight = np.exp(-(distance - distance.min(axis=1, keepdims=True)))
        return weight / weight.sum(axis=1, keepdims=True)

    def predict(self, X):
        return self.classes_[np.argmax(self.predict_proba(X), axis=1)]


class Gated(RandomUnder):
    """Random under-sampling that appends its process id to the file ``log`` at every call; after the
    first ``free`` calls (counted across processes), a call waits while the file ``gate`` exists. While a
    file ``log``.meet holds a number m, a call waits (up to 30 s) until m different processes have logged a
    call: every worker then takes part, whatever the operating system's scheduling (a file, so the cell
    keys stay those of the suite)."""

    def __init__(self, balance=1.0, random_state=None, log="", gate="", free=0):
        super().__init__(balance, random_state)
        self.log, self.gate, self.free = log, gate, free

    def rebalance(self, X, y):
        with open(self.log, "a") as handle:
            handle.write(f"{os.getpid()}\n")
        meet = Path(f"{self.log}.meet")
        if meet.exists():
            waited = time.monotonic()
            while len(set(Path(self.log).read_text().split())) < int(meet.read_text()) \
                    and time.monotonic() - waited < 30:
                time.sleep(0.02)
        if len(Path(self.log).read_text().split()) > self.free:
            waited = time.monotonic()
            while self.gate and os.path.exists(self.gate) and time.monotonic() - waited < 120:
                time.sleep(0.02)
        return super().rebalance(X, y)
