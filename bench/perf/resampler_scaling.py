"""Time and peak memory of neighbour-based resamplers as n grows, against brute-force references.

For n = 2,000 / 20,000 / 100,000 and d = 20 / 400 (10 % minority), times SMOTE, Borderline-SMOTE 1,
ADASYN, ENN and Tomek-link removal, and their peak traced memory (tracemalloc sees numpy buffers).
A brute-force reference (full distance matrix with scipy's cdist, the textbook way) runs where it fits
(n <= 5,000). Printed: seconds, peak MiB, the growth exponent between sizes (1 = linear in n), the
ratio of peak memory to one n x n float64 matrix, and lopsided/brute time ratios.

    python bench/perf/resampler_scaling.py [--sizes 2000 20000 100000] [--dims 20 400]
"""
import argparse
import math
import time
import tracemalloc

import numpy as np
from scipy.spatial.distance import cdist

from lopsided.methods.resamplers.cleaning import NeighbourEditing, TomekCleaning
from lopsided.methods.resamplers.smote import Adasyn, BorderlineSmote, Smote

METHODS = {
    "smote": lambda: Smote(random_state=0),
    "borderline-smote-1": lambda: BorderlineSmote(variant=1, random_state=0),
    "adasyn": lambda: Adasyn(random_state=0),
    "enn": lambda: NeighbourEditing(),
    "tomek-links": lambda: TomekCleaning(),
}
BRUTE_LIMIT = 5000


def data(n, d, seed=0):
    rng = np.random.default_rng(seed)
    y = (rng.random(n) < 0.1).astype(int)
    X = rng.normal(size=(n, d)) + 0.8 * y[:, None]
    return X, y


def brute(name, X, y):
    """Textbook versions with the full distance matrix (what lopsided must not need)."""
    D = cdist(X, X)
    np.fill_diagonal(D, np.inf)
    if name in ("enn", "tomek-links", "adasyn", "borderline-smote-1"):
        order = np.argsort(D, axis=1)[:, :10]
        return order
    minority = np.flatnonzero(y == 1)
    return np.argsort(D[np.ix_(minority, minority)], axis=1)[:, :5]


def measure(action):
    tracemalloc.start()
    started = time.perf_counter()
    action()
    seconds = time.perf_counter() - started
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return seconds, peak / 2 ** 20


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--sizes", type=int, nargs="+", default=[2000, 20000, 100000])
    parser.add_argument("--dims", type=int, nargs="+", default=[20, 400])
    args = parser.parse_args()
    print(f"{'method':>20} {'d':>4} {'n':>7} {'seconds':>8} {'peak MiB':>9} {'n^b growth':>10} "
          f"{'peak/(n x n)':>12} {'brute s':>8} {'ours/brute':>10}")
    for d in args.dims:
        for name, make in METHODS.items():
            previous = None
            for n in args.sizes:
                X, y = data(n, d)
                seconds, peak = measure(lambda: make().rebalance(X, y))
                growth = (f"{math.log(seconds / previous[1]) / math.log(n / previous[0]):.2f}"
                          if previous else "")
                matrix = n * n * 8 / 2 ** 20
                line = (f"{name:>20} {d:>4} {n:>7} {seconds:>8.2f} {peak:>9.1f} {growth:>10} "
                        f"{peak / matrix:>12.4f}")
                if n <= BRUTE_LIMIT:
                    brute_seconds, _ = measure(lambda: brute(name, X, y))
                    line += f" {brute_seconds:>8.2f} {seconds / brute_seconds:>10.2f}"
                print(line, flush=True)
                previous = (n, seconds)


if __name__ == "__main__":
    main()
