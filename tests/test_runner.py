"""The runner end to end: CLI run, resume, adding a method, leakage, failures, determinism.

Most tests read one of two real runs of the conftest suite: ``board`` (through the command line, built once
for the session: conftest.tiny_board) and ``extended`` (a fresh store with two resamplers more, on two worker
processes, built once for the module). A test that changes a run works on a copy of its folder; the resampler
output rules and learner parameter checks run one work unit in this process, the stage they guard.
"""
import json
import re
import shutil

import numpy as np
import pandas as pd
import pytest

from lopsided.cli import main
from lopsided.execution.driver import run_plan
from lopsided.execution.store import Store
from lopsided.execution.units import run_unit
from lopsided.jobs.run import load_all, run_suite
from lopsided.methods.resamplers.base import all_finite
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests
PLANNED = 3 * 2 * 2 * 2 * 3 * 2     # conftest suite: 3 datasets x 2 points x 2 repeats x 2 folds x 3 resamplers x 2 learners


def _metric_json(cells):
    """Every cell's metrics as exact text (float repr round-trips): equal text = identical bytes."""
    columns = ["balanced_accuracy", "mcc", "roc_auc", "g_mean"]
    return {row.key: json.dumps([getattr(row, c) for c in columns]) for row in cells.itertuples()}


def _stored_cells(store):
    db = Store(store, create=False)
    try:
        return db.cells()
    finally:
        db.close()


@pytest.fixture(scope="module")
def board(tiny_board):
    """The conftest suite run once with `lopsided run` (conftest.tiny_board): (suite file, leaderboard folder,
    what the command printed, the stored cells). Its store is the folder's store.sqlite."""
    suite, out, printed = tiny_board
    return suite, out, printed, _stored_cells(out / "store.sqlite")


@pytest.fixture(scope="module")
def extended(write_module_suite):
    """The same suite in a fresh store with two resamplers added (one that always fails), on two worker
    processes: cell seeds come from each cell's coordinates, so its other cells must equal ``board``'s."""
    suite = write_module_suite(name="extended.toml")
    return run_suite(suite, RunOptions(out=suite.parent / "extended", add_resamplers=("repeat-over", "plugins_for_tests:Exploding"),
                                    execution=ExecutionOptions(progress=False, jobs=2)))


@pytest.fixture
def board_copy(board, tmp_path):
    """A copy of ``board``'s folder (with its store) that a test may change: (suite file, the copy)."""
    suite, out, _, _ = board
    copy = tmp_path / "board"
    shutil.copytree(out, copy)
    return suite, copy


def test_cli_run_writes_the_leaderboard_folder(board):
    _, out, printed, _ = board
    for name in ("leaderboard.md", "index.html", "scores.csv", "cells.csv", "manifest.json", "stats.json"):
        assert (out / name).is_file(), name
    cells = pd.read_csv(out / "cells.csv")
    assert len(cells) == PLANNED and (cells["status"] == "ok").all()
    scores = pd.read_csv(out / "scores.csv")
    assert len(scores) == 3 * 2 * 3 * 2 and (scores["n_cells"] == 4).all()
    manifest = json.loads((out / "manifest.json").read_text())
    assert manifest["cells"]["planned"] == 144 and manifest["cells"]["ok"] == 144
    assert "research evidence" in (out / "leaderboard.md").read_text()
    headline = (out / "point-natural-all-balanced_accuracy.html").read_text()      # figures are linked files
    figure = re.search(r'<img src="(figures/cd-[^"]+[.]svg)"', headline).group(1)
    assert "<svg" in (out / figure).read_text()
    assert "144 computed" in printed and "0 reused" in printed
    # a mean in scores.csv is the mean of its cells
    one = cells[(cells.dataset == "sklearn:wine?positive=2") & (cells.ratio == "natural")
                & (cells.resampler == "none") & (cells.learner == "logistic-regression")]
    row = scores[(scores.dataset == "sklearn:wine?positive=2") & (scores.ratio == "natural")
                 & (scores.resampler == "none") & (scores.learner == "logistic-regression")]
    assert row["mcc_mean"].iloc[0] == pytest.approx(one["mcc"].mean())


def test_an_answer_from_fewer_than_five_datasets_gives_the_mean_and_says_why_there_is_no_interval(board):
    """The tiny suite has 3 datasets (< analysis.effects.MIN_UNITS): the answer of a learner whose leader is not
    the control states the mean difference, the reason for the missing interval, and claims no significance."""
    _, out, _, _ = board
    answers = json.loads((out / "stats.json").read_text())["answers"]
    moved = [a for a in answers if a["leader"] != "none"]
    assert moved, "the tiny suite should have a learner whose best resampler is not 'none'"
    for a in moved:
        first, second = a["sentences"][:2]
        mean = a["effect"]["datasets"]["mean"]
        assert f"changes balanced accuracy by {mean:+.3f} on average (fewer than 5 datasets: no interval; wins" in first
        assert "95 %" not in first and "[" not in first
        assert second.startswith("No significance claim: only 3 datasets")


