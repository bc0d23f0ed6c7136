"""Backends: the same cells everywhere, each unit resampled once, thread-safe per-cell records,
versions checked, batched whole-unit writes, clean stops on SIGINT / SIGTERM, lost Dask workers.

The Dask tests start (and stop) their own clusters on 127.0.0.1 and are skipped, with the reason
stated, only when dask[distributed] is not installed. The classes below and those of
plugins_for_tests.py are plugins the runs load by import path (``test_backends:Inspects``,
``plugins_for_tests:Gated``); subprocesses and worker processes find them through PYTHONPATH.
"""
import json
import os
import re
import signal
import sqlite3
import subprocess
import sys
import textwrap
import threading
import time
import warnings
from pathlib import Path

import pandas as pd
import pytest
from sklearn.base import BaseEstimator, ClassifierMixin
from sklearn.linear_model import LogisticRegression
from sklearn.pipeline import make_pipeline
from sklearn.preprocessing import StandardScaler
from threadpoolctl import threadpool_info

import lopsided.execution.driver as driver
import lopsided.execution.units as units
from lopsided import __version__
from lopsided.cli import main
from lopsided.execution.backends import BackendError, choose, open_backend
from lopsided.execution.backends.worker import captured_warnings
from lopsided.execution.driver import run_plan
from lopsided.execution.store import Store
from lopsided.execution.units import run_unit
from lopsided.jobs.run import load_all, run_suite
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

HERE = Path(__file__).parent
METRICS = ["balanced_accuracy", "mcc", "g_mean", "roc_auc", "average_precision"]
NO_DASK = "dask[distributed] is not installed (pip install 'lopsided[dask]')"
NO_DASHBOARD = {"scheduler_kwargs": {"dashboard": False, "dashboard_address": "127.0.0.1:0"}}    # no port 8787


class Inspects(ClassifierMixin, BaseEstimator):
    """Logistic regression that reports its n_jobs and the largest BLAS / OpenMP pool as a warning."""

    def __init__(self, n_jobs=4, random_state=None):
        self.n_jobs, self.random_state = n_jobs, random_state

    def fit(self, X, y):
        threads = max((pool["num_threads"] for pool in threadpool_info()), default=1)
        warnings.warn(f"n_jobs={self.n_jobs} threads={threads}")
        self.model_ = make_pipeline(StandardScaler(), LogisticRegression()).fit(X, y)
        self.classes_ = self.model_.classes_
        return self

    def predict(self, X):
        return self.model_.predict(X)

    def predict_proba(self, X):
        return self.model_.predict_proba(X)


class Announces(Inspects):
    """Warns with its own seed, pauses (so that units running in threads overlap), warns again."""

    def fit(self, X, y):
        warnings.warn(f"seed {self.random_state} first")
        time.sleep(0.02)
        warnings.warn(f"seed {self.random_state} second")
        return super().fit(X, y)


def write_suite(folder, name, resampler, learners='["logistic-regression", "test_backends:Inspects"]', repeats=2):
    path = folder / f"{name}.toml"
    path.write_text(textwrap.dedent(f"""
        name = "{name}"
        seed = 11
        datasets = ["sklearn:wine?positive=2", "sklearn:iris?positive=1"]
        resamplers = ["none", {json.dumps(resampler)}]
        learners = {learners}
        metrics = ["balanced_accuracy", "mcc"]
        [protocol]
        repeats = {repeats}
        folds = 3
        ratios = ["natural"]
        sizes = ["all"]
        """))
    return path


def run_cells(path, store, beside=None, **options):
    """Run a suite's plan into ``store`` (no leaderboard) with ExecutionOptions ``options`` and ``beside`` work:
    (counts, the plan's stored cells)."""
    suite = load_suite(path)
    datasets = load_all(suite)
    full = plan(suite, datasets)
    db = Store(store)
    try:
        counts = run_plan(full, datasets, suite, db, ExecutionOptions(progress=False, **options), beside)
        return counts, db.cells(full.keys)
    finally:
        db.close()


