"""The test design: which rows of each repeat are test rows. Parsed once, here, from the suite's
``protocol.test`` text into a ``TestDesign`` that knows its splits and its description.

``folds`` (default): k stratified (grouped) folds, or one holdout fold, drawn anew in every repeat.
``fixed``: one stratified (grouped) test part drawn once and shared by every repeat; repeats redraw only the
nested training subsets, so they are not independent replications.
``column:NAME=VALUE`` (a designated cohort): the rows whose annotation NAME equals VALUE are the test part.
A dataset reference (an external test set): merged into the one dataset before planning (``jobs.run.load_all``),
its rows marked "test" in the ``COHORT`` annotation, and then split like a cohort.
A designated test part must share no group with the training rows.
"""
from dataclasses import dataclass

import numpy as np

from ..datasets import DATASETS
from ..errors import DatasetError, SuiteError
from ..specs import parse_reference
from .protocol import fold_splits

COHORT = "lopsided_cohort"           # annotation marking the rows of an external test set ("test")
GROUPED = " (grouped where the data has groups)"


@dataclass(frozen=True)
class TestDesign:
    """One test design: ``kind`` is "folds", "fixed", "cohort" (``column`` = ``value`` marks the test rows) or
    "external" (``reference`` names the test set). ``text`` is the form a suite writes and cell keys hash."""

    __test__ = False         # not a pytest test class

    kind: str = "folds"
    column: str = ""
    value: str = ""
    reference: str = ""

    @property
    def text(self) -> str:
        if self.kind == "cohort":
            return f"column:{self.column}={self.value}"
        return self.reference if self.kind == "external" else self.kind

    @property
    def shared_test(self) -> bool:
        """Every repeat is scored on the same test rows (so the repeats are no independent replications)."""
        return self.kind != "folds"

    def splits(self, dataset, protocol, seed_repeat, seed_fixed, use_groups=True):
        """[(train rows, test rows)] of one repeat (``seed_repeat``; ``seed_fixed`` draws the one test part of
        "fixed"); ``use_groups=False`` ignores the dataset's groups (the leaky split, for comparison only)."""
        if self.kind == "folds":
            return fold_splits(dataset, protocol.folds, seed_repeat, use_groups, protocol.holdout)
        if self.kind == "fixed":
            share = protocol.holdout or 1.0 / protocol.folds
            return fold_splits(dataset, protocol.folds, seed_fixed, use_groups, share)
        marked = self if self.kind == "cohort" else TestDesign("cohort", COHORT, "test")
        return [marked.cohort_split(dataset)]

    def cohort_split(self, dataset):
        """(train rows, test rows) of a cohort design; DatasetError naming the problem."""
        name, value = self.column, self.value
        if name not in dataset.annotations:
            raise DatasetError(f"no column {name!r} beside the features (known: "
                               f"{', '.join(sorted(dataset.annotations)) or 'none'}); for file: data leave it out of "
                               f"the features with ?drop={name}")
        marked = np.asarray(dataset.annotations[name]).astype(str) == value
        test, train = np.flatnonzero(marked), np.flatnonzero(~marked)
        if len(test) == 0 or len(train) == 0:
            raise DatasetError(f"{self.text} selects {len(test)} of {len(marked)} rows; both parts need rows")
        if dataset.groups is not None:
            shared = np.intersect1d(np.asarray(dataset.groups)[test], np.asarray(dataset.groups)[train])
            if len(shared):
                raise DatasetError(f"group {shared[0]!r} has rows on both sides of {self.text}: a designated test "
                                   "cohort must share no donor, specimen or particle with the training rows")
        return train, test

    def describe(self, protocol) -> str:
        """The design in words, for ``protocol`` (repeats, folds, holdout)."""
        r = protocol.repeats
        if self.kind == "folds":
            if protocol.holdout:
                return f"{r} x stratified holdout, test share {protocol.holdout}, a new test part per repeat{GROUPED}"
            return f"{r} x stratified {protocol.folds}-fold cross-validation{GROUPED}"
        if self.kind == "fixed":
            share = protocol.holdout or 1 / protocol.folds
            return f"one fixed stratified test part (share {share:.2g}){GROUPED} shared by all {r} repeats"
        if self.kind == "cohort":
            return f"a designated test cohort ({self.column}={self.value}) shared by all {r} repeats"
        return f"an external test set ({self.reference}) shared by all {r} repeats"

    @property
    def warning(self) -> str:
        """'' for cross-validation; otherwise why the repeats are not independent replications."""
        if not self.shared_test:
            return ""
        return ("Every repeat is scored on the same test rows, so repeats are not independent replications: their "
                "spread shows training-sample variability only, and no statistic here treats them as independent "
                "samples (comparisons across datasets use one mean per dataset).")


def parse_design(value, source, field="protocol.test") -> TestDesign:
    """'folds', 'fixed', 'column:NAME=VALUE' or an external dataset reference -> TestDesign; SuiteError
    naming ``source`` and ``field`` otherwise. The only place the design's text is read."""
    if value in ("folds", "fixed"):
        return TestDesign(value)
    if isinstance(value, str) and value.startswith("column:"):
        name, sep, wanted = value.removeprefix("column:").partition("=")
        if name and sep and wanted:
            return TestDesign("cohort", column=name, value=wanted)
        raise SuiteError(source, field, f"{value!r}: write column:NAME=VALUE, e.g. column:site=B")
    if isinstance(value, str) and parse_reference(value).scheme in DATASETS:
        return TestDesign("external", reference=value)
    raise SuiteError(source, field, f"{value!r} is not a test design; allowed: \"folds\" (default), "
                     "\"fixed\" (one test part for every repeat), \"column:NAME=VALUE\" (a designated cohort) or "
                     "a dataset reference (an external test set)")
