"""Plan the cells of a suite, run them work unit by work unit on a backend, stream results into the store.

A work unit is one resampled training set: (dataset, protocol point, repeat, fold,
resampler). It is resampled once and every learner of the suite is fitted on that same
set. A cell is a work unit plus one learner; its key hashes its coordinates and the code
versions, and its seed derives from the coordinates alone, so adding a method never
changes another cell and stored cells are reused.

Units run on a backend (``backends``: serial, processes, dask); results stream back to this
process, which alone writes the store, in batches of whole units. SIGINT and SIGTERM stop a run
cleanly: queued units are cancelled, running ones abandoned, every finished cell is kept.
"""
import hashlib
import json
import os
import signal
import sys
import threading
import time
import traceback
from contextlib import contextmanager, nullcontext
from dataclasses import dataclass, field
from functools import lru_cache
from itertools import islice

import numpy as np
import sklearn
from threadpoolctl import threadpool_limits
from tqdm import tqdm

from . import __version__
from . import learners as learner_registry
from . import preprocessing as preprocessing_registry
from . import resamplers as resampler_registry
from .backends import BackendError, Lost, choose, open_backend
from .backends.containment import UnitTimeout, captured_output, time_limit
from .backends.worker import captured_warnings, limit_threads, one_job
from .errors import LopsidedError
from .metrics import predictions_and_scores, score_cell
from .plugins import code_version
from .protocol import Infeasible, class_orders, derive_seed, point_counts, point_rows, repeat_splits
from .records import CellRow, Coordinates, Point, RunCounts
from .resamplers.base import all_finite, check_resampled
from .store import now

PROTOCOL_VERSION = 1   # bump when splitting or subsetting changes what a cell computes
BATCH_CELLS = 500      # the driver writes finished units once this many cells wait ...
BATCH_SECONDS = 0.5    # ... or this long after its last write, whichever comes first


@dataclass(frozen=True)
class Cell:
    learner: object     # MethodSpec
    key: str
    seed: int
    code: str           # the learner's code version, as planned (part of the key)


@dataclass(frozen=True)
class WorkUnit:
    key: str
    coords: Coordinates
    resampler: object   # MethodSpec
    seed: int
    train: np.ndarray
    test: np.ndarray
    cells: tuple
    code: dict          # protocol, preprocessing and resampler code versions, as planned (part of the keys)

    def __str__(self):
        return f"{self.coords}, resampler {self.resampler.title}"

    def planned_versions(self):
        """The code versions the plan and the cell keys assume, shaped as ``worker_versions`` returns them."""
        return {**self.code, "learner": {c.learner.canonical: c.code for c in self.cells}}


@dataclass
class Plan:
    units: list
    skipped: list = field(default_factory=list)

    @property
    def keys(self):
        return [cell.key for unit in self.units for cell in unit.cells]


@dataclass(frozen=True)
class Outcome:
    """What a worker sends back for one unit: its rows and the code versions it ran."""
    rows: list
    versions: dict      # protocol, preprocessing (list), resampler, learner ({canonical: version})


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
    prep = tuple(s.canonical for s in suite.preprocessing)
    result = Plan(units=[])
    protocol = suite.protocol
    for reference in suite.datasets:
        data = datasets[reference]
        if split == "random" and data.groups is None:
            continue
        for repeat in range(protocol.repeats):
            splits = repeat_splits(data, protocol, derive_seed(suite.seed, reference, "split", repeat),
                                   derive_seed(suite.seed, reference, "split"), use_groups=split == "grouped")
            for fold, (train, test) in enumerate(splits):
                orders = class_orders(data.y, train, derive_seed(suite.seed, reference, "order", repeat, fold))
                available = {c: len(rows) for c, rows in orders.items()}
                for ratio, size in protocol.points if split == "grouped" else protocol.points[:1]:
                    point = Point(ratio, size)
                    wanted = point_counts(available, data.minority, ratio, size, protocol.min_minority)
                    if isinstance(wanted, Infeasible):
                        result.skipped.append({"dataset": reference, "ratio": point.ratio_label,
                                               "size": point.size_label, "repeat": repeat, "fold": fold,
                                               "reason": wanted.reason})
                        continue
                    rows = point_rows(orders, wanted)
                    for spec in suite.resamplers:
                        coords = Coordinates(reference, data.checksum, suite.seed, protocol.folds, point, repeat, fold,
                                             prep, spec.canonical, protocol.holdout, protocol.test, split)
                        where = coords.payload()
                        code = {**versions, "resampler": versions["resampler"][spec.canonical]}
                        cells = tuple(
                            Cell(learner, _hash({**where, "learner": learner.canonical,
                                                 "code": {**code, "learner": versions["learner"][learner.canonical]}}),
                                 derive_seed(where, learner.canonical), versions["learner"][learner.canonical])
                            for learner in suite.learners)
                        unit_code = {k: code[k] for k in ("protocol", "preprocessing", "resampler")}
                        result.units.append(WorkUnit(_hash({**where, "code": code}), coords, spec,
                                                     derive_seed(where), rows, test, cells, unit_code))
    return result


