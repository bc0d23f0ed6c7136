"""lopsided's built-in resamplers timed against imbalanced-learn's implementations of the same methods.

imbalanced-learn is a test/bench extra (pip install -e '.[test]'), used here as the reference only; nothing
in the ``lopsided`` package imports it. Each pair gets the same data, the same neighbour counts and one
BLAS / OpenMP thread. The pairs and parameters are those the output cross-checks in
tests/test_reference_library.py use (ENN with the majority vote, the 'mode' rule there; NearMiss with 3
and 3 neighbours; Tomek links removing the larger-class member, both members after SMOTE), plus the
methods those tests do not cover: SMOTE-NC (column 0 nominal with 4 codes), one-sided selection (1-NN,
one seed row), random over-sampling that keeps every original (topup-over), k-means cluster centres, and
SMOTE followed by Tomek links or ENN over all classes. Built-ins without a counterpart there (none,
class-weights, repeat-over, bootstrap-over) are left out.

Data: two classes, 10 % minority, at (n, d) = (5,000, 20), (50,000, 20) and (20,000, 400), from 20
Gaussian features (unit variance, the minority's mean shifted by 0.8 in each). At d = 400 those 20 are
spread over 400 correlated columns by a fixed random orthonormal map, plus noise of sd 0.05 in every
column, as in spectra (many columns, few underlying factors): the classes overlap as at d = 20. (400
independent shifted features would part the classes completely, and in 400 independent noise columns
SMOTE's points, averages of two rows, become everyone's nearest neighbours, so that editing after SMOTE
empties the majority class.) Cluster centres run at the smallest size only: both sides
spend nearly all their time in the same scikit-learn KMeans (one centre per kept row, 500 to 5,000
centres), which at the larger sizes would take most of the run and say nothing about lopsided.

Each pair is called once untimed (the first call pays for touching fresh memory), then timed in
interleaved rounds (ours and the reference alternate first; a call shorter than MIN_SECONDS is repeated
within its timing and averaged); the medians are compared. Times are CPU seconds of this process (user +
system): with one thread that is the wall time of an idle machine, and on a shared one it does not grow
while other programs hold the cores.

    python bench/perf/against_reference.py [--rounds 3] [--quick] [--methods enn tomek-links ...]
"""
import argparse
import os

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import statistics  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402

import numpy as np  # noqa: E402
from imblearn import combine, over_sampling, under_sampling  # noqa: E402
from sklearn.cluster import KMeans  # noqa: E402

from lopsided.methods.resamplers.cleaning import NeighbourEditing, OneSided, TomekCleaning  # noqa: E402
from lopsided.methods.resamplers.clusters import KMeansCentres  # noqa: E402
from lopsided.methods.resamplers.combined import SmoteThenEditing, SmoteThenTomek  # noqa: E402
from lopsided.methods.resamplers.nearmiss import NearMissUnder  # noqa: E402
from lopsided.methods.resamplers.random import RandomUnder, TopUpOver  # noqa: E402
from lopsided.methods.resamplers.smote import Adasyn, BorderlineSmote, Smote, SmoteNominal  # noqa: E402

SIZES = ((5_000, 20), (50_000, 20), (20_000, 400))
SMALLEST_ONLY = {"cluster-centres"}
FACTORS = 20
MIN_SECONDS = 0.5       # a short call is repeated until this much time has passed; its mean is the timing


def mode_enn(classes):
    return under_sampling.EditedNearestNeighbours(n_neighbors=3, kind_sel="mode", sampling_strategy=classes)


