"""Plan the cells of a suite, run them work unit by work unit, stream results into the store.

A work unit is one resampled training set: (dataset, protocol point, repeat, fold,
resampler). It is resampled once and every learner of the suite is fitted on that same
set. A cell is a work unit plus one learner; its key hashes its coordinates and the code
versions, and its seed derives from the coordinates alone, so adding a method never
changes another cell and stored cells are reused.
"""
import hashlib
import json
import os
import sys
import time
import threading
import traceback
import warnings
from concurrent.futures import ProcessPoolExecutor, as_completed
from dataclasses import dataclass, field
from multiprocessing import get_context

import numpy as np
from tqdm import tqdm

from . import __version__
from . import learners as learner_registry
from . import resamplers as resampler_registry
from .metrics import class_scores, score_cell
from .plugins import code_version
from . import preprocessing as preprocessing_registry
from .protocol import Infeasible, class_orders, derive_seed, fold_splits, point_counts, point_label, point_rows
from .resamplers.base import check_resampled
from .store import now

PROTOCOL_VERSION = 1   # bump when splitting or subsetting changes what a cell computes


@dataclass(frozen=True)
class Cell:
    learner: object     # MethodSpec
    key: str
    seed: int


@dataclass(frozen=True)
class WorkUnit:
    key: str
    coords: dict        # dataset, dataset_checksum, preprocessing, ratio, size, repeat, fold, resampler
    resampler: object   # MethodSpec
    seed: int
    train: np.ndarray
    test: np.ndarray
    cells: tuple


@dataclass
class Plan:
    units: list
    skipped: list = field(default_factory=list)

    @property
    def keys(self):
        return [cell.key for unit in self.units for cell in unit.cells]


def _hash(payload):
    return hashlib.sha256(json.dumps(payload, sort_keys=True, default=str).encode()).hexdigest()[:24]


def plan(suite, datasets, split="grouped"):
    """Every cell of ``suite`` over the loaded ``datasets`` ({reference: Dataset}) plus skipped points.

    ``split="random"`` plans the cells of the first protocol point with groups ignored (the leaky
    split, to measure how much it inflates scores); only datasets with groups take part.
    """
    versions = {
        "protocol": PROTOCOL_VERSION,
        "preprocessing": [code_version(preprocessing_registry.resolve(s.name)) for s in suite.preprocessing],
        "resampler": {s.canonical: code_version(resampler_registry.resolve(s.name)) for s in suite.resamplers},
        "learner": {s.canonical: code_version(learner_registry.resolve(s.name)) for s in suite.learners},
    }
    prep = [s.canonical for s in suite.preprocessing]
    result = Plan(units=[])
    protocol = suite.protocol
    for reference in suite.datasets:
        data = datasets[reference]
        if split == "random" and data.groups is None:
            continue
        for repeat in range(protocol.repeats):
            splits = fold_splits(data, protocol.folds, derive_seed(suite.seed, reference, "split", repeat),
                                 use_groups=split == "grouped", holdout=protocol.holdout)
            for fold, (train, test) in enumerate(splits):
                orders = class_orders(data.y, train, derive_seed(suite.seed, reference, "order", repeat, fold))
                available = {c: len(rows) for c, rows in orders.items()}
                for ratio, size in protocol.points if split == "grouped" else protocol.points[:1]:
                    where = {"dataset": reference, "ratio": point_label(ratio), "size": point_label(size),
                             "repeat": repeat, "fold": fold}
                    wanted = point_counts(available, data.minority, ratio, size, protocol.min_minority)
                    if isinstance(wanted, Infeasible):
                        result.skipped.append({**where, "reason": wanted.reason})
                        continue
                    rows = point_rows(orders, wanted)
                    for spec in suite.resamplers:
                        coords = {**where, "dataset_checksum": data.checksum, "folds": protocol.folds,
                                  "suite_seed": suite.seed, "preprocessing": prep, "resampler": spec.canonical}
                        if protocol.holdout is not None:
                            coords["holdout"] = protocol.holdout
                        if split != "grouped":
                            coords["split"] = split
                        code = {**versions, "resampler": versions["resampler"][spec.canonical]}
                        cells = tuple(
                            Cell(learner, _hash({**coords, "learner": learner.canonical,
                                                 "code": {**code, "learner": versions["learner"][learner.canonical]}}),
                                 derive_seed(coords, learner.canonical))
                            for learner in suite.learners)
                        result.units.append(WorkUnit(_hash({**coords, "code": code}), coords, spec,
                                                     derive_seed(coords), rows, test, cells))
    return result


