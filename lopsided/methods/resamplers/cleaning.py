"""Data cleaning under-samplers: Tomek links, edited nearest neighbours, one-sided selection."""
import numpy as np
from sklearn.neighbors import KNeighborsClassifier

from .base import ResamplingError, as_rng, check_xy
from .neighbours import Scaling, neighbours_among


def _nearest_other(X, rows):
    """Each given row's nearest other row of X (itself excluded even among duplicates)."""
    if not len(rows):
        return rows
    return neighbours_among(X[rows], X, 1, same_rows=rows)[:, 0]


def tomek_links(X, y):
    """(i, j) index pairs, i < j, of opposite-class mutual nearest neighbours (Tomek 1976,
    IEEE Trans. SMC 6:769, "Two modifications of CNN").

    A link joins two classes, so at least one member is outside the largest class: only those rows
    and the largest-class rows they name as nearest are searched, not every row."""
    labels, counts = np.unique(y, return_counts=True)
    largest = labels[counts.argmax()]
    nearest = np.full(len(y), -1)                   # -1: not searched
    outside = np.flatnonzero(y != largest)
    nearest[outside] = _nearest_other(X, outside)
    named = np.unique(nearest[outside])
    inside = named[y[named] == largest]
    nearest[inside] = _nearest_other(X, inside)
    i = np.flatnonzero(nearest >= 0)
    j = nearest[i]
    linked = (nearest[j] == i) & (y[j] != y[i]) & (i < j)
    return np.c_[i[linked], j[linked]]


def _larger_class_member(pairs, y):
    """For each link, the member from the class with more samples (ties: the second member)."""
    counts = np.bincount(y)
    a, b = pairs[:, 0], pairs[:, 1]
    return np.where(counts[y[a]] > counts[y[b]], a, b)


class TomekCleaning:
    """Removes Tomek links (Tomek 1976): by default only the member from the larger class, with
    ``remove="both"`` both members (as in Batista, Prati & Monard 2004).

    Two identical rows with different labels form a link (distance 0, nothing closer), which a common
    reference implementation misses. With three or more classes the default removes one member of
    every link, also of a link between two larger classes, where that reference's default removes
    every member outside the smallest class."""

    def __init__(self, remove="larger", distances="standardized", random_state=None):
        self.remove = remove
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        if self.remove not in ("larger", "both"):
            raise ResamplingError(f"remove={self.remove!r} must be 'larger' or 'both'")
        pairs = tomek_links(Scaling.of(X, self.distances).apply(X), y)
        drop = pairs.ravel() if self.remove == "both" else _larger_class_member(pairs, y)
        keep = np.setdiff1d(np.arange(len(y)), drop)
        return X[keep], y[keep]


def enn_removals(X, y, k, candidates):
    """Boolean mask: candidate rows whose k nearest neighbours are mostly (> k / 2) of other classes,
    all other classes counted together; exactly k / 2 keeps the row (Wilson 1972, IEEE Trans. SMC 2:408,
    editing rule). Only candidate rows are searched; a row equally far from the k-th and (k + 1)-th
    nearest counts the one the neighbour search returns first."""
    rows = np.flatnonzero(candidates)
    near = neighbours_among(X[rows], X, k, same_rows=rows)      # only candidates can go: only they ask
    removals = np.zeros(len(y), bool)
    removals[rows] = (y[near] != y[rows, None]).sum(axis=1) > near.shape[1] / 2
    return removals


class NeighbourEditing:
    """Edited nearest neighbours (Wilson 1972): removes a sample when most of its ``neighbours``
    nearest neighbours belong to other classes. ``classes="majority"`` edits only the largest
    class (the usual under-sampling use); ``"all"`` edits every class (as in Batista et al. 2004).

    Other classes are counted together and a tie keeps the sample. A common reference implementation
    (its 'mode' rule) instead keeps a sample whose label is the most frequent among its neighbours,
    ties going to the smallest label: the same with two classes and odd k, different with three
    classes (neighbours of labels own, a, b) and on even-k ties. Its default edits every class but
    the smallest; ``classes`` here names the largest or all."""

    def __init__(self, neighbours=3, classes="majority", distances="standardized", random_state=None):
        self.neighbours = neighbours
        self.classes = classes
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        if self.classes not in ("majority", "all"):
            raise ResamplingError(f"classes={self.classes!r} must be 'majority' or 'all'")
        candidates = np.ones(len(y), bool) if self.classes == "all" else y == np.bincount(y).argmax()
        keep = ~enn_removals(Scaling.of(X, self.distances).apply(X), y, self.neighbours, candidates)
        if len(np.unique(y[keep])) < len(np.unique(y)):
            raise ResamplingError("editing removed every sample of a class; use fewer neighbours")
        return X[keep], y[keep]


class OneSided:
    """One-sided selection (Kubat & Matwin 1997, ICML, 179): start from every minority sample plus
    one random majority sample, add the majority samples a 1-NN rule on that set misclassifies,
    then remove the majority members of Tomek links in the result. Binary: the largest class is
    the majority, all others are kept whole."""

    def __init__(self, distances="standardized", random_state=None):
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        Z = Scaling.of(X, self.distances).apply(X)
        rng = as_rng(self.random_state)
        majority = np.bincount(y).argmax()
        major = np.flatnonzero(y == majority)
        start = np.r_[np.flatnonzero(y != majority), rng.choice(major)]
        rule = KNeighborsClassifier(n_neighbors=1).fit(Z[start], y[start])
        wrong = major[rule.predict(Z[major]) != majority]
        chosen = np.unique(np.r_[start, wrong])
        pairs = tomek_links(Z[chosen], y[chosen])
        if len(pairs):
            members = pairs.ravel()
            drop = chosen[members[y[chosen][members] == majority]]
            chosen = np.setdiff1d(chosen, drop)
        return X[chosen], y[chosen]
