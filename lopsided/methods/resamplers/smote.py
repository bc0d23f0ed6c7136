"""Synthetic minority over-sampling: SMOTE, Borderline-SMOTE 1 and 2, ADASYN, SMOTE-NC."""
import numpy as np

from .base import ResamplingError, as_rng, check_xy, over_targets
from .neighbours import Scaling, apportion, interpolate, neighbours_among, neighbours_within, spread_evenly


class _Synthetic:
    """Shared body: for each class below the target, ``_synthesise`` returns the new rows. Neighbours are
    searched in ``Z`` (the rows standardised, or as given: see ``neighbours.Scaling``); new points are
    interpolated between the original rows ``X``."""

    def __init__(self, balance=1.0, neighbours=5, distances="standardized", random_state=None):
        self.balance = balance
        self.neighbours = neighbours
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        return self._resample(X, y, None)

    def _resample(self, X, y, groups):
        X, y = check_xy(X, y)
        if not isinstance(self.neighbours, int) or self.neighbours < 1:
            raise ResamplingError(f"neighbours={self.neighbours!r} must be a whole number >= 1")
        Z = Scaling.of(X, self.distances).apply(X)
        rng = as_rng(self.random_state)
        new_X, new_y = [X], [y]
        for label, extra in over_targets(y, self.balance).items():
            members = np.flatnonzero(y == label)
            if len(members) < 2:
                raise ResamplingError(f"{type(self).__name__} needs at least 2 samples of class {label}, has 1")
            rows = self._synthesise(X, Z, y, members, extra, rng, groups)
            new_X.append(rows)
            new_y.append(np.full(len(rows), label, dtype=y.dtype))
        return np.concatenate(new_X), np.concatenate(new_y)

    def _synthesise(self, X, Z, y, members, extra, rng, groups):
        """The ``extra`` new rows of the class whose positions are ``members``."""
        raise NotImplementedError

    def _from_seeds(self, X_class, Z_class, seeds_per_row, rng):
        """SMOTE step: each seed row i makes seeds_per_row[i] points towards its k nearest same-class rows.

        With fewer than k + 1 class members, k falls to (members - 1): the documented fallback.
        """
        near = neighbours_within(Z_class, self.neighbours)
        base = np.repeat(np.arange(len(X_class)), seeds_per_row)
        towards = near[base, rng.integers(0, near.shape[1], len(base))]
        return interpolate(X_class[base], X_class[towards], rng.random(len(base)))


class Smote(_Synthetic):
    """Synthetic Minority Over-sampling TEchnique (Chawla, Bowyer, Hall & Kegelmeyer 2002, JAIR 16:321).

    Each new point lies on the segment between a minority sample and one of its ``neighbours``
    nearest minority neighbours, at a uniform random position. The extra count is spread as
    evenly as possible over the minority samples (section 4.2's N% rule), where a common reference
    implementation draws each new point's seed at random. With fewer than k + 1 minority samples
    k falls to (samples - 1); that reference stops with an error.
    """

    def _synthesise(self, X, Z, y, members, extra, rng, groups=None):
        return self._from_seeds(X[members], Z[members], spread_evenly(extra, len(members), rng), rng)


def danger_set(X, y, members, m):
    """Borderline-SMOTE's labels for minority rows (Han, Wang & Mao 2005, section 3.1):
    of the m nearest neighbours in the whole set, m' are of other classes; noise if m' = m,
    danger if m / 2 <= m' < m, safe otherwise. Returns the boolean danger mask over ``members``."""
    near = neighbours_among(X[members], X, m, same_rows=members)
    others = (y[near] != y[members][:, None]).sum(axis=1)
    return (others >= near.shape[1] / 2) & (others < near.shape[1])