def metric_text(cells):
    """{cell key: its metrics as exact text} (float repr round-trips: equal text = identical numbers)."""
    return {row["key"]: json.dumps([row[m] for m in METRICS]) for _, row in cells.iterrows()}


def calls(log):
    """Process ids of the resample calls logged so far (and the log emptied for the next run)."""
    pids = log.read_text().split() if log.exists() else []
    log.unlink(missing_ok=True)
    return pids


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("backends")


@pytest.fixture(scope="module")
def counted(folder):
    """A suite whose second resampler logs its calls, and its serial run (the reference)."""
    log = folder / "calls.txt"
    path = write_suite(folder, "counted", f"plugins_for_tests:Gated?log={log}")
    reference = run_suite(path, RunOptions(out=folder / "serial", execution=ExecutionOptions(progress=False, backend="serial")))
    return path, log, reference, calls(log)


@pytest.fixture(scope="module")
def cluster():
    distributed = pytest.importorskip("distributed", reason=NO_DASK)
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                  **NO_DASHBOARD) as local:
        yield local


def gated_units(path):
    suite = load_suite(path)
    return [u for u in plan(suite, load_all(suite)).units if u.resampler.name == "plugins_for_tests:Gated"]


def test_serial_runs_resample_each_unit_once_and_limit_threads_and_jobs(counted):
    path, _, reference, pids = counted
    assert len(pids) == len(gated_units(path)) == 2 * 2 * 3          # datasets x repeats x folds
    inspected = reference.cells[reference.cells["learner"] == "test_backends:Inspects"]
    assert inspected["warning"].str.startswith("UserWarning: n_jobs=1 threads=1").all()


def test_two_processes_give_identical_cells_and_resample_each_unit_once(counted, folder):
    path, log, reference, _ = counted
    meet = Path(f"{log}.meet")
    meet.write_text("2")                                  # both workers must take part
    try:
        result = run_suite(path, RunOptions(out=folder / "processes", execution=ExecutionOptions(progress=False, jobs=2)))
    finally:
        meet.unlink()
    pids = calls(log)
    assert len(pids) == len(gated_units(path)) and len(set(pids)) == 2 and str(os.getpid()) not in pids
    assert metric_text(result.cells) == metric_text(reference.cells)
    inspected = result.cells[result.cells["learner"] == "test_backends:Inspects"]
    assert inspected["warning"].str.startswith("UserWarning: n_jobs=1 threads=1").all()
    # the files people read are the same too
    read = [pd.read_csv(folder / run / "cells.csv") for run in ("serial", "processes")]
    assert read[0][METRICS].equals(read[1][METRICS])


def test_a_dask_cluster_gives_identical_cells_and_resamples_each_unit_once(counted, folder, cluster):
    path, log, reference, _ = counted
    result = run_suite(path, RunOptions(out=folder / "dask", execution=ExecutionOptions(progress=False, scheduler=cluster.scheduler_address)))
    pids = calls(log)
    assert len(pids) == len(gated_units(path)) and str(os.getpid()) not in pids
    assert metric_text(result.cells) == metric_text(reference.cells)
    inspected = result.cells[result.cells["learner"] == "test_backends:Inspects"]
    assert inspected["warning"].str.startswith("UserWarning: n_jobs=1 threads=1").all()
    read = [pd.read_csv(folder / run / "cells.csv") for run in ("serial", "dask")]
    assert read[0][METRICS].equals(read[1][METRICS])


