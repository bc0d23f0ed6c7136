"""The main job, end to end: suite file -> datasets -> plan -> store -> leaderboard folder."""
import platform
import time
from dataclasses import dataclass, field, replace
from importlib import metadata
from pathlib import Path

import numpy as np

from . import __version__
from .analysis.complexity import meta_features
from .backends import choose, start_early
from .dataset import Dataset
from .datasets import load_dataset
from .errors import LopsidedError, StoreError, SuiteError, unknown
from .protocol import COHORT, TEST_DESIGNS, repeat_splits
from .records import CellTally, RunSummary
from .runner import plan, run_plan
from .specs import MethodSpec
from .store import Store, now
from .suite import added_resampler, check_writable, load_suite, spec_dict, suite_from_dict, unit_seconds

PACKAGES = ("numpy", "scipy", "scikit-learn", "pandas", "matplotlib", "jinja2", "chemotools", "openml",
            "threadpoolctl", "tqdm", "pyarrow", "jcamp")


@dataclass
class RunResult:
    out: Path
    store: Path
    summary: RunSummary
    cells: object        # pandas DataFrame of this suite's stored cells
    skipped: list = field(default_factory=list)   # infeasible fold-points of the plan


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
    Returns (suite, origins): origins lists every resampler and learner with where it came from.
    """
    own = {s.title for s in suite.resamplers}
    stored = {entry[0]["label"]: entry for entry in db.added_methods(suite.name, "resamplers")}
    for label in drop:
        if label in own:
            raise SuiteError("--drop-resampler", label, f"is listed in the suite file {suite.source}; remove it there")
        if label not in stored:
            raise SuiteError("--drop-resampler", label, unknown("added resampler", label, stored))
    new = [added_resampler(text) for text in add]
    for spec, text in zip(new, add):
        if spec.title in own or spec in suite.resamplers:
            raise SuiteError("--add-resampler", text, f"{spec.title!r} is already listed in the suite file {suite.source}")
        if spec.title in drop:
            raise SuiteError("--add-resampler", text, "is also named by --drop-resampler")
    for spec in new:
        db.add_method(suite.name, "resamplers", spec_dict(spec), command)
    for label in drop:
        db.drop_method(suite.name, "resamplers", label)
    kept = db.added_methods(suite.name, "resamplers")
    extended = suite.with_resamplers([MethodSpec(d["name"], d["params"], d["label"]) for d, _, _ in kept])
    origins = [{"kind": "learner", "label": s.title, "spec": s.canonical, "origin": "suite file"} for s in suite.learners]
    origins += [{"kind": "resampler", "label": s.title, "spec": s.canonical, "origin": "suite file"}
                for s in suite.resamplers]
    origins += [{"kind": "resampler", "label": d["label"], "spec": MethodSpec(d["name"], d["params"]).canonical,
                 "origin": "added", "command": command_text, "added_at": added_at} for d, command_text, added_at in kept]
    return extended, origins


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
    if suite.protocol.test not in TEST_DESIGNS and not suite.protocol.test.startswith("column:"):
        datasets = {ref: with_external_test(suite, data) for ref, data in datasets.items()}
    if suite.protocol.test not in TEST_DESIGNS:
        for reference, data in datasets.items():       # checked once here, so planning cannot fail on it
            try:
                repeat_splits(data, suite.protocol, 0, 0)
            except LopsidedError as exc:
                raise SuiteError(suite.source, "protocol.test", f"{reference}: {exc}") from None
    return datasets


def with_external_test(suite, data):
    """The dataset with the suite's external test set appended, its rows marked ``COHORT`` = "test".

    The external set must have the same classes in the same order and the same features (names and
    spectral axis); no donor, specimen or particle may appear in both. Only one dataset per suite.
    """
    reference = suite.protocol.test
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
                     f"{first['dataset']} at ratio {first['ratio']}, size {first['size']}: {first['reason']}; "
                     "lower protocol.ratios, protocol.sizes or protocol.min_minority")


def run_suite(path, jobs=1, out=None, store=None, add_resamplers=(), drop_resamplers=(), retry_failed=False,
              progress=True, alpha=0.05, rope=0.01, compare_split_leakage=False, command=None, backend="auto",
              scheduler=None, timeout=None):
    """Run a suite file (or Suite) and write its leaderboard; stored cells are reused.

    Resamplers added with ``add_resamplers`` are recorded in the store and stay in every later run
    and report of the suite until dropped with ``drop_resamplers``. ``compare_split_leakage`` also
    runs every grouped dataset with its groups ignored and reports how much the leaky random split
    inflates the headline metric. ``command`` is recorded in the manifest (default: the call itself).
    ``timeout`` (seconds per work unit) overrides the suite's ``protocol.timeout``.
    """
    base = load_suite(path) if not hasattr(path, "protocol") else path
    if not isinstance(jobs, int) or jobs < 1:
        raise SuiteError("--jobs", "jobs", f"{jobs!r} is not a whole number >= 1")
    timeout = unit_seconds(timeout, "--timeout", "timeout")
    choose(backend, jobs, scheduler)          # a backend option that cannot work is refused before data loads
    start_early(backend, scheduler)
    command = command or _python_call("run_suite", path, add_resamplers, drop_resamplers)
    where = ("--out", str(out)) if out else (base.source, "out")
    out = Path(out or base.path(base.out) or Path("results") / base.name)
    check_writable(out, *where)
    for text in add_resamplers:          # refused before the store opens: a plugin that is no resampler
        added_resampler(text)
    store_path = Path(store or base.path(base.store) or out / "store.sqlite")
    started, clock = now(), time.perf_counter()
    datasets = load_all(base)                 # bad data fails here, before the store exists or changes
    refuse_unreachable(base, datasets)
    db = Store(store_path)
    try:
        suite, origins = with_added_methods(base, db, add_resamplers, drop_resamplers, command)
        full = plan(suite, datasets)
        leaky = plan(suite, datasets, split="random") if compare_split_leakage else None
        run_id = db.begin_run(suite, full.keys)
        described: list[dict] = []            # the manifest's dataset part, made while workers compute
        counts = run_plan(full, datasets, suite, db, jobs=jobs, retry_failed=retry_failed, progress=progress,
                          backend=backend, scheduler=scheduler, timeout=timeout,
                          beside=lambda: _describe_and_prepare(datasets, described))
        cells = db.cells(full.keys)
        from .report import leakage_rows, write_report  # imported beside the workers (_describe_and_prepare)
        if leaky is not None:
            extra = run_plan(leaky, datasets, suite, db, jobs=jobs, retry_failed=retry_failed, progress=progress,
                             backend=backend, scheduler=scheduler, timeout=timeout)
            counts = counts.plus(extra)        # the leakage run counts as work done, not planned
        summary = replace(_summary(suite, described, full, cells, counts, origins), started_at=started,
                          finished_at=now(), seconds=round(time.perf_counter() - clock, 2), jobs=jobs, command=command,
                          split_leakage=None if leaky is None else leakage_rows(cells, db.cells(leaky.keys), suite))
        db.finish_run(run_id, {**summary.as_json(), "skipped": full.skipped})
    finally:
        db.close()
    report_clock = time.perf_counter()
    write_report(out, suite.as_dict(), cells, full.skipped, summary.as_json(), alpha=alpha, rope=rope)
    summary = replace(summary, report_seconds=round(time.perf_counter() - report_clock, 2))
    return RunResult(out, store_path, summary, cells, full.skipped)


def _python_call(name, path, add, drop):
    """How a notebook call is recorded when no command line is given."""
    options = "".join(f", add_resamplers={list(add)!r}" if add else "") + (f", drop_resamplers={list(drop)!r}" if drop else "")
    return f"lopsided.{name}({str(path)!r}{options})"


def _describe_and_prepare(datasets, described):
    """The driver's work while workers compute: the manifest's dataset part into ``described``, then the
    report's libraries (matplotlib, jinja2) imported and its templates compiled, which would otherwise
    follow the last unit (about 0.5 s, measured with bench/perf/backends.py)."""
    described.extend(describe(datasets))
    from .report import prepare
    prepare()


def describe(datasets):
    """Each dataset as the manifest describes it: meta-features, class overlap, checksum, source."""
    return [{"reference": ref, **data.meta(), **overlap(data), "checksum": data.checksum,
             "note": data.provenance.note, "source": data.provenance.source,
             "citation": data.provenance.citation, "licence": data.provenance.licence}
            for ref, data in datasets.items()]


def _summary(suite, described, full, cells, counts, origins):
    """The manifest: what ran, on what (``described``: see ``describe``), with which versions; the caller
    adds times and the command."""
    from .report import skipped_summary
    ok = int((cells["status"] == "ok").sum()) if len(cells) else 0
    return RunSummary(
        suite=suite.name, suite_fingerprint=suite.fingerprint, suite_file=suite.source, seed=suite.seed,
        versions=versions(), methods=origins,
        cells=CellTally(planned=counts.planned, ok=ok, failed=len(cells) - ok, missing=counts.planned - len(cells),
                        reused=counts.reused, computed=counts.computed, failed_now=counts.failed,
                        skipped_points=counts.skipped_points),
        skipped=skipped_summary(full.skipped), datasets=described)


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


def rebuild_report(target, out=None, alpha=0.05, rope=0.01, drop_resamplers=(), command=None):
    """Rebuild a leaderboard folder from stored cells: ``target`` is a suite file or a store.

    Nothing is refitted and no dataset is loaded or downloaded: the newest finished run of the suite
    (from a store alone: of any suite) recorded its plan's cell keys, its datasets' descriptions and
    times, and the report is rebuilt from those. A suite file must still describe that run (else: run
    it, stored cells are reused). Resamplers the suite gained stay in; ``drop_resamplers`` leaves
    added ones out from now on. The manifest records the rebuild beside the run that computed the cells.
    """
    target = Path(target)
    command = command or f"lopsided.rebuild_report({str(target)!r})"
    if target.suffix != ".toml":
        if out is not None:
            check_writable(out, "--out", str(out))
        return _rebuild(target, out, alpha, rope, drop_resamplers, command)
    base = load_suite(target)
    where = ("--out", str(out)) if out else (base.source, "out")
    out = Path(out or base.path(base.out) or Path("results") / base.name)
    check_writable(out, *where)
    store_path = Path(base.path(base.store) or out / "store.sqlite")
    if not store_path.is_file():
        raise StoreError(f"{store_path}: no result store for suite {base.name!r}; run it first")
    return _rebuild(store_path, out, alpha, rope, drop_resamplers, command, base)


def _rebuild(path, out, alpha, rope, drop, command, base=None):
    """The newest finished run in store ``path`` (of ``base``, a Suite, when given), as it was planned, less
    the resamplers dropped now or before."""
    db = Store(path, create=False)
    try:
        suite_dict, summary, keys = db.latest_run(base.name if base else None)
        ran = suite_from_dict(_as_raw(suite_dict), source=str(path))
        own = base or ran.without_resamplers({d["label"] for d, _, _ in db.added_methods(ran.name, "resamplers")})
        if base is not None:
            _refuse_changed(base, with_added_methods(own, db)[0], ran, path)
        kept, origins = with_added_methods(own, db, (), drop, command)
        suite = ran.without_resamplers({s.title for s in ran.resamplers} - {s.title for s in kept.resamplers})
        cells = db.cells(keys)
    finally:
        db.close()
    from .report import skipped_summary, write_report
    cells = cells[cells["resampler"].isin({s.canonical for s in suite.resamplers})].reset_index(drop=True)
    out = Path(out or Path("results") / suite.name)
    skipped = summary.get("skipped", [])           # the run stored its infeasible points one by one
    recorded = RunSummary.from_json(summary)
    ok = int((cells["status"] == "ok").sum()) if len(cells) else 0
    tally = replace(recorded.cells, planned=len(cells) + recorded.cells.missing, ok=ok, failed=len(cells) - ok)
    rebuilt = replace(recorded, cells=tally, skipped=skipped_summary(skipped), methods=origins,
                      rebuilt={"at": now(), "command": command})
    write_report(out, suite.as_dict(), cells, skipped, rebuilt.as_json(), alpha=alpha, rope=rope)
    return out


def _refuse_changed(base, current, ran, path):
    """A suite file must describe its newest stored run (less resamplers dropped since): a changed suite
    plans other cells, which only a run can compute."""
    dropped = {s.title for s in ran.resamplers} - {s.title for s in current.resamplers}
    if current.fingerprint != ran.without_resamplers(dropped).fingerprint:
        raise StoreError(f"{base.source}: the suite changed since its last run stored in {path}; run it to "
                         f"bring the leaderboard up to date (stored cells are reused): lopsided run {base.source}")


def _as_raw(suite_dict):
    """A stored suite dict back into suite-file shape."""
    raw = dict(suite_dict)
    for kind in ("resamplers", "learners", "preprocessing"):
        raw[kind] = [{"name": s["name"], "params": s["params"], "label": s["label"]} for s in raw[kind]]
    return raw
