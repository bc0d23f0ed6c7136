"""The dask backend: units run on a Dask cluster (Rocklin 2015, "Dask: parallel computation with
blocked algorithms and task scheduling"), local or remote.

Without a scheduler address, a LocalCluster of ``jobs`` worker processes with one thread each starts
on 127.0.0.1 (no dashboard; its small HTTP server on a free loopback port) and stops with the run.
With one, the running cluster is used as it is: its workers need lopsided and the suite's plugins at
the driver's versions (each result names the versions its worker ran; the runner refuses a mismatch).
Each dataset is scattered to every worker once, when the backend opens; a task carries only its unit's
coordinates. A worker lost mid-run only causes its units to run again elsewhere (Dask reschedules
them; a unit that takes down more than ``allowed-failures`` workers fails the run).
"""
import logging
import multiprocessing
import time
from queue import Empty, SimpleQueue

from . import BackendError
from .worker import THREAD_VARIABLES

CONNECT_SECONDS = 10
CLOSE_SECONDS = 10
INSTALL = "pip install 'lopsided[dask]'"
# Workers we start do not sample their own stacks every 10 ms (Dask's built-in profiler, for its
# dashboard, which we do not start): on a busy core it competes with the unit for the GIL.
QUIET_WORKERS = {"distributed.worker.profile.enabled": False}


def _local_cluster(dask, distributed, jobs, task):
    """A LocalCluster of ``jobs`` single-threaded worker processes on 127.0.0.1, no dashboard. Where the
    platform has the 'forkserver' start method, workers fork from one server process that imported Dask
    and the task's module (scikit-learn, ...) once, instead of each importing everything anew."""
    settings = dict(QUIET_WORKERS)
    forkserver = "forkserver" in multiprocessing.get_all_start_methods()
    if forkserver:
        settings["distributed.worker.multiprocessing-method"] = "forkserver"
    with dask.config.set(settings):
        if forkserver:     # after Dask set its own preload list (once per process), so that ours stands
            distributed.utils.get_mp_context().set_forkserver_preload(["distributed", task.__module__])
        return distributed.LocalCluster(
            n_workers=jobs, threads_per_worker=1, processes=True, host="127.0.0.1", silence_logs=logging.ERROR,
            env=THREAD_VARIABLES, scheduler_kwargs={"dashboard": False, "dashboard_address": "127.0.0.1:0"})


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
        self._running = {}
        self._done = SimpleQueue()     # futures, put by Dask's callback thread as they finish
        self._slots, self._slots_read = 1, float("-inf")

    @property
    def slots(self):
        """Threads across the cluster's workers (re-read every few seconds: workers may come and go)."""
        if time.monotonic() - self._slots_read > 5:
            self._slots = max(1, sum(self._client.nthreads().values()))
            self._slots_read = time.monotonic()
        return self._slots

    def submit(self, unit, ref):
        future = self._client.submit(self._task, unit, self._scattered[ref], *self._shared, pure=False)
        self._running[future] = unit
        future.add_done_callback(self._done.put)

    def finished(self, timeout):
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
        units = [self._running.pop(future) for future in done]
        return list(zip(units, self._client.gather(done)))

    def _fail(self, unit, future):
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
        self._running.clear()
        return len(cancelled)

    def close(self):
        self.cancel()
        self._client.close(timeout=CLOSE_SECONDS)
        if self._cluster is not None:
            self._cluster.close(timeout=CLOSE_SECONDS)
