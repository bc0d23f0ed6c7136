"""The main job, end to end: suite file -> datasets -> plan -> store -> leaderboard folder."""
import platform
import time
from dataclasses import dataclass, field, replace
from importlib import metadata
from pathlib import Path

import numpy as np

from .. import __version__
from ..analysis.complexity import meta_features
from ..datasets import load_dataset
from ..datasets.dataset import Dataset
from ..errors import LopsidedError, StoreError, SuiteError, UsageError, unknown
from ..execution.backends import choose, start_early
from ..execution.driver import run_plan
from ..execution.store import Store, now
from ..options import ReportOptions, RunOptions
from ..planning.design import COHORT
from ..planning.plan import plan
from ..planning.suite import Suite, added_resampler, check_writable, load_suite, unit_seconds
from ..records import CellTally, DatasetDescription, MethodOrigin, RunSummary, SkippedFold, SkippedPoint

PACKAGES = ("numpy", "scipy", "scikit-learn", "pandas", "matplotlib", "jinja2", "chemotools", "openml",
            "threadpoolctl", "tqdm", "pyarrow", "jcamp")


@dataclass
class RunResult:
    out: Path
    store: Path
    summary: RunSummary
    cells: object        # pandas DataFrame of this suite's stored cells
    skipped: list[SkippedFold] = field(default_factory=list)   # infeasible fold-points of the plan


