"""Who leads, and how firmly: ties at the top and the bootstrap share of ranking first.

A method that ranks first by 0.05 of a rank on one set of datasets might not on another. Resampling the
datasets with replacement (each dataset's ranks travel with it, as for the rank intervals; Efron &
Tibshirani 1993, ch. 13) and counting how often each method has the best average rank gives its share of
ranking first over draws of datasets like these (a description of stability, not a probability: the
bootstrap of a maximum leans towards the observed leader); a draw in which several methods share the best
average rank counts 1 / (number sharing) for each. Methods whose average ranks are equal are
tied: no order among them is claimed (no alphabetical winner).
"""
import numpy as np
import pandas as pd

SAMPLES = 4000


def tied_first(average_ranks, tolerance=1e-9):
    """The methods sharing the best average rank (usually one)."""
    best = float(np.min(average_ranks.to_numpy()))
    return [m for m, r in average_ranks.items() if r - best <= tolerance]


def first_place_share(ranks, samples=SAMPLES, seed=0):
    """{method: share of bootstrap draws of the datasets in which it has the best average rank}.

    ``ranks``: datasets x methods rank table (1 = best)."""
    R = ranks.to_numpy(dtype=float)
    rng = np.random.default_rng(seed)
    means = R[rng.integers(0, len(R), size=(samples, len(R)))].mean(axis=1)
    best = means <= means.min(axis=1, keepdims=True) + 1e-12
    share = (best / best.sum(axis=1, keepdims=True)).mean(axis=0)
    return pd.Series(share, index=ranks.columns).sort_values(ascending=False, kind="mergesort")
