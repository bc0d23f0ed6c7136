"""Crash safety: a `lopsided run` killed with SIGKILL at random moments, then rerun, ends with exactly the
cells of an uninterrupted run; its worker processes do not outlive it."""
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from lopsided.store import Store

SUITE = """
name = "crash"
seed = 5
datasets = ["sklearn:wine?positive=2", "sklearn:iris?positive=1", "spectra:serum?donors=40&ratio=3&region=fingerprint&step=16"]
resamplers = ["none", "random-under", "smote"]
learners = ["logistic-regression", { name = "random-forest", params = { n_estimators = 15 } }]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 3
folds = 3
ratios = ["natural", 2]
sizes = ["all"]
min_minority = 3
"""
KILLS = 4          # a bounded loop: at most this many kills, each at a random moment of one run
LOPSIDED = [sys.executable, "-m", "lopsided.cli"]


def _run(suite, store, out):
    return subprocess.Popen([*LOPSIDED, "run", str(suite), "--jobs", "2", "--quiet", "--store", str(store),
                             "--out", str(out)], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)


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


def _cells(store):
    db = Store(store, create=False)
    try:
        table = db.cells()
    finally:
        db.close()
    return table.sort_values("key").set_index("key")


@pytest.mark.skipif(not Path("/proc").is_dir(), reason="needs /proc to find worker processes (Linux)")
def test_killed_runs_resume_to_exactly_the_uninterrupted_cells(tmp_path):
    suite = tmp_path / "crash.toml"
    suite.write_text(SUITE, encoding="utf-8")
    reference = _run(suite, tmp_path / "ref.sqlite", tmp_path / "ref")
    started = time.perf_counter()
    assert reference.wait(timeout=600) == 0
    full = time.perf_counter() - started
    rng = np.random.default_rng(20261203)
    survived = orphans = 0
    store = tmp_path / "killed.sqlite"
    for _ in range(KILLS):
        run = _run(suite, store, tmp_path / "killed")
        time.sleep(rng.uniform(0.3, max(0.5, 0.8 * full)))
        workers = _children(run.pid)
        if run.poll() is None:
            os.kill(run.pid, signal.SIGKILL)
            survived += 1
        run.wait(timeout=60)
        deadline = time.time() + 20
        while any(_alive(w) for w in workers) and time.time() < deadline:
            time.sleep(0.2)
        orphans += sum(_alive(w) for w in workers)
    assert orphans == 0, "worker processes outlived their killed parent"
    final = _run(suite, store, tmp_path / "killed")
    assert final.wait(timeout=600) == 0
    expected, got = _cells(tmp_path / "ref.sqlite"), _cells(store)
    assert survived >= 1
    assert list(got.index) == list(expected.index)                   # none lost, none duplicated
    metrics = ["balanced_accuracy", "mcc"]
    assert got[metrics].equals(expected[metrics])                     # identical values
    assert (got["status"] == "ok").all()