PAIRS = {      # registry name: (lopsided resampler, imbalanced-learn resampler), both built fresh per call
    "random-under": (lambda: RandomUnder(random_state=0),
                     lambda: under_sampling.RandomUnderSampler(random_state=0)),
    "topup-over": (lambda: TopUpOver(random_state=0),
                   lambda: over_sampling.RandomOverSampler(random_state=0)),
    "smote": (lambda: Smote(neighbours=5, random_state=0),
              lambda: over_sampling.SMOTE(k_neighbors=5, random_state=0)),
    "borderline-smote-1": (lambda: BorderlineSmote(variant=1, neighbours=5, danger_neighbours=10, random_state=0),
                           lambda: over_sampling.BorderlineSMOTE(kind="borderline-1", k_neighbors=5,
                                                                 m_neighbors=10, random_state=0)),
    "borderline-smote-2": (lambda: BorderlineSmote(variant=2, neighbours=5, danger_neighbours=10, random_state=0),
                           lambda: over_sampling.BorderlineSMOTE(kind="borderline-2", k_neighbors=5,
                                                                 m_neighbors=10, random_state=0)),
    "adasyn": (lambda: Adasyn(neighbours=5, random_state=0),
               lambda: over_sampling.ADASYN(n_neighbors=5, random_state=0)),
    "smote-nc": (lambda: SmoteNominal(nominal=[0], neighbours=5, random_state=0),
                 lambda: over_sampling.SMOTENC(categorical_features=[0], k_neighbors=5, random_state=0)),
    "tomek-links": (lambda: TomekCleaning(),
                    lambda: under_sampling.TomekLinks()),
    "enn": (lambda: NeighbourEditing(neighbours=3),
            lambda: mode_enn("auto")),
    "nearmiss-1": (lambda: NearMissUnder(rule=1, neighbours=3),
                   lambda: under_sampling.NearMiss(version=1, n_neighbors=3)),
    "nearmiss-2": (lambda: NearMissUnder(rule=2, neighbours=3),
                   lambda: under_sampling.NearMiss(version=2, n_neighbors=3)),
    "nearmiss-3": (lambda: NearMissUnder(rule=3, neighbours=3, keep_neighbours=3),
                   lambda: under_sampling.NearMiss(version=3, n_neighbors=3, n_neighbors_ver3=3)),
    "one-sided-selection": (lambda: OneSided(random_state=0),
                            lambda: under_sampling.OneSided(n_neighbors=1, n_seeds_S=1, random_state=0)),
    "cluster-centres": (lambda: KMeansCentres(random_state=0),
                        lambda: under_sampling.ClusterCentroids(estimator=KMeans(n_init=1, random_state=0),
                                                                voting="soft", random_state=0)),
    "smote-tomek": (lambda: SmoteThenTomek(neighbours=5, random_state=0),
                    lambda: combine.SMOTETomek(smote=over_sampling.SMOTE(k_neighbors=5, random_state=0),
                                               tomek=under_sampling.TomekLinks(sampling_strategy="all"),
                                               random_state=0)),
    "smote-enn": (lambda: SmoteThenEditing(neighbours=5, edit_neighbours=3, random_state=0),
                  lambda: combine.SMOTEENN(smote=over_sampling.SMOTE(k_neighbors=5, random_state=0),
                                           enn=mode_enn("all"), random_state=0)),
}


def data(n, d, nominal=False, seed=0):
    """n rows, exactly n // 10 of them minority (label 1), from FACTORS Gaussian features spread over d
    columns (see the module docstring); with ``nominal`` column 0 holds codes 0-3."""
    rng = np.random.default_rng(seed)
    y = rng.permutation(np.r_[np.zeros(n - n // 10, int), np.ones(n // 10, int)])
    X = rng.normal(size=(n, FACTORS)) + 0.8 * y[:, None]
    if d > FACTORS:
        spread = np.linalg.qr(rng.normal(size=(d, FACTORS)))[0]        # d x FACTORS, orthonormal columns
        X = X @ spread.T + 0.05 * rng.normal(size=(n, d))
    if nominal:
        X[:, 0] = rng.integers(0, 4, n)
    return X, y


def seconds(make, X, y):
    """CPU seconds per fit_resample call of a fresh resampler (the mean of as many calls as fill MIN_SECONDS)."""
    calls, started = 0, time.process_time()
    while calls == 0 or time.process_time() - started < MIN_SECONDS:
        make().rebalance(X, y)
        calls += 1
    return (time.process_time() - started) / calls


def measure(n, d, rounds, methods):
    """{method: (lopsided median s, reference median s)} at one size."""
    plain, nominal = data(n, d), data(n, d, nominal=True)
    pairs = {name: PAIRS[name] for name in methods if (n, d) == SIZES[0] or name not in SMALLEST_ONLY}
    inputs = {name: nominal if name == "smote-nc" else plain for name in pairs}
    for name, (ours, theirs) in pairs.items():         # untimed warm-up call each
        seconds(ours, *inputs[name])
        seconds(theirs, *inputs[name])
    times = {name: ([], []) for name in pairs}
    for round_no in range(rounds):
        for name, (ours, theirs) in pairs.items():
            first_ours = round_no % 2 == 0
            for side in (0, 1) if first_ours else (1, 0):
                times[name][side].append(seconds((ours, theirs)[side], *inputs[name]))
    return {name: (statistics.median(a), statistics.median(b)) for name, (a, b) in times.items()}


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--quick", action="store_true", help="the smallest size only")
    parser.add_argument("--methods", nargs="+", choices=sorted(PAIRS), default=list(PAIRS),
                        help="only these resamplers (default: all with a counterpart)")
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    sizes = SIZES[:1] if args.quick else SIZES
    print(f"one thread, CPU seconds per call; median of {args.rounds} interleaved rounds after one untimed "
          f"call each; reference: imbalanced-learn", flush=True)
    print(f"{'method':>20} {'n x d':>12} {'lopsided s':>11} {'reference s':>12} {'ratio':>7}", flush=True)
    ratios = []
    for n, d in sizes:
        for name, (ours, theirs) in measure(n, d, args.rounds, args.methods).items():
            ratios.append(ours / theirs)
            print(f"{name:>20} {f'{n:,} x {d}':>12} {ours:>11.3f} {theirs:>12.3f} {ours / theirs:>7.2f}", flush=True)
    print(f"{sum(r <= 1.0 for r in ratios)} of {len(ratios)} at or below 1.0 "
          f"(lopsided time / reference time)")


if __name__ == "__main__":
    main()