def test_a_lost_dask_worker_only_causes_its_units_to_run_again(folder, cluster):
    distributed = pytest.importorskip("distributed", reason=NO_DASK)
    log, gate = folder / "lost.txt", folder / "lost.gate"
    path = write_suite(folder, "lost", f"plugins_for_tests:Gated?log={log}&gate={gate}&free=3",
                       learners='["logistic-regression"]')
    _, reference = run_cells(path, folder / "lost-serial.sqlite")       # no gate yet: nothing waits
    calls(log)
    with distributed.Client(cluster.scheduler_address, set_as_default=False) as client:
        workers = set(client.run(os.getpid).values())
    killed = []

    def kill_a_waiting_worker():
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and not killed:
            pids = log.read_text().split() if log.exists() else []
            if len(pids) > 3 and int(pids[-1]) in workers:      # a worker waits at the gate: kill it
                killed.append(int(pids[-1]))
                os.kill(killed[0], signal.SIGKILL)
            time.sleep(0.02)
        gate.unlink()

    gate.touch()
    killer = threading.Thread(target=kill_a_waiting_worker)
    killer.start()
    try:
        _, cells = run_cells(path, folder / "lost.sqlite", scheduler=cluster.scheduler_address)
    finally:
        killer.join()
    pids = calls(log)
    units = len(gated_units(path))
    assert killed and killed[0] in map(int, pids)
    assert len(pids) > units                           # the lost worker's units ran again, elsewhere
    assert (cells["status"] == "ok").all()
    assert metric_text(cells) == metric_text(reference)


def test_warnings_stay_with_their_cell_when_units_run_in_threads(folder):
    """Python's warnings.catch_warnings is not thread-safe (Python documentation, warnings module):
    each cell must still get exactly its own two warnings when two units run at once in threads."""
    distributed = pytest.importorskip("distributed", reason=NO_DASK)
    path = write_suite(folder, "threads", "random-under", learners='["test_backends:Announces"]', repeats=1)
    _, serial = run_cells(path, folder / "threads-serial.sqlite")
    with distributed.LocalCluster(n_workers=1, threads_per_worker=2, processes=False, **NO_DASHBOARD) as local:
        _, threaded = run_cells(path, folder / "threads-dask.sqlite", scheduler=local.scheduler_address)
    for cells in (serial, threaded):
        own = [w.startswith(f"UserWarning: seed {seed} first (+") for w, seed in zip(cells["warning"], cells["seed"])]
        assert all(own), cells["warning"].tolist()
    assert dict(zip(serial["key"], serial["warning"])) == dict(zip(threaded["key"], threaded["warning"]))
    assert metric_text(serial) == metric_text(threaded)


def test_captured_warnings_are_keyed_by_thread():
    together = threading.Barrier(2)
    logs = {}

    def cell(name):
        with captured_warnings() as log:
            together.wait()
            warnings.warn(name)
            together.wait()
        logs[name] = [str(message) for _, message in log]

    threads = [threading.Thread(target=cell, args=(name,)) for name in ("left", "right")]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert logs == {"left": ["left"], "right": ["right"]}


def test_a_result_from_other_code_is_refused(folder, monkeypatch):
    path = write_suite(folder, "versions", "random-under", learners='["logistic-regression"]', repeats=1)
    suite = load_suite(path)
    datasets = load_all(suite)
    real = units.worker_versions

    def older_resampler(unit, preprocessing):
        ran = real(unit, preprocessing)
        return {**ran, "resampler": "lopsided 0.0.1"} if unit.resampler.name == "random-under" else ran

    monkeypatch.setattr(units, "worker_versions", older_resampler)
    db = Store(folder / "versions.sqlite")
    try:
        with pytest.raises(BackendError, match=r"resampler random-under: the worker ran 'lopsided 0\.0\.1', but the "
                                               rf"plan and its cell keys use 'lopsided {re.escape(__version__)}'"):
            run_plan(plan(suite, datasets), datasets, suite, db, ExecutionOptions(progress=False))
        kept = db.cells()
    finally:
        db.close()
    assert (kept["resampler"] == "none").all()        # the refused unit's cells were not stored


