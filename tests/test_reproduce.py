"""stats.json reproduces from scores.csv with independent code: pandas to build each comparison's table from the
published scores, scipy for the ranks, the Friedman statistics and the Wilcoxon signed-rank p-values (where scipy
enumerates sign patterns one call at a time, numpy enumerates them at once; checked against scipy on each
leaderboard). Every committed leaderboard is checked, comparison by comparison."""
import json
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

ROOT = Path(__file__).resolve().parents[1]
BOARDS = sorted(p.name for p in (ROOT / "results").iterdir() if (p / "stats.json").is_file())


def published_table(scores, comparison):
    """datasets x methods of one comparison from scores.csv alone: the comparison's point and learner, rows with
    a failed cell missing, then only the datasets stats.json lists (complete for every method)."""
    rows = scores[(scores["ratio"].astype(str) == str(comparison["ratio"]))
                  & (scores["size"].astype(str) == str(comparison["size"]))]
    if comparison["view"] == "learner":
        rows = rows[rows["learner"] == comparison["learner"]]
        method = rows["resampler"]
    else:
        method = rows["resampler"] + " + " + rows["learner"]
    value = rows[f"{comparison['metric']}_mean"].where(rows["n_failed"] == 0)
    table = pd.DataFrame({"dataset": rows["dataset"], "method": method, "value": value})
    wide = table.pivot(index="dataset", columns="method", values="value")
    return wide.loc[comparison["datasets"], list(comparison["average_ranks"])]


def enumerated(d):
    """scipy.stats.wilcoxon's default with ties or zeros among at most 13 differences: a permutation test over all
    2^n sign patterns of ``d`` (Wilcoxon 1945: zeros dropped, mid-ranks for ties; statistic R+), two-sided as
    scipy.stats.permutation_test (twice the smaller tail, a relative tolerance of 100 eps, at most 1); else None."""
    nonzero = d[d != 0]
    if len(d) > 13 or (len(nonzero) == len(d) and len(np.unique(np.abs(d))) == len(d)):
        return None
    ranks = stats.rankdata(np.abs(nonzero))
    null = ((np.arange(2 ** len(nonzero))[:, None] >> np.arange(len(nonzero))) & 1) @ ranks
    observed = ranks[nonzero > 0].sum()
    gamma = np.finfo(float).eps * 100 * abs(observed)
    return min(1.0, 2 * min(np.mean(null <= observed + gamma), np.mean(null >= observed - gamma)))


@pytest.mark.parametrize("board", BOARDS)
def test_ranks_friedman_and_wilcoxon_reproduce_from_the_published_scores(board):
    folder = ROOT / "results" / board
    scores = pd.read_csv(folder / "scores.csv", keep_default_na=True)
    comparisons = [c for c in json.loads((folder / "stats.json").read_text())["comparisons"] if "average_ranks" in c]
    assert comparisons
    checked = False
    for c in comparisons:
        table = published_table(scores, c)
        assert not table.isna().any().any(), (c["metric"], c["view"], c["learner"])
        ranks = stats.rankdata(-table.to_numpy(), axis=1)                  # 1 = best, mid-ranks for ties
        mean = ranks.mean(axis=0)
        assert mean == pytest.approx(list(c["average_ranks"].values()), abs=1e-12), (c["metric"], c["learner"])
        n, k = ranks.shape
        chi2 = 12 * n / (k * (k + 1)) * (np.sum(mean ** 2) - k * (k + 1) ** 2 / 4)   # Demšar (2006), eq. (1)
        assert c["friedman"]["chi2"] == pytest.approx(chi2, rel=1e-9, abs=1e-12)
        if k >= 3 and c["friedman"]["chi2_tie_corrected"] is not None:          # scipy: tie-corrected, k >= 3
            statistic = stats.friedmanchisquare(*table.to_numpy().T).statistic
            assert c["friedman"]["chi2_tie_corrected"] == pytest.approx(statistic, rel=1e-9)
        for pair in c["pairwise"][:10]:
            d = table[pair["a"]].to_numpy() - table[pair["b"]].to_numpy()
            if not np.any(d):
                expected = 1.0
            elif (expected := enumerated(d)) is None:
                expected = stats.wilcoxon(table[pair["a"]], table[pair["b"]]).pvalue
            elif not checked:                # once per leaderboard: the enumeration against scipy's own
                assert expected == pytest.approx(stats.wilcoxon(table[pair["a"]], table[pair["b"]]).pvalue, rel=1e-12)
                checked = True
            assert pair["wilcoxon_p"] == pytest.approx(expected, rel=1e-9, abs=1e-12), (pair["a"], pair["b"])