class BorderlineSmote(_Synthetic):
    """Borderline-SMOTE (Han, Wang & Mao 2005, ICIC, LNCS 3644:878).

    Only minority samples in the danger set seed new points. Variant 1 interpolates towards the
    seed's k nearest minority neighbours; variant 2 towards its k nearest neighbours of any class,
    with the gap drawn from U(0, 0.5) when the neighbour is of another class (section 3.2; a
    common reference implementation multiplies such a factor by its usual U(0, 1) step, so its
    gaps average 0.125 rather than 0.25). With an empty danger set nothing is generated (the
    paper's rule; the class stays as it is). The danger set is the same as that reference's;
    k falls for small classes as in SMOTE.
    """

    def __init__(self, balance=1.0, neighbours=5, danger_neighbours=10, variant=1, distances="standardized",
                 random_state=None):
        super().__init__(balance, neighbours, distances, random_state)
        self.danger_neighbours = danger_neighbours
        self.variant = variant

    def _synthesise(self, X, Z, y, members, extra, rng, groups=None):
        if self.variant not in (1, 2):
            raise ResamplingError(f"variant={self.variant!r} must be 1 or 2")
        danger = danger_set(Z, y, members, self.danger_neighbours)
        if not danger.any():
            return np.empty((0, X.shape[1]))
        seeds = members[danger]
        counts = spread_evenly(extra, len(seeds), rng)
        if self.variant == 1:
            near = neighbours_among(Z[seeds], Z[members], self.neighbours, same_rows=np.flatnonzero(danger))
            pool = members[near]
        else:
            pool = neighbours_among(Z[seeds], Z, self.neighbours, same_rows=seeds)
        base = np.repeat(np.arange(len(seeds)), counts)
        towards = pool[base, rng.integers(0, pool.shape[1], len(base))]
        gaps = rng.random(len(base))
        if self.variant == 2:
            gaps = np.where(y[towards] != y[seeds[base]], gaps * 0.5, gaps)
        return interpolate(X[seeds[base]], X[towards], gaps)


class Adasyn(_Synthetic):
    """ADAptive SYNthetic sampling (He, Bai, Garcia & Li 2008, IJCNN, 1322).

    Minority sample i gets g_i = G * r_i / sum(r) new points (largest-remainder rounding, so the
    total is exact), r_i = share of other-class samples among its K nearest neighbours in the
    whole set; points are made towards its k nearest minority neighbours. If no minority
    sample has another class among its neighbours, counts fall back to an even spread.
    A common reference implementation rounds each g_i to the nearest whole number, so its total can
    miss G by a few points, and stops with an error where this falls back or where k falls as in SMOTE.
    """

    def _synthesise(self, X, Z, y, members, extra, rng, groups=None):
        near = neighbours_among(Z[members], Z, self.neighbours, same_rows=members)
        ratio = (y[near] != y[members][:, None]).mean(axis=1)
        counts = apportion(extra, ratio) if ratio.sum() > 0 else spread_evenly(extra, len(members), rng)
        return self._from_seeds(X[members], Z[members], counts, rng)


class SmoteNominal(_Synthetic):
    """SMOTE for mixed nominal and continuous features (Chawla et al. 2002, JAIR 16:321, section 6.1).

    ``nominal``: indices of the nominal columns (integer codes). Distance: Euclidean over the
    continuous columns plus Med^2 for every nominal mismatch, Med = median of the standard
    deviations of the continuous columns within the minority class (one-hot columns scaled by
    Med / sqrt(2) give exactly that distance). New continuous values are interpolated; a new
    nominal value is the most frequent among the seed's k nearest neighbours (ties: the smallest code).
    With standardised distances the continuous columns are z-scores, and Med is taken from them. Without
    nominal columns it is SMOTE (the method's own reduction). In a suite, ``nominal`` defaults to the
    dataset's declared nominal columns (KEEL and ARFF attributes, ``?nominal=`` of a table).
    """

    def __init__(self, nominal=(), balance=1.0, neighbours=5, distances="standardized", random_state=None):
        super().__init__(balance, neighbours, distances, random_state)
        self.nominal = nominal

    def _columns(self, d):
        nominal = self.nominal
        if isinstance(nominal, str):
            nominal = [int(v) for v in nominal.split(",") if v.strip()]
        nominal = sorted(set(int(v) for v in np.atleast_1d(nominal)))
        if nominal and (min(nominal) < 0 or max(nominal) >= d):
            raise ResamplingError(f"nominal={self.nominal!r} must list column indices between 0 and {d - 1}")
        return nominal, [c for c in range(d) if c not in nominal]

    def _synthesise(self, X, Z, y, members, extra, rng, groups=None):
        nominal, continuous = self._columns(X.shape[1])
        Xc, Zc = X[members], Z[members]
        med = float(np.median(Zc[:, continuous].std(axis=0))) if continuous else 1.0
        blocks = [Zc[:, continuous]]
        for column in nominal:
            values = Xc[:, column]
            blocks.append((values[:, None] == np.unique(values)[None, :]) * (med / np.sqrt(2.0)))
        embedded = np.concatenate(blocks, axis=1)
        near = neighbours_within(embedded, self.neighbours)
        base = np.repeat(np.arange(len(Xc)), spread_evenly(extra, len(Xc), rng))
        towards = near[base, rng.integers(0, near.shape[1], len(base))]
        out = interpolate(Xc[base], Xc[towards], rng.random(len(base)))
        for column in nominal:
            votes = Xc[near[base], column]
            out[:, column] = [_most_frequent(row) for row in votes]
        return out


def _most_frequent(values):
    codes, counts = np.unique(values, return_counts=True)
    return codes[np.argmax(counts)]