def test_the_driver_writes_whole_units_in_batches(folder, monkeypatch):
    path = write_suite(folder, "batches", "random-under")
    suite = load_suite(path)
    datasets = load_all(suite)
    monkeypatch.setattr(driver, "BATCH_CELLS", 10)
    monkeypatch.setattr(driver, "BATCH_SECONDS", float("inf"))
    db = Store(folder / "batches.sqlite")
    batches = []
    write = db.write_cells
    monkeypatch.setattr(db, "write_cells", lambda rows: (batches.append(list(rows)), write(rows)))
    try:
        counts = run_plan(plan(suite, datasets), datasets, suite, db, ExecutionOptions(progress=False))
    finally:
        db.close()
    assert counts.computed == 2 * 2 * 3 * 2 * 2 == sum(map(len, batches))
    # 10 cells or more per transaction (the last one: what is left), 2 learners = 2 cells per unit
    assert [len(b) for b in batches] == [10, 10, 10, 10, 8]
    for rows in batches:
        per_unit = pd.Series([r.unit_key for r in rows]).value_counts()
        assert (per_unit == 2).all()


def test_backend_choices_and_their_errors():
    assert choose("auto", 1, None) == "serial"
    assert choose("auto", 3, None) == "processes"
    assert choose("auto", 1, "tcp://10.0.0.5:8786") == "dask"
    assert choose("dask", 2, None) == "dask"
    with pytest.raises(BackendError, match="--backend: unknown backend 'dusk' \\(did you mean 'dask'\\?\\)"):
        choose("dusk", 1, None)
    with pytest.raises(BackendError, match="--jobs: --backend serial runs one unit at a time"):
        choose("serial", 2, None)
    with pytest.raises(BackendError, match="--scheduler: only --backend dask uses a scheduler"):
        choose("processes", 2, "tcp://10.0.0.5:8786")
    for backend in ("dask", "auto"):
        with pytest.raises(BackendError, match="--jobs: the cluster at tcp://10.0.0.5:8786 decides"):
            choose(backend, 4, "tcp://10.0.0.5:8786")


def test_an_unreachable_scheduler_is_one_clear_error(monkeypatch):
    pytest.importorskip("distributed", reason=NO_DASK)
    from lopsided.execution.backends import cluster
    monkeypatch.setattr(cluster, "CONNECT_SECONDS", 1)
    with pytest.raises(BackendError, match="--scheduler tcp://127.0.0.1:9: no Dask scheduler answers there"):
        open_backend("auto", run_unit, {}, scheduler="tcp://127.0.0.1:9")


def test_without_dask_the_dask_backend_says_what_to_install(folder, monkeypatch, capsys):
    monkeypatch.setitem(sys.modules, "distributed", None)          # import distributed -> ImportError
    path = write_suite(folder, "nodask", "random-under", learners='["logistic-regression"]', repeats=1)
    assert main(["run", str(path), "--out", str(folder / "nodask"), "--backend", "dask", "--quiet"]) == 2
    lines = capsys.readouterr().err.strip().splitlines()
    assert lines == ["lopsided: error: --backend dask: Dask's distributed scheduler is not installed; "
                     "install it with: pip install 'lopsided[dask]'"]


@pytest.fixture(scope="module")
def uninterrupted(folder):
    """The gated suite's cells from a run nobody stops (the gate file is absent, so nothing waits)."""
    log, gate = folder / "stop.txt", folder / "stop.gate"
    path = write_suite(folder, "stopping", f"plugins_for_tests:Gated?log={log}&gate={gate}&free=4",
                       learners='["logistic-regression"]')
    _, cells = run_cells(path, folder / "stop-reference.sqlite")
    calls(log)
    return path, log, gate, cells


def stored_cells(store):
    if not store.exists():
        return 0
    try:
        with sqlite3.connect(f"file:{store}?mode=ro", uri=True) as db:
            return db.execute("SELECT COUNT(*) FROM cells").fetchone()[0]
    except sqlite3.Error:          # its tables are not there yet
        return 0


def waiting(log, free):
    """True once a resample call beyond the first ``free`` was logged: a unit waits at the gate."""
    return log.exists() and len(log.read_text().split()) > free


@pytest.mark.parametrize("backend, signal_name", [("serial", "SIGINT"), ("processes", "SIGTERM"),
                                                  ("dask", "SIGINT")])
