"""lopsided against what a practitioner writes instead: a loop of imbalanced-learn pipelines fed to
scikit-learn's cross_validate, on the same 4-dataset x 4-resampler x 3-learner grid with 3 x 3 folds.

(a) loop: for every dataset, resampler and learner, an imbalanced-learn Pipeline (sampler, then learner)
    handed to ``cross_validate`` with RepeatedStratifiedKFold (3 folds, 3 repeats), scoring balanced
    accuracy only, the means kept in a dict.
(b) ``lopsided.benchmark.run_suite`` on the same grid written as a suite file, with one worker (the serial
    backend), and (c) with two worker processes; each round with a fresh store and output folder.
Timed in interleaved rounds; medians and the ratios lopsided / loop are printed (targets: <= 0.9 with one
worker, <= 0.8 with two). On a shared machine the wall-clock ratios move with other people's load, so the
CPU seconds of each (this process and its worker processes) are printed too: their ratio shows the work
each does, whatever the load. imbalanced-learn is a test/bench extra, never imported by the lopsided package.

The same in both:
- the data: the same four built-in datasets, loaded once before timing (lopsided keeps loaded datasets in
  the process, and the loop uses those very arrays), so loading is outside every timing;
- the amount of training data: the suite's protocol asks for the natural imbalance ratio and all rows
  (``ratios = ["natural"]``, ``sizes = ["all"]``), so each fit sees a whole training part of a 3-fold split;
- 3 repeats x 3 stratified folds, 432 fitted cells (48 combinations x 9 splits);
- the learners and their settings: AdaBoost over depth-1 trees with 50 rounds (learning rate 1), a random
  forest of 50 trees (sqrt(d) features per split, n_jobs 1), standardised logistic regression (C = 1,
  max_iter 2000) with the scaler fitted after resampling, on the training part only;
- the resampling methods and their settings: random under-sampling to 1:1, SMOTE (k = 5), edited nearest
  neighbours (k = 3, majority vote, largest class edited), or none; resampling touches training rows only;
- one BLAS / OpenMP thread per process.

Not the same:
- the splits: the loop's RepeatedStratifiedKFold ignores groups; lopsided splits the two spectra sets with
  StratifiedGroupKFold by donor / particle (no donor on both sides), so fold sizes differ a little;
- resampling calls: a pipeline resamples once per learner (3 x per split); lopsided resamples each training
  part once and fits all three learners on it;
- the resampler code: lopsided's own against imbalanced-learn's (outputs differ where the docstrings of
  lopsided's resamplers say so, e.g. SMOTE spreads seeds evenly where that library draws them);
- what is computed per fit: the loop predicts and scores balanced accuracy; lopsided also takes class
  scores and computes all its metrics (balanced accuracy, G-mean, MCC, minority F1, average precision,
  ROC AUC, sensitivity, specificity, per-class recall), times each fit and records warnings;
- what is kept: the loop keeps 48 means in memory; lopsided plans cells with stable keys, stores every
  cell in SQLite and writes the leaderboard folder (tables, CD figures, pages) at the end.

    python bench/perf/practitioner_loop.py [--rounds 3]
"""
import argparse
import os
import resource

for _name in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ[_name] = "1"

import statistics  # noqa: E402
import sys  # noqa: E402
import tempfile  # noqa: E402
import textwrap  # noqa: E402
import time  # noqa: E402
import warnings  # noqa: E402
from pathlib import Path  # noqa: E402

from imblearn.over_sampling import SMOTE  # noqa: E402
from imblearn.pipeline import Pipeline  # noqa: E402
from imblearn.under_sampling import EditedNearestNeighbours, RandomUnderSampler  # noqa: E402
from sklearn.ensemble import AdaBoostClassifier, RandomForestClassifier  # noqa: E402
from sklearn.linear_model import LogisticRegression  # noqa: E402
from sklearn.model_selection import RepeatedStratifiedKFold, cross_validate  # noqa: E402
from sklearn.preprocessing import StandardScaler  # noqa: E402
from sklearn.tree import DecisionTreeClassifier  # noqa: E402

from lopsided.jobs.run import load_all, run_suite  # noqa: E402
from lopsided.options import ExecutionOptions, RunOptions  # noqa: E402
from lopsided.planning.suite import load_suite  # noqa: E402

