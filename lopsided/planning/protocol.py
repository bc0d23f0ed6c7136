"""Deterministic splits and nested sweep subsets.

Within one repeat, the data is cut into k stratified folds (grouped when the dataset has
groups: no group on both sides). For each fold the test part stays fixed and every
protocol point (imbalance ratio x training size) takes a *prefix* of one fixed random
order of each class's training rows. Prefixes of one order are nested, so a smaller
training set is a subset of a larger one at the same ratio, and a trend along a sweep
reflects size or ratio, not a fresh random draw.

Ratio rule: the ratio is largest class : rarest class (the dataset's minority). Other
classes keep their natural proportions to the largest class. 'natural' keeps every class
in its natural proportion; 'balanced' gives every class the same number of rows (learning
curves: sizes are then total rows, size / k per class).

With ``holdout`` instead of folds, each repeat makes one split whose test part is one of
round(1 / holdout) stratified (grouped) folds: a fixed, independent test set per repeat.

Counting groups (``counting = "groups"``): ratios, sizes and ``min_minority`` count donors, specimens or
particles instead of rows. Each class's training groups take one fixed random order, a point takes the
first n groups of each class with all their training rows, so smaller training sets are again subsets of
larger ones, made of whole groups. (A group with rows of two classes counts once in each class.)
"""
import hashlib
import json
from dataclasses import dataclass

import numpy as np
from sklearn.model_selection import StratifiedGroupKFold, StratifiedKFold


def derive_seed(*parts):
    """A 32-bit seed from any JSON-able parts (stable across runs, machines and Python versions)."""
    text = json.dumps(parts, sort_keys=True, default=str)
    return int.from_bytes(hashlib.sha256(text.encode()).digest()[:4], "little")


def fold_splits(dataset, folds, seed, use_groups=True, holdout=None):
    """[(train rows, test rows)] for one repeat: stratified, grouped when the data has groups
    (unless ``use_groups`` is False: the leaky random split, for comparison only)."""
    if holdout is not None:
        return fold_splits(dataset, max(2, int(round(1.0 / holdout))), seed, use_groups)[:1]
    if dataset.groups is not None and use_groups:
        splitter = StratifiedGroupKFold(n_splits=folds, shuffle=True, random_state=seed)
        pieces = splitter.split(dataset.X, dataset.y, groups=dataset.groups)
    else:
        splitter = StratifiedKFold(n_splits=folds, shuffle=True, random_state=seed)
        pieces = splitter.split(dataset.X, dataset.y)
    return [(np.sort(train), np.sort(test)) for train, test in pieces]


@dataclass(frozen=True)
class Infeasible:
    reason: str


def class_orders(y, train, seed):
    """{class: that class's training rows in one fixed random order}."""
    rng = np.random.default_rng(seed)
    return {int(c): rng.permutation(train[y[train] == c]) for c in np.unique(y[train])}


@dataclass(frozen=True)
class GroupOrder:
    """One class's training rows, group after group in a fixed random order of the groups. ``len`` counts
    groups; ``order[:n]`` gives the rows of the first n groups (a prefix, so points are nested)."""

    rows: np.ndarray
    starts: np.ndarray      # starts[i]: where the i-th group's rows begin in ``rows``; one more entry at the end

    def __len__(self):
        return len(self.starts) - 1

    def __getitem__(self, part):
        if not isinstance(part, slice) or part.start not in (None, 0) or part.step not in (None, 1):
            raise TypeError("a group order gives prefixes only: order[:n]")
        return self.rows[: self.starts[min(len(self) if part.stop is None else part.stop, len(self))]]


def group_orders(y, groups, train, seed):
    """{class: GroupOrder of that class's training rows}; without groups every row is its own group."""
    rng = np.random.default_rng(seed)
    named = np.arange(len(y)).astype(str) if groups is None else np.asarray(groups).astype(str)
    orders = {}
    for c in np.unique(y[train]):
        rows = train[y[train] == c]
        present = np.unique(named[rows])
        members = [rows[named[rows] == g] for g in rng.permutation(present)]
        orders[int(c)] = GroupOrder(np.concatenate(members), np.cumsum([0, *map(len, members)]))
    return orders


def point_counts(counts, minority, ratio, size, min_minority, unit="rows"):
    """Rows (or groups: ``unit``) per class for one protocol point, or Infeasible with the reason.

    ``counts``: {class: rows (groups) available in the training part}.
    """
    if counts.get(minority, 0) < min_minority:
        return Infeasible(f"only {counts.get(minority, 0)} minority {unit} in the training part "
                          f"(< min_minority={min_minority})")
    wanted = _point_counts(counts, minority, ratio, size, unit)
    if isinstance(wanted, Infeasible):
        return wanted
    if wanted.get(minority, 0) < min_minority:
        return Infeasible(f"only {wanted.get(minority, 0)} minority {unit} (< min_minority={min_minority})")
    if any(n < 1 for n in wanted.values()):
        return Infeasible(f"a class would have no training {unit}")
    return wanted


def _point_counts(counts, minority, ratio, size, unit="rows"):
    total = sum(counts.values())
    if ratio == "balanced":
        each = min(counts.values()) if size == "all" else size // len(counts)
        return _fill(counts, {c: each for c in counts}, None, unit)
    if ratio == "natural":
        if size == "all":
            return dict(counts)
        if size > total:
            return Infeasible(f"size {size} exceeds the {total} training {unit}")
        return _fill(counts, {c: size * n / total for c, n in counts.items()}, size, unit)
    largest = max(counts.values())
    weight = {c: ratio * n / largest for c, n in counts.items() if c != minority}
    if size == "all":
        m = min(counts[minority], int(np.floor(largest / ratio)))
    else:
        m = int(round(size / (1 + sum(weight.values()))))
    wanted = {minority: m, **{c: m * w for c, w in weight.items()}}
    return _fill(counts, wanted, size if size != "all" else None, unit)


def _fill(counts, wanted, target, unit="rows"):
    """Round wanted counts; the largest class absorbs rounding so the total hits ``target``."""
    rounded = {c: int(round(v)) for c, v in wanted.items()}
    if target is not None:
        biggest = max(rounded, key=lambda c: (wanted[c], -c))
        rounded[biggest] += target - sum(rounded.values())
    for c, n in rounded.items():
        if n > counts[c]:
            return Infeasible(f"needs {n} {unit} of class {c}, the training part has {counts[c]}")
    return rounded


def point_rows(orders, counts_wanted):
    """Training rows for a point: the first n rows (or groups: ``GroupOrder``) of each class's fixed order,
    sorted."""
    return np.sort(np.concatenate([orders[c][:n] for c, n in counts_wanted.items()]))
