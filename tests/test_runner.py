"""The runner end to end: CLI run, resume, adding a method, leakage, failures, determinism."""
import json

import numpy as np
import pandas as pd
import pytest

from lopsided.benchmark import run_suite
from lopsided.cli import main
from lopsided.datasets import load_dataset
from lopsided.resamplers.base import all_finite
from lopsided.runner import plan
from lopsided.store import Store
from lopsided.suite import load_suite


def _metric_json(cells):
    """Every cell's metrics as exact text (float repr round-trips): equal text = identical bytes."""
    columns = ["balanced_accuracy", "mcc", "roc_auc", "g_mean"]
    return {row.key: json.dumps([getattr(row, c) for c in columns]) for row in cells.itertuples()}


def test_cli_run_writes_the_leaderboard_folder(write_suite, tmp_path, capsys):
    out = tmp_path / "board"
    code = main(["run", str(write_suite()), "--out", str(out), "--quiet"])
    assert code == 0
    for name in ("leaderboard.md", "index.html", "scores.csv", "cells.csv", "manifest.json", "stats.json"):
        assert (out / name).is_file(), name
    cells = pd.read_csv(out / "cells.csv")
    # 3 datasets x 2 points x 2 repeats x 2 folds x 3 resamplers x 2 learners
    assert len(cells) == 3 * 2 * 2 * 2 * 3 * 2 and (cells["status"] == "ok").all()
    scores = pd.read_csv(out / "scores.csv")
    assert len(scores) == 3 * 2 * 3 * 2 and (scores["n_cells"] == 4).all()
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["cells"]["planned"] == 144 and manifest["cells"]["ok"] == 144
    assert "research evidence" in (out / "leaderboard.md").read_text()
    assert "<svg" in (out / "index.html").read_text()
    printed = capsys.readouterr().out
    assert "144 computed" in printed and "0 reused" in printed
    # a mean in scores.csv is the mean of its cells
    one = cells[(cells.dataset == "sklearn:wine?positive=2") & (cells.ratio == "natural")
                & (cells.resampler == "none") & (cells.learner == "logistic-regression")]
    row = scores[(scores.dataset == "sklearn:wine?positive=2") & (scores.ratio == "natural")
                 & (scores.resampler == "none") & (scores.learner == "logistic-regression")]
    assert row["mcc_mean"].iloc[0] == pytest.approx(one["mcc"].mean())


def test_rerun_skips_every_stored_cell(write_suite, tmp_path):
    path = write_suite()
    first = run_suite(path, out=tmp_path / "o", progress=False)
    again = run_suite(path, out=tmp_path / "o", progress=False)
    assert again.summary.cells.computed == 0
    assert again.summary.cells.reused == first.summary.cells.planned
    assert _metric_json(first.cells) == _metric_json(again.cells)


def test_adding_a_resampler_computes_only_new_cells_and_changes_nothing_else(write_suite, tmp_path):
    path = write_suite()
    before = run_suite(path, out=tmp_path / "o", progress=False)
    after = run_suite(path, out=tmp_path / "o", progress=False, add_resamplers=["plugins_for_tests:Halves"])
    new = after.summary.cells.computed
    assert new == before.summary.cells.planned // 3            # one more of three resamplers
    assert after.summary.cells.reused == before.summary.cells.planned
    old = _metric_json(before.cells)
    both = _metric_json(after.cells)
    assert {k: both[k] for k in old} == old
    board = (tmp_path / "o" / "leaderboard.md").read_text()
    assert "plugins_for_tests:Halves" in board


def test_adding_a_resampler_in_a_fresh_store_gives_identical_old_cells(write_suite, tmp_path):
    """Seeds derive from each cell's own coordinates: the suite's other methods do not matter."""
    small = run_suite(write_suite(), out=tmp_path / "a", progress=False)
    big = run_suite(write_suite(), out=tmp_path / "b", progress=False, add_resamplers=["repeat-over"])
    old = _metric_json(small.cells)
    assert {k: _metric_json(big.cells)[k] for k in old} == old