def _error_text(exc):
    """One line: exception type and message (the traceback's last frame for context)."""
    frame = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
    where = f" [{os.path.basename(frame.filename)}:{frame.lineno}]" if frame else ""
    return f"{type(exc).__name__}: {exc}{where}"


def execute_unit(unit, data, preprocessing_specs):
    """Resample the unit's training rows once, fit and score every learner; one row per cell."""
    X_train, y_train = data.X[unit.train], data.y[unit.train]
    X_test, y_test = data.X[unit.test], data.y[unit.test]
    base = {**{k: unit.coords[k] for k in ("dataset", "dataset_checksum", "ratio", "size", "repeat", "fold")},
            "preprocessing": json.dumps(unit.coords["preprocessing"]), "resampler": unit.resampler.canonical,
            "unit_key": unit.key, "n_train": len(y_train), "n_test": len(y_test),
            "n_train_minority": int((y_train == data.minority).sum()), "code_version": __version__}
    stage = "preprocessing"
    try:
        pipeline = preprocessing_registry.make_preprocessing(preprocessing_specs, data.axis)
        if pipeline is not None:
            X_train, X_test = pipeline.fit_transform(X_train, y_train), pipeline.transform(X_test)
        stage = f"resampler {unit.resampler.title}"
        started = time.perf_counter()
        resampler = resampler_registry.make_resampler(unit.resampler, unit.seed)
        X_res, y_res = resampler.fit_resample(X_train.copy(), y_train.copy())
        X_res, y_res = check_resampled(unit.resampler.title, X_train, y_train, X_res, y_res)
        resample_seconds = time.perf_counter() - started
    except Exception as exc:
        error = f"{stage}: {_error_text(exc)}"
        return [{**base, "key": c.key, "learner": c.learner.canonical, "seed": c.seed, "status": "failed",
                 "error": error, "finished_at": now()} for c in unit.cells]
    base.update(n_resampled=len(y_res), resample_seconds=resample_seconds)
    weights = resampler.sample_weight(y_res) if hasattr(resampler, "sample_weight") else None
    return [_fit_one(cell, base, X_res, y_res, weights, X_test, y_test, data) for cell in unit.cells]


def _fit_one(cell, base, X_res, y_res, weights, X_test, y_test, data):
    row = {**base, "key": cell.key, "learner": cell.learner.canonical, "seed": cell.seed}
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            model = learner_registry.make_learner(cell.learner, cell.seed)
            started = time.perf_counter()
            model.fit(X_res, y_res, **learner_registry.weight_arguments(model, weights, cell.learner.title))
            fitted = time.perf_counter()
            predicted = np.asarray(model.predict(X_test)).astype(np.int64)
            scores = class_scores(model, X_test, len(data.classes))
            done = time.perf_counter()
            metrics = score_cell(y_test, predicted, scores, data.minority, data.classes)
        except Exception as exc:
            return {**row, "status": "failed", "error": f"learner {cell.learner.title}: {_error_text(exc)}",
                    "warning": _warning_text(caught), "finished_at": now()}
    return {**row, "status": "ok", "metrics": metrics, "fit_seconds": fitted - started,
            "predict_seconds": done - fitted, "warning": _warning_text(caught), "finished_at": now()}


def _warning_text(caught):
    """The first warning a cell raised (e.g. a solver that did not converge) and how many there were."""
    if not caught:
        return None
    first = caught[0]
    more = f" (+{len(caught) - 1} more)" if len(caught) > 1 else ""
    return f"{first.category.__name__}: {str(first.message).splitlines()[0]}{more}"


_WORKER = {}