def test_rerun_skips_every_stored_cell(board, board_copy):
    suite, copy = board_copy
    again = run_suite(suite, RunOptions(out=copy, execution=QUIET))
    assert again.summary.cells.computed == 0
    assert again.summary.cells.reused == PLANNED
    assert _metric_json(board[3]) == _metric_json(again.cells)


def test_adding_a_resampler_computes_only_new_cells_and_changes_nothing_else(board, board_copy):
    suite, copy = board_copy
    after = run_suite(suite, RunOptions(out=copy, add_resamplers=("plugins_for_tests:Halves",), execution=QUIET))
    assert after.summary.cells.computed == PLANNED // 3            # one more of three resamplers
    assert after.summary.cells.reused == PLANNED
    old = _metric_json(board[3])
    both = _metric_json(after.cells)
    assert {k: both[k] for k in old} == old
    assert "plugins_for_tests:Halves" in (copy / "leaderboard.md").read_text()


def test_adding_a_resampler_in_a_fresh_store_gives_identical_old_cells(board, extended):
    """Seeds derive from each cell's own coordinates: the suite's other methods do not matter (nor does
    running on two processes instead of one: ``extended`` ran with jobs=2, ``board`` serially)."""
    old = _metric_json(board[3])
    assert len(old) == PLANNED
    assert {k: _metric_json(extended.cells)[k] for k in old} == old


def test_no_test_row_ever_reaches_the_resampler(tmp_path, write_suite, row_ids):
    csv, record = row_ids
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
    suite = load_suite(write_suite(text=text, name="leak.toml"))
    datasets = load_all(suite)
    units = plan(suite, datasets).units
    db = Store(tmp_path / "store.sqlite")
    try:
        run_plan(plan(suite, datasets), datasets, suite, db, ExecutionOptions(jobs=2, progress=False))      # two worker processes
    finally:
        db.close()
    seen = sorted(tuple(sorted(np.load(f))) for f in record.glob("*.npy"))
    assert len(seen) == len(units) == 2 * 3 * 4                           # each training set resampled once
    assert seen == sorted(tuple(sorted(u.train)) for u in units)           # exactly the training rows ...
    test_of = {tuple(sorted(u.train)): set(u.test) for u in units}
    assert all(not set(rows) & test_of[rows] for rows in seen)             # ... and never a test row


def test_a_failing_resampler_fails_only_its_cells(extended):
    cells = extended.cells
    bad = cells[cells["resampler"] == "plugins_for_tests:Exploding"]
    assert len(bad) == PLANNED // 3
    assert (bad["status"] == "failed").all() and bad["error"].str.contains("always fails").all()
    assert (cells.loc[cells["resampler"] != "plugins_for_tests:Exploding", "status"] == "ok").all()
    assert "Failed cells" in (extended.out / "leaderboard.md").read_text()


def one_unit(write_suite, resampler, learners):
    """The rows of one work unit (wine, first fold) of ``resampler`` and ``learners``, run in this process
    by the workers' own entry point (execution.units.run_unit)."""
    path = write_suite(name="unit.toml", text=f"""
        name = "unit"
        seed = 7
        datasets = ["sklearn:wine?positive=2"]
        resamplers = [{json.dumps(resampler)}]
        learners = {learners}
        metrics = ["balanced_accuracy", "mcc"]
        [protocol]
        repeats = 1
        folds = 2
        """)
    suite = load_suite(path)
    datasets = load_all(suite)
    unit = plan(suite, datasets).units[0]
    return run_unit(unit, datasets[unit.coords.dataset], suite.preprocessing).rows


@pytest.mark.parametrize("plugin, rule", [
    ("DropsAFeature", "keeps the number of features"),
    ("InventsALabel", "draws labels only from the input's labels"),
    ("ReturnsNaN", "finite numbers only"),
    ("LosesAClass", "at least one sample of every class"),
])
def test_plugin_output_is_checked_before_any_learner_sees_it(write_suite, tmp_path, plugin, rule):
    """The rules hold inside a work unit, whatever runs it: a unit of each rule-breaking resampler fails all
    its cells with the rule and the plugin named, and a recording learner is never fitted (it is, after the
    resampler 'none': the recording works)."""
    record = tmp_path / "fits"
    record.mkdir()
    learners = f'["logistic-regression", {{ name = "plugins_for_tests:RecordingLearner", params = {{ record = "{record}" }} }}]'
    rows = one_unit(write_suite, f"plugins_for_tests:{plugin}", learners)
    assert len(rows) == 2 and all(r.status == "failed" and rule in r.error and plugin in r.error for r in rows)
    assert not list(record.glob("fit-*.npy"))
    assert [r.status for r in one_unit(write_suite, "none", learners)] == ["ok", "ok"]
    assert len(list(record.glob("fit-*.npy"))) == 1


