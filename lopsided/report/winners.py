"""Who leads where: the headline comparison within imbalance-ratio bands, at each training ratio and at each
training size (all combinations).

Bands of the natural imbalance ratio (majority:minority): IR < 3, 3 <= IR < 9 and IR >= 9, the low / medium
/ high grouping of the KEEL imbalanced-data studies (Fernández, García, del Jesus & Herrera 2008, Fuzzy Sets
and Systems 159(18); from memory). Only the natural point is split by band: there each dataset keeps its own
ratio, and a band holds *other datasets* than the next band, so a difference between bands is not an effect
of the imbalance ratio alone. At a set training ratio every dataset is cut to that ratio: such a row is
labelled by the ratio, never by a band. Rows at set ratios and sizes are the leaderboard's own comparisons of
those points (no test is repeated), each at the size (or ratio) where the most datasets are complete; band rows are comparisons of their own, adjusted with the others.
"""
import math

from ..records import point_label
from .findings import Spec
from .tables import points_of

BANDS = ((1.0, 3.0, "IR < 3"), (3.0, 9.0, "3 <= IR < 9"), (9.0, math.inf, "IR >= 9"))
BAND_NOTE = ("Bands hold different datasets: a difference between bands is not an effect of the imbalance ratio "
             "alone (the datasets differ in other ways too).")


def band_of(ratio):
    """The band label of an imbalance ratio."""
    return next(label for low, high, label in BANDS if low <= ratio < high) if ratio >= 1 else BANDS[0][2]


def band_specs(protocol, scores, primary):
    """The band comparisons: the primary metric at the natural ratio (the primary size when it has one, else
    the first size), one per imbalance band."""
    points = points_of(scores, protocol)
    sizes = [s for r, s in points if r == "natural"]
    if not sizes:
        return []
    size = primary.size if primary.size in sizes else sizes[0]
    return [Spec("band", primary.metric, "natural", size, label=label) for _, _, label in BANDS]


def winner_rows(studies, protocol, primary):
    """Rows {by, band, point, study} in display order: bands, then training ratios, then training sizes."""
    overall = {(s.spec.ratio, s.spec.size): s for s in studies
               if s.spec.kind == "point" and s.spec.learner is None and s.spec.metric == primary.metric}
    rows = [{"by": "imbalance band", "band": s.spec.label, "point": f"natural ratio, size {s.spec.size}", "study": s}
            for s in studies if s.spec.kind == "band"]
    ratios, sizes = [point_label(r) for r in protocol.ratios], [point_label(s) for s in protocol.sizes]
    for ratio in ratios:
        point = _fullest([(ratio, s) for s in sizes], overall, (ratio, primary.size))
        if ratio != "natural" and point:
            label = "balanced (IR = 1)" if ratio == "balanced" else f"training ratio {ratio}"
            rows.append({"by": "training ratio", "band": label, "point": f"ratio {ratio}, size {point[1]}",
                         "study": overall[point]})
    if len(sizes) > 1:
        for size in sizes:
            point = _fullest([(r, size) for r in ratios], overall, (primary.ratio, size))
            if point:
                rows.append({"by": "training size", "band": f"size {size}", "point": f"ratio {point[0]}, size {size}",
                             "study": overall[point]})
    for row in rows:
        study = row["study"]
        row["tied"] = [] if not (study.ok and study.decision.rejects) else [
            m for m in study.result.methods[1:] if study.result.nemenyi_p.loc[study.result.methods[0], m] >= study.result.alpha]
    return [r for r in rows if r["study"].ok or r["study"].note]


def _fullest(points, overall, preferred):
    """Of the protocol points that have a comparison, the one with the most datasets (the primary analysis'
    ratio or size first among equals, then protocol order); None when there is none."""
    found = [p for p in points if p in overall]
    if not found:
        return None
    datasets = {p: overall[p].result.friedman.n_datasets if overall[p].ok else 0 for p in found}
    return max(found, key=lambda p: (datasets[p], p == preferred, -found.index(p)))
