"""lopsided: benchmark resamplers x learners x imbalance ratios x training sizes, and rank them soundly.

Notebook entry points: ``load_dataset(reference)``, ``run_suite(path)``, ``rank(table)``.
They are imported on first use, so worker processes and the command line start quickly.
"""
import importlib

__version__ = "0.1.0"

_ENTRY_POINTS = {"load_dataset": "datasets", "run_suite": "benchmark", "rebuild_report": "benchmark",
                 "rank": "ranking"}
__all__ = [*_ENTRY_POINTS, "__version__"]


def __getattr__(name):
    if name in _ENTRY_POINTS:
        return getattr(importlib.import_module(f".{_ENTRY_POINTS[name]}", __name__), name)
    raise AttributeError(f"module 'lopsided' has no attribute {name!r}")
