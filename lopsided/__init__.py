"""lopsided: benchmark resamplers x learners x imbalance ratios x training sizes, and rank them soundly.

Notebook entry points: ``load_dataset(reference)``, ``run_suite(path)``, ``rank(table)``.
"""
__version__ = "0.1.0"

from .benchmark import rebuild_report, run_suite  # noqa: E402
from .datasets import load_dataset  # noqa: E402
from .ranking import rank  # noqa: E402

__all__ = ["load_dataset", "rank", "rebuild_report", "run_suite", "__version__"]
