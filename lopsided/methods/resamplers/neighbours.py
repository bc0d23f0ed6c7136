"""Nearest-neighbour queries, the space they search in, and the arithmetic shared by the SMOTE family.

Neighbours come from scikit-learn's NearestNeighbors (trees for low dimension, chunked
brute force otherwise), so no n x n distance matrix is ever held in memory.

Distances: by default every resampler that uses them standardises each column on the rows it is given
(the training part: a resampler never sees test rows), so that a column in large units does not decide
every neighbourhood alone (z-scores before a distance-based method: common practice). Synthetic rows are
made from, and returned in, the original units. ``distances="as-given"`` searches the columns as they arrive, for data whose columns share one unit
(spectra after the suite's own preprocessing: the runner passes it for datasets with a feature axis).
"""
from dataclasses import dataclass

import numpy as np
from sklearn.neighbors import NearestNeighbors

from .base import ResamplingError

DISTANCES = ("standardized", "as-given")


@dataclass(frozen=True)
class Scaling:
    """Column centres and spreads of the rows a resampler was given; ``apply`` maps rows into the space
    neighbours are searched in, ``undo`` maps points of that space back into the original units."""

    centre: np.ndarray | float = 0.0
    spread: np.ndarray | float = 1.0

    @classmethod
    def of(cls, X, distances):
        """z-scores per column (population sd; a constant column keeps spread 1), or none for 'as-given'."""
        if distances == "as-given":
            return cls()
        if distances != "standardized":
            raise ResamplingError(f"distances={distances!r} must be one of {', '.join(DISTANCES)}")
        spread = X.std(axis=0)
        return cls(X.mean(axis=0), np.where(spread > 0, spread, 1.0))

    def apply(self, X):
        return (X - self.centre) / self.spread

    def undo(self, Z):
        return Z * self.spread + self.centre


def neighbours_within(X, k):
    """Indices (n, k) of each row's k nearest other rows of X (itself excluded even among duplicates)."""
    if len(X) < 2:
        raise ResamplingError("needs at least 2 samples of the class to find neighbours")
    k = min(k, len(X) - 1)
    found = NearestNeighbors(n_neighbors=k + 1).fit(X).kneighbors(X, return_distance=False)
    own = found == np.arange(len(X))[:, None]
    # drop the row itself where it was found, otherwise the farthest of the k + 1
    drop = np.where(own.any(axis=1), own.argmax(axis=1), k)
    keep = np.ones_like(found, dtype=bool)
    keep[np.arange(len(X)), drop] = False
    return found[keep].reshape(len(X), k)


def neighbours_among(X_query, X_ref, k, same_rows=None):
    """Indices into X_ref of each query row's k nearest reference rows.

    ``same_rows``: for queries that are themselves rows of X_ref, their index there, so they are skipped.
    """
    k_ask = min(k + (same_rows is not None), len(X_ref))
    found = NearestNeighbors(n_neighbors=k_ask).fit(X_ref).kneighbors(X_query, return_distance=False)
    if same_rows is None:
        return found[:, :k]
    own = found == np.asarray(same_rows)[:, None]
    drop = np.where(own.any(axis=1), own.argmax(axis=1), k_ask - 1)
    keep = np.ones_like(found, dtype=bool)
    keep[np.arange(len(found)), drop] = False
    return found[keep].reshape(len(found), k_ask - 1)[:, :k]


def spread_evenly(total, n, rng):
    """Synthetic samples per seed: total // n each, the remainder to distinct seeds chosen at random."""
    counts = np.full(n, total // n)
    counts[rng.choice(n, total % n, replace=False)] += 1
    return counts


def apportion(total, weights):
    """Integer counts proportional to weights summing to ``total`` (largest-remainder rule, ties by index)."""
    share = total * np.asarray(weights, dtype=float) / np.sum(weights)
    counts = np.floor(share).astype(int)
    remainder = share - counts
    order = np.lexsort((np.arange(len(share)), -remainder))
    counts[order[: total - counts.sum()]] += 1
    return counts


def interpolate(X_base, X_towards, gaps):
    """x_new = x + u * (x_nn - x) (Chawla et al. 2002, section 4.2)."""
    return X_base + gaps[:, None] * (X_towards - X_base)
