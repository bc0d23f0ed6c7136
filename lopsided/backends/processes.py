"""The processes backend: units run on ``jobs`` local worker processes.

Datasets reach each worker once: inherited when workers are forked (Linux, while the driver runs no
other thread: workers start in milliseconds), else passed once to each worker as it starts. Workers
ignore SIGINT (a Ctrl-C in a terminal reaches the whole process group): the driver decides how to stop,
and abandons running units by terminating their workers (SIGTERM).
"""
import os
import signal
import sys
import threading
from concurrent.futures import FIRST_COMPLETED, ProcessPoolExecutor, wait
from concurrent.futures.process import BrokenProcessPool
from multiprocessing import active_children, get_context

from . import BackendError
from .worker import THREAD_VARIABLES

_STATE = {}


def die_with_parent():
    """Ask Linux to send this worker SIGTERM when the process that started it dies (prctl PR_SET_PDEATHSIG), so
    a killed driver leaves no orphans; exit at once if the parent is already gone."""
    if not sys.platform.startswith("linux"):
        return
    import ctypes
    parent = os.getppid()
    try:
        ctypes.CDLL(None, use_errno=True).prctl(1, signal.SIGTERM, 0, 0, 0)    # 1 = PR_SET_PDEATHSIG
    except (OSError, AttributeError):
        return
    if os.getppid() != parent:
        os._exit(1)


def _start(task, datasets, shared):
    die_with_parent()
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)     # a forked worker inherits the driver's handler
    os.environ.update(THREAD_VARIABLES)
    _STATE.update(task=task, datasets=datasets, shared=shared)


def _call(unit, ref):
    return _STATE["task"](unit, _STATE["datasets"][ref], *_STATE["shared"])


def start_method():
    """'fork' on Linux while this process runs no other Python thread, else 'forkserver' (Linux) or 'spawn'."""
    if not sys.platform.startswith("linux"):
        return "spawn"
    return "fork" if threading.active_count() == 1 else "forkserver"


class Processes:
    def __init__(self, task, datasets, shared, jobs):
        context = get_context(start_method())
        if context.get_start_method() == "forkserver":
            context.set_forkserver_preload([task.__module__])
        self.slots = jobs
        self._others = set(active_children())      # child processes that are not our workers
        self._pool = ProcessPoolExecutor(jobs, mp_context=context, initializer=_start,
                                         initargs=(task, datasets, tuple(shared)))
        self._running = {}

    def submit(self, unit, ref):
        self._running[self._pool.submit(_call, unit, ref)] = unit

    def finished(self, timeout):
        done, _ = wait(self._running, timeout, return_when=FIRST_COMPLETED)
        results = []
        for future in done:
            unit = self._running.pop(future)
            try:
                results.append((unit, future.result()))
            except BrokenProcessPool:
                raise BackendError(f"a worker process ended while running units (killed, or out of memory?), "
                                   f"e.g. {unit}; run again to resume") from None
            except Exception as exc:
                raise BackendError(f"{unit}: the worker process failed: {type(exc).__name__}: {exc}") from exc
        return results

    def cancel(self):
        cancelled = [future for future in self._running if future.cancel()]
        for future in cancelled:
            del self._running[future]
        return len(cancelled)

    def close(self):
        """Stop the workers; units still running are abandoned (their processes terminated)."""
        self.cancel()
        if self._running:
            for process in active_children():
                if process not in self._others:
                    process.terminate()
            self._running.clear()
        self._pool.shutdown(wait=True, cancel_futures=True)
