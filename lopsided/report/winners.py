"""Who wins where: the headline comparison within imbalance-ratio bands and at each training size.

Bands of the training imbalance ratio (majority:minority): IR < 3, 3 <= IR < 9 and IR >= 9, the low /
medium / high grouping of the KEEL imbalanced-data studies (Fernández, García, del Jesus & Herrera
2008, Fuzzy Sets and Systems 159(18); from memory). At the 'natural' point a dataset's band is its own
imbalance ratio; at a set ratio every dataset is cut to that ratio, so the whole point falls in one
band. Each row is its own Friedman comparison over independent datasets (a dataset appears at most
once per row); rows are not pooled, since one dataset at two ratios is not two datasets.
"""
import math

from ..analysis import AnalysisError, compare
from ..analysis.compare import MIN_DATASETS
from ..records import point_label
from .tables import method_matrix

BANDS = ((1.0, 3.0, "IR < 3"), (3.0, 9.0, "3 <= IR < 9"), (9.0, math.inf, "IR >= 9"))


def band_of(ratio):
    """The band label of an imbalance ratio."""
    return next(label for low, high, label in BANDS if low <= ratio < high) if ratio >= 1 else BANDS[0][2]


def winner_rows(scores, suite, meta, alpha=0.05, rope=0.01):
    """Rows {by, band, point, n, best, tied, p, test, claim} for the headline metric, all combinations.

    ``meta`` maps dataset reference -> natural imbalance ratio. By band: every ratio at the first size
    (the natural point split by the datasets' own ratios). By size: every size at the first ratio.
    """
    protocol = suite["protocol"]
    ratios, sizes = [point_label(r) for r in protocol["ratios"]], [point_label(s) for s in protocol["sizes"]]
    rows = []
    for value, ratio in zip(protocol["ratios"], ratios):
        matrix = method_matrix(scores, suite["metrics"][0], ratio, sizes[0])
        if ratio == "natural":
            for _, _, label in BANDS:
                members = [d for d in matrix.index if band_of(meta.get(d, 1.0)) == label]
                rows.append(_row("imbalance band", label, f"natural ratio, size {sizes[0]}", matrix.loc[members],
                                 alpha, rope))
        else:
            band = "IR = 1" if ratio == "balanced" else band_of(value)
            rows.append(_row("imbalance band", band, f"ratio {ratio}, size {sizes[0]}", matrix, alpha, rope))
    if len(sizes) > 1:
        for size in sizes:
            matrix = method_matrix(scores, suite["metrics"][0], ratios[0], size)
            rows.append(_row("training size", size, f"ratio {ratios[0]}, size {size}", matrix, alpha, rope))
    return [r for r in rows if r["n"] > 0]


def _row(by, band, point, matrix, alpha, rope):
    row = {"by": by, "band": band, "point": point, "n": int(len(matrix)), "best": "", "tied": [], "p": None,
           "test": "", "claim": ""}
    if len(matrix) == 0:
        return row
    try:
        result = compare(matrix, alpha=alpha, rope=rope, samples=500)
    except AnalysisError as exc:
        return {**row, "claim": f"no comparison: {exc}"}
    f = result.friedman
    best = result.methods[0]
    row.update(n=f.n_datasets, best=best, p=f.decision_p, test=f.decision_test)
    if not result.claims_allowed:
        row["claim"] = f"no claim: only {f.n_datasets} datasets (fewer than {MIN_DATASETS})"
    elif f.decision_p >= alpha:
        row["claim"] = f"no significant difference among the {f.n_methods} methods: no winner"
    else:
        row["tied"] = [m for m in result.methods[1:] if result.nemenyi_p.loc[best, m] >= alpha]
        row["claim"] = (f"{best} ranks first; the Nemenyi test cannot separate {len(row['tied'])} of the "
                        f"{f.n_methods - 1} others from it")
    return row
