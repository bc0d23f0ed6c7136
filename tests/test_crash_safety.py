"""Crash safety: a `lopsided run` killed with SIGKILL, then rerun, ends with exactly the cells of an uninterrupted
run; its worker processes do not outlive it.

Every kill is certain to strike a running run: one resampler waits at a gate file (plugins_for_tests:Gated) after
its first few calls, and the gate stays shut until the run is killed. The moments are fixed by progress, not by
the clock: the first run dies as soon as a worker started a unit (nothing stored yet, or the first batch), the
later ones once they stored cells of their own while a unit waits.
"""
import os
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from lopsided.execution.driver import run_plan
from lopsided.execution.store import Store
from lopsided.jobs.run import load_all
from lopsided.options import ExecutionOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

HERE = Path(__file__).parent
SUITE = """
name = "crash"
seed = 5
datasets = ["sklearn:wine?positive=2", "sklearn:iris?positive=1", "spectra:serum?donors=40&ratio=3&region=fingerprint&step=16"]
resamplers = ["none", {{ name = "plugins_for_tests:Gated", params = {{ log = "{log}", gate = "{gate}", free = 4 }} }}, "smote"]
learners = ["logistic-regression", {{ name = "random-forest", params = {{ n_estimators = 15 }} }}]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 2
folds = 3
ratios = ["natural", 2]
sizes = ["all"]
min_minority = 3
"""
KILLS = 3
LOPSIDED = [sys.executable, "-m", "lopsided.cli"]


def _run(suite, store, out):
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(HERE), os.environ.get("PYTHONPATH", "")])}
    return subprocess.Popen([*LOPSIDED, "run", str(suite), "--jobs", "2", "--quiet", "--store", str(store),
                             "--out", str(out)], env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


def _children(pid):
    """Process ids whose parent is ``pid`` (from /proc)."""
    found = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                found.append(int(entry.name))
    return found


def _alive(pid):
    try:
        state = (Path("/proc") / str(pid) / "stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def _stored(store):
    """Cells committed to ``store`` so far, read without taking part in its writes (0 before its tables exist)."""
    if not store.exists():
        return 0
    try:
        with sqlite3.connect(f"file:{store}?mode=ro", uri=True) as db:
            return db.execute("SELECT COUNT(*) FROM cells").fetchone()[0]
    except sqlite3.Error:
        return 0


def _calls(log):
    return len(log.read_text().split()) if log.exists() else 0


def _cells(store):
    db = Store(store, create=False)
    try:
        table = db.cells()
    finally:
        db.close()
    return table.sort_values("key").set_index("key")


def _wait_for(ready, run, what):
    """Poll ``ready()`` until it holds; the run must still be going (the gate keeps it from finishing)."""
    deadline = time.monotonic() + 120
    while not ready():
        assert run.poll() is None, f"the run ended (exit code {run.returncode}) before {what}"
        assert time.monotonic() < deadline, f"no {what} within 120 s"
        time.sleep(0.02)


@pytest.mark.skipif(not Path("/proc").is_dir(), reason="needs /proc to find worker processes (Linux)")
def test_killed_runs_resume_to_exactly_the_uninterrupted_cells(tmp_path):
    log, gate = tmp_path / "calls.txt", tmp_path / "gate"
    suite = tmp_path / "crash.toml"
    suite.write_text(SUITE.format(log=log, gate=gate), encoding="utf-8")
    # the reference: the same plan computed without interruption (no gate file: nothing waits)
    loaded = load_suite(suite)
    datasets = load_all(loaded)
    reference = Store(tmp_path / "ref.sqlite")
    try:
        run_plan(plan(loaded, datasets), datasets, loaded, reference, ExecutionOptions(progress=False))
    finally:
        reference.close()
    expected = _cells(tmp_path / "ref.sqlite")
    store = tmp_path / "killed.sqlite"
    kept = []
    for kill in range(KILLS):
        log.unlink(missing_ok=True)
        gate.touch()                       # after 4 calls of the gated resampler, its units wait
        before = _stored(store)
        run = _run(suite, store, tmp_path / "killed")
        try:
            if kill == 0:
                _wait_for(lambda: _calls(log) > 0, run, "a worker started a unit")
            else:
                _wait_for(lambda: _calls(log) > 4 and _stored(store) > before, run,
                          "a unit waiting at the gate after cells of this run were stored")
            seen = _stored(store)
            workers = _children(run.pid)
            assert workers and run.poll() is None
            os.kill(run.pid, signal.SIGKILL)
            assert run.wait(timeout=60) == -signal.SIGKILL
        finally:
            gate.unlink()
            if run.poll() is None:
                run.kill()
        deadline = time.monotonic() + 20
        while any(_alive(w) for w in workers) and time.monotonic() < deadline:
            time.sleep(0.2)
        assert not any(_alive(w) for w in workers), "worker processes outlived their killed parent"
        assert _stored(store) >= seen, "committed cells were lost"
        kept.append(_stored(store))
    assert 0 < kept[-1] < len(expected), kept         # the runs did part of the work, not all of it
    final = _run(suite, store, tmp_path / "killed")
    assert final.wait(timeout=600) == 0
    got = _cells(store)
    assert list(got.index) == list(expected.index)                   # none lost, none duplicated
    metrics = ["balanced_accuracy", "mcc"]
    assert got[metrics].equals(expected[metrics])                     # identical values
    assert (got["status"] == "ok").all()
