"""The serial backend: units run one at a time in this process, in the order handed over."""
import warnings
from collections import deque
from contextlib import ExitStack

from .worker import one_thread


class Serial:
    """Runs each unit when its result is asked for. While open, BLAS / OpenMP use one thread (as on
    every other backend, so the numbers are the same); the driver's thread limits and warning
    filters are restored by ``close``."""

    slots = 1

    def __init__(self, task, datasets, shared):
        self._task, self._datasets, self._shared = task, datasets, tuple(shared)
        self._queue: deque = deque()
        self._restore = ExitStack()
        self._restore.enter_context(warnings.catch_warnings())
        self._restore.enter_context(one_thread())

    def submit(self, unit, ref):
        self._queue.append((unit, ref))

    def finished(self, timeout):
        """Runs the next queued unit (``timeout`` does not apply: this process is the worker)."""
        if not self._queue:
            return []
        unit, ref = self._queue.popleft()
        return [(unit, self._task(unit, self._datasets[ref], *self._shared))]

    def cancel(self):
        cancelled = len(self._queue)
        self._queue.clear()
        return cancelled

    def close(self):
        self._queue.clear()
        self._restore.close()
