"""Aggregation and statistics: ranks, Friedman / Iman-Davenport, Nemenyi, Bonferroni-Dunn,
Holm-corrected Wilcoxon, Bayesian signed-rank, bootstrap rank intervals."""
from .compare import AnalysisError, Comparison, compare

__all__ = ["AnalysisError", "Comparison", "compare"]
