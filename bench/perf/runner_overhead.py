"""Runner overhead and two-process speed-up, measured side by side in one run.

A: `lopsided run` (serial, fresh store) on a fixed suite.
B: a plain hand-written scikit-learn loop doing the same fits: same training/test rows, same resampled
   sets (same resampler classes and seeds), same learners, scikit-learn metric calls, no store.
C: `lopsided run --jobs 2`.
D, E: the execution phase alone (runner.execute on the serial and processes backends, no store or report).
Each is timed ROUNDS times, interleaved, and medians are compared. Targets: A/B <= 1.10; A/C >= 1.7.
The fixed costs of C (starting two workers, about 1 s; writing the report, about 1.5 s) are serial, so the
end-to-end speed-up grows towards the execution-phase one (D/E) as suites grow.

    python bench/perf/runner_overhead.py [--rounds 3]
"""
import argparse
import statistics
import sys
import tempfile
import textwrap
import time
from pathlib import Path

from sklearn.metrics import average_precision_score, balanced_accuracy_score, matthews_corrcoef, roc_auc_score

from lopsided.execution.backends import open_backend
from lopsided.execution.driver import execute
from lopsided.execution.units import run_unit
from lopsided.jobs.run import load_all, run_suite
from lopsided.methods.learners import make_learner
from lopsided.methods.resamplers import make_resampler
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

SUITE = """
name = "perf-runner"
seed = 3
datasets = ["sklearn:digits?positive=1", "sklearn:digits?positive=7", "sklearn:wine?positive=0",
            "spectra:serum?donors=80&ratio=4&region=fingerprint&step=8"]
resamplers = ["none", "random-under", "topup-over"]
learners = [{ name = "adaboost-stumps", params = { n_estimators = 50 } },
            { name = "random-forest", params = { n_estimators = 50 } }, "logistic-regression"]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 2
folds = 3
ratios = ["natural", 4]
"""


def plain_loop(suite, datasets, units):
    """What a careful user would write by hand: resample once per training set, fit every learner."""
    results = []
    for unit in units:
        data = datasets[unit.coords.dataset]
        X_train, y_train = data.X[unit.train], data.y[unit.train]
        X_test, y_test = data.X[unit.test], data.y[unit.test]
        X_res, y_res = make_resampler(unit.resampler, unit.seed).rebalance(X_train, y_train)
        for cell in unit.cells:
            model = make_learner(cell.learner, cell.seed).fit(X_res, y_res)
            predicted = model.predict(X_test)
            proba = model.predict_proba(X_test)[:, 1]
            results.append((balanced_accuracy_score(y_test, predicted), matthews_corrcoef(y_test, predicted),
                            roc_auc_score(y_test, proba), average_precision_score(y_test, proba)))
    return results


def execution_phase(units, datasets, suite, jobs):
    """runner.execute alone: every unit run, results dropped."""
    workers = open_backend("auto", run_unit, datasets, (tuple(suite.preprocessing),), jobs)
    try:
        for _ in execute(units, workers):
            pass
    finally:
        workers.close()


def timed(action):
    started = time.perf_counter()
    action()
    return time.perf_counter() - started


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--rounds", type=int, default=3)
    args = parser.parse_args()
    work = Path(tempfile.mkdtemp(prefix="lopsided-perf-"))
    path = work / "suite.toml"
    path.write_text(textwrap.dedent(SUITE))
    suite = load_suite(path)
    datasets = load_all(suite)
    units = plan(suite, datasets).units
    cells = sum(len(u.cells) for u in units)
    print(f"suite: {len(units)} work units, {cells} cells; {args.rounds} interleaved rounds", flush=True)
    times = {"lopsided --jobs 1": [], "plain scikit-learn loop": [], "lopsided --jobs 2": [],
             "execution phase, 1 process": [], "execution phase, 2 processes": []}
    for round_no in range(args.rounds):
        times["lopsided --jobs 1"].append(timed(lambda: run_suite(path, RunOptions(out=work / f"a{round_no}", execution=ExecutionOptions(jobs=1, progress=False)))))
        times["plain scikit-learn loop"].append(timed(lambda: plain_loop(suite, datasets, units)))
        times["lopsided --jobs 2"].append(timed(lambda: run_suite(path, RunOptions(out=work / f"c{round_no}", execution=ExecutionOptions(jobs=2, progress=False)))))
        for jobs in (1, 2):
            times[f"execution phase, {jobs} process{'es' if jobs > 1 else ''}"].append(timed(
                lambda: execution_phase(units, datasets, suite, jobs)))
        print("  round", round_no + 1, " ".join(f"{k}: {v[-1]:.1f}s" for k, v in times.items()), flush=True)
    median = {k: statistics.median(v) for k, v in times.items()}
    for name, value in median.items():
        print(f"{name:>30}: median {value:.2f} s")
    overhead = median["lopsided --jobs 1"] / median["plain scikit-learn loop"]
    speedup = median["lopsided --jobs 1"] / median["lopsided --jobs 2"]
    print(f"runner overhead ratio (lopsided --jobs 1 / plain loop): {overhead:.3f}  (target <= 1.10)")
    phase = median["execution phase, 1 process"] / median["execution phase, 2 processes"]
    print(f"two-process speed-up, end to end (jobs 1 / jobs 2):    {speedup:.2f}  (target >= 1.7)")
    print(f"two-process speed-up, execution phase only:             {phase:.2f}")
    print("includes for lopsided: planning, hashing, report writing (CD plots, HTML) and the SQLite store")
    return 0


if __name__ == "__main__":
    sys.exit(main())
