"""The driver's side of a run: hand the pending units to a backend, check the versions each result was
computed with, stream finished units into the store in batches, show progress, and stop cleanly on
SIGINT / SIGTERM (queued units cancelled, running ones abandoned, every finished cell kept).
"""
import signal
import sys
import threading
import time
from contextlib import contextmanager, nullcontext
from itertools import islice

from threadpoolctl import threadpool_limits
from tqdm import tqdm

from ..errors import Interrupted
from ..options import ExecutionOptions
from ..planning.plan import pending
from ..records import RunCounts
from .backends import BackendError, Lost, choose, open_backend
from .units import lost_rows, run_unit

BATCH_CELLS = 500      # the driver writes finished units once this many cells wait ...
BATCH_SECONDS = 0.5    # ... or this long after its last write, whichever comes first


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


def run_plan(full_plan, datasets, suite, store, options=ExecutionOptions(), beside=None):
    """Compute what is missing from ``store`` as ``options`` (ExecutionOptions) say: on which backend (see
    ``backends``), how many units at once, each unit's time limit (default: the suite's ``protocol.timeout``),
    failed cells again or not, with progress or not; return RunCounts.

    ``beside`` is work of the caller's that needs no cell (e.g. describing the datasets): while units run in
    other processes it runs in a thread of this otherwise waiting one, else after the units. Raises
    Interrupted after SIGINT / SIGTERM.
    """
    stored = store.known_keys(full_plan.keys, include_failed=not options.retry_failed)
    todo = pending(full_plan, stored)
    planned, computed, failed = len(full_plan.keys), 0, 0
    if not todo:
        _Beside(beside).join()
        return RunCounts(planned, len(stored), skipped_points=len(full_plan.skipped))
    needed = {unit.coords.dataset for unit in todo}
    timeout = options.timeout or suite.protocol.timeout
    name = choose(options.backend, options.jobs, options.scheduler)
    helper = _Beside(beside, threaded=name != "serial")
    if name == "dask":        # its workers start from a fork server, not from this process: start beside them
        helper.start()
    with _Signals() as signals:
        try:
            workers = open_backend(name, run_unit, {ref: datasets[ref] for ref in needed},
                                   (tuple(suite.preprocessing), timeout), options.jobs, options.scheduler, timeout)
        except BaseException:
            helper.wait()
            raise
        helper.start()        # after the processes backend forked this process, which then ran no other thread
        total = sum(len(u.cells) for u in todo)
        if options.progress and sys.stderr.isatty():
            bar = tqdm(total=total, unit="cell", desc=suite.name, mininterval=0.5, file=sys.stderr,
                       dynamic_ncols=True)
        else:
            bar = LogProgress(total, suite.name, quiet=not options.progress)
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