SEED = 11
SUITE = f"""
name = "practitioner-grid"
seed = {SEED}
datasets = ["sklearn:digits?positive=1", "sklearn:wine?positive=0",
            "spectra:serum?donors=60&ratio=4&region=fingerprint&step=8",
            "spectra:polymers?positive=pet&particles=200&region=fingerprint&step=8"]
resamplers = ["none", "random-under", "smote", "enn"]
learners = [{{ name = "adaboost-stumps", params = {{ n_estimators = 50 }} }},
            {{ name = "random-forest", params = {{ n_estimators = 50 }} }},
            "logistic-regression"]
[protocol]
repeats = 3
folds = 3
ratios = ["natural"]
sizes = ["all"]
"""
SAMPLERS = {                 # lopsided resampler name -> the imbalanced-learn sampler with the same settings
    "none": lambda seed: [],
    "random-under": lambda seed: [("sampler", RandomUnderSampler(random_state=seed))],
    "smote": lambda seed: [("sampler", SMOTE(k_neighbors=5, random_state=seed))],
    "enn": lambda seed: [("sampler", EditedNearestNeighbours(n_neighbors=3, kind_sel="mode"))],
}
LEARNERS = {                 # lopsided learner name -> the scikit-learn steps with the same settings
    "adaboost-stumps": lambda seed: [("learner", AdaBoostClassifier(DecisionTreeClassifier(max_depth=1),
                                                                    n_estimators=50, learning_rate=1.0,
                                                                    random_state=seed))],
    "random-forest": lambda seed: [("learner", RandomForestClassifier(n_estimators=50, max_features="sqrt",
                                                                      n_jobs=1, random_state=seed))],
    "logistic-regression": lambda seed: [("scale", StandardScaler()),
                                         ("learner", LogisticRegression(C=1.0, max_iter=2000))],
}


def practitioner_loop(datasets):
    """{(dataset, resampler, learner): mean balanced accuracy over 3 x 3 folds}."""
    means = {}
    for reference, data in datasets.items():
        for resampler, sampler in SAMPLERS.items():
            for learner, steps in LEARNERS.items():
                model = Pipeline(sampler(SEED) + steps(SEED))
                folds = RepeatedStratifiedKFold(n_splits=3, n_repeats=3, random_state=SEED)
                result = cross_validate(model, data.X, data.y, cv=folds, scoring="balanced_accuracy")
                means[reference, resampler, learner] = result["test_score"].mean()
    return means


def cpu_seconds():
    """User + system seconds of this process and of its finished child processes."""
    return sum(r.ru_utime + r.ru_stime for r in (resource.getrusage(resource.RUSAGE_SELF),
                                                 resource.getrusage(resource.RUSAGE_CHILDREN)))


def timed(action):
    """(wall seconds, CPU seconds, what the action returned)."""
    started, cpu = time.perf_counter(), cpu_seconds()
    outcome = action()
    return time.perf_counter() - started, cpu_seconds() - cpu, outcome


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    work = Path(tempfile.mkdtemp(prefix="lopsided-practitioner-"))
    path = work / "suite.toml"
    path.write_text(textwrap.dedent(SUITE))
    datasets = load_all(load_suite(path))           # loaded once: both sides use these arrays from here on
    names = ("loop, cross_validate", "lopsided, 1 worker", "lopsided, 2 workers")
    times = {name: [] for name in names}
    cpu = {name: [] for name in names}
    print(f"grid: 4 datasets x 4 resamplers x 3 learners, 3 x 3 folds; {args.rounds} interleaved rounds; "
          f"work folder {work}", flush=True)
    for round_no in range(args.rounds):
        runs = {
            names[0]: lambda: practitioner_loop(datasets),
            names[1]: lambda: run_suite(path, RunOptions(out=work / f"serial-{round_no}", store=work / f"serial-{round_no}.sqlite", execution=ExecutionOptions(jobs=1, backend="serial", progress=False))),
            names[2]: lambda: run_suite(path, RunOptions(out=work / f"two-{round_no}", store=work / f"two-{round_no}.sqlite", execution=ExecutionOptions(jobs=2, backend="processes", progress=False))),
        }
        order = names[round_no % 3:] + names[:round_no % 3]      # each side goes first in turn
        for name in order:
            seconds, used, outcome = timed(runs[name])
            times[name].append(seconds)
            cpu[name].append(used)
            if name == names[0]:
                assert len(outcome) == 48
            else:
                assert len(outcome.cells) == 432 and (outcome.cells.status == "ok").all()
        print(f"  round {round_no + 1}: " + ", ".join(f"{n} {times[n][-1]:.1f} s ({cpu[n][-1]:.1f} CPU s)"
                                                     for n in names), flush=True)
    median = {name: statistics.median(values) for name, values in times.items()}
    used = {name: statistics.median(values) for name, values in cpu.items()}
    for name in names:
        print(f"{name:>22}: median {median[name]:.2f} s, {used[name]:.2f} CPU s")
    one, two = (median[n] / median[names[0]] for n in names[1:])
    print(f"lopsided / loop, 1 worker:  {one:.2f}  (target <= 0.9); CPU seconds {used[names[1]] / used[names[0]]:.2f}")
    print(f"lopsided / loop, 2 workers: {two:.2f}  (target <= 0.8); CPU seconds {used[names[2]] / used[names[0]]:.2f}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
