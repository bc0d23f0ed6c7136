"""lopsided: benchmark resamplers x learners x imbalance ratios x training sizes, and rank them soundly.

Notebook entry points: ``load_dataset(reference)``, ``run_suite(path, RunOptions(...))``, ``rank(table)``, with
the option records of ``lopsided.options``. They are imported on first use, so worker processes and the command
line start quickly.
"""
import importlib

__version__ = "0.2.0"

_ENTRY_POINTS = {"load_dataset": "datasets", "run_suite": "jobs.run", "rebuild_report": "jobs.run",
                 "rank": "jobs.rank", "RunOptions": "options", "ExecutionOptions": "options",
                 "StatsOptions": "options", "ReportOptions": "options", "TryOptions": "options"}
__all__ = [*_ENTRY_POINTS, "__version__"]


def __getattr__(name):
    if name in _ENTRY_POINTS:
        return getattr(importlib.import_module(f".{_ENTRY_POINTS[name]}", __name__), name)
    raise AttributeError(f"module 'lopsided' has no attribute {name!r}")
