"""The dask backend: units run on a Dask cluster (Rocklin 2015, "Dask: parallel computation with
blocked algorithms and task scheduling"), local or remote.

Without a scheduler address, a LocalCluster of ``jobs`` worker processes with one thread each starts
on 127.0.0.1 (no dashboard; its small HTTP server on a free loopback port) and stops with the run. Its
own log stays quiet below CRITICAL: what matters to a run (a failed task, a lost worker) comes back
through the tasks' results, and a run stopped mid-way would otherwise end with workers' complaints
about the scheduler they lost.
With one, the running cluster is used as it is: its workers need lopsided and the suite's plugins at
the driver's versions (each result names the versions its worker ran; the runner refuses a mismatch).
Each dataset is scattered to every worker once, when the backend opens; a task carries only the
coordinates of its units (a few at a time once their duration is known, so that Dask's own cost per
task stays small). A worker lost mid-run only causes its tasks' units to run again elsewhere (Dask
reschedules them; a task that takes down more than ``allowed-failures`` workers fails the run).
"""
import importlib.util
import logging
import math
import multiprocessing
import multiprocessing.forkserver
import time
from queue import Empty, SimpleQueue

from . import BackendError
from .worker import THREAD_VARIABLES

CONNECT_SECONDS = 10
CLOSE_SECONDS = 10
INSTALL = "pip install 'lopsided[dask]'"
# Dask's own cost per task (scheduling, messages) is about a millisecond on a quiet machine (Dask
# documentation, from memory); we measured 30 ms on a busy 2-core one. So units go in groups of about
# TASK_SECONDS of work (at most MAX_GROUP), sized from the units' measured times.
TASK_SECONDS = 0.5
MAX_GROUP = 16
# Workers we start do not sample their own stacks every 10 ms (Dask's built-in profiler, for its
# dashboard, which we do not start): on a busy core it competes with the unit for the GIL.
QUIET_WORKERS = {"distributed.worker.profile.enabled": False}
FORK_SERVER_MODULES = ("distributed", "lopsided.execution.units", "lopsided.report")


def start_fork_server(*modules):
    """Start the fork server a local cluster's workers fork from, with Dask, the runner, the report and
    ``modules`` imported in it once, instead of in each worker. Called early (before ``lopsided run``
    imports scikit-learn), it imports them on another core while this process imports its own, which
    took most of a local cluster's start. The report's local pool forks from it too while Dask's threads
    run in this process. Does nothing without the 'forkserver' start method or without Dask."""
    if "forkserver" not in multiprocessing.get_all_start_methods() or importlib.util.find_spec("distributed") is None:
        return
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload(list(dict.fromkeys([*FORK_SERVER_MODULES, *modules])))
    multiprocessing.forkserver.ensure_running()