def versions() -> dict[str, str | None]:
    """Versions of Python, lopsided and every package a result depends on (None: not installed)."""
    found: dict[str, str | None] = {"python": platform.python_version(), "lopsided": __version__}
    for name in PACKAGES:
        try:
            found[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            found[name] = None
    return found


def with_added_methods(suite, db, add=(), drop=(), command=""):
    """The suite file's resamplers plus every one the suite gained in ``db`` and keeps.

    ``add`` (--add-resampler texts) are recorded with ``command``; ``drop`` (labels) are left out of
    leaderboards from now on, their cells kept. Everything is checked before the store changes.
    Returns (suite, origins): origins lists every resampler and learner with where it came from (MethodOrigin).
    """
    own = {s.title for s in suite.resamplers}
    stored = [added.spec.title for added in db.added_methods(suite.name, "resamplers")]
    for label in drop:
        if label in own:
            raise UsageError("--drop-resampler", label, f"is listed in the suite file {suite.source}; remove it there")
        if label not in stored:
            raise UsageError("--drop-resampler", label, unknown("added resampler", label, stored))
    new = [added_resampler(text) for text in add]
    for spec, text in zip(new, add):
        if spec.title in own or spec in suite.resamplers:
            raise UsageError("--add-resampler", text, f"{spec.title!r} is already listed in the suite file {suite.source}")
        if spec.title in drop:
            raise UsageError("--add-resampler", text, "is also named by --drop-resampler")
    for spec in new:
        db.add_method(suite.name, "resamplers", spec, command)
    for label in drop:
        db.drop_method(suite.name, "resamplers", label)
    kept = db.added_methods(suite.name, "resamplers")
    extended = suite.with_resamplers([added.spec for added in kept])
    origins = [MethodOrigin("learner", s.title, s.canonical, "suite file") for s in suite.learners]
    origins += [MethodOrigin("resampler", s.title, s.canonical, "suite file") for s in suite.resamplers]
    origins += [MethodOrigin("resampler", added.spec.title, added.spec.canonical, "added", added.command,
                             added.added_at) for added in kept]
    return extended, tuple(origins)


def load_all(suite):
    """Every dataset of the suite; twin sets (the same samples and labels under two names, such as
    KEEL's new_thyroid1 and new_thyroid2) are refused, since rank-based tests would count one task twice.
    Different tasks cut from the same samples (glass1, glass6) are allowed: curated suites limit them per family."""
    datasets = {}
    for i, reference in enumerate(suite.datasets):
        try:
            datasets[reference] = load_dataset(reference, base=suite.folder)
        except LopsidedError as exc:
            raise SuiteError(suite.source, f"datasets[{i}]", str(exc)) from None
    seen: dict[str, str] = {}
    for reference, data in datasets.items():
        if data.checksum in seen:
            raise SuiteError(suite.source, "datasets", f"{seen[data.checksum]} and {reference} hold the same "
                             "samples and labels (twin sets); keep one of them")
        seen[data.checksum] = reference
    design = suite.protocol.test
    if design.kind == "external":
        datasets = {ref: with_external_test(suite, data) for ref, data in datasets.items()}
    if design.kind in ("cohort", "external"):
        for reference, data in datasets.items():       # checked once here, so planning cannot fail on it
            try:
                design.splits(data, suite.protocol, 0, 0)
            except LopsidedError as exc:
                raise SuiteError(suite.source, "protocol.test", f"{reference}: {exc}") from None
    return datasets


def with_external_test(suite, data):
    """The dataset with the suite's external test set appended, its rows marked ``COHORT`` = "test".

    The external set must have the same classes in the same order and the same features (names and
    spectral axis); no donor, specimen or particle may appear in both. Only one dataset per suite.
    """
    reference = suite.protocol.test.reference
    if len(suite.datasets) != 1:
        raise SuiteError(suite.source, "protocol.test", "an external test set goes with exactly one dataset; "
                         f"this suite lists {len(suite.datasets)}")
    try:
        other = load_dataset(reference, base=suite.folder)
    except LopsidedError as exc:
        raise SuiteError(suite.source, "protocol.test", str(exc)) from None
    problems = []
    if other.classes != data.classes:
        problems.append(f"its classes {other.classes} differ from {data.classes} (use the same positive=)")
    if other.X.shape[1] != data.X.shape[1] or other.feature_names != data.feature_names:
        problems.append(f"its {other.X.shape[1]} features differ from the training data's {data.X.shape[1]}")
    elif (other.axis is None) != (data.axis is None) or (
            data.axis is not None and other.axis is not None and not np.allclose(other.axis, data.axis)):
        problems.append("its feature axis differs from the training data's")
    if (other.groups is None) != (data.groups is None):
        problems.append("one of the two has groups and the other not")
    elif data.groups is not None:
        shared = np.intersect1d(np.asarray(data.groups).astype(str), np.asarray(other.groups).astype(str))
        if len(shared):
            problems.append(f"group {shared[0]!r} appears in both")
    if problems:
        raise SuiteError(suite.source, "protocol.test", f"{reference}: " + "; ".join(problems))
    n, m = len(data.y), len(other.y)
    return Dataset(
        name=data.name, X=np.vstack([data.X, other.X]), y=np.concatenate([data.y, other.y]), classes=data.classes,
        groups=None if data.groups is None else np.concatenate([np.asarray(data.groups).astype(str),
                                                                np.asarray(other.groups).astype(str)]),
        axis=data.axis, feature_names=data.feature_names, nominal=data.nominal,
        provenance=replace(data.provenance, note=f"{data.provenance.note}; external test set {reference} "
                           f"({m} rows)".lstrip("; ")),
        annotations={COHORT: np.array(["train"] * n + ["test"] * m)},
    )


def refuse_unreachable(suite, datasets):
    """One clear error when no protocol point can be cut from any dataset: there would be nothing to rank.
    (A dataset without a feasible point among others that have some is listed under skipped points.)
    Feasibility does not depend on the methods, so one resampler and one learner are planned."""
    full = plan(replace(suite, resamplers=suite.resamplers[:1], learners=suite.learners[:1]), datasets)
    if full.units or not full.skipped:
        return
    first = full.skipped[0]
    raise SuiteError(suite.source, "protocol", f"no protocol point can be cut from any dataset, e.g. "
                     f"{first.dataset} at ratio {first.ratio}, size {first.size}: {first.reason}; "
                     "lower protocol.ratios, protocol.sizes or protocol.min_minority")


def run_suite(suite, options=RunOptions()):
    """Run a suite file (a path) or a Suite as ``options`` (RunOptions) say and write its leaderboard; stored
    cells are reused.

    Resamplers added with ``add_resamplers`` are recorded in the store and stay in every later run and report of
    the suite until dropped with ``drop_resamplers``. ``split_leakage`` also runs every grouped dataset with its
    groups ignored and reports how much the leaky random split inflates the headline metric. ``command`` is
    recorded in the manifest (default: the call itself). ``execution.timeout`` (seconds per work unit) overrides
    the suite's ``protocol.timeout``.
    """
    base = suite if isinstance(suite, Suite) else load_suite(suite)
    execution = options.execution
    if not isinstance(execution.jobs, int) or execution.jobs < 1:
        raise UsageError("--jobs", "jobs", f"{execution.jobs!r} is not a whole number >= 1")
    execution = replace(execution, timeout=unit_seconds(execution.timeout, "--timeout", "timeout"))
    choose(execution.backend, execution.jobs, execution.scheduler)   # a backend option that cannot work is refused
    start_early(execution.backend, execution.scheduler)              # before data loads
    command = options.command or _python_call(suite, options)
    where = ("--out", str(options.out)) if options.out else (base.source, "out")
    out = Path(options.out or base.path(base.out) or Path("results") / base.name)
    check_writable(out, *where)
    for text in options.add_resamplers:          # refused before the store opens: a plugin that is no resampler
        added_resampler(text)
    store_path = Path(options.store or base.path(base.store) or out / "store.sqlite")
    started, clock = now(), time.perf_counter()
    datasets = load_all(base)                 # bad data fails here, before the store exists or changes
    refuse_unreachable(base, datasets)
    db = Store(store_path)
    try:
        suite, origins = with_added_methods(base, db, options.add_resamplers, options.drop_resamplers, command)
        full = plan(suite, datasets)
        leaky = plan(suite, datasets, split="random") if options.split_leakage else None
        run_id = db.begin_run(suite, full.keys)
        described: list[DatasetDescription] = []   # the manifest's dataset part, made while workers compute
        counts = run_plan(full, datasets, suite, db, execution,
                          beside=lambda: _describe_and_prepare(datasets, described))
        cells = db.cells(full.keys)
        from ..report import leakage_rows, write_report  # imported beside the workers (_describe_and_prepare)
        if leaky is not None:
            extra = run_plan(leaky, datasets, suite, db, execution)
            counts = counts.plus(extra)        # the leakage run counts as work done, not planned
        summary = replace(_summary(suite, described, full, cells, counts, origins), started_at=started,
                          finished_at=now(), seconds=round(time.perf_counter() - clock, 2), jobs=execution.jobs,
                          command=command,
                          split_leakage=None if leaky is None else leakage_rows(cells, db.cells(leaky.keys), suite),
                          other_bytes=other_bytes(datasets, cells) or None, imported=db.sources(full.keys) or None)
        db.finish_run(run_id, summary, full.skipped)
    finally:
        db.close()
    report_clock = time.perf_counter()
    write_report(out, suite, cells, summary, options.stats)
    summary = replace(summary, report_seconds=round(time.perf_counter() - report_clock, 2))
    return RunResult(out, store_path, summary, cells, full.skipped)


def _python_call(suite, options):
    """How a notebook call is recorded when no command line is given."""
    changed = ", ".join(f"{name}={value!r}" for name, value in (("add_resamplers", options.add_resamplers),
                                                                   ("drop_resamplers", options.drop_resamplers)) if value)
    return f"lopsided.run_suite({str(suite)!r}" + (f", RunOptions({changed})" if changed else "") + ")"


def _describe_and_prepare(datasets, described):
    """The driver's work while workers compute: the manifest's dataset part into ``described``, then the
    report's libraries (matplotlib, jinja2) imported and its templates compiled, which would otherwise
    follow the last unit (about 0.5 s, measured with bench/perf/backends.py)."""
    described.extend(describe(datasets))
    from ..report import prepare
    prepare()


def describe(datasets):
    """Each dataset as the manifest describes it (DatasetDescription): meta-features, class overlap, checksum,
    source."""
    return [DatasetDescription(reference=ref, **data.meta(), **overlap(data), checksum=data.checksum,
                               note=data.provenance.note, citation=data.provenance.citation,
                               licence=data.provenance.licence)
            for ref, data in datasets.items()]


def other_bytes(datasets, cells):
    """Datasets whose stored cells were computed from other bytes than this machine loaded: the same key
    (a generated dataset is keyed by its recipe) with another data checksum, e.g. cells imported from a
    machine whose floating point differs in the last bit. [{dataset, checksum here, stored checksums, cells}]."""
    found = []
    for reference, part in cells.groupby("dataset", sort=True) if len(cells) else ():
        here = datasets[reference].checksum if reference in datasets else None
        other = part[part["dataset_checksum"] != here]
        if here is not None and len(other):
            found.append({"dataset": reference, "checksum": here, "cells": int(len(other)),
                          "stored": sorted(other["dataset_checksum"].unique())})
    return found


def _summary(suite, described, full, cells, counts, origins):
    """The manifest: what ran, on what (``described``: see ``describe``), with which versions; the caller
    adds times and the command."""
    ok = int((cells["status"] == "ok").sum()) if len(cells) else 0
    return RunSummary(
        suite=suite.name, suite_fingerprint=suite.fingerprint, suite_file=suite.source, seed=suite.seed,
        versions=versions(), methods=origins,
        cells=CellTally(planned=counts.planned, ok=ok, failed=len(cells) - ok, missing=counts.planned - len(cells),
                        reused=counts.reused, computed=counts.computed, failed_now=counts.failed,
                        skipped_points=counts.skipped_points),
        skipped=SkippedPoint.grouped(full.skipped), datasets=tuple(described))


def overlap(data):
    """Class-overlap meta-features for the manifest: Fisher's F1 and N1 (Ho & Basu 2002).

    Missing values are replaced by the column median for this purpose only. F1 is infinite when one feature
    separates the classes with no spread inside them: strict JSON has no infinity, so it is then null with
    ``f1_separable`` true.
    """
    X = np.array(data.X, dtype=float)
    if np.isnan(X).any():
        medians = np.nan_to_num(np.nanmedian(np.where(np.isnan(X).all(axis=0), 0.0, X), axis=0))
        X = np.where(np.isnan(X), medians, X)
    found = meta_features(X, data.y)
    separable = not np.isfinite(found.f1)
    return {"f1": None if separable else round(float(found.f1), 6), "f1_separable": separable,
            "n1": round(float(found.n1), 6)}


def rebuild_report(target, options=ReportOptions()):
    """Rebuild a leaderboard folder from stored cells: ``target`` is a suite file or a store; ``options``
    (ReportOptions) name the folder, the statistics options and the resamplers to drop.

    Nothing is refitted and no dataset is loaded or downloaded: the newest finished run of the suite
    (from a store alone: of any suite) recorded its plan's cell keys, its datasets' descriptions and
    times, and the report is rebuilt from those. A suite file must still describe that run (else: run
    it, stored cells are reused). Resamplers the suite gained stay in; ``drop_resamplers`` leaves
    added ones out from now on. The manifest records the rebuild beside the run that computed the cells.
    """
    target = Path(target)
    command = options.command or f"lopsided.rebuild_report({str(target)!r})"
    if target.suffix != ".toml":
        if options.out is not None:
            check_writable(options.out, "--out", str(options.out))
        return _rebuild(target, options.out, options, command)
    base = load_suite(target)
    where = ("--out", str(options.out)) if options.out else (base.source, "out")
    out = Path(options.out or base.path(base.out) or Path("results") / base.name)
    check_writable(out, *where)
    store_path = Path(base.path(base.store) or out / "store.sqlite")
    if not store_path.is_file():
        raise StoreError(f"{store_path}: no result store for suite {base.name!r}; run it first")
    return _rebuild(store_path, out, options, command, base)


def _rebuild(path, out, options, command, base=None):
    """The newest finished run in store ``path`` (of ``base``, a Suite, when given), as it was planned, less
    the resamplers dropped now or before."""
    db = Store(path, create=False)
    try:
        stored = db.latest_run(base.name if base else None)
        ran = stored.suite
        own = base or ran.without_resamplers({added.spec.title for added in db.added_methods(ran.name, "resamplers")})
        if base is not None:
            _refuse_changed(base, with_added_methods(own, db)[0], ran, path)
        kept, origins = with_added_methods(own, db, (), options.drop_resamplers, command)
        suite = ran.without_resamplers({s.title for s in ran.resamplers} - {s.title for s in kept.resamplers})
        cells = db.cells(stored.keys)
    finally:
        db.close()
    from ..report import write_report
    cells = cells[cells["resampler"].isin({s.canonical for s in suite.resamplers})].reset_index(drop=True)
    out = Path(out or Path("results") / suite.name)
    recorded = stored.summary
    ok = int((cells["status"] == "ok").sum()) if len(cells) else 0
    tally = replace(recorded.cells, planned=len(cells) + recorded.cells.missing, ok=ok, failed=len(cells) - ok)
    rebuilt = replace(recorded, cells=tally, skipped=SkippedPoint.grouped(stored.skipped), methods=origins,
                      rebuilt={"at": now(), "command": command})
    write_report(out, suite, cells, rebuilt, options.stats)
    return out


def _refuse_changed(base, current, ran, path):
    """A suite file must describe its newest stored run (less resamplers dropped since): a changed suite
    plans other cells, which only a run can compute."""
    dropped = {s.title for s in ran.resamplers} - {s.title for s in current.resamplers}
    if current.fingerprint != ran.without_resamplers(dropped).fingerprint:
        raise StoreError(f"{base.source}: the suite changed since its last run stored in {path}; run it to "
                         f"bring the leaderboard up to date (stored cells are reused): lopsided run {base.source}")
