"""The Dataset object every adapter returns, and its derived meta-features."""
import hashlib
from dataclasses import dataclass, field
from functools import cached_property

import numpy as np


def duplicate_groups(X, y):
    """(group id per row, number of duplicate rows): identical rows (features and label, NaN equal
    to NaN) share one id, every other row has its own."""
    rows = np.c_[np.nan_to_num(np.asarray(X, dtype=np.float64), nan=np.inf), y]
    _, first, inverse = np.unique(rows, axis=0, return_index=True, return_inverse=True)
    return inverse.ravel(), len(y) - len(first)


@dataclass(frozen=True)
class Provenance:
    source: str                  # where the data came from (URL, package, generator)
    version: str = ""
    citation: str = ""
    licence: str = ""
    family: str = ""             # base data set it was cut from (ecoli, digits, ...)
    note: str = ""               # e.g. "imbalance induced by one-vs-rest"


@dataclass(frozen=True, eq=False)
class Dataset:
    """Features ``X`` (float, n x d), integer class codes ``y`` (0..k-1) and what they mean.

    ``groups`` holds donor / specimen / particle ids for grouped splitting;
    ``axis`` the feature axis (wavenumbers in cm-1 for spectra). The arrays are read-only: one loaded
    dataset is shared by every caller in a process, so nobody can change it for the next one (copy
    before changing).
    """

    name: str
    X: np.ndarray
    y: np.ndarray
    classes: tuple
    provenance: Provenance
    groups: np.ndarray | None = None
    axis: np.ndarray | None = None
    feature_names: tuple = field(default=())
    nominal: tuple = field(default=())     # indices of nominal (integer-coded) features
    annotations: dict = field(default_factory=dict)   # per-row columns beside the features (site, year, ...)
    recipe: str = ""      # generated data: generator, version and every parameter (see ``identity``)

    def __post_init__(self):
        if self.X.ndim != 2 or len(self.X) != len(self.y):
            raise ValueError(f"{self.name}: X must be 2-D with one row per label")
        if self.groups is not None and len(self.groups) != len(self.y):
            raise ValueError(f"{self.name}: groups must have one entry per row")
        for name, column in self.annotations.items():
            if len(column) != len(self.y):
                raise ValueError(f"{self.name}: annotation {name!r} must have one entry per row")
        for array in (self.X, self.y, self.groups, self.axis, *self.annotations.values()):
            if isinstance(array, np.ndarray):
                array.flags.writeable = False

    def axis_summary(self):
        """'4000-900 cm-1, 776 points, step 4' for spectra (an axis given), else ''."""
        if self.axis is None or len(self.axis) < 2:
            return ""
        steps = np.abs(np.diff(np.asarray(self.axis, dtype=float)))
        step = f"step {steps[0]:g}" if np.allclose(steps, steps[0]) else f"steps {steps.min():g}-{steps.max():g}"
        return f"{self.axis[0]:g}-{self.axis[-1]:g} cm-1, {len(self.axis)} points, {step}"

    @property
    def counts(self):
        """Samples per class code."""
        return np.bincount(self.y, minlength=len(self.classes))

    @property
    def minority(self):
        """Code of the rarest class (decided by counts, never by the label's wording)."""
        return int(np.argmin(self.counts))

    @property
    def majority(self):
        return int(np.argmax(self.counts))

    @property
    def imbalance_ratio(self):
        """Majority count over minority count (>= 1)."""
        counts = self.counts
        return float(counts.max() / counts.min())

    @cached_property
    def checksum(self):
        """sha256 of the numbers themselves: X, y, groups (what a result depends on); computed once."""
        digest = hashlib.sha256()
        digest.update(np.ascontiguousarray(self.X, dtype=np.float64).tobytes())
        digest.update(np.ascontiguousarray(self.y, dtype=np.int64).tobytes())
        if self.groups is not None:
            digest.update(np.asarray(self.groups).astype(str).astype("U").tobytes())
        return digest.hexdigest()

    @property
    def identity(self):
        """What a cell key says about the data: for generated data its recipe (generator, version, every
        parameter with defaults filled in), so the key is the same on a machine whose floating point differs
        in the last bit; for data read from files or downloads the content checksum. The checksum is stored
        beside every cell either way, so a machine that generates other bytes under the same key shows."""
        if self.recipe:
            return "recipe " + hashlib.sha256(self.recipe.encode()).hexdigest()
        return "data " + self.checksum

    @cached_property
    def duplicate_rows(self):
        """Rows identical (features and label) to an earlier row."""
        return duplicate_groups(self.X, self.y)[1]

    def meta(self):
        """Derived meta-features, as one flat dict (a row of `lopsided datasets list`)."""
        counts = self.counts
        return {
            "name": self.name,
            "n": int(len(self.y)),
            "d": int(self.X.shape[1]),
            "classes": len(self.classes),
            "minority": str(self.classes[self.minority]),
            "minority_count": int(counts.min()),
            "majority_count": int(counts.max()),
            "imbalance_ratio": round(self.imbalance_ratio, 3),
            "minority_share": round(float(counts.min() / counts.sum()), 4),
            "groups": 0 if self.groups is None else int(len(np.unique(self.groups))),
            "nominal": len(self.nominal),
            "missing": int(np.isnan(self.X).sum()),
            "duplicates": self.duplicate_rows,
            "family": self.provenance.family,
            "source": self.provenance.source,
        }