def test_a_signal_stops_a_run_cleanly_and_a_rerun_completes_it(uninterrupted, folder, backend, signal_name):
    if backend == "dask":
        pytest.importorskip("distributed", reason=NO_DASK)
    path, log, gate, reference = uninterrupted
    out, store = folder / f"stop-{backend}", folder / f"stop-{backend}.sqlite"
    gate.touch()        # after the first 4 resample calls, units wait: the run cannot finish before the signal
    command = [sys.executable, "-m", "lopsided.cli", "run", str(path), "--out", str(out), "--store", str(store),
               "--quiet", "--backend", backend] + ([] if backend == "serial" else ["--jobs", "2"])
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(HERE), os.environ.get("PYTHONPATH", "")])}
    run = subprocess.Popen(command, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        # a unit waits at the gate, so earlier ones finished; the serial driver is that waiting worker,
        # so it keeps them until the signal; other drivers write them within BATCH_SECONDS
        deadline = time.monotonic() + 90
        while not (waiting(log, 4) and (backend == "serial" or stored_cells(store))) and run.poll() is None \
                and time.monotonic() < deadline:
            time.sleep(0.05)
        run.send_signal(getattr(signal, signal_name))
        _, err = run.communicate(timeout=60)
    finally:
        gate.unlink(missing_ok=True)
        if run.poll() is None:
            run.kill()
    calls(log)
    assert run.returncode == 128 + getattr(signal, signal_name).value      # 130 / 143: the shell's convention
    lines = err.strip().splitlines()
    assert len(lines) == 1, err
    kept = stored_cells(store)
    assert 0 < kept < len(reference)
    assert lines[0] == (f"lopsided: error: stopped by {signal_name}: {kept} of {len(reference)} planned cells are kept "
                        f"in {store} ({kept} computed now); run the same command again to compute the other "
                        f"{len(reference) - kept}")
    counts, cells = run_cells(path, store)
    assert (counts.reused, counts.computed) == (kept, len(reference) - kept)
    assert metric_text(cells) == metric_text(reference)


def test_work_beside_the_units_runs_while_workers_compute_and_its_error_surfaces(folder):
    """The driver describes the datasets in a thread while worker processes run units (serial: after them,
    in the same thread); an error in that work is not lost."""
    path = write_suite(folder, "beside", "random-under", repeats=1)
    seen = []

    def work():
        seen.append(threading.current_thread().name)

    run_cells(path, folder / "a.sqlite", jobs=2, beside=work)
    run_cells(path, folder / "b.sqlite", backend="serial", beside=work)
    assert seen == ["lopsided-beside", "MainThread"]

    def broken():
        raise ValueError("describing failed")

    with pytest.raises(ValueError, match="describing failed"):
        run_cells(path, folder / "c.sqlite", jobs=2, beside=broken)



class FailingWorkers:
    """A backend whose workers fail outside any unit's stages (as a bug of ours would)."""
    slots = 2

    def submit(self, unit, ref):
        pass

    def finished(self, timeout):
        time.sleep(0.1)
        raise BackendError("a worker failed")

    def cancel(self):
        return 0

    def close(self):
        pass


def test_a_failed_run_waits_for_the_work_beside_it(folder, monkeypatch):
    """A run whose workers fail still waits for the thread beside them before the error goes up: an
    interpreter exiting while that thread was inside scipy's compiled code aborted the process (exit code
    134, in 2 of 4 tries, instead of one error line and exit code 2)."""
    path = write_suite(folder, "beside-failed", "random-under", repeats=1)
    monkeypatch.setattr(driver, "open_backend", lambda *args: FailingWorkers())
    finished = []

    def work():
        time.sleep(1.0)
        finished.append(threading.current_thread().name)

    with pytest.raises(BackendError, match="a worker failed"):
        run_cells(path, folder / "failed.sqlite", jobs=2, beside=work)
    assert finished == ["lopsided-beside"]