def _start_worker(datasets, preprocessing_specs):
    from threadpoolctl import threadpool_limits
    threadpool_limits(1)    # one core per process: N processes, N cores
    _WORKER.update(datasets=datasets, preprocessing=preprocessing_specs)


def _work(unit):
    return execute_unit(unit, _WORKER["datasets"][unit.coords["dataset"]], _WORKER["preprocessing"])


def execute(units, datasets, preprocessing_specs, jobs, on_done):
    """Run ``units`` serially (jobs=1) or on ``jobs`` local processes; ``on_done(unit, rows)`` in this process."""
    if jobs == 1:
        for unit in units:
            on_done(unit, execute_unit(unit, datasets[unit.coords["dataset"]], preprocessing_specs))
        return
    context = get_context(_start_method())
    if context.get_start_method() == "forkserver":
        context.set_forkserver_preload(["lopsided.runner"])
    needed = {u.coords["dataset"] for u in units}
    with ProcessPoolExecutor(jobs, mp_context=context, initializer=_start_worker,
                             initargs=({k: v for k, v in datasets.items() if k in needed}, preprocessing_specs)) as pool:
        futures = {pool.submit(_work, unit): unit for unit in units}
        for future in as_completed(futures):
            on_done(futures[future], future.result())


def _start_method():
    """'fork' on Linux while this process runs no other Python thread (workers start in
    milliseconds, datasets are inherited, not pickled); else 'forkserver' (Linux) or 'spawn'."""
    if not sys.platform.startswith("linux"):
        return "spawn"
    return "fork" if threading.active_count() == 1 else "forkserver"


def pending(full_plan, stored):
    """Units trimmed to the cells not yet stored (units with nothing left are dropped)."""
    todo = []
    for unit in full_plan.units:
        cells = tuple(c for c in unit.cells if c.key not in stored)
        if cells:
            todo.append(WorkUnit(unit.key, unit.coords, unit.resampler, unit.seed, unit.train, unit.test, cells))
    return todo


class LogProgress:
    """Progress for logs (CI, files): one plain line every ``every`` seconds with counts and ETA."""

    def __init__(self, total, name, every=15.0, quiet=False):
        self.total, self.name, self.every, self.quiet = total, name, every, quiet
        self.done, self.started = 0, time.perf_counter()
        self.last, self.note = self.started, ""

    def update(self, n):
        self.done += n
        now_ = time.perf_counter()
        if not self.quiet and (now_ - self.last >= self.every or self.done == self.total):
            self.last = now_
            rate = self.done / max(now_ - self.started, 1e-9)
            eta = (self.total - self.done) / rate if rate > 0 else float("inf")
            print(f"{self.name}: {self.done}/{self.total} cells ({100 * self.done / max(self.total, 1):.0f}%), "
                  f"{rate:.1f} cells/s, ETA {eta / 60:.1f} min{self.note}", file=sys.stderr, flush=True)

    def set_postfix(self, failed, refresh=False):
        self.note = f", {failed} failed" if failed else ""

    def close(self):
        pass


def run_plan(full_plan, datasets, suite, store, jobs=1, retry_failed=False, progress=True):
    """Compute what is missing from ``store``; return counts {planned, reused, computed, failed, skipped}."""
    stored = store.known_keys(full_plan.keys, include_failed=not retry_failed)
    todo = pending(full_plan, stored)
    counts = {"planned": len(full_plan.keys), "reused": len(stored), "computed": 0, "failed": 0,
              "skipped_points": len(full_plan.skipped)}
    total = sum(len(u.cells) for u in todo)
    if progress and sys.stderr.isatty():
        bar = tqdm(total=total, unit="cell", desc=suite.name, mininterval=0.5, file=sys.stderr, dynamic_ncols=True)
    else:
        bar = LogProgress(total, suite.name, quiet=not progress)

    def on_done(unit, rows):
        store.write_unit(rows)
        counts["computed"] += len(rows)
        counts["failed"] += sum(r["status"] == "failed" for r in rows)
        bar.update(len(rows))
        bar.set_postfix(failed=counts["failed"], refresh=False)

    try:
        execute(todo, datasets, suite.preprocessing, jobs, on_done)
    finally:
        bar.close()
    return counts
