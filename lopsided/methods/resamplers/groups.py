"""Resampling that respects groups: several rows per donor, specimen or particle.

Replicate spectra of one donor are not independent minority samples: SMOTE between two replicates of one
donor only adds measurement noise, and under-sampling rows keeps part of a donor. These methods take the
training rows' groups (the runner passes ``groups`` to any resampler whose ``rebalance`` accepts it,
only ever for the training part) and work on whole groups or across groups. Without groups every row is
its own group: SMOTE, random under-sampling and random over-sampling by copies.
"""
import numpy as np
from sklearn.neighbors import NearestNeighbors

from .base import ResamplingError, as_rng, check_balance, check_xy, over_targets, under_targets
from .neighbours import interpolate, spread_evenly
from .smote import Smote


def group_codes(groups, n):
    """Integer group codes 0..g-1 per row; every row its own group when ``groups`` is None."""
    if groups is None:
        return np.arange(n)
    groups = np.asarray(groups)
    if len(groups) != n:
        raise ResamplingError(f"groups must have one entry per row: {len(groups)} for {n} rows")
    return np.unique(groups.astype(str), return_inverse=True)[1].ravel()


def neighbours_across_groups(Z, codes, k):
    """Indices (n, k') of each row's k nearest rows of *other* groups, nearest first.

    k' = min(k, n - rows of the largest group): every row then has at least k' rows outside its group. The
    k + (rows of the largest group) nearest rows always hold k' of them, since at most that many rows of a
    row's own group (itself included) can come first.
    """
    sizes = np.bincount(codes)
    if np.count_nonzero(sizes) < 2:
        raise ResamplingError("needs rows of at least 2 groups (donors, specimens, particles) in the class")
    k = min(k, len(Z) - int(sizes.max()))
    ask = min(len(Z), k + int(sizes.max()))
    found = NearestNeighbors(n_neighbors=ask).fit(Z).kneighbors(Z, return_distance=False)
    own = codes[found] == codes[:, None]
    first_others = np.argsort(own, axis=1, kind="stable")[:, :k]
    return np.take_along_axis(found, first_others, axis=1)


class GroupSmote(Smote):
    """SMOTE across groups: each new point lies between a minority row and one of its ``neighbours`` nearest
    minority rows *of another group* (Chawla et al. 2002, section 4.2, with the neighbour search restricted
    to other donors, specimens or particles), so no point is made between two replicates of one donor.
    Seeds are spread evenly over the minority rows as in SMOTE; k falls to the rows outside the largest
    minority group when there are fewer."""

    def rebalance(self, X, y, groups=None):
        return self._resample(X, y, group_codes(groups, len(y)))

    def _synthesise(self, X, Z, y, members, extra, rng, groups=None):
        codes = np.unique(groups[members], return_inverse=True)[1].ravel()
        if len(np.unique(codes)) < 2:
            raise ResamplingError(f"class {y[members[0]]} comes from one group only; SMOTE across groups "
                                  "needs at least 2 donors, specimens or particles")
        near = neighbours_across_groups(Z[members], codes, self.neighbours)
        base = np.repeat(np.arange(len(members)), spread_evenly(extra, len(members), rng))
        towards = near[base, rng.integers(0, near.shape[1], len(base))]
        return interpolate(X[members][base], X[members][towards], rng.random(len(base)))


def _whole_groups(members, codes, rng):
    """The rows of ``members`` as a list of whole groups, in a random group order."""
    present = np.unique(codes[members])
    return [members[codes[members] == g] for g in rng.permutation(present)]


def _closest_prefix(sizes, target, at_least=1):
    """How many of the leading ``sizes`` bring their running total closest to ``target`` (ties: fewer)."""
    totals = np.concatenate([[0], np.cumsum(sizes)])
    return max(at_least, int(np.argmin(np.abs(totals - target))))


class GroupUnder:
    """Random under-sampling of whole groups: the larger classes keep whole donors, specimens or particles,
    drawn at random, until their row count is as close as whole groups allow to round(smallest count /
    balance) (at least one group kept). A donor is never split, so the learner never sees part of one.
    Random under-sampling as in Japkowicz (2000), with the group as the unit."""

    def __init__(self, balance=1.0, random_state=None):
        self.balance = balance
        self.random_state = random_state

    def rebalance(self, X, y, groups=None):
        X, y = check_xy(X, y)
        codes, rng = group_codes(groups, len(y)), as_rng(self.random_state)
        caps = under_targets(y, self.balance)
        parts = [np.flatnonzero(~np.isin(y, list(caps)))]
        for label, cap in caps.items():
            whole = _whole_groups(np.flatnonzero(y == label), codes, rng)
            parts += whole[:_closest_prefix([len(g) for g in whole], cap)]
        keep = np.sort(np.concatenate(parts))
        return X[keep], y[keep]


class GroupOver:
    """Random over-sampling by whole groups: copies of the smaller classes' donors, specimens or particles,
    all their rows at once, in rounds (every group once per round, in a random order) until the added rows
    come as close as whole groups allow to the target round(balance x largest count). Replication as in
    ``repeat-over``, with the group as the unit; the copies keep the group's own replicate structure."""

    def __init__(self, balance=1.0, random_state=None):
        self.balance = balance
        self.random_state = random_state

    def rebalance(self, X, y, groups=None):
        X, y = check_xy(X, y)
        check_balance(self.balance)
        codes, rng = group_codes(groups, len(y)), as_rng(self.random_state)
        parts = [np.arange(len(y))]
        for label, extra in over_targets(y, self.balance).items():
            members = np.flatnonzero(y == label)
            rounds = -(-extra // len(members)) + 1            # enough rounds to pass the target
            copies = [group for _ in range(rounds) for group in _whole_groups(members, codes, rng)]
            parts += copies[:_closest_prefix([len(g) for g in copies], extra, at_least=0)]
        rows = np.concatenate(parts)
        return X[rows], y[rows]
