"""Misbehaving methods are contained: a per-unit time limit, sys.exit, a worker that dies, output by the
megabyte and input changed in place each fail (or mark) that method's cells by name, and the run goes
on with every other cell computed exactly as without them."""
import json
import os
import signal
import subprocess
import sys
import textwrap
import threading
import time
from pathlib import Path

import pandas as pd
import pytest

from lopsided.cli import main
from lopsided.execution.backends.containment import UnitTimeout, captured_output, time_limit
from lopsided.execution.driver import run_plan
from lopsided.execution.store import Store
from lopsided.jobs.run import load_all
from lopsided.options import ExecutionOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

HERE = Path(__file__).parent
GOOD = ["none", "random-under"]
BAD = {"plugins_for_tests:Sleeps": "time limit of 2 s",
       "plugins_for_tests:Spins": "time limit of 2 s",
       "plugins_for_tests:Exits": "called sys.exit(3)",
       "plugins_for_tests:ReturnsNaN": "finite numbers only"}
MARKED = {"plugins_for_tests:Chatters": "printed 3.0 MB",
          "plugins_for_tests:Mutates": "changed its input arrays in place"}
ONLY_PROCESSES = {"plugins_for_tests:EndsItsProcess": "worker process ended while running it (exit code 9)",
                  "plugins_for_tests:DeafSleeps": "its worker process was killed"}


def write_suite(folder, name, resamplers, timeout=2):
    path = folder / f"{name}.toml"
    path.write_text(textwrap.dedent(f"""
        name = "{name}"
        seed = 5
        datasets = ["sklearn:wine?positive=0"]
        resamplers = {json.dumps(resamplers)}
        learners = ["logistic-regression", "knn"]
        metrics = ["balanced_accuracy"]
        [protocol]
        repeats = 1
        folds = 2
        timeout = {timeout}
        """))
    return path


def run(folder, suite, *options):
    """`lopsided run` in a subprocess (plugins found through PYTHONPATH): (exit code, stdout, cells)."""
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(HERE), os.environ.get("PYTHONPATH", "")])}
    done = subprocess.run([sys.executable, "-m", "lopsided.cli", "run", str(suite), "--quiet", "--out",
                           str(folder / "board"), *options], capture_output=True, text=True, env=env, timeout=300)
    cells = pd.read_csv(folder / "board" / "cells.csv") if (folder / "board" / "cells.csv").exists() else None
    return done.returncode, done.stdout + done.stderr, cells


@pytest.fixture(scope="module")
def clean(tmp_path_factory):
    """The good methods' balanced accuracy by cell key from a run of them alone (in this process, no report),
    shared by both backends' runs."""
    folder = tmp_path_factory.mktemp("clean")
    suite = load_suite(write_suite(folder, "contained", GOOD))
    datasets = load_all(suite)
    db = Store(folder / "store.sqlite")
    try:
        run_plan(plan(suite, datasets), datasets, suite, db, ExecutionOptions(progress=False))
        return db.cells().set_index("key")["balanced_accuracy"].sort_index()
    finally:
        db.close()


@pytest.mark.parametrize("backend", ["processes", "serial"])
def test_each_misbehaving_method_fails_or_is_marked_by_name_and_the_others_are_untouched(tmp_path, backend, clean):
    bad = {**BAD, **(ONLY_PROCESSES if backend == "processes" else {})}
    suite = write_suite(tmp_path, "contained", GOOD + list(bad) + list(MARKED))
    options = ["--jobs", "2"] if backend == "processes" else ["--backend", "serial"]
    started = time.monotonic()
    code, output, cells = run(tmp_path, suite, *options)
    assert code == 0, output
    assert len(output) < 10_000, "a method's printing reached the terminal"
    assert time.monotonic() - started < 200        # nothing waited for a 600 s sleep
    assert len(cells) == 2 * 2 * (len(GOOD) + len(bad) + len(MARKED))      # 2 folds x 2 learners each
    for name, reason in bad.items():
        mine = cells[cells["resampler"] == name]
        assert (mine["status"] == "failed").all() and mine["error"].str.contains(reason, regex=False).all(), name
    for name, note in MARKED.items():
        mine = cells[cells["resampler"] == name]
        assert (mine["status"] == "ok").all() and mine["warning"].str.contains(note, regex=False).all(), name
    # the good methods' numbers are those of a run without any misbehaving method
    ours = cells[cells["resampler"].isin(GOOD)].set_index("key")["balanced_accuracy"].sort_index()
    assert ours.equals(clean.map(lambda v: float(f"{v:.8g}")))          # cells.csv keeps 8 significant digits
    # the leaderboard names each failing method with its reason
    methods = (tmp_path / "board" / "methods.html").read_text()
    assert "called sys.exit(3)" in methods and "time limit of 2 s" in methods


