"""The backends side by side in one run: runner overhead, two processes, a Dask cluster, a million stored cells.

A  runner overhead: plan + run_plan on the serial backend (fresh store, no report) against a plain
   hand-written scikit-learn loop over the same resampled sets (runner_overhead.plain_loop: same rows,
   resamplers, seeds and learners, scikit-learn metric calls, no store), both with one BLAS / OpenMP
   thread, as every worker has. Target <= 1.05.
B  `lopsided run --jobs 2` (processes) over `lopsided run --backend serial`, end to end: each a fresh
   `lopsided run` process (start, planning, units, store, report) on a suite of >= 200 work units.
   Target >= 1.8. Beside it, what the machine allows: the fit, predict and resample seconds the workers
   timed for the same cells, summed, in the two-worker run over the serial one. Above 1, each core does
   the same scikit-learn work slower while the other is busy too (shared caches and memory bandwidth,
   a host's other guests), and 2 / that ratio bounds the speed-up of the units themselves.
C  `lopsided run --backend dask --jobs 2` (a LocalCluster of 2 single-threaded workers, started and
   stopped by the run) over `lopsided run --jobs 2`, end to end. Target <= 1.15.
   A, B and C are timed ROUNDS times, interleaved, and their medians compared. On a shared machine the
   wall-clock ratios move with other people's load, so the CPU seconds each run spent (this process, or
   the `lopsided run` process, and their worker processes) are printed too: their ratios show the
   overhead itself, whatever the load.
D  the store: 1,000,000 synthetic cell rows written as the runner writes them (500 cells of whole units
   per transaction), then read back and the scores table rebuilt (report.tables.scores_table), in a
   fresh process: seconds and peak memory (targets < 60 s and < 2 GB).
That each unit is resampled exactly once on every backend is a test (tests/test_backends.py), not a timing.

B and C can also be timed on a real suite file, e.g. the README's job (whose `--jobs 2` runs also time
`bench/quick.toml` against its 120 s target):

    python bench/perf/backends.py [--rounds 3] [--part all|runs|store] [--suite bench/quick.toml]
"""
import argparse
import json
import resource
import statistics
import subprocess
import sys
import tempfile
import textwrap
import threading
import time
from pathlib import Path

import pandas as pd
from runner_overhead import plain_loop, timed
from threadpoolctl import threadpool_limits

from lopsided import __version__
from lopsided.errors import LopsidedError
from lopsided.execution.driver import BATCH_CELLS, run_plan
from lopsided.execution.store import Store
from lopsided.jobs.run import load_all
from lopsided.options import ExecutionOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite
from lopsided.records import CellRow

SUITE = """
name = "perf-backends"
seed = 5
datasets = ["sklearn:digits?positive=1", "sklearn:digits?positive=7", "sklearn:wine?positive=0",
            "spectra:serum?donors=80&ratio=4&region=fingerprint&step=8"]
resamplers = ["none", "random-under", "smote"]
learners = [{ name = "random-forest", params = { n_estimators = 60 } }, "logistic-regression"]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 2
folds = 5
ratios = ["natural", 4]
"""


def measured(action):
    """(wall seconds, CPU seconds of this process and every process under it) of action(). Worker
    processes may belong to a fork server rather than to us, so the process tree is sampled every 0.1 s
    (psutil, installed with Dask) and each process's last reading counted."""
    import psutil
    me = psutil.Process()

    def readings():
        found = {}
        for process in me.children(recursive=True):
            try:
                found[process.pid] = sum(process.cpu_times()[:2])      # its own user + system time
            except psutil.Error:
                pass
        return found

    before, last, done = readings(), {}, threading.Event()

    def sample():
        while not done.wait(0.1):
            last.update(readings())

    sampler = threading.Thread(target=sample)
    own, started = sum(me.cpu_times()[:2]), time.perf_counter()
    sampler.start()
    try:
        action()
    finally:
        done.set()
        sampler.join()
    seconds = time.perf_counter() - started
    last.update(readings())
    tree = sum(value - before.get(pid, 0.0) for pid, value in last.items())
    return seconds, sum(me.cpu_times()[:2]) - own + tree