@lru_cache(maxsize=None)
def _version_of(factory):
    """code_version, once per resolved object and process (a reloaded module gives new objects)."""
    return code_version(factory)


def worker_versions(unit, preprocessing_specs):
    """The code versions of the unit's methods as resolved by the process that runs it."""
    return {"protocol": PROTOCOL_VERSION,
            "preprocessing": [_version_of(preprocessing_registry.resolve(s.name)) for s in preprocessing_specs],
            "resampler": _version_of(resampler_registry.resolve(unit.resampler.name)),
            "learner": {c.learner.canonical: _version_of(learner_registry.resolve(c.learner.name))
                        for c in unit.cells}}


def run_unit(unit, data, preprocessing_specs, timeout=None):
    """A worker's part for one unit, on every backend: BLAS / OpenMP limited to one thread, the code
    versions of the methods as this worker resolves them, then the unit's rows, within ``timeout``
    seconds (None: no limit)."""
    limit_threads()
    ran = worker_versions(unit, preprocessing_specs)
    try:
        with time_limit(timeout):
            rows = execute_unit(unit, data, preprocessing_specs, ran, timeout)
    except UnitTimeout:          # the limit struck between two stages
        rows = failed_rows(unit, _code_versions(unit, ran), _over_time(timeout), _basics(unit, data))
    return Outcome(rows, ran)


def _error_text(exc, timeout=None):
    """One line: what went wrong (exception type and message, the traceback's last frame for context)."""
    if isinstance(exc, UnitTimeout):
        return _over_time(timeout)
    if isinstance(exc, SystemExit):
        return f"called sys.exit({exc.code!r}); lopsided kept running"
    frame = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
    where = f" [{os.path.basename(frame.filename)}:{frame.lineno}]" if frame else ""
    return f"{type(exc).__name__}: {exc}{where}"


def _over_time(timeout):
    return f"stopped: the unit ran past its time limit of {timeout:g} s (protocol.timeout or --timeout)"


def _basics(unit, data):
    """The columns every row of a unit shares, as planned."""
    c = unit.coords
    return {"dataset": c.dataset, "dataset_checksum": c.dataset_checksum, "ratio": c.point.ratio_label,
            "size": c.point.size_label, "repeat": c.repeat, "fold": c.fold,
            "preprocessing": json.dumps(list(c.preprocessing)), "resampler": unit.resampler.canonical,
            "unit_key": unit.key, "n_train": len(unit.train), "n_test": len(unit.test),
            "n_train_minority": None if data is None else int((data.y[unit.train] == data.minority).sum())}


def _code_versions(unit, versions):
    """{cell key: the code_version text stored with it}."""
    code = {"lopsided": __version__, **{k: versions[k] for k in ("protocol", "preprocessing", "resampler")}}
    return {c.key: json.dumps({**code, "learner": versions["learner"][c.learner.canonical]}, sort_keys=True,
                              separators=(",", ":"))
            for c in unit.cells}


def failed_rows(unit, code_versions, error, base, cells=None, warning=None):
    """Rows of ``cells`` (default: all the unit's) stored as failed with ``error``."""
    return [CellRow(**base, key=c.key, learner=c.learner.canonical, seed=c.seed, code_version=code_versions[c.key],
                    status="failed", error=error, warning=warning, finished_at=now())
            for c in (unit.cells if cells is None else cells)]


def lost_rows(unit, reason):
    """Rows of a unit its backend lost (its worker died or was stopped), with the code versions planned."""
    return failed_rows(unit, _code_versions(unit, unit.planned_versions()), reason, _basics(unit, None))


