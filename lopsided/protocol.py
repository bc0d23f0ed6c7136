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
"""
import hashlib
import json
from dataclasses import dataclass

import numpy as np
from sklearn.model_selection import StratifiedGroupKFold, StratifiedKFold

from .errors import DatasetError


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


TEST_DESIGNS = ("folds", "fixed")   # plus "column:NAME=VALUE" and, resolved before planning, an external set
COHORT = "lopsided_cohort"           # annotation marking the rows of an external test set ("test")


def repeat_splits(dataset, protocol, seed_repeat, seed_fixed, use_groups=True):
    """[(train rows, test rows)] of one repeat under the protocol's test design.

    ``folds`` (default): k stratified (grouped) folds, or one holdout fold, drawn anew in every repeat.
    ``fixed``: one stratified (grouped) test part drawn once (``seed_fixed``) and shared by every repeat;
    repeats redraw only the nested training subsets, so they are not independent replications.
    ``column:NAME=VALUE``: the rows whose annotation NAME equals VALUE are the test part (a designated
    cohort); an external test set is merged in before planning and marked in the ``COHORT`` annotation.
    A designated test part must share no group with the training rows.
    """
    design = protocol.test
    if design == "folds":
        return fold_splits(dataset, protocol.folds, seed_repeat, use_groups, protocol.holdout)
    if design == "fixed":
        share = protocol.holdout or 1.0 / protocol.folds
        return fold_splits(dataset, protocol.folds, seed_fixed, use_groups, share)
    if not design.startswith("column:"):        # an external test set, merged in by benchmark.load_all
        design = f"column:{COHORT}=test"
    return [designated_split(dataset, design)]


def designated_split(dataset, design):
    """(train rows, test rows) for ``column:NAME=VALUE``; DatasetError naming the problem."""
    name, _, value = design.removeprefix("column:").partition("=")
    if name not in dataset.annotations:
        raise DatasetError(f"no column {name!r} beside the features (known: "
                         f"{', '.join(sorted(dataset.annotations)) or 'none'}); for file: data leave it out of the "
                         f"features with ?drop={name}")
    marked = np.asarray(dataset.annotations[name]).astype(str) == value
    test, train = np.flatnonzero(marked), np.flatnonzero(~marked)
    if len(test) == 0 or len(train) == 0:
        raise DatasetError(f"{design} selects {len(test)} of {len(marked)} rows; both parts need rows")
    if dataset.groups is not None:
        shared = np.intersect1d(np.asarray(dataset.groups)[test], np.asarray(dataset.groups)[train])
        if len(shared):
            raise DatasetError(f"group {shared[0]!r} has rows on both sides of {design}: a designated test "
                             "cohort must share no donor, specimen or particle with the training rows")
    return train, test


@dataclass(frozen=True)
class Infeasible:
    reason: str


def class_orders(y, train, seed):
    """{class: that class's training rows in one fixed random order}."""
    rng = np.random.default_rng(seed)
    return {int(c): rng.permutation(train[y[train] == c]) for c in np.unique(y[train])}


def point_counts(counts, minority, ratio, size, min_minority):
    """Rows per class for one protocol point, or Infeasible with the reason.

    ``counts``: {class: rows available in the training part}.
    """
    if counts.get(minority, 0) < min_minority:
        return Infeasible(f"only {counts.get(minority, 0)} minority rows in the training part "
                          f"(< min_minority={min_minority})")
    wanted = _point_counts(counts, minority, ratio, size)
    if isinstance(wanted, Infeasible):
        return wanted
    if wanted.get(minority, 0) < min_minority:
        return Infeasible(f"only {wanted.get(minority, 0)} minority rows (< min_minority={min_minority})")
    if any(n < 1 for n in wanted.values()):
        return Infeasible("a class would have no training rows")
    return wanted


def _point_counts(counts, minority, ratio, size):
    total = sum(counts.values())
    if ratio == "balanced":
        each = min(counts.values()) if size == "all" else size // len(counts)
        return _fill(counts, {c: each for c in counts}, None)
    if ratio == "natural":
        if size == "all":
            return dict(counts)
        if size > total:
            return Infeasible(f"size {size} exceeds the {total} training rows")
        return _fill(counts, {c: size * n / total for c, n in counts.items()}, size)
    largest = max(counts.values())
    weight = {c: ratio * n / largest for c, n in counts.items() if c != minority}
    if size == "all":
        m = min(counts[minority], int(np.floor(largest / ratio)))
    else:
        m = int(round(size / (1 + sum(weight.values()))))
    wanted = {minority: m, **{c: m * w for c, w in weight.items()}}
    return _fill(counts, wanted, size if size != "all" else None)


def _fill(counts, wanted, target):
    """Round wanted counts; the largest class absorbs rounding so the total hits ``target``."""
    rounded = {c: int(round(v)) for c, v in wanted.items()}
    if target is not None:
        biggest = max(rounded, key=lambda c: (wanted[c], -c))
        rounded[biggest] += target - sum(rounded.values())
    for c, n in rounded.items():
        if n > counts[c]:
            return Infeasible(f"needs {n} rows of class {c}, the training part has {counts[c]}")
    return rounded


def point_rows(orders, counts_wanted):
    """Training rows for a point: the first n rows of each class's fixed order (sorted)."""
    return np.sort(np.concatenate([orders[c][:n] for c, n in counts_wanted.items()]))