def test_no_test_row_ever_reaches_the_resampler(tmp_path, write_suite):
    rng = np.random.default_rng(0)
    n = 120
    table = pd.DataFrame({"row": np.arange(n), "a": rng.normal(size=n), "b": rng.normal(size=n),
                          "label": np.where(np.arange(n) % 6 == 0, "rare", "common")})
    csv = tmp_path / "ids.csv"
    table.to_csv(csv, index=False)
    record = tmp_path / "seen"
    record.mkdir()
    text = f"""
    name = "leak"
    datasets = ["file:{csv}?label=label"]
    resamplers = [{{ name = "plugins_for_tests:Recording", params = {{ record = "{record}" }} }}]
    learners = ["logistic-regression"]
    [protocol]
    repeats = 2
    folds = 3
    ratios = ["natural", 2]
    sizes = ["all", 40]
    min_minority = 3
    """
    path = write_suite(text=text, name="leak.toml")
    run_suite(path, out=tmp_path / "o", progress=False, jobs=2)          # two worker processes
    suite = load_suite(path)
    units = plan(suite, {r: load_dataset(r) for r in suite.datasets}).units
    seen = sorted(tuple(sorted(np.load(f))) for f in record.glob("*.npy"))
    assert len(seen) == len(units) == 2 * 3 * 4                           # each training set resampled once
    assert seen == sorted(tuple(sorted(u.train)) for u in units)           # exactly the training rows ...
    test_of = {tuple(sorted(u.train)): set(u.test) for u in units}
    assert all(not set(rows) & test_of[rows] for rows in seen)             # ... and never a test row


def test_a_failing_resampler_fails_only_its_cells(write_suite, tmp_path):
    result = run_suite(write_suite(), out=tmp_path / "o", progress=False,
                       add_resamplers=["plugins_for_tests:Exploding"])
    cells = result.cells
    bad = cells[cells["resampler"] == "plugins_for_tests:Exploding"]
    assert (bad["status"] == "failed").all() and bad["error"].str.contains("always fails").all()
    assert (cells.loc[cells["resampler"] != "plugins_for_tests:Exploding", "status"] == "ok").all()
    assert "Failed cells" in (tmp_path / "o" / "leaderboard.md").read_text()


@pytest.mark.parametrize("plugin, rule", [
    ("DropsAFeature", "keeps the number of features"),
    ("InventsALabel", "draws labels only from the input's labels"),
    ("ReturnsNaN", "finite numbers only"),
    ("LosesAClass", "at least one sample of every class"),
])
def test_plugin_output_is_checked_before_any_learner_sees_it(write_suite, tmp_path, plugin, rule):
    result = run_suite(write_suite(), out=tmp_path / "o", progress=False,
                       add_resamplers=[f"plugins_for_tests:{plugin}"])
    bad = result.cells[result.cells["resampler"] == f"plugins_for_tests:{plugin}"]
    assert (bad["status"] == "failed").all()
    assert bad["error"].str.contains(rule).all() and bad["error"].str.contains(plugin).all()


def test_two_processes_give_the_same_numbers_as_one(write_suite, tmp_path):
    serial = run_suite(write_suite(), out=tmp_path / "a", progress=False, jobs=1)
    parallel = run_suite(write_suite(), out=tmp_path / "b", progress=False, jobs=2)
    assert _metric_json(serial.cells) == _metric_json(parallel.cells)


def test_report_rebuilds_from_the_store_alone(write_suite, tmp_path):
    result = run_suite(write_suite(), out=tmp_path / "o", progress=False)
    (tmp_path / "o" / "scores.csv").unlink()
    assert main(["report", str(result.store), "--out", str(tmp_path / "again")]) == 0
    rebuilt = pd.read_csv(tmp_path / "again" / "scores.csv")
    original = result.cells
    assert len(rebuilt) * 4 == len(original)
    stats = json.loads((tmp_path / "again" / "stats.json").read_text())
    assert stats == json.loads((tmp_path / "o" / "stats.json").read_text())     # the same statistics, refitting nothing
    assert {(c["ratio"], c["size"], c["view"]) for c in stats["comparisons"]} >= {("natural", "all", "all")}


def test_report_from_the_suite_file_loads_no_dataset_and_refuses_a_changed_suite(write_suite, tmp_path,
                                                                              monkeypatch, capsys):
    """Rebuilding uses what the run recorded: a loader that fails proves no dataset is read or fetched."""
    suite = write_suite()
    result = run_suite(suite, out=tmp_path / "o", progress=False)
    original = (tmp_path / "o" / "stats.json").read_text()
    (tmp_path / "o" / "stats.json").unlink()

    def no_loading(*args, **kwargs):
        raise AssertionError("a dataset was loaded while rebuilding")

    monkeypatch.setattr("lopsided.benchmark.load_dataset", no_loading)
    assert main(["report", str(suite), "--out", str(tmp_path / "o")]) == 0
    assert (tmp_path / "o" / "stats.json").read_text() == original
    manifest = json.loads((tmp_path / "o" / "manifest.json").read_text())
    assert manifest["datasets"] == result.summary.datasets and "rebuilt" in manifest
    changed = write_suite(text=suite.read_text().replace("seed = ", "seed = 9"))
    assert main(["report", str(changed), "--out", str(tmp_path / "o")]) == 2
    error = capsys.readouterr().err
    assert "the suite changed since its last run" in error and f"lopsided run {changed}" in error
    assert (tmp_path / "o" / "stats.json").read_text() == original          # nothing overwritten