def execute_unit(unit, data, preprocessing_specs, versions, timeout=None):
    """Resample the unit's training rows once, fit and score every learner; one row per cell.

    ``versions`` (from ``worker_versions``) is stored with each cell as the code it ran. A stage that
    raises, calls sys.exit or runs out of time fails its cells (after a resampler: all of them; after
    a learner: its own and, out of time, the ones not yet run); what a stage prints is kept off the
    terminal and noted in the rows' warning, as is a resampler that changed its input arrays in place.
    """
    X_train, y_train = data.X[unit.train], data.y[unit.train]
    X_test, y_test = data.X[unit.test], data.y[unit.test]
    base = _basics(unit, data)
    ran = _code_versions(unit, versions)
    stage = "preprocessing"
    with captured_output() as printed:
        try:
            pipeline = preprocessing_registry.make_preprocessing(preprocessing_specs, data.axis)
            if pipeline is not None:
                X_train, X_test = pipeline.fit_transform(X_train, y_train), pipeline.transform(X_test)
            stage = f"resampler {unit.resampler.title}"
            started = time.perf_counter()
            resampler = one_job(resampler_registry.make_resampler(unit.resampler, unit.seed))
            X_given, y_given = X_train.copy(), y_train.copy()
            X_res, y_res = resampler.fit_resample(X_given, y_given)
            X_res, y_res = check_resampled(unit.resampler.title, X_train, y_train, X_res, y_res)
            resample_seconds = time.perf_counter() - started
        except (Exception, SystemExit, UnitTimeout) as exc:
            return failed_rows(unit, ran, f"{stage}: {_error_text(exc, timeout)}", base,
                               warning=printed.summary(stage))
    mutated = not (np.array_equal(X_given, X_train, equal_nan=True) and np.array_equal(y_given, y_train))
    notes = [printed.summary(stage),
             f"{stage} changed its input arrays in place (it was given copies: no effect on the results)" if mutated
             else None]
    base.update(n_resampled=len(y_res), resample_seconds=resample_seconds)
    weights = resampler.sample_weight(y_res) if hasattr(resampler, "sample_weight") else None
    # learners skip their own finite checks (in every fit and predict; a forest's in every tree) when the
    # test part is finite: the resampler output rules already proved the training part so. They skip
    # scikit-learn's parameter validation too: _fit_one checks every estimator's parameters once per cell.
    checked = all_finite(X_test)
    rows = []
    for position, cell in enumerate(unit.cells):
        try:
            with sklearn.config_context(assume_finite=checked, skip_parameter_validation=True):
                rows.append(_fit_one(cell, {**base, "code_version": ran[cell.key]}, X_res, y_res, weights, X_test,
                                     y_test, data, notes))
        except UnitTimeout:
            rows += failed_rows(unit, ran, f"learner {cell.learner.title}: {_over_time(timeout)}", base, [cell])
            rows += failed_rows(unit, ran, f"not run: the unit's time limit of {timeout:g} s ran out during learner "
                                f"{cell.learner.title}", base, unit.cells[position + 1:])
            break
    return rows


def _fit_one(cell, base, X_res, y_res, weights, X_test, y_test, data, notes):
    row = {**base, "key": cell.key, "learner": cell.learner.canonical, "seed": cell.seed}
    stage = f"learner {cell.learner.title}"
    with captured_warnings() as caught, captured_output() as printed:
        try:
            model = one_job(learner_registry.make_learner(cell.learner, cell.seed))
            learner_registry.check_parameters(model)
            started = time.perf_counter()
            model.fit(X_res, y_res, **learner_registry.weight_arguments(model, weights, cell.learner.title))
            fitted = time.perf_counter()
            predicted, scores = predictions_and_scores(model, X_test, len(data.classes))
            done = time.perf_counter()
            metrics = score_cell(y_test, predicted, scores, data.minority, data.classes)
        except (Exception, SystemExit) as exc:
            return CellRow(**row, status="failed", error=f"{stage}: {_error_text(exc)}",
                           warning=_warning_text(caught, notes, printed.summary(stage)), finished_at=now())
    return CellRow(**row, status="ok", metrics=json.dumps(metrics), fit_seconds=fitted - started,
                   predict_seconds=done - fitted, warning=_warning_text(caught, notes, printed.summary(stage)),
                   finished_at=now())


