"""`lopsided rank`: statistics and a CD plot for a score table people bring themselves."""
import json
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..analysis import Comparison, compare
from ..analysis.cdplot import draw
from ..analysis.multiplicity import single
from ..analysis.words import caption, claims
from ..datasets.files import read_csv
from ..errors import DatasetError, unknown
from ..options import StatsOptions
from ..planning.suite import check_writable
from ..report import CAUTION, ENV

LONG_COLUMNS = ("dataset", "method", "score")


def read_scores(path):
    """Wide CSV (first column = dataset, one column per method) or long CSV (dataset, method, score)."""
    path = Path(path)
    if not path.is_file():
        raise DatasetError(f"{path}: no such file")
    table = read_csv(path)
    if table.empty:
        raise DatasetError(f"{path}: the table has no rows")
    lowered = {c.lower().strip(): c for c in table.columns}
    if all(c in lowered for c in LONG_COLUMNS):
        d, m, s = (lowered[c] for c in LONG_COLUMNS)
        twice = table.duplicated([d, m])
        if twice.any():
            row = table[twice].iloc[0]
            raise DatasetError(f"{path}: dataset {row[d]!r} has two scores for method {row[m]!r}")
        matrix = table.pivot(index=d, columns=m, values=s)
    else:
        if table.shape[1] < 3:
            raise DatasetError(f"{path}: need a dataset column and at least two method columns, "
                               f"or long columns {', '.join(LONG_COLUMNS)}")
        matrix = table.set_index(table.columns[0])
        if matrix.index.duplicated().any():
            raise DatasetError(f"{path}: dataset {matrix.index[matrix.index.duplicated()][0]!r} appears twice")
    numeric = matrix.apply(pd.to_numeric, errors="coerce")
    for bad, problem in ((numeric.isna() & matrix.notna(), "is not a number"), (numeric.abs() == np.inf, "is infinite")):
        if bad.any().any():
            method = bad.columns[bad.any()][0]
            dataset = bad.index[bad[method]][0]
            raise DatasetError(f"{path}: score of {method!r} on {dataset!r} {problem}: {matrix.loc[dataset, method]!r}")
    return numeric


def rank(matrix: pd.DataFrame, **options: Any) -> Comparison:
    """Rank methods over datasets from your own score table (the notebook face of `lopsided rank`).

    Parameters
    ----------
    matrix : pandas.DataFrame
        Datasets as rows, methods as columns, one score per cell (NaN = missing).
    **options
        ``metric``, ``higher_is_better``, ``alpha``, ``control``, ``rope``, ``missing`` (see
        `lopsided.analysis.compare`).

    Returns
    -------
    Comparison
        Average ranks, Friedman with the deciding p-value, Nemenyi, Holm-corrected Wilcoxon and Bayesian
        signed-rank results; ``as_json()`` gives what stats.json holds.
    """
    return compare(matrix, **options)


def rank_file(path, out, stats=StatsOptions(), metric="score", **options):
    """Write stats.json, cd.svg, cd.png and ranking.md for a score file at ``stats`` (StatsOptions: alpha,
    rope); ``options`` are ``compare``'s (higher_is_better, control, missing). Returns the folder."""
    out = Path(out)
    check_writable(out, "--out", str(out))
    matrix = read_scores(path)
    control = options.get("control")
    if control is not None and control not in matrix.columns:
        raise DatasetError(f"{path}: --control: {unknown('control method', control, [str(c) for c in matrix.columns])}")
    result = compare(matrix, metric=metric, alpha=stats.alpha, rope=stats.rope, **options)
    out.mkdir(parents=True, exist_ok=True)
    decision = single(result)
    draw(result, str(out / "cd"), bars=decision.rejects)
    found = {**result.as_json(), "decision": {**result.as_json()["decision"], **decision.as_json()}}
    (out / "stats.json").write_text(json.dumps(found, indent=1, allow_nan=False), encoding="utf-8")
    text = ENV.get_template("ranking.md.j2").render(result=result, claims=claims(result, decision), caution=CAUTION,
                                                     source=Path(path).name,
                                                     caption=caption(result, f"{metric}, {Path(path).name}", decision))
    (out / "ranking.md").write_text(text, encoding="utf-8")
    return out