def test_a_longer_limit_and_retry_failed_recompute_the_cells_that_ran_out_of_time(tmp_path):
    """Cells that ran out of time are stored as failed; with more time and --retry-failed they are computed
    (their keys do not depend on the limit)."""
    suite = write_suite(tmp_path, "slow", ["none", "plugins_for_tests:Sleeps"], timeout=1)
    code, output, first = run(tmp_path, suite, "--backend", "serial")
    assert code == 0 and (first["status"] == "failed").sum() == 4
    code, output, again = run(tmp_path, suite, "--backend", "serial", "--timeout", "0.5", "--retry-failed")
    assert code == 0 and set(again["key"]) == set(first["key"])
    assert again.loc[again["status"] == "failed", "error"].str.contains("time limit of 0.5 s").all()


@pytest.mark.parametrize("value, message", [
    ("0", "--timeout: timeout: 0.0 is not a time limit"),
    ("-3", "--timeout: timeout: -3.0 is not a time limit"),
    ("inf", "--timeout: timeout: inf is not a time limit"),
])
def test_an_impossible_time_limit_is_refused_in_one_line(tmp_path, capsys, value, message):
    suite = write_suite(tmp_path, "limits", ["none"])
    assert main(["run", str(suite), "--quiet", "--out", str(tmp_path / "board"), "--timeout", value]) == 2
    error = capsys.readouterr().err
    assert message in error and "Traceback" not in error and not (tmp_path / "board").exists()


def test_a_time_limit_of_the_wrong_kind_in_the_suite_names_the_field(tmp_path, capsys):
    suite = write_suite(tmp_path, "limits", ["none"], timeout='"ten"')
    assert main(["run", str(suite), "--quiet"]) == 2
    assert "limits.toml: protocol.timeout: 'ten' is not a time limit" in capsys.readouterr().err


def spin():
    while True:
        try:
            sum(range(100))
        except Exception:
            pass


def test_the_time_limit_reaches_a_loop_in_another_thread_and_leaves_nothing_behind():
    """Off the main thread (how Dask runs tasks) the limit is raised asynchronously at the next bytecode."""
    caught = []

    def unit():
        started = time.monotonic()
        try:
            with time_limit(0.3):
                spin()
        except UnitTimeout:
            caught.append(time.monotonic() - started)
        with time_limit(0.2):          # an earlier limit that was not used up must not strike later
            time.sleep(0.05)
        time.sleep(0.3)
        caught.append("clean")

    thread = threading.Thread(target=unit)
    thread.start()
    thread.join(10)
    assert len(caught) == 2 and 0.3 <= caught[0] < 5 and caught[1] == "clean"


def test_time_limit_in_the_main_thread_interrupts_a_sleep_and_restores_the_alarm_handler():
    before = signal.getsignal(signal.SIGALRM)
    started = time.monotonic()
    with pytest.raises(UnitTimeout):
        with time_limit(0.2):
            time.sleep(30)
    assert time.monotonic() - started < 5
    assert signal.getsignal(signal.SIGALRM) is before and signal.getitimer(signal.ITIMER_REAL) == (0.0, 0.0)


def test_output_is_captured_per_thread_and_the_streams_come_back():
    stdout, seen = sys.stdout, {}

    def other():
        with captured_output() as printed:
            print("from the other thread")
            time.sleep(0.1)
        seen["other"] = printed.characters

    thread = threading.Thread(target=other)
    with captured_output() as printed:
        thread.start()
        print("x" * 5000)
        thread.join()
    assert printed.characters == 5001 and len(printed.start) == 2000 and seen["other"] == 22
    assert printed.summary("resampler A").startswith("resampler A printed 5.0 kB")
    assert sys.stdout is stdout


def test_a_worker_killed_from_outside_costs_only_the_unit_it_was_running(tmp_path):
    """The system may kill a worker (out of memory): that unit's cells fail with the signal named, a new
    worker takes over and every other cell is computed."""
    pids = tmp_path / "pids"
    suite = write_suite(tmp_path, "killed", ["none"], timeout=60)
    plugin = f'{{ name = "plugins_for_tests:NamesItsProcess", params = {{ pids = "{pids}", pause = 1.5 }} }}'
    suite.write_text(suite.read_text().replace("repeats = 1", "repeats = 2")
                     .replace('resamplers = ["none"]', f'resamplers = ["none", {plugin}]'))
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([str(HERE), os.environ.get("PYTHONPATH", "")])}
    run = subprocess.Popen([sys.executable, "-m", "lopsided.cli", "run", str(suite), "--quiet", "--jobs", "2",
                            "--out", str(tmp_path / "board")], env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                           text=True)
    deadline = time.monotonic() + 120
    while not (pids.exists() and pids.read_text().strip()) and run.poll() is None and time.monotonic() < deadline:
        time.sleep(0.05)
    assert pids.exists(), run.communicate()[1]
    victim = int(pids.read_text().split()[0])
    os.kill(victim, signal.SIGKILL)
    out, err = run.communicate(timeout=300)
    assert run.returncode == 0, err
    cells = pd.read_csv(tmp_path / "board" / "cells.csv")
    failed = cells[cells["status"] == "failed"]
    assert len(cells) == 2 * 2 * 2 * 2 and len(failed) == 2                  # one unit: its two learners
    assert failed["error"].str.contains("worker process ended while running it (killed by SIGKILL)",
                                        regex=False).all()
    assert (failed["resampler"] == "plugins_for_tests:NamesItsProcess?pause=1.5&pids=" + str(pids)).all()