def _warning_text(caught, notes=(), printed=None):
    """The first warning a cell raised (e.g. a solver that did not converge) and how many there were,
    then any notes about the unit's methods (output printed, input changed), joined by '; '."""
    parts = [note for note in (*notes, printed) if note]
    if caught:
        category, message = caught[0]
        more = f" (+{len(caught) - 1} more)" if len(caught) > 1 else ""
        parts.insert(0, f"{category.__name__}: {str(message).splitlines()[0]}{more}")
    return "; ".join(parts) or None


def execute(units, backend, stoppable=nullcontext):
    """Hand ``units`` to ``backend`` and yield, step by step, the [(unit, Outcome)] finished since the
    last step (possibly none: the caller regains control at least every BATCH_SECONDS). The backend
    holds a few more units than it has slots, so no worker waits for the driver and little is queued
    when a run stops; on leaving (done, an error, a signal) every queued unit is cancelled. Only the
    wait for results runs inside ``stoppable()``, where a signal may cut in."""
    queue = iter(units)
    waiting = 0
    try:
        while True:
            for unit in islice(queue, max(0, 2 * backend.slots + 2 - waiting)):
                backend.submit(unit, unit.coords.dataset)
                waiting += 1
            if not waiting:
                return
            with stoppable():
                done = backend.finished(BATCH_SECONDS)
            waiting -= len(done)
            yield done
    finally:
        backend.cancel()


def check_versions(unit, ran):
    """Refuse a result whose worker ran other code than the plan (and so the cell keys) assumed."""
    for (what, want), (_, got) in zip(_labelled(unit, unit.planned_versions()), _labelled(unit, ran)):
        if want != got:
            raise BackendError(f"{unit}: {what}: the worker ran {got!r}, but the plan and its cell keys use "
                               f"{want!r}; install the same versions of lopsided and the suite's plugins on the "
                               "driver and every worker, then run again")


def _labelled(unit, versions):
    yield "protocol", versions["protocol"]
    yield from ((f"preprocessing step {name}", version)
                for name, version in zip(unit.coords.preprocessing, versions["preprocessing"]))
    yield f"resampler {unit.resampler.title}", versions["resampler"]
    yield from ((f"learner {c.learner.title}", versions["learner"][c.learner.canonical]) for c in unit.cells)


def pending(full_plan, stored):
    """Units trimmed to the cells not yet stored (units with nothing left are dropped)."""
    todo = []
    for unit in full_plan.units:
        cells = tuple(c for c in unit.cells if c.key not in stored)
        if cells:
            todo.append(WorkUnit(unit.key, unit.coords, unit.resampler, unit.seed, unit.train, unit.test, cells,
                                 unit.code))
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


class Stopped(BaseException):
    """SIGINT or SIGTERM arrived while the runner could stop (a BaseException, so that no unit's own
    ``except Exception`` takes it for a failure of the unit)."""


class Interrupted(LopsidedError):
    """A run stopped by SIGINT or SIGTERM; every finished cell is in the store. ``exit_code`` is the
    shell's convention for a process ended by that signal: 128 + its number (130, 143)."""

    def __init__(self, message, signal_name):
        super().__init__(message)
        self.exit_code = 128 + signal.Signals[signal_name].value


class _Signals:
    """While installed (main thread only), SIGINT and SIGTERM raise Stopped inside ``stoppable()``
    blocks and are remembered elsewhere, to be raised at the next ``stoppable()``: starting and
    stopping workers and writing the store are never cut short. Previous handlers come back on exit."""

    def __init__(self):
        self.received, self.armed, self.previous = None, False, {}

    def __enter__(self):
        if threading.current_thread() is threading.main_thread():
            self.previous = {s: signal.signal(s, self._handle) for s in (signal.SIGINT, signal.SIGTERM)}
        return self

    def __exit__(self, *exc):
        for number, handler in self.previous.items():
            signal.signal(number, handler)

    def _handle(self, number, frame):
        self.received = self.received or signal.Signals(number).name
        if self.armed:
            self.armed = False
            raise Stopped(self.received)

    @contextmanager
    def stoppable(self):
        if self.received:
            raise Stopped(self.received)
        self.armed = True
        try:
            yield
        finally:
            self.armed = False


