"""The processes backend: units run on ``jobs`` local worker processes, each watched by the driver.

Datasets reach each worker once: inherited when workers are forked (Linux, while the driver runs no
other thread: workers start in milliseconds), else sent once to each worker as it starts. A worker holds
at most HELD units (one running, the next waiting in its inbox, so it never waits for the driver), which
lets the driver know which unit each worker runs and since when. A worker that dies while running a
unit (a method called os._exit or crashed, or the system killed it for memory) costs that unit alone,
and a worker still running a unit GRACE_SECONDS past the unit's time limit (stuck in compiled code the
worker's own limit cannot interrupt) is killed: the unit comes back Lost, with the reason, a new worker
takes the old one's place and the unit waiting behind it is handed out again.

Workers ignore SIGINT (a Ctrl-C in a terminal reaches the whole process group): the driver decides how
to stop, and abandons running units by terminating their workers (SIGTERM).
"""
import os
import signal
import sys
import threading
import time
from collections import deque
from multiprocessing import get_context
from multiprocessing.connection import wait
from queue import SimpleQueue

from . import BackendError, Lost
from .worker import THREAD_VARIABLES

HELD = 2
GRACE_SECONDS = 5.0
JOIN_SECONDS = 5.0


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


def start_method():
    """'fork' on Linux while this process runs no other Python thread, else 'forkserver' (Linux) or 'spawn'."""
    if not sys.platform.startswith("linux"):
        return "spawn"
    return "fork" if threading.active_count() == 1 else "forkserver"


def _serve(inbox, outbox, task, datasets, shared):
    """A worker's life: run each (unit, ref) from ``inbox`` and send back ("done", result) or ("failed",
    text); stop at None or when the driver is gone. A reader thread empties the pipe into a queue, so
    the driver never blocks handing over the next unit."""
    die_with_parent()
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    signal.signal(signal.SIGTERM, signal.SIG_DFL)     # a forked worker inherits the driver's handler
    os.environ.update(THREAD_VARIABLES)
    queued: SimpleQueue = SimpleQueue()

    def read():
        try:
            while (message := inbox.recv()) is not None:
                queued.put(message)
        except (EOFError, OSError):
            pass
        queued.put(None)

    threading.Thread(target=read, daemon=True).start()
    while (message := queued.get()) is not None:
        unit, ref = message
        try:
            answer = ("done", task(unit, datasets[ref], *shared))
        except Exception as exc:       # the task turns a unit's own failures into rows: this is a worker fault
            answer = ("failed", f"{type(exc).__name__}: {exc}")
        outbox.send(answer)


class _Worker:
    def __init__(self, task, datasets, shared):
        method = start_method()
        context = get_context(method)
        if method == "forkserver":
            context.set_forkserver_preload([task.__module__])
        inbox, self.inbox = context.Pipe(duplex=False)
        self.outbox, outbox = context.Pipe(duplex=False)
        self.process = context.Process(target=_serve, args=(inbox, outbox, task, datasets, shared),
                                       name="lopsided-worker")
        self.process.start()
        inbox.close()
        outbox.close()
        self.held: deque = deque()  # (unit, ref) handed over, oldest (running) first
        self.since = 0.0           # when the oldest started, as far as the driver can tell

    def hand(self, unit, ref):
        if not self.held:
            self.since = time.monotonic()
        self.held.append((unit, ref))
        try:
            self.inbox.send((unit, ref))
        except OSError:         # the worker just died: finished() sees it and hands the unit out again
            pass

    def answers(self):
        """(unit, (kind, payload)) for every answer waiting in the pipe."""
        found = []
        try:
            while self.held and self.outbox.poll():
                answer = self.outbox.recv()
                found.append((self.held.popleft()[0], answer))
                self.since = time.monotonic()
        except (EOFError, OSError):
            pass
        return found

    def stop(self, kill=False):
        if kill:
            self.process.kill()
        else:
            self.process.terminate()
        self.process.join(JOIN_SECONDS)
        self._close_pipes()

    def _close_pipes(self):
        self.inbox.close()
        self.outbox.close()


class Processes:
    def __init__(self, task, datasets, shared, jobs, timeout=None):
        self._start = (task, datasets, tuple(shared))
        self.slots = jobs
        self._limit = None if not timeout else timeout + GRACE_SECONDS
        self._queue: deque = deque()  # (unit, ref) not yet handed to a worker
        self._workers = [_Worker(*self._start) for _ in range(jobs)]

    def submit(self, unit, ref):
        self._queue.append((unit, ref))
        self._hand_out()

    def _hand_out(self):
        for worker in [w for w in self._workers if not w.held and not w.process.is_alive()]:
            self._replace(worker, kill=False)       # died while idle (killed from outside): nothing was lost
        for worker in sorted(self._workers, key=lambda w: len(w.held)):
            while self._queue and len(worker.held) < HELD:
                worker.hand(*self._queue.popleft())

    def finished(self, timeout):
        busy = [w for w in self._workers if w.held]
        if not busy:
            return []
        if self._limit is not None:
            timeout = max(0.0, min(timeout, min(w.since for w in busy) + self._limit - time.monotonic()))
        wait([w.outbox for w in busy] + [w.process.sentinel for w in busy], timeout)
        results = []
        for worker in busy:
            for unit, (kind, payload) in worker.answers():
                if kind == "failed":
                    raise BackendError(f"{unit}: the worker process failed: {payload}")
                results.append((unit, payload))
            if not worker.held:
                continue
            if not worker.process.is_alive():
                results.append((worker.held[0][0], Lost(f"its worker process ended while running it "
                                                        f"({_ending(worker.process.exitcode)})")))
                self._replace(worker, kill=False)
            elif self._limit is not None and time.monotonic() - worker.since > self._limit:
                results.append((worker.held[0][0], Lost(f"stopped: still running {GRACE_SECONDS:g} s after its "
                                                        f"time limit of {self._limit - GRACE_SECONDS:g} s "
                                                        "(protocol.timeout or --timeout); its worker process "
                                                        "was killed")))
                self._replace(worker, kill=True)
        self._hand_out()
        return results

    def _replace(self, worker, kill):
        """A new worker in place of ``worker``; the units it held but had not started go back in the queue."""
        waiting = list(worker.held)[1:]
        worker.stop(kill=kill)
        self._queue.extendleft(reversed(waiting))
        self._workers[self._workers.index(worker)] = _Worker(*self._start)

    def cancel(self):
        cancelled = len(self._queue)
        self._queue.clear()
        return cancelled

    def close(self):
        """Stop the workers: idle ones are told to finish, busy ones are terminated (their units abandoned)."""
        self._queue.clear()
        for worker in self._workers:
            if worker.held:
                worker.process.terminate()
            else:
                try:
                    worker.inbox.send(None)
                except OSError:
                    worker.process.terminate()
        for worker in self._workers:
            worker.process.join(JOIN_SECONDS)
            if worker.process.is_alive():
                worker.process.kill()
                worker.process.join()
            worker._close_pipes()


def _ending(code):
    """How a process ended, from its exit code."""
    if code is not None and code < 0:
        try:
            return f"killed by {signal.Signals(-code).name}"
        except ValueError:
            return f"killed by signal {-code}"
    return f"exit code {code}"
