"""Meta-features of one dataset (size, shape, imbalance, class overlap) and the nearest other datasets.

Class overlap measures from Ho & Basu (2002), "Complexity measures of supervised classification
problems", IEEE TPAMI 24(3):289-300:

* F1, maximum Fisher's discriminant ratio: max over features of (mu1 - mu2)^2 / (s1^2 + s2^2), with the
  class means mu and the class variances s^2 (ddof = 0). Large F1: one feature alone separates the
  classes. With more than two classes lopsided uses the minority class against all the others (the
  question here is how hard the minority is to tell apart).
* N1, fraction of points on the class boundary: build the Euclidean minimum spanning tree of all
  points (on standardised features) and count the points incident to an edge joining different
  classes, divided by n. Because the tree is connected, N1 >= 2/n for any data with two classes: well
  separated classes give exactly 2/n (one bridging edge), interleaved ones approach 1.
"""
from collections.abc import Mapping
from dataclasses import asdict, dataclass

import numpy as np
from scipy.sparse import csr_matrix
from scipy.sparse.csgraph import minimum_spanning_tree
from scipy.spatial.distance import pdist

from ..errors import did_you_mean
from .compare import AnalysisError

N1_MAX_POINTS = 3000   # above this N1 is computed on a stratified subsample: the 4.5 million pairwise distances
                       # of 3000 points and their graph take about 200 MB, and the tree about 1 s
NEIGHBOUR_KEYS = ("imbalance_ratio", "n", "d", "f1", "n1")


@dataclass(frozen=True)
class MetaFeatures:
    """What describes a dataset for choosing similar ones (Ho & Basu 2002 for F1 and N1)."""
    n: int                    # rows
    d: int                    # features
    minority_count: int       # rows of the least frequent class
    imbalance_ratio: float    # rows of the most frequent class / rows of the least frequent class
    n_classes: int
    n_groups: int | None      # distinct donors, specimens or particles; None when no groups were given
    f1: float                 # inf when one feature separates the classes with zero spread inside each
    n1: float
    n1_points: int            # rows N1 was computed on (n, or the size of the stratified subsample)

    def as_dict(self) -> dict:
        """Plain dict (for JSON and for ``nearest_datasets``)."""
        return asdict(self)


def _check_xy(X, y):
    X, y = np.asarray(X, dtype=float), np.asarray(y)
    if X.ndim != 2:
        raise AnalysisError(f"X: need a 2-D array (rows x features); got {X.ndim} dimension(s)")
    if y.ndim != 1 or len(y) != len(X):
        raise AnalysisError(f"y: need one label per row of X ({len(X)}); got shape {y.shape}")
    if not np.isfinite(X).all():
        raise AnalysisError("X: every value must be finite (impute or drop missing values first)")
    classes, codes, counts = np.unique(y, return_inverse=True, return_counts=True)
    if len(classes) < 2:
        raise AnalysisError(f"y: need at least 2 classes; got {len(classes)}")
    return X, codes, counts