def test_infeasible_points_are_skipped_and_reported(write_suite, tmp_path):
    result = run_suite(write_suite(ratios='["natural", 30]'), out=tmp_path / "o", progress=False)
    assert result.summary.cells.skipped_points > 0
    board = (tmp_path / "o" / "leaderboard.md").read_text()
    assert "Skipped points" in board and "min_minority" in board
    assert set(result.cells["ratio"]) <= {"natural", "30"}


def test_store_rows_carry_coordinates_timings_and_versions(write_suite, tmp_path):
    result = run_suite(write_suite(), out=tmp_path / "o", progress=False)
    db = Store(result.store)
    row = db.cells().iloc[0]
    db.close()
    for column in ("key", "dataset", "ratio", "size", "repeat", "fold", "resampler", "learner", "status",
                   "fit_seconds", "predict_seconds", "resample_seconds", "code_version", "seed"):
        assert column in row.index and pd.notna(row[column]), column


def test_twin_datasets_are_refused(write_suite, tmp_path):
    from lopsided.errors import SuiteError
    rng = np.random.default_rng(0)
    table = pd.DataFrame({"a": rng.normal(size=20), "label": ["x"] * 15 + ["y"] * 5})
    table.to_csv(tmp_path / "one.csv", index=False)
    table.to_csv(tmp_path / "two.csv", index=False)
    text = f"""
    name = "twins"
    datasets = ["file:{tmp_path / 'one.csv'}?label=label", "file:{tmp_path / 'two.csv'}?label=label"]
    learners = ["logistic-regression"]
    """
    with pytest.raises(SuiteError, match="hold the same samples and labels"):
        run_suite(write_suite(text=text, name="twins.toml"), out=tmp_path / "o", progress=False)


def test_learners_skip_their_own_finite_checks_only_when_every_test_value_is_finite():
    """One sum decides (NaN and infinity propagate through it); a sum that overflows on finite values
    (1e308 + 1e308) is checked value by value instead."""
    X = np.ones((50, 4))
    assert all_finite(X)
    for bad in (np.nan, np.inf, -np.inf):
        with_bad = X.copy()
        with_bad[17, 2] = bad
        assert not all_finite(with_bad)
    assert all_finite(np.full((3, 2), 1e308))
    assert not all_finite(np.array([[1e308, 1e308], [np.nan, 0.0]]))


def test_a_bad_parameter_inside_a_learner_still_fails_its_cells_with_scikit_learns_message(write_suite, tmp_path):
    """Cells fit with scikit-learn's parameter validation off (an ensemble repeats it for every member);
    learners.check_parameters checks every estimator inside a learner first, so a member's bad parameter
    fails that learner's cells with scikit-learn's own message, and the other learner's cells stay ok."""
    path = write_suite()
    path.write_text(path.read_text().replace('learners = ["logistic-regression"',
                                             'learners = ["plugins_for_tests:stumps_of_negative_depth"'))
    cells = run_suite(path, out=tmp_path / "o", progress=False).cells
    bad = cells[cells["learner"] == "plugins_for_tests:stumps_of_negative_depth"]
    assert len(bad) and (bad["status"] == "failed").all()
    assert bad["error"].str.contains("InvalidParameterError: The 'max_depth' parameter of "
                                     "DecisionTreeClassifier must be").all()
    assert (cells.loc[cells.index.difference(bad.index), "status"] == "ok").all()


def test_every_built_in_learner_passes_the_parameter_check_and_a_bad_member_does_not():
    """learners.check_parameters accepts every registered learner at its defaults, those with constraints
    declared (scikit-learn's) and those without (our PLS-DA), and refuses a bad parameter of a member."""
    from lopsided.learners import LEARNERS, check_parameters, make_learner
    from lopsided.specs import MethodSpec
    for name in LEARNERS:
        check_parameters(make_learner(MethodSpec(name), random_state=1))
    with pytest.raises(ValueError, match="'max_depth' parameter of DecisionTreeClassifier"):     # InvalidParameterError
        check_parameters(make_learner(MethodSpec("plugins_for_tests:stumps_of_negative_depth")))