def _local_cluster(dask, distributed, jobs, task):
    """A LocalCluster of ``jobs`` single-threaded worker processes on 127.0.0.1, no dashboard. Where the
    platform has the 'forkserver' start method, workers fork from one server (``start_fork_server``)."""
    settings: dict[str, object] = dict(QUIET_WORKERS)
    forkserver = "forkserver" in multiprocessing.get_all_start_methods()
    if forkserver:
        settings["distributed.worker.multiprocessing-method"] = "forkserver"
    with dask.config.set(settings):
        if forkserver:     # after Dask set its own preload list (once per process), so that ours stands
            distributed.utils.get_mp_context()
            start_fork_server(task.__module__)
        return distributed.LocalCluster(
            n_workers=jobs, threads_per_worker=1, processes=True, host="127.0.0.1", silence_logs=logging.CRITICAL,
            env=THREAD_VARIABLES, scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"})


def _run_group(task, group, datasets, *shared):
    """One Dask task: several units, one after the other; [(seconds, result)] in their order."""
    timed = []
    for unit, ref in group:
        started = time.perf_counter()
        result = task(unit, datasets[ref], *shared)
        timed.append((time.perf_counter() - started, result))
    return timed


class DaskCluster:
    def __init__(self, task, datasets, shared, jobs, scheduler):
        try:
            import dask
            import distributed
        except ImportError:
            raise BackendError(f"--backend dask: Dask's distributed scheduler is not installed; "
                               f"install it with: {INSTALL}") from None
        self._dask = distributed
        self._task, self._shared = task, tuple(shared)
        self._cluster = None
        if scheduler is None:
            try:
                self._cluster = _local_cluster(dask, distributed, jobs, task)
            except (OSError, RuntimeError) as exc:
                raise BackendError(f"--backend dask: the local cluster did not start ({exc}); a script that runs a "
                                   "suite needs the guard: if __name__ == '__main__':") from None
        try:
            self._client = distributed.Client(self._cluster or scheduler, timeout=CONNECT_SECONDS,
                                              set_as_default=False)
        except (OSError, ValueError, TimeoutError) as exc:
            if self._cluster is not None:
                self._cluster.close(timeout=CLOSE_SECONDS)
                raise BackendError(f"--backend dask: the local cluster did not answer ({exc})") from None
            raise BackendError(f"--scheduler {scheduler}: no Dask scheduler answers there ({exc}); start one "
                               "with: dask scheduler --host HOST --port PORT") from None
        self._scattered = {ref: self._client.scatter(data, broadcast=True, hash=False)
                           for ref, data in datasets.items()}
        self._running = {}             # future -> [(unit, ref)] it runs
        self._group = []               # (unit, ref) waiting to be sent as one task
        self._done: SimpleQueue = SimpleQueue()  # futures, put by Dask's callback thread as they finish
        self._threads, self._threads_read = 1, float("-inf")
        self._unit_seconds = None      # running mean of a unit's time on a worker

    @property
    def slots(self):
        """Units that can run at once: threads across the workers (re-read every few seconds, as workers
        may come and go) times the units per task."""
        if time.monotonic() - self._threads_read > 5:
            self._threads = max(1, sum(self._client.nthreads().values()))
            self._threads_read = time.monotonic()
        return self._threads * self._group_size()

    def _group_size(self):
        """Units per task: 1 until a unit's time is known, then about TASK_SECONDS of work per task."""
        if self._unit_seconds is None:
            return 1
        return max(1, min(MAX_GROUP, math.ceil(TASK_SECONDS / max(self._unit_seconds, 1e-3))))

    def submit(self, unit, ref):
        self._group.append((unit, ref))
        if len(self._group) >= self._group_size():
            self._send()

    def _send(self):
        group, self._group = self._group, []
        datasets = {ref: self._scattered[ref] for _, ref in group}
        future = self._client.submit(_run_group, self._task, group, datasets, *self._shared, pure=False)
        self._running[future] = group
        future.add_done_callback(self._done.put)

    def finished(self, timeout):
        if self._group:                # a part-filled task goes now: nothing may wait for more units
            self._send()
        try:
            done = [self._done.get(timeout=timeout)]
        except Empty:
            return []
        while not self._done.empty():
            done.append(self._done.get_nowait())
        done = [future for future in done if future in self._running]
        for future in done:
            if future.status != "finished":
                self._fail(self._running[future], future)
        results = []
        for future, timed in zip(done, self._client.gather(done)):
            for (unit, _), (seconds, result) in zip(self._running.pop(future), timed):
                self._unit_seconds = seconds if self._unit_seconds is None else 0.9 * self._unit_seconds + 0.1 * seconds
                results.append((unit, result))
        return results

    def _fail(self, group, future):
        unit = group[0][0] if len(group) == 1 else f"{group[0][0]} (and {len(group) - 1} more units in its task)"
        exc = future.exception() if future.status == "error" else None
        if isinstance(exc, self._dask.KilledWorker):
            raise BackendError(f"{unit}: every Dask worker that ran it ended ({exc}); does it need more memory "
                               "than a worker has?")
        what = "failed" if future.status == "error" else f"was {future.status}"
        raise BackendError(f"{unit}: the Dask task {what} outside lopsided's own error handling"
                           + (f" ({type(exc).__name__}: {exc})" if exc else "")
                           + "; every worker needs lopsided and the suite's plugins, at the driver's versions")

    def cancel(self):
        """Forget every unit not yet finished (Dask cannot tell queued from running ones: results of
        running ones are discarded)."""
        cancelled = list(self._running)
        if cancelled:
            self._client.cancel(cancelled)
        units = len(self._group) + sum(len(group) for group in self._running.values())
        self._running.clear()
        self._group = []
        return units

    def close(self):
        self.cancel()
        self._client.close(timeout=CLOSE_SECONDS)
        if self._cluster is not None:
            self._cluster.close(timeout=CLOSE_SECONDS)