class _Beside:
    """``work()`` in a thread of its own once started, with BLAS / OpenMP at one thread (the cores belong
    to the workers); unthreaded (a serial run), ``join`` does it in this one. ``join`` waits for it and
    re-raises what it raised; ``wait`` only waits."""

    def __init__(self, work, threaded=False):
        self.work, self.threaded, self.error, self.thread = work, threaded, None, None

    def start(self):
        if self.threaded and self.work is not None and self.thread is None:
            self.thread = threading.Thread(target=self._run, name="lopsided-beside", daemon=True)
            self.thread.start()

    def _run(self):
        try:
            with threadpool_limits(1):
                self.work()
        except BaseException as exc:       # handed to the thread that joins
            self.error = exc

    def wait(self):
        """Wait for a started thread however the run ends: the interpreter's exit, while a thread is still
        inside compiled code (scipy's C++), aborted the process with exit code 134 after a failed run."""
        if self.thread is not None:
            self.thread.join()

    def join(self):
        if not self.threaded:
            if self.work is not None:
                self.work()
            return
        self.wait()
        if self.error is not None:
            raise self.error


class _Batch:
    """Rows of whole finished units, written in one transaction when BATCH_CELLS wait or BATCH_SECONDS
    have passed since the last write (and once more however the run ends)."""

    def __init__(self, store):
        self.store, self.rows, self.since = store, [], time.monotonic()

    def add(self, rows):
        self.rows.extend(rows)

    def due(self):
        return len(self.rows) >= BATCH_CELLS or time.monotonic() - self.since >= BATCH_SECONDS

    def write(self):
        if self.rows:
            self.store.write_cells(self.rows)
            self.rows = []
        self.since = time.monotonic()


def run_plan(full_plan, datasets, suite, store, jobs=1, retry_failed=False, progress=True, backend="auto",
             scheduler=None, timeout=None, beside=None):
    """Compute what is missing from ``store`` on ``backend`` (see ``backends``); return RunCounts.

    ``timeout`` (default: the suite's ``protocol.timeout``) limits each unit's seconds. ``beside`` is
    work of the caller's that needs no cell (e.g. describing the datasets): while units run in other
    processes it runs in a thread of this otherwise waiting one, else after the units. Raises
    Interrupted after SIGINT / SIGTERM.
    """
    stored = store.known_keys(full_plan.keys, include_failed=not retry_failed)
    todo = pending(full_plan, stored)
    planned, computed, failed = len(full_plan.keys), 0, 0
    if not todo:
        _Beside(beside).join()
        return RunCounts(planned, len(stored), skipped_points=len(full_plan.skipped))
    needed = {unit.coords.dataset for unit in todo}
    timeout = timeout or suite.protocol.timeout
    name = choose(backend, jobs, scheduler)
    helper = _Beside(beside, threaded=name != "serial")
    if name == "dask":        # its workers start from a fork server, not from this process: start beside them
        helper.start()
    with _Signals() as signals:
        try:
            workers = open_backend(name, run_unit, {ref: datasets[ref] for ref in needed},
                                   (tuple(suite.preprocessing), timeout), jobs, scheduler, timeout)
        except BaseException:
            helper.wait()
            raise
        helper.start()        # after the processes backend forked this process, which then ran no other thread
        total = sum(len(u.cells) for u in todo)
        if progress and sys.stderr.isatty():
            bar = tqdm(total=total, unit="cell", desc=suite.name, mininterval=0.5, file=sys.stderr,
                       dynamic_ncols=True)
        else:
            bar = LogProgress(total, suite.name, quiet=not progress)
        batch = _Batch(store)
        try:
            for done in execute(todo, workers, signals.stoppable):
                for unit, outcome in done:
                    if isinstance(outcome, Lost):
                        rows = lost_rows(unit, outcome.reason)
                    else:
                        check_versions(unit, outcome.versions)
                        rows = outcome.rows
                    batch.add(rows)
                    computed += len(rows)
                    failed += sum(row.status == "failed" for row in rows)
                    bar.update(len(rows))
                    bar.set_postfix(failed=failed, refresh=False)
                if batch.due():
                    batch.write()
        except Stopped:
            pass
        finally:
            batch.write()
            workers.close()
            bar.close()
            helper.wait()
        helper.join()
    if signals.received:
        kept = len(store.known_keys(full_plan.keys))
        raise Interrupted(f"stopped by {signals.received}: {kept} of {planned} planned cells are kept in "
                          f"{store.path} ({computed} computed now); run the same command again to "
                          f"compute the other {planned - kept}", signals.received)
    return RunCounts(planned, len(stored), computed, failed, len(full_plan.skipped))