def f1_fisher_ratio(X, y) -> float:
    """Maximum Fisher's discriminant ratio F1 (Ho & Basu 2002, section 3.1).

    Parameters
    ----------
    X : array-like of float, shape (n, d)
    y : array-like, shape (n,)
        Class labels. With more than two classes, the minority class (fewest rows; ties: the lowest
        label) is compared with all other rows together.

    Returns
    -------
    float
        max_j (mu1_j - mu2_j)^2 / (s1_j^2 + s2_j^2), variances with ddof = 0. A feature with zero spread
        in both classes counts as 0 when the class means are equal and as inf when they differ.
        Unchanged by shifting or rescaling any feature.
    """
    X, codes, counts = _check_xy(X, y)
    minority = codes == int(np.argmin(counts))
    first, rest = X[minority], X[~minority]
    gap = (first.mean(axis=0) - rest.mean(axis=0)) ** 2
    spread = first.var(axis=0) + rest.var(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = np.where(spread > 0, gap / np.where(spread > 0, spread, 1.0), np.where(gap > 0, np.inf, 0.0))
    return float(ratio.max())


def _stratified_subsample(codes, counts, size, seed):
    """Row indices: about ``size`` rows in the class proportions (largest remainder), at least one per class."""
    share = size * counts / counts.sum()
    quota = np.floor(share).astype(int)
    leftover = size - quota.sum()
    quota[np.argsort(-(share - quota), kind="stable")[:leftover]] += 1
    quota = np.maximum(quota, 1)
    rng = np.random.default_rng(seed)
    picked = [rng.permutation(np.flatnonzero(codes == c))[:q] for c, q in enumerate(quota)]
    return np.sort(np.concatenate(picked))


def n1_boundary_fraction(X, y, max_points: int = N1_MAX_POINTS, seed: int = 0) -> tuple[float, int]:
    """Fraction N1 of points incident to a between-class edge of the minimum spanning tree (Ho & Basu 2002).

    Parameters
    ----------
    X : array-like of float, shape (n, d)
        Features are standardised (zero mean, unit variance; constant features left at zero) before the
        Euclidean distances are taken.
    y : array-like, shape (n,)
        Class labels (any number of classes: an edge counts when its two ends differ).
    max_points : int
        Above this many rows, N1 is computed on a stratified subsample of ``max_points`` rows drawn with
        ``seed`` (class proportions kept by largest remainder, every class keeps at least one row, so the
        sample can exceed ``max_points`` by at most the number of classes).
    seed : int
        Seed of the subsample; the result is deterministic.

    Returns
    -------
    (float, int)
        N1 and the number of rows it was computed on. Duplicate rows are joined by an edge of length
        zero (counted, not dropped); when tied edge lengths make the tree not unique, scipy's tree is used.
    """
    X, codes, counts = _check_xy(X, y)
    if max_points < 2:
        raise AnalysisError(f"max_points: {max_points} must be at least 2")
    if len(X) > max_points:
        rows = _stratified_subsample(codes, counts, max_points, seed)
        X, codes = X[rows], codes[rows]
    sd = X.std(axis=0)
    Z = (X - X.mean(axis=0)) / np.where(sd > 0, sd, 1.0)
    n = len(Z)
    distances = pdist(Z)                # condensed: rows i < j in row-major order, i.e. the upper triangle
    # scipy reads a missing entry as "no edge" (and a dense input drops entries below 1e-8 too): pass the
    # upper triangle as a sparse graph and give duplicate rows an edge shorter than any real one.
    distances[distances == 0] = np.finfo(float).tiny
    starts = np.concatenate([[0], np.cumsum(np.arange(n - 1, -1, -1))])
    columns = np.concatenate([np.arange(i + 1, n) for i in range(n)])
    tree = minimum_spanning_tree(csr_matrix((distances, columns, starts), shape=(n, n))).tocoo()
    crossing = codes[tree.row] != codes[tree.col]
    boundary = np.union1d(tree.row[crossing], tree.col[crossing])
    return len(boundary) / len(X), len(X)


def meta_features(X, y, groups=None, max_points: int = N1_MAX_POINTS, seed: int = 0) -> MetaFeatures:
    """Size, imbalance and class-overlap meta-features of one dataset.

    Parameters
    ----------
    X : array-like of float, shape (n, d)
    y : array-like of int, shape (n,)
        Class codes; the minority class is the least frequent one.
    groups : array-like, shape (n,), optional
        Donor, specimen or particle of each row; only counted.
    max_points, seed : int
        Subsampling of N1 for large n (see ``n1_boundary_fraction``).

    Returns
    -------
    MetaFeatures
        With more than two classes the imbalance ratio is largest / smallest class and F1 compares the
        minority with all other rows.
    """
    X, codes, counts = _check_xy(X, y)
    n_groups = None
    if groups is not None:
        groups = np.asarray(groups)
        if groups.shape != (len(X),):
            raise AnalysisError(f"groups: need one group per row of X ({len(X)}); got shape {groups.shape}")
        n_groups = len(np.unique(groups))
    n1, points = n1_boundary_fraction(X, codes, max_points, seed)
    return MetaFeatures(n=len(X), d=X.shape[1], minority_count=int(counts.min()),
                        imbalance_ratio=float(counts.max() / counts.min()), n_classes=len(counts),
                        n_groups=n_groups, f1=f1_fisher_ratio(X, codes), n1=n1, n1_points=points)


@dataclass(frozen=True)
class Neighbour:
    name: str
    distance: float   # Euclidean, in the standardised meta-feature space


def _coordinates(label, features):
    """log IR, log n, log d (they span orders of magnitude), 1/(1 + F1) (bounded, defined for F1 = inf), N1."""
    missing = [k for k in NEIGHBOUR_KEYS if k not in features]
    if missing:
        hints = "".join(did_you_mean(k, [str(f) for f in features]) for k in missing)
        raise AnalysisError(f"{label}: missing meta-feature(s) {', '.join(missing)}{hints}; "
                            f"needed: {', '.join(NEIGHBOUR_KEYS)}")
    ir, n, d, f1, n1 = (float(features[k]) for k in NEIGHBOUR_KEYS)
    if not (ir >= 1 and n >= 1 and d >= 1 and f1 >= 0 and 0 <= n1 <= 1):
        raise AnalysisError(f"{label}: meta-features out of range (need imbalance_ratio >= 1, n >= 1, d >= 1, "
                            f"f1 >= 0, 0 <= n1 <= 1); got {ir}, {n}, {d}, {f1}, {n1}")
    return [np.log(ir), np.log(n), np.log(d), 1.0 / (1.0 + f1), n1]


def nearest_datasets(target: Mapping[str, float], others: Mapping[str, Mapping[str, float]],
                     k: int = 5) -> list[Neighbour]:
    """The ``k`` datasets closest to ``target`` in a standardised meta-feature space.

    Parameters
    ----------
    target : mapping
        Meta-features of the dataset at hand, with at least the keys imbalance_ratio, n, d, f1, n1
        (``MetaFeatures.as_dict()`` has them).
    others : mapping of name -> mapping
        Meta-features of the candidate datasets, same keys.
    k : int
        How many to return (all when fewer are given).

    Returns
    -------
    list of Neighbour
        Nearest first (ties by name). The coordinates are log IR, log n, log d, 1/(1 + F1) (maps
        F1 in [0, inf] to (0, 1]) and N1, each standardised (z-score, ddof = 0) over the target and all
        candidates together so that no coordinate dominates by its units; a coordinate equal everywhere
        contributes nothing. Similar meta-features do not make results transfer: a hint where to look.
    """
    if k < 1:
        raise AnalysisError(f"k: {k} must be at least 1")
    if not others:
        raise AnalysisError("others: need at least one dataset to compare with")
    names = [str(name) for name in others]
    points = np.array([_coordinates("target", target)]
                      + [_coordinates(f"others[{name!r}]", others[name]) for name in others])
    sd = points.std(axis=0)
    scaled = (points - points.mean(axis=0)) / np.where(sd > 0, sd, 1.0)
    distance = np.sqrt(((scaled[1:] - scaled[0]) ** 2).sum(axis=1))
    order = sorted(range(len(names)), key=lambda i: (distance[i], names[i]))
    return [Neighbour(names[i], float(distance[i])) for i in order[:k]]
