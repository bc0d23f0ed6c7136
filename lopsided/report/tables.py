"""From stored cells to the tables people read: per-combination scores and method matrices."""
import numpy as np
import pandas as pd

from ..methods.metrics import METRICS
from ..records import point_label

KEYS = ["dataset", "ratio", "size", "resampler", "learner"]
COMBINED = " + "


def metric_columns(cells):
    """Metric columns present in the cells table, the registered ones first."""
    known = [m for m in METRICS if m in cells.columns]
    return known + sorted(c for c in cells.columns if c.startswith("recall:"))


def with_titles(cells, titles):
    """Replace canonical method specs by the suite's labels."""
    out = cells.copy()
    for column in ("resampler", "learner"):
        names = titles.get(column, {})
        out[column] = out[column].map(lambda v, names=names: names.get(v, v))
    return out


DIGITS = 8   # significant digits of every number in scores.csv and cells.csv


def published(values):
    """Values rounded to the DIGITS significant digits the CSV files carry ('%.8g'), so that every statistic
    computed from them is the one anyone recomputes from scores.csv: scores equal at that precision tie."""
    array = np.asarray(values, dtype=float)
    finite = np.isfinite(array)
    out = array.copy()
    out[finite] = np.char.mod(f"%.{DIGITS}g", array[finite]).astype(float)
    return out


def scores_table(cells):
    """One row per dataset x point x resampler x learner: mean and std over repeats and folds (ok cells),
    rounded as scores.csv publishes them (``published``)."""
    if cells.empty:
        return pd.DataFrame(columns=KEYS + ["n_cells", "n_failed"])
    metrics = metric_columns(cells) + ["resample_seconds", "fit_seconds", "predict_seconds"]
    ok = cells[cells["status"] == "ok"]
    grouped = ok.groupby(KEYS, sort=True)[metrics]
    stats = grouped.agg(["mean", "std"])
    stats.columns = [f"{m}_{s}" for m, s in stats.columns]
    stats = stats.apply(published)
    counts = cells.groupby(KEYS, sort=True)["status"].agg(n_cells="size", n_failed=lambda s: int((s != "ok").sum()))
    return counts.join(stats, how="left").reset_index()


def method_matrix(scores, metric, ratio, size, learner=None):
    """Datasets x methods matrix of mean ``metric`` at one protocol point.

    Methods are 'resampler + learner' combinations, or resamplers within one ``learner``.
    A combination with any failed cell on a dataset is missing there (NaN), never averaged over survivors.
    """
    rows = scores[(scores["ratio"] == ratio) & (scores["size"] == size)]
    if learner is not None:
        rows = rows[rows["learner"] == learner]
    column = f"{metric}_mean"     # absent when every cell failed: then every value is missing
    value = (rows[column] if column in rows else pd.Series(np.nan, index=rows.index)).where(rows["n_failed"] == 0)
    method = rows["resampler"] if learner is not None else rows["resampler"] + COMBINED + rows["learner"]
    table = pd.DataFrame({"dataset": rows["dataset"], "method": method, "value": value})
    return table.pivot(index="dataset", columns="method", values="value")


def points_of(scores, protocol):
    """Points of the ``protocol`` (planning.suite.Protocol) that have scores, in the suite's order."""
    present = set(zip(scores["ratio"], scores["size"]))
    points = [(point_label(r), point_label(s)) for r, s in protocol.points]
    return [p for p in points if p in present]


def per_dataset_rows(matrix, imbalance, digits=3):
    """Rows of a datasets x methods ``matrix`` ordered by natural imbalance ratio, with the best marked.

    Returns {"dataset", "ratio", "scores", "best"} per dataset; ``best`` holds the column positions whose
    value, shown to ``digits`` decimals, equals the row's highest (so equal-looking values are all marked);
    a missing value (failed or not run) is None.
    """
    order = sorted(matrix.index, key=lambda d: (imbalance.get(d, np.inf), d))
    rows = []
    for dataset in order:
        values = matrix.loc[dataset].to_numpy(dtype=float)
        shown = np.round(values, digits)
        top = np.nanmax(shown) if np.isfinite(shown).any() else np.nan
        rows.append({"dataset": dataset, "ratio": imbalance.get(dataset),
                     "scores": [None if np.isnan(v) else float(v) for v in values],
                     "best": {i for i, v in enumerate(shown) if v == top}})
    return rows
