"""Where work units run: one small interface, three implementations.

A backend runs ``task(unit, dataset, *shared)`` for each unit it is handed and gives the results back
to the process that opened it (the driver, which alone writes the store). Every backend offers:

    slots               how many units can run at once (the runner hands over a few more, so none idles)
    submit(unit, ref)   queue one unit; ``ref`` names its dataset among those the backend was opened with
    finished(timeout)   [(unit, result)] finished since the last call; waits up to ``timeout`` s for one.
                        A unit the backend could not finish (its worker died, or ran far past the unit's
                        time limit and was stopped) comes back with a ``Lost`` result: a value, not an error
    cancel()            forget every queued unit that has not started
    close()             stop the workers; units still running are abandoned

Each dataset travels to each worker once (inherited or sent when a worker starts, or scattered to a
Dask cluster); a unit carries only its coordinates. ``serial`` runs units in this process,
``processes`` on local worker processes (the default for jobs > 1), ``dask`` on a Dask cluster: a
LocalCluster of ``jobs`` single-threaded worker processes on 127.0.0.1, or a running one at ``scheduler``.
"""
from dataclasses import dataclass
from typing import Any, Callable, Protocol

from ...errors import BackendError, unknown

BACKENDS = ("serial", "processes", "dask")


@dataclass(frozen=True)
class Lost:
    """The result of a unit its backend could not finish, and why (the runner stores its cells as failed)."""
    reason: str


class Backend(Protocol):
    """What the runner needs from a backend (see the module docstring)."""

    @property
    def slots(self) -> int: ...

    def submit(self, unit: Any, ref: str) -> None: ...

    def finished(self, timeout: float) -> list[tuple[Any, Any]]: ...

    def cancel(self) -> int: ...

    def close(self) -> None: ...


def choose(backend: str, jobs: int, scheduler: str | None) -> str:
    """The backend name to use: ``auto`` is dask with a scheduler, processes for jobs > 1, else serial."""
    if backend == "auto":
        backend = "dask" if scheduler else "processes" if jobs > 1 else "serial"
    if backend not in BACKENDS:
        raise BackendError(f"--backend: {unknown('backend', backend, BACKENDS)}")
    if scheduler and backend != "dask":
        raise BackendError(f"--scheduler: only --backend dask uses a scheduler (got --backend {backend})")
    if backend == "serial" and jobs > 1:
        raise BackendError(f"--jobs: --backend serial runs one unit at a time (got --jobs {jobs}); "
                           "use --backend processes or dask, or leave out --jobs")
    if scheduler and jobs > 1:
        raise BackendError(f"--jobs: the cluster at {scheduler} decides how many units run at once "
                           f"(got --jobs {jobs}); --jobs sizes a local cluster only, so leave it out")
    return backend


def start_early(backend: str, scheduler: str | None) -> None:
    """Start what the chosen backend will need, as early as the caller can: a local Dask cluster's fork
    server (see cluster.start_fork_server). Options that cannot work are left to ``choose``."""
    if backend == "dask" and scheduler is None:
        from .cluster import start_fork_server
        start_fork_server()


def open_backend(backend: str, task: Callable[..., Any], datasets: dict[str, Any], shared: tuple = (), jobs: int = 1,
                 scheduler: str | None = None, timeout: float | None = None) -> Backend:
    """A started backend that runs ``task(unit, datasets[ref], *shared)``; ``task`` must be importable
    by its module path (worker processes look it up there). ``task`` enforces a unit's ``timeout``
    itself (containment.py); a backend that can stop a worker stops one that runs far past it."""
    name = choose(backend, jobs, scheduler)
    if name == "serial":
        from .serial import Serial
        return Serial(task, datasets, shared)
    if name == "processes":
        from .processes import Processes
        return Processes(task, datasets, shared, jobs, timeout)
    from .cluster import DaskCluster
    return DaskCluster(task, datasets, shared, jobs, scheduler)
