"""Local processes for the report's slow, independent jobs (comparisons and their figures).

``local_pool()`` yields ``submit(function, *args) -> Future``: on one usable core everything runs at
once in this process; otherwise on that many worker processes, started the way the runner starts its
own (fork while this process runs no other thread, so workers start in milliseconds).
"""
import os
from concurrent.futures import Future, ProcessPoolExecutor
from contextlib import contextmanager
from multiprocessing import get_context

from ..execution.backends.processes import die_with_parent, start_method


def usable_cores():
    """Cores this process may run on (its CPU affinity where the platform tells it)."""
    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1


def run_now(function, *args):
    """``function(*args)`` run here, as an already finished Future (exceptions kept for .result())."""
    future: Future = Future()
    try:
        future.set_result(function(*args))
    except Exception as exc:  # re-raised by future.result(), as a pool would
        future.set_exception(exc)
    return future


@contextmanager
def local_pool(workers=None):
    """Yield a submit function on ``workers`` processes (default: the usable cores)."""
    workers = workers or usable_cores()
    if workers <= 1:
        yield run_now
        return
    with ProcessPoolExecutor(workers, mp_context=get_context(start_method()), initializer=die_with_parent) as pool:
        yield pool.submit
