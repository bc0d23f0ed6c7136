"""The records that travel from the planner through the workers into the store: small frozen dataclasses.

``Point`` is a protocol point with its ratio and size kept as numbers (or the words 'natural',
'balanced', 'all') and a separate display label; ``Coordinates`` says where a work unit sits and is what
its cell keys hash; ``CellRow`` is one stored cell, and the store's columns are derived from its fields;
``RunCounts`` is what the runner did with a plan, ``RunSummary`` (with its ``CellTally``) a run's manifest, made of
``MethodOrigin``, ``SkippedPoint`` (``SkippedFold`` grouped) and ``DatasetDescription`` records; ``AddedMethod`` is
a resampler a suite gained with --add-resampler. Keys hash exactly the payload they always hashed, so stored cells
stay valid; records become JSON only where they are written (``as_json``) and are read back with ``from_json``.
"""
from dataclasses import asdict, dataclass, field, fields
from typing import Any, get_type_hints

from .specs import MethodSpec


def point_label(value: float | int | str) -> str:
    """'natural' / 'all' stay; numbers print without a trailing .0."""
    return value if isinstance(value, str) else f"{value:g}"


@dataclass(frozen=True)
class Point:
    """A training imbalance ratio (majority:minority, >= 1, or 'natural' / 'balanced') and size (rows, or 'all')."""

    ratio: float | str
    size: int | str

    @property
    def ratio_label(self) -> str:
        return point_label(self.ratio)

    @property
    def size_label(self) -> str:
        return point_label(self.size)

    def __str__(self) -> str:
        return f"ratio {self.ratio_label}, size {self.size_label}"


@dataclass(frozen=True)
class Coordinates:
    """Where a work unit sits: dataset (with its identity and checksum), suite seed, fold design, point,
    repeat, fold, preprocessing and resampler. ``payload`` is what the unit's and its cells' keys hash: the
    dataset's identity (``Dataset.identity``: its recipe for generated data, else its checksum), not the
    checksum of its bytes, which is stored beside each cell."""

    dataset: str
    dataset_identity: str
    dataset_checksum: str
    suite_seed: int
    folds: int
    point: Point
    repeat: int
    fold: int
    preprocessing: tuple[str, ...]
    resampler: str
    holdout: float | None = None
    test: str = "folds"          # the test design's text (planning.design.TestDesign.text)
    split: str = "grouped"
    counting: str = "rows"

    def payload(self) -> dict[str, Any]:
        """The key payload; options at their defaults are left out, so adding one changed no key."""
        where = {"dataset": self.dataset, "ratio": self.point.ratio_label, "size": self.point.size_label,
                 "repeat": self.repeat, "fold": self.fold, "dataset_identity": self.dataset_identity,
                 "folds": self.folds, "suite_seed": self.suite_seed, "preprocessing": list(self.preprocessing),
                 "resampler": self.resampler}
        if self.holdout is not None:
            where["holdout"] = self.holdout
        if self.test != "folds":
            where["test"] = self.test
        if self.split != "grouped":
            where["split"] = self.split
        if self.counting != "rows":
            where["counting"] = self.counting
        return where

    def __str__(self) -> str:
        split = f", split {self.split}" if self.split != "grouped" else ""
        return f"{self.dataset}, {self.point}, repeat {self.repeat}, fold {self.fold}{split}"


@dataclass(frozen=True)
class CellRow:
    """One stored cell: coordinates, outcome, sizes, timings and the code that ran. The store's ``cells``
    table has exactly these columns, in this order; ``metrics`` is JSON text {metric: value}."""

    key: str
    unit_key: str
    dataset: str
    dataset_checksum: str
    preprocessing: str            # JSON list of the preprocessing steps
    ratio: str                    # the point's display labels (Point.ratio_label, Point.size_label)
    size: str
    repeat: int
    fold: int
    resampler: str
    learner: str
    status: str                   # 'ok' or 'failed'
    error: str | None = None
    warning: str | None = None
    metrics: str | None = None
    n_train: int | None = None
    n_train_minority: int | None = None
    n_resampled: int | None = None
    n_test: int | None = None
    resample_seconds: float | None = None
    fit_seconds: float | None = None
    predict_seconds: float | None = None
    code_version: str | None = None
    seed: int | None = None
    finished_at: str | None = field(default=None)
    n_train_minority_groups: int | None = None   # donors / specimens / particles (store schema 2; None without groups)

    def values(self) -> tuple:
        """The row in the store's column order."""
        return tuple(getattr(self, name) for name in COLUMN_NAMES)


_SQL_TYPES = {str: "TEXT", int: "INTEGER", float: "REAL"}


def _sql_type(hint: Any) -> str:
    plain = next((t for t in getattr(hint, "__args__", (hint,)) if t is not type(None)), str)
    return _SQL_TYPES[plain]


CELL_COLUMNS = tuple((f.name, _sql_type(hint) + (" PRIMARY KEY" if f.name == "key" else ""))
                     for f, hint in zip(fields(CellRow), get_type_hints(CellRow).values()))
COLUMN_NAMES = tuple(name for name, _ in CELL_COLUMNS)


