"""Keeping one unit's misbehaviour inside that unit, on every backend: a time limit and captured output.

``time_limit`` raises UnitTimeout inside a unit that runs past its limit. In a thread that is the
process's main thread (serial and processes backends) a SIGALRM timer does it, which also interrupts a
sleep or a blocking wait; in another thread (Dask runs tasks in threads) a timer thread raises it
asynchronously (CPython's PyThreadState_SetAsyncExc), which takes effect at the unit's next Python
bytecode. Compiled code that never returns is out of reach of both: the processes backend kills such a
worker after a grace period, see processes.py.

``captured_output`` keeps what a unit prints off the terminal (and out of memory: the first LIMIT
characters and a count), per thread, like the warnings in worker.py.
"""
import ctypes
import signal
import sys
import threading
from contextlib import contextmanager

LIMIT = 2_000


class UnitTimeout(BaseException):
    """A unit ran past its time limit (a BaseException, so that a method's own ``except Exception``
    cannot swallow it)."""


@contextmanager
def time_limit(seconds):
    """Raise UnitTimeout in this thread once ``seconds`` have passed inside the block (None: no limit)."""
    if not seconds:
        yield
    elif threading.current_thread() is threading.main_thread() and hasattr(signal, "setitimer"):
        with _alarm(seconds):
            yield
    else:
        with _async_raise(seconds):
            yield


@contextmanager
def _alarm(seconds):
    armed = [True]

    def ring(number, frame):
        if armed[0]:
            armed[0] = False
            raise UnitTimeout(seconds)

    previous = signal.signal(signal.SIGALRM, ring)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        armed[0] = False
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)


@contextmanager
def _async_raise(seconds):
    target = ctypes.c_ulong(threading.get_ident())
    lock, state = threading.Lock(), {"armed": True, "fired": False}

    def fire():
        with lock:
            if state["armed"]:
                state["fired"] = True
                ctypes.pythonapi.PyThreadState_SetAsyncExc(target, ctypes.py_object(UnitTimeout))

    timer = threading.Timer(seconds, fire)
    timer.daemon = True
    timer.start()
    try:
        yield
    finally:
        with lock:
            state["armed"] = False
            if state["fired"]:       # raised but maybe not yet delivered: take it back
                ctypes.pythonapi.PyThreadState_SetAsyncExc(target, None)
        timer.cancel()


class Printed:
    """What one thread printed inside a ``captured_output`` block: the start of it and how much."""

    def __init__(self):
        self.start, self.characters = "", 0

    def add(self, text):
        self.characters += len(text)
        if len(self.start) < LIMIT:
            self.start += text[:LIMIT - len(self.start)]

    def summary(self, who):
        """'resampler X printed 1.2 MB (first line: ...)', or None when nothing was printed."""
        if not self.characters:
            return None
        first = next((line.strip() for line in self.start.splitlines() if line.strip()), "")
        return f"{who} printed {_size(self.characters)} (kept off the terminal; first line: {first[:120]!r})"


def _size(characters):
    for unit, scale in (("MB", 1e6), ("kB", 1e3)):
        if characters >= scale:
            return f"{characters / scale:.1f} {unit}"
    return f"{characters} characters"


_thread = threading.local()


class _Installed:
    """How many threads are inside ``captured_output`` and the streams that were there before the first."""
    lock = threading.Lock()
    count = 0
    streams: tuple = ()


class _PerThread:
    """Stands in for sys.stdout / sys.stderr: a thread inside ``captured_output`` writes to its Printed,
    every other thread to the stream that was there before."""

    def __init__(self, stream):
        self._stream = stream

    def write(self, text):
        sink = getattr(_thread, "printed", None)
        if sink is None:
            return self._stream.write(text)
        sink.add(str(text))
        return len(text)

    def flush(self):
        if getattr(_thread, "printed", None) is None:
            self._stream.flush()

    def __getattr__(self, name):
        return getattr(self._stream, name)


@contextmanager
def captured_output():
    """A Printed of everything this thread writes to sys.stdout or sys.stderr inside the block. The
    stand-ins are installed while any thread is inside such a block and removed after the last one."""
    with _Installed.lock:
        if _Installed.count == 0:
            _Installed.streams = (sys.stdout, sys.stderr)
            sys.stdout, sys.stderr = _PerThread(sys.stdout), _PerThread(sys.stderr)
        _Installed.count += 1
    printed = Printed()
    _thread.printed = printed
    try:
        yield printed
    finally:
        _thread.printed = None
        with _Installed.lock:
            _Installed.count -= 1
            if _Installed.count == 0:
                sys.stdout, sys.stderr = _Installed.streams