def test_report_rebuilds_from_the_store_alone(board_copy, tmp_path):
    _, copy = board_copy
    (copy / "scores.csv").unlink()
    assert main(["report", str(copy / "store.sqlite"), "--out", str(tmp_path / "again")]) == 0
    rebuilt = pd.read_csv(tmp_path / "again" / "scores.csv")
    assert len(rebuilt) * 4 == PLANNED
    stats = json.loads((tmp_path / "again" / "stats.json").read_text())
    assert stats == json.loads((copy / "stats.json").read_text())     # the same statistics, refitting nothing
    assert {(c["ratio"], c["size"], c["view"]) for c in stats["comparisons"]} >= {("natural", "all", "all")}


def test_report_from_the_suite_file_loads_no_dataset_and_refuses_a_changed_suite(board_copy, write_suite,
                                                                              monkeypatch, capsys):
    """Rebuilding uses what the run recorded: a loader that fails proves no dataset is read or fetched."""
    suite, copy = board_copy
    original = (copy / "stats.json").read_text()
    recorded = json.loads((copy / "manifest.json").read_text())["datasets"]
    (copy / "stats.json").unlink()

    def no_loading(*args, **kwargs):
        raise AssertionError("a dataset was loaded while rebuilding")

    monkeypatch.setattr("lopsided.jobs.run.load_dataset", no_loading)
    assert main(["report", str(suite), "--out", str(copy)]) == 0
    assert (copy / "stats.json").read_text() == original
    manifest = json.loads((copy / "manifest.json").read_text())
    assert manifest["datasets"] == recorded and "rebuilt" in manifest
    changed = write_suite(text=suite.read_text().replace("seed = ", "seed = 9"))
    assert main(["report", str(changed), "--out", str(copy)]) == 2
    error = capsys.readouterr().err
    assert "the suite changed since its last run" in error and f"lopsided run {changed}" in error
    assert (copy / "stats.json").read_text() == original          # nothing overwritten


def test_infeasible_points_are_skipped_and_reported(write_suite, tmp_path):
    """Ratio 30 leaves fewer than min_minority = 3 minority rows in a training part of wine (48 of 178) and
    iris (50 of 150): every such fold-point is skipped, said so in the leaderboard, and runs no cell."""
    path = write_suite(text="""
        name = "steep"
        seed = 7
        datasets = ["sklearn:wine?positive=2", "sklearn:iris?positive=1"]
        resamplers = ["none"]
        learners = ["logistic-regression"]
        metrics = ["balanced_accuracy"]
        [protocol]
        repeats = 2
        folds = 2
        ratios = ["natural", 30]
        sizes = ["all"]
        min_minority = 3
        """)
    result = run_suite(path, RunOptions(out=tmp_path / "o", execution=QUIET))
    assert result.summary.cells.skipped_points > 0
    board = (tmp_path / "o" / "leaderboard.md").read_text()
    assert "Skipped points" in board and "min_minority" in board
    assert set(result.cells["ratio"]) <= {"natural", "30"}


def test_store_rows_carry_coordinates_timings_and_versions(board):
    row = board[3].iloc[0]
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
        run_suite(write_suite(text=text, name="twins.toml"), RunOptions(out=tmp_path / "o", execution=QUIET))


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


def test_a_bad_parameter_inside_a_learner_still_fails_its_cells_with_scikit_learns_message(write_suite):
    """Cells fit with scikit-learn's parameter validation off (an ensemble repeats it for every member);
    learners.check_parameters checks every estimator inside a learner first, so a member's bad parameter
    fails that learner's cells with scikit-learn's own message, and the other learner's cells stay ok."""
    rows = one_unit(write_suite, "random-under", '["plugins_for_tests:stumps_of_negative_depth", '
                                                 '{ name = "random-forest", params = { n_estimators = 10 } }]')
    bad = [r for r in rows if r.learner == "plugins_for_tests:stumps_of_negative_depth"]
    assert len(bad) == 1 and bad[0].status == "failed"
    assert "InvalidParameterError: The 'max_depth' parameter of DecisionTreeClassifier must be" in bad[0].error
    assert [r.status for r in rows if r not in bad] == ["ok"]


def test_every_built_in_learner_passes_the_parameter_check_and_a_bad_member_does_not():
    """learners.check_parameters accepts every registered learner at its defaults, those with constraints
    declared (scikit-learn's) and those without (our PLS-DA), and refuses a bad parameter of a member."""
    from lopsided.methods.learners import LEARNERS, check_parameters, make_learner
    from lopsided.specs import MethodSpec
    for name in LEARNERS:
        check_parameters(make_learner(MethodSpec(name), random_state=1))
    with pytest.raises(ValueError, match="'max_depth' parameter of DecisionTreeClassifier"):     # InvalidParameterError
        check_parameters(make_learner(MethodSpec("plugins_for_tests:stumps_of_negative_depth")))
