"""What every worker does, whichever backend started it: one thread per unit, warnings kept per thread.

A worker that runs N units at once on N cores must not let each unit start a BLAS or OpenMP pool of
its own, nor a learner spawn ``n_jobs`` processes: that would put N x cores threads on N cores.
Warnings are collected by a ``showwarning`` hook keyed by thread, because ``warnings.catch_warnings``
swaps process-wide state and is not thread-safe (Python documentation, warnings module, "Testing
Warnings"): on a Dask worker with several threads, each unit still gets its own warnings.
"""
import os
import threading
import warnings
from collections.abc import Callable
from contextlib import contextmanager

from threadpoolctl import threadpool_limits

# Read by BLAS / OpenMP libraries when they load; set for the worker processes we start.
THREAD_VARIABLES = {name: "1" for name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS",
                                           "BLIS_NUM_THREADS", "VECLIB_MAXIMUM_THREADS", "NUMEXPR_NUM_THREADS")}

_thread = threading.local()
_hook_lock = threading.Lock()
_previous_hook: Callable[..., None] | None = None


def limit_threads():
    """Limit the BLAS and OpenMP pools to one thread, once per thread (OpenMP's limit is per thread)
    and process (a forked worker starts with its parent's thread-local state, not its limits)."""
    if getattr(_thread, "limited", None) != os.getpid():
        threadpool_limits(1)
        _thread.limited = os.getpid()


@contextmanager
def one_thread():
    """BLAS and OpenMP limited to one thread inside the block, as before it afterwards."""
    with threadpool_limits(1):
        _thread.limited = os.getpid()
        try:
            yield
        finally:
            _thread.limited = None


def one_job(estimator):
    """Set every ``n_jobs`` parameter of a scikit-learn-style object that asks for more than one job
    to 1 (results do not depend on it; None already means one job outside a joblib context)."""
    if hasattr(estimator, "get_params") and hasattr(estimator, "set_params"):
        jobs = {name: 1 for name, value in estimator.get_params(deep=True).items()
                if name.split("__")[-1] == "n_jobs" and value not in (None, 1)}
        if jobs:
            estimator.set_params(**jobs)
    return estimator


def _show(message, category, filename, lineno, file=None, line=None):
    log = getattr(_thread, "log", None)
    if log is None:
        assert _previous_hook is not None       # installed before any thread can log
        _previous_hook(message, category, filename, lineno, file, line)
    else:
        log.append((category, message))


def _install_hook():
    """Route warnings through ``_show`` and show every one (filter 'always'), unless already so."""
    global _previous_hook
    with _hook_lock:
        if warnings.showwarning is not _show:
            _previous_hook = warnings.showwarning
            warnings.showwarning = _show
        first = warnings.filters[0] if warnings.filters else None
        if first is None or first[0] != "always" or first[2] is not Warning or first[1] or first[3]:
            warnings.simplefilter("always")


@contextmanager
def captured_warnings():
    """[(category, message)] of every warning this thread raises inside the block; other threads'
    warnings go where they went before. The hook stays installed (a worker keeps it for its life;
    the serial backend restores the driver's warning state when it closes)."""
    _install_hook()
    log: list[tuple[type[Warning], Warning | str]] = []
    _thread.log = log
    try:
        yield log
    finally:
        _thread.log = None
