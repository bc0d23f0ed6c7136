"""Paths in a suite are the suite's own; commands that only describe never download."""
import os

import numpy as np
import pandas as pd

from lopsided.cli import main
from lopsided.jobs.run import run_suite
from lopsided.options import ExecutionOptions, RunOptions

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests


def test_a_suite_finds_its_files_and_store_from_any_current_folder(tmp_path, monkeypatch):
    project = tmp_path / "study"
    (project / "data").mkdir(parents=True)
    rng = np.random.default_rng(0)
    pd.DataFrame({"a": rng.normal(size=60), "b": rng.normal(size=60),
                  "status": np.where(np.arange(60) % 4 == 0, "flag", "ok")}).to_csv(project / "data" / "films.csv",
                                                                                    index=False)
    (project / "suite.toml").write_text("""
name = "paths"
datasets = ["file:data/films.csv?label=status"]
resamplers = ["none"]
learners = ["logistic-regression"]
metrics = ["balanced_accuracy"]
store = "runs/store.sqlite"
out = "board"
[protocol]
repeats = 1
folds = 2
""", encoding="utf-8")
    elsewhere = tmp_path / "elsewhere"
    elsewhere.mkdir()
    monkeypatch.chdir(elsewhere)
    result = run_suite(project / "suite.toml", RunOptions(execution=QUIET))
    assert result.store == project / "runs" / "store.sqlite" and result.store.is_file()
    assert result.out == project / "board" and (project / "board" / "leaderboard.md").is_file()
    assert os.listdir(elsewhere) == []                       # nothing written where the command ran
    assert main(["report", str(project / "suite.toml")]) == 0


def test_describing_a_dataset_never_downloads(tmp_path, monkeypatch, capsys):
    from lopsided.datasets import _load
    _load.cache_clear()                                      # nothing loaded earlier in this process counts
    monkeypatch.setenv("LOPSIDED_CACHE", str(tmp_path / "empty-cache"))
    assert main(["datasets", "show", "keel:pima"]) == 2
    assert "lopsided datasets fetch keel" in capsys.readouterr().err
    assert not list((tmp_path / "empty-cache").rglob("*.whl"))
    assert main(["datasets", "show", "openml:31"]) == 2
    assert "does not download" in capsys.readouterr().err
