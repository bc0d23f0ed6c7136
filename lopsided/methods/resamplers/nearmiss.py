"""NearMiss under-sampling (Mani & Zhang 2003, ICML Workshop on Learning from Imbalanced Datasets).

Each class larger than the target keeps round(smallest count / balance) samples, chosen by
distance to the smallest class (the minority):
- rule 1: the smallest mean distance to their ``neighbours`` nearest minority samples;
- rule 2: the smallest mean distance to their ``neighbours`` farthest minority samples;
- rule 3: first keep, for every minority sample, its ``keep_neighbours`` nearest samples of
  the class; among those, the largest mean distance to their ``neighbours`` nearest minority samples
  (when that short list is smaller than the target, all of it is kept: fewer samples than asked).
Distances to all minority samples (rule 2) are computed in blocks, never as one matrix; by default on
columns standardised over the rows given (``neighbours.Scaling``).
Equal scores keep the earlier row (stable sort). With fewer minority samples than ``neighbours`` the
mean runs over all of them, where a common reference implementation stops with an error; the target
count is rounded to the nearest whole number (see ``base.under_targets``).
"""
import numpy as np
from sklearn.metrics import pairwise_distances_chunked
from sklearn.neighbors import NearestNeighbors

from .base import ResamplingError, check_xy, under_targets
from .neighbours import Scaling


def mean_nearest(X_from, X_to, k):
    distances, _ = NearestNeighbors(n_neighbors=min(k, len(X_to))).fit(X_to).kneighbors(X_from)
    return distances.mean(axis=1)


def mean_farthest(X_from, X_to, k):
    k = min(k, len(X_to))
    out = []
    for block in pairwise_distances_chunked(X_from, X_to, working_memory=64):
        out.append(np.partition(block, len(X_to) - k, axis=1)[:, -k:].mean(axis=1))
    return np.concatenate(out)


class NearMissUnder:
    def __init__(self, rule=1, balance=1.0, neighbours=3, keep_neighbours=3, distances="standardized",
                 random_state=None):
        self.rule = rule
        self.balance = balance
        self.neighbours = neighbours
        self.keep_neighbours = keep_neighbours
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        Z = Scaling.of(X, self.distances).apply(X)
        if self.rule not in (1, 2, 3):
            raise ResamplingError(f"rule={self.rule!r} must be 1, 2 or 3")
        labels, counts = np.unique(y, return_counts=True)
        minority = np.flatnonzero(y == labels[counts.argmin()])
        parts = [np.flatnonzero(~np.isin(y, list(under_targets(y, self.balance))))]
        for label, cap in under_targets(y, self.balance).items():
            parts.append(self._select(Z, np.flatnonzero(y == label), minority, cap))
        keep = np.sort(np.concatenate(parts))
        return X[keep], y[keep]

    def _select(self, X, members, minority, cap):
        k = self.neighbours
        if self.rule == 1:
            score = mean_nearest(X[members], X[minority], k)
            return members[np.argsort(score, kind="mergesort")[:cap]]
        if self.rule == 2:
            score = mean_farthest(X[members], X[minority], k)
            return members[np.argsort(score, kind="mergesort")[:cap]]
        m = min(self.keep_neighbours, len(members))
        near = NearestNeighbors(n_neighbors=m).fit(X[members]).kneighbors(X[minority], return_distance=False)
        short = members[np.unique(near)]
        score = mean_nearest(X[short], X[minority], k)
        return short[np.argsort(-score, kind="mergesort")[:cap]]
