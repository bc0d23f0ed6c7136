"""Time of the learning-curve bootstrap: 1,000 draws x 20 methods (8 minority counts x 10 repeats each),
one core. Target: under 5 s. Side by side, the time of refitting the same draws one by one with
scipy.optimize.least_squares (measured on 200 draws of one method and scaled to all draws), which the
vectorised solver replaces, and the largest difference in fitted scores between the two.

    python bench/perf/learning_curves.py
"""
import os
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")
os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")

import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

from lopsided.analysis.learning_curve import bootstrap_curve, fit_curve  # noqa: E402

SIZES = np.array([5, 10, 20, 40, 80, 160, 320, 640.0])
METHODS, REPEATS, DRAWS, CHECKED = 20, 10, 1000, 200


def tables(rng):
    """One minority-recall table (sizes x repeats) per method, with its own asymptote, rate and noise."""
    out = []
    for _ in range(METHODS):
        a, b, c = rng.uniform(0.02, 0.3), rng.uniform(0.3, 1.2), rng.uniform(-1.2, -0.2)
        curve = (1 - a) - b * SIZES ** c
        noisy = curve[:, None] + rng.normal(0, rng.uniform(0.005, 0.04), (len(SIZES), REPEATS))
        out.append(pd.DataFrame(np.clip(noisy, 0, 1), index=SIZES))
    return out


def main():
    rng = np.random.default_rng(0)
    data = tables(rng)
    started = time.perf_counter()
    results = [bootstrap_curve(table, draws=DRAWS, seed=i) for i, table in enumerate(data)]
    ours = time.perf_counter() - started
    print(f"{METHODS} methods x {DRAWS} bootstrap draws ({len(SIZES)} sizes x {REPEATS} repeats): "
          f"{ours:.2f} s (target < 5 s)")
    # The same resampling as bootstrap_curve (seed 0, first method), refitted one draw at a time.
    table, first = data[0], results[0]
    values = table.to_numpy()
    picks = np.random.default_rng(0).integers(0, REPEATS, size=(DRAWS, REPEATS))[:CHECKED]
    t0 = time.perf_counter()
    fits = [fit_curve(SIZES, values[:, p].mean(axis=1)) for p in picks]
    one_by_one = (time.perf_counter() - t0) / CHECKED * DRAWS * METHODS
    gap = max(np.max(np.abs(f.predict(SIZES) - ((1 - first.a[i]) - first.b[i] * SIZES ** first.c[i])))
              for i, f in enumerate(fits))
    print(f"fit_curve (least_squares) one draw at a time: about {one_by_one:.1f} s for the same work "
          f"(ratio {one_by_one / ours:.0f}x); largest fitted-score difference over {CHECKED} draws {gap:.1g}")


if __name__ == "__main__":
    main()