@dataclass(frozen=True)
class RunCounts:
    """What one run did with its plan's cells."""

    planned: int
    reused: int
    computed: int = 0
    failed: int = 0
    skipped_points: int = 0

    def plus(self, other: "RunCounts") -> "RunCounts":
        """Work of a second plan (the leakage comparison) counted as work done, not as planned."""
        return RunCounts(self.planned, self.reused + other.reused, self.computed + other.computed,
                         self.failed + other.failed, self.skipped_points)


@dataclass(frozen=True)
class CellTally:
    """The cells of a run's plan: ok, failed and not run; reused from the store or computed now."""

    planned: int
    ok: int
    failed: int
    missing: int
    reused: int = 0
    computed: int = 0
    failed_now: int = 0
    skipped_points: int = 0


@dataclass(frozen=True)
class SkippedFold:
    """A protocol point that could not be cut from one fold of a dataset, and why (``planning.plan``)."""

    dataset: str
    ratio: str
    size: str
    repeat: int
    fold: int
    reason: str


@dataclass(frozen=True)
class SkippedPoint:
    """A protocol point skipped on a dataset: in how many folds, and the first fold's reason (the manifest's
    ``skipped``)."""

    dataset: str
    ratio: str
    size: str
    folds: int
    reason: str

    @staticmethod
    def grouped(skipped) -> tuple["SkippedPoint", ...]:
        """SkippedFold records grouped by dataset and point, in the order they first appear."""
        found: dict[tuple[str, str, str], list[SkippedFold]] = {}
        for fold in skipped:
            found.setdefault((fold.dataset, fold.ratio, fold.size), []).append(fold)
        return tuple(SkippedPoint(*where, len(folds), folds[0].reason) for where, folds in found.items())


@dataclass(frozen=True)
class AddedMethod:
    """A method a suite gained with --add-resampler and still has: the store's ``added_methods`` table."""

    spec: MethodSpec
    command: str
    added_at: str


@dataclass(frozen=True)
class MethodOrigin:
    """Where a resampler or learner of a run came from (the manifest's ``methods``): the suite file, or added
    by ``command`` at ``added_at``."""

    kind: str                   # "resampler" or "learner"
    label: str
    spec: str                   # the canonical spec (MethodSpec.canonical)
    origin: str                 # "suite file" or "added"
    command: str | None = None
    added_at: str | None = None

    def as_json(self) -> dict[str, Any]:
        found = asdict(self)
        return found if self.origin == "added" else {k: found[k] for k in ("kind", "label", "spec", "origin")}

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> "MethodOrigin":
        return cls(**data)


@dataclass(frozen=True)
class DatasetDescription:
    """One dataset as the manifest describes it: meta-features (``Dataset.meta``), class overlap (Fisher's F1
    and N1: ``jobs.run.overlap``; F1 None with ``f1_separable`` when a feature separates the classes),
    checksum and source. Runs stored before F1 / N1 were recorded read back with them None."""

    reference: str
    name: str
    n: int
    d: int
    classes: int
    minority: str
    minority_count: int
    majority_count: int
    imbalance_ratio: float
    minority_share: float
    groups: int
    nominal: int
    missing: int
    duplicates: int
    family: str | None
    source: str
    f1: float | None = None
    f1_separable: bool | None = None
    n1: float | None = None
    checksum: str | None = None
    note: str | None = None
    citation: str | None = None
    licence: str | None = None

    def as_json(self) -> dict[str, Any]:
        return asdict(self)

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> "DatasetDescription":
        known = {f.name for f in fields(cls)}
        return cls(**{name: value for name, value in data.items() if name in known})


@dataclass(frozen=True)
class RunSummary:
    """A run's manifest: what ran, on what data, with which versions, how long, and how the cells went.

    ``as_json`` is the content of manifest.json (unset optional fields left out) and what the store keeps
    with the run."""

    suite: str
    suite_fingerprint: str
    suite_file: str
    seed: int
    versions: dict
    methods: tuple[MethodOrigin, ...]
    cells: CellTally
    skipped: tuple[SkippedPoint, ...]         # infeasible points, grouped by dataset and point
    datasets: tuple[DatasetDescription, ...]
    started_at: str | None = None
    finished_at: str | None = None
    seconds: float | None = None
    jobs: int | None = None
    command: str | None = None
    split_leakage: list | None = None
    other_bytes: list | None = None   # datasets whose stored cells were computed from other bytes (see benchmark)
    imported: list | None = None      # bundles that brought planned cells (Store.sources): versions and trust
    rebuilt: dict | None = None
    report_seconds: float | None = None

    def as_json(self) -> dict[str, Any]:
        found = {f.name: getattr(self, f.name) for f in fields(self)}
        found.update(cells=asdict(self.cells), methods=[m.as_json() for m in self.methods],
                     skipped=[asdict(s) for s in self.skipped], datasets=[d.as_json() for d in self.datasets])
        return {name: value for name, value in found.items() if value is not None}

    @classmethod
    def from_json(cls, data: dict[str, Any]) -> "RunSummary":
        known = {f.name for f in fields(cls)}
        values = {name: value for name, value in data.items() if name in known}
        values.update(cells=CellTally(**data["cells"]),
                      methods=tuple(MethodOrigin.from_json(m) for m in data.get("methods", ())),
                      skipped=tuple(SkippedPoint(**s) for s in data.get("skipped", ())),
                      datasets=tuple(DatasetDescription.from_json(d) for d in data.get("datasets", ())))
        return cls(**values)
