"""Time of a full comparison of 60 methods over 100 datasets: ranks, Friedman, Iman-Davenport, Nemenyi,
all 1,770 pairwise Holm-corrected Wilcoxon and Bayesian signed-rank tests, bootstrap rank intervals, and the CD plot
(SVG + PNG). One core. Target: under 5 s. Also prints scipy's own per-pair Wilcoxon time for the same pairs
(side by side), which lopsided's implementation replaces.

    python bench/perf/ranking_speed.py
"""
import os
import tempfile
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from scipy import stats  # noqa: E402

from lopsided.analysis import compare  # noqa: E402
from lopsided.analysis.cdplot import draw  # noqa: E402
from lopsided.analysis.posthoc import wilcoxon_p  # noqa: E402


def main():
    rng = np.random.default_rng(0)
    n, k = 100, 60
    table = pd.DataFrame(np.round(rng.normal(size=(n, k)) * 0.05 + np.linspace(0.6, 0.75, k), 3),
                         index=[f"dataset-{i}" for i in range(n)],
                         columns=[f"resampler-{j % 12} + learner-{j // 12}" for j in range(k)])
    started = time.perf_counter()
    result = compare(table)
    analysed = time.perf_counter()
    draw(result, os.path.join(tempfile.mkdtemp(), "cd"))
    done = time.perf_counter()
    print(f"{n} datasets x {k} methods, {len(result.pairwise)} pairs")
    print(f"statistics: {analysed - started:.2f} s; CD plot: {done - analysed:.2f} s; total {done - started:.2f} s "
          f"(target < 5 s)")
    small = table.iloc[:12, :20]
    pairs = [(i, j) for i in range(20) for j in range(i + 1, 20)]
    t0 = time.perf_counter()
    ours = [wilcoxon_p(small.iloc[:, i], small.iloc[:, j]) for i, j in pairs]
    t1 = time.perf_counter()
    theirs = [stats.wilcoxon(small.iloc[:, i], small.iloc[:, j]).pvalue for i, j in pairs]
    t2 = time.perf_counter()
    print(f"Wilcoxon on 12 datasets with ties, {len(pairs)} pairs: lopsided {t1 - t0:.3f} s, scipy {t2 - t1:.3f} s, "
          f"ratio {(t2 - t1) / (t1 - t0):.1f}x; largest p difference {max(abs(a - b) for a, b in zip(ours, theirs)):.2g}")


if __name__ == "__main__":
    main()