def command_line(path, out, *options):
    """A fresh `lopsided run` process, as a user starts it, into a fresh store."""
    subprocess.run([sys.executable, "-m", "lopsided.cli", "run", str(path), "--out", str(out), "--store",
                    str(out / "store.sqlite"), "--quiet", *options], check=True, stdout=subprocess.DEVNULL)


def runner_alone(path, work, tag):
    """plan + run_plan on the serial backend into a fresh store (no report)."""
    suite = load_suite(path)
    datasets = load_all(suite)
    db = Store(work / f"alone-{tag}.sqlite")
    try:
        run_plan(plan(suite, datasets), datasets, suite, db, ExecutionOptions(progress=False, backend="serial"))
    finally:
        db.close()


def compute_seconds(out):
    """Seconds the cells of a finished run spent in their learners and resamplers (fit + predict per
    cell, resample once per unit), as the workers timed them."""
    cells = pd.read_csv(out / "cells.csv")
    return cells.fit_seconds.sum() + cells.predict_seconds.sum() + cells.groupby("unit_key").resample_seconds.first().sum()


def one_thread_loop(suite, datasets, units):
    with threadpool_limits(1):
        plain_loop(suite, datasets, units)


def timed_runs(rounds, suite_file=None):
    try:
        import distributed  # noqa: F401  (C needs it)
    except ImportError:
        sys.exit("C needs dask[distributed]: pip install 'lopsided[dask]'")
    with tempfile.TemporaryDirectory(prefix="lopsided-backends-") as folder:
        timed_runs_in(Path(folder), rounds, suite_file)


def timed_runs_in(work, rounds, suite_file=None):
    path = Path(suite_file) if suite_file else work / "suite.toml"
    if not suite_file:
        path.write_text(textwrap.dedent(SUITE))
    suite = load_suite(path)
    datasets = load_all(suite)
    units = plan(suite, datasets).units
    print(f"suite {path.name}: {len(units)} work units, {sum(len(u.cells) for u in units)} cells; {rounds} "
          "interleaved rounds", flush=True)
    runner, plain = "runner, serial, no report", "plain scikit-learn loop"
    serial, processes, dask = "end to end, serial", "end to end, processes x2", "end to end, dask x2"
    actions = {} if suite_file else {         # A on the built-in suite only (the loop knows its learners)
        runner: lambda r: runner_alone(path, work, r),
        plain: lambda r: one_thread_loop(suite, datasets, units),
    }
    actions.update({
        serial: lambda r: command_line(path, work / f"serial{r}", "--backend", "serial"),
        processes: lambda r: command_line(path, work / f"processes{r}", "--jobs", "2"),
        dask: lambda r: command_line(path, work / f"dask{r}", "--backend", "dask", "--jobs", "2"),
    })
    wall, cpu = {name: [] for name in actions}, {name: [] for name in actions}
    slower = []              # per round: the same cells' compute seconds in two workers over serial
    for r in range(rounds):
        for name, action in actions.items():
            seconds, spent = measured(lambda: action(r))
            wall[name].append(seconds)
            cpu[name].append(spent)
        slower.append(compute_seconds(work / f"processes{r}") / compute_seconds(work / f"serial{r}"))
        print(f"  round {r + 1}: " + ", ".join(f"{k} {v[-1]:.1f} s" for k, v in wall.items()), flush=True)
    median = {k: statistics.median(v) for k, v in wall.items()}
    used = {k: statistics.median(v) for k, v in cpu.items()}
    for name in actions:
        print(f"{name:>28}: median {median[name]:.2f} s, CPU {used[name]:.2f} s")
    if runner in median:
        print(f"A runner overhead, serial runner / plain loop:     {median[runner] / median[plain]:.3f} "
              f"(target <= 1.05); CPU {used[runner] / used[plain]:.3f}")
    print(f"B two processes over serial, end to end:           {median[serial] / median[processes]:.2f}  "
          f"(target >= 1.8); CPU spent, processes / serial {used[processes] / used[serial]:.3f}")
    print(f"  this machine with both cores busy: the same cells' fit, predict and resample seconds took "
          f"{statistics.median(slower):.3f}x as long in two workers as in the serial run (rounds: "
          f"{', '.join(f'{x:.3f}' for x in slower)}), so two workers can gain at most "
          f"{2 / statistics.median(slower):.2f}x on the units themselves")
    print(f"C Dask LocalCluster x2 / processes x2, end to end: {median[dask] / median[processes]:.3f} "
          f"(target <= 1.15); CPU {used[dask] / used[processes]:.3f}")


