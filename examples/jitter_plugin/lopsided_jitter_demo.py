"""DEMO ONLY, not a published method: over-sampling by jittered copies.

Each extra minority row is a randomly chosen minority sample plus Gaussian noise whose standard
deviation is ``spread`` times that feature's standard deviation within the minority class. It exists
to show how a third-party resampler joins a lopsided benchmark; do not cite it as a method.
"""
import numpy as np


class JitterOver:
    def __init__(self, balance=1.0, spread=0.1, random_state=None):
        self.balance = balance
        self.spread = spread
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = np.asarray(X, dtype=float), np.asarray(y)
        rng = np.random.default_rng(self.random_state)
        labels, counts = np.unique(y, return_counts=True)
        goal = int(round(self.balance * counts.max()))
        rows, labels_out = [X], [y]
        for label, count in zip(labels, counts):
            if count >= goal:
                continue
            members = X[y == label]
            picked = members[rng.integers(0, count, goal - count)]
            noise = rng.normal(size=picked.shape) * members.std(axis=0) * self.spread
            rows.append(picked + noise)
            labels_out.append(np.full(goal - count, label, dtype=y.dtype))
        return np.concatenate(rows), np.concatenate(labels_out)