def synthetic_rows(n_units, learners=10):
    """CellRows as the runner makes them (metrics as JSON text, as workers send them): 10 learners per unit,
    metrics of a two-class dataset."""
    code = json.dumps({"learner": f"lopsided {__version__}", "lopsided": __version__, "preprocessing": [],
                       "protocol": 1, "resampler": f"lopsided {__version__}"}, sort_keys=True, separators=(",", ":"))
    for u in range(n_units):
        dataset, rest = divmod(u, 2000)
        point, rest = divmod(rest, 500)
        fold, resampler = divmod(rest, 20)
        rows = []
        for learner in range(learners):
            value = ((u * learners + learner) % 997) / 997
            rows.append(CellRow(
                key=f"{u:012d}{learner:012d}", unit_key=f"{u:024d}", dataset=f"keel:set{dataset:03d}",
                dataset_checksum=f"{dataset:016x}", preprocessing="[]", ratio=["natural", "2", "4", "8"][point],
                size="all", repeat=fold // 5, fold=fold % 5, resampler=f"resampler-{resampler:02d}",
                learner=f"learner-{learner}", status="ok",
                metrics=json.dumps({m: value for m in ("balanced_accuracy", "g_mean", "mcc", "f1_minority",
                                                       "average_precision", "roc_auc", "sensitivity",
                                                       "specificity", "recall:negative", "recall:positive")}),
                n_train=400, n_train_minority=40, n_resampled=720, n_test=100,
                resample_seconds=0.01, fit_seconds=0.05, predict_seconds=0.001, code_version=code,
                seed=u * learners + learner, finished_at="2026-12-03T08:00:00+00:00"))
        yield rows


def store(cells=1_000_000):
    """Part D, meant for a fresh process (peak memory is the process's own)."""
    with tempfile.TemporaryDirectory(prefix="lopsided-store-") as folder:
        store_in(Path(folder) / "store.sqlite", cells)


def store_in(path, cells):
    from lopsided.report.tables import scores_table
    db = Store(path)
    written, batch = 0.0, []
    for rows in synthetic_rows(cells // 10):      # made outside the clock: workers make rows, the driver writes
        batch.extend(rows)
        if len(batch) >= BATCH_CELLS:
            written += timed(lambda: db.write_cells(batch))
            batch = []
    if batch:
        written += timed(lambda: db.write_cells(batch))
    peak_written = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    started = time.perf_counter()
    table = db.cells()
    read = time.perf_counter() - started
    scores = scores_table(table)
    rebuilt = time.perf_counter() - started
    db.close()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
    print(f"D store: {len(table):,} cells written in {written:.1f} s ({BATCH_CELLS} per transaction, peak memory "
          f"{peak_written:.0f} MB); read back in {read:.1f} s and {len(scores):,} score rows rebuilt, "
          f"{rebuilt:.1f} s in all; {written + rebuilt:.1f} s (target < 60 s); peak memory {peak:.0f} MB "
          f"(target < 2048 MB); store file {path.stat().st_size / 2**20:.0f} MB")


def main():
    parser = argparse.ArgumentParser()
    parser.add_argument("--rounds", type=int, default=3)
    parser.add_argument("--part", choices=("all", "runs", "store", "store-here"), default="all")
    parser.add_argument("--suite", help="time B and C on this suite file instead (e.g. bench/quick.toml, the "
                                        "README's job); A needs the built-in suite and is left out")
    args = parser.parse_args()
    if args.part in ("all", "runs"):
        try:
            timed_runs(args.rounds, args.suite)
        except LopsidedError as exc:          # a --suite that does not load: one line, as lopsided says it
            sys.exit(f"backends.py: {exc}")
    if args.part in ("all", "store"):       # a fresh process, so that its peak memory is the store's alone
        subprocess.run([sys.executable, __file__, "--part", "store-here"], check=True)
    if args.part == "store-here":
        store()
    return 0


if __name__ == "__main__":
    sys.exit(main())
