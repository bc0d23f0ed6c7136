"""`lopsided compare`, the CI regression gate, and quiet exits on a closed pipe or Ctrl-C.

Two leaderboard folders come from one real small run; changes are planted in copies of its files.
"""
import json
import math
import os
import shutil
import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from lopsided import cli
from lopsided.cli import main
from lopsided.jobs.gate import diff, load_folder
from lopsided.jobs.run import run_suite
from lopsided.options import ExecutionOptions, RunOptions

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests

ROOT = Path(__file__).resolve().parents[1]
LOPSIDED = Path(sys.executable).with_name("lopsided")
SUITE = """
name = "screening"
seed = 11
datasets = ["sklearn:wine?positive=2", "sklearn:iris?positive=1", "spectra:serum?donors=24&ratio=3&region=fingerprint&step=16"]
resamplers = ["none", "random-under", "topup-over"]
learners = ["logistic-regression", { name = "random-forest", params = { n_estimators = 10 }, label = "forest" }]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 2
folds = 2
ratios = ["natural"]
sizes = ["all"]
min_minority = 3
"""
# Demšar (2006), JMLR 7, Table 5(a): Nemenyi critical values q_0.05 for k = 3 and k = 6 methods.
Q_05 = {3: 2.343, 6: 2.850}


@pytest.fixture(scope="module")
def board(tmp_path_factory):
    """One real run's leaderboard folder (3 datasets, 3 resamplers x 2 learners)."""
    base = tmp_path_factory.mktemp("run")
    suite = base / "screening.toml"
    suite.write_text(SUITE, encoding="utf-8")
    run_suite(suite, RunOptions(out=base / "board", store=base / "store.sqlite", execution=QUIET))
    return base / "board"


@pytest.fixture
def pair(board, tmp_path):
    """(baseline, new): two copies of the run's folder, files a gate reads only."""
    copies = []
    for name in ("baseline", "new"):
        target = tmp_path / name
        target.mkdir()
        for file in ("manifest.json", "stats.json", "scores.csv"):
            shutil.copy(board / file, target / file)
        copies.append(target)
    return copies


def _gate(capsys, *args):
    code = main(["compare", *map(str, args)])
    out, err = capsys.readouterr()
    return code, out, err


def _edit_json(path, change):
    content = json.loads(path.read_text(encoding="utf-8"))
    change(content)
    path.write_text(json.dumps(content), encoding="utf-8")


def _learner_view(stats, learner="logistic-regression", metric="balanced_accuracy"):
    return next(c for c in stats["comparisons"]
                if c["view"] == "learner" and c["learner"] == learner and c["metric"] == metric)


def test_identical_folders_pass_with_no_change(pair, capsys):
    code, out, _ = _gate(capsys, *pair)
    assert code == 0
    assert "no change in any average rank or balanced_accuracy score" in out
    assert "18 rows in both folders; 0 changed within the tolerance" in out     # 3 datasets x 3 x 2 methods


def test_a_score_moved_beyond_tolerance_fails_and_names_the_row(pair, capsys):
    scores = pd.read_csv(pair[1] / "scores.csv")
    row = (scores["dataset"] == "sklearn:iris?positive=1") & (scores["resampler"] == "topup-over") \
        & (scores["learner"] == "forest")
    before = float(scores.loc[row, "balanced_accuracy_mean"].iloc[0])
    scores.loc[row, "balanced_accuracy_mean"] = before - 0.05
    scores.to_csv(pair[1] / "scores.csv", index=False)
    code, out, _ = _gate(capsys, *pair)
    assert code == 1
    assert "**Fail**: 1 balanced_accuracy score(s) moved by more than 0.02" in out
    assert (f"| sklearn:iris?positive=1 | natural | all | topup-over | forest | {before:.4f} | "
            f"{before - 0.05:.4f} | -0.0500 |") in out
    # the same move passes a looser tolerance, and is then counted as a change within it
    code, out, _ = _gate(capsys, *pair, "--tolerance", "0.06")
    assert code == 0 and "1 changed within the tolerance" in out


def test_failed_cells_in_the_new_run_fail_the_gate(pair, capsys):
    scores = pd.read_csv(pair[1] / "scores.csv")
    scores.loc[0, "n_failed"] = 1        # as method_matrix does, a row with failed cells has no value
    scores.to_csv(pair[1] / "scores.csv", index=False)
    code, out, _ = _gate(capsys, *pair)
    assert code == 1
    assert f"| {scores.loc[0, 'balanced_accuracy_mean']:.4f} | n/a | n/a |" in out


def _plant_ranks(folder, ranks):
    _edit_json(folder / "stats.json", lambda stats: _learner_view(stats)["average_ranks"].update(ranks))


def test_the_default_threshold_is_the_baselines_nemenyi_cd(pair):
    stats = json.loads((pair[0] / "stats.json").read_text(encoding="utf-8"))
    for view in stats["comparisons"]:
        k, n = view["n_methods"], view["n_datasets"]
        # Demšar (2006) section 3.2.2: CD = q_alpha sqrt(k (k + 1) / (6 N)); q from Table 5(a), 3 decimals
        assert view["nemenyi"]["cd"] == pytest.approx(Q_05[k] * math.sqrt(k * (k + 1) / (6 * n)), abs=2e-3)
    assert 1.9 < _learner_view(stats)["nemenyi"]["cd"] < 2.0          # k = 3, N = 3: 2.343 * sqrt(2/3) = 1.913


def test_a_rank_move_beyond_the_cd_fails_and_within_it_passes(pair, capsys):
    _plant_ranks(pair[0], {"none": 1.0, "random-under": 2.0, "topup-over": 3.0})
    _plant_ranks(pair[1], {"none": 3.0, "random-under": 2.0, "topup-over": 1.0})   # moves of 2 > CD 1.913
    code, out, _ = _gate(capsys, *pair)
    assert code == 1
    assert "**Fail**: 2 average rank(s) moved by more than the threshold" in out
    assert ("| balanced_accuracy, ratio=natural, size=all, resamplers with logistic-regression | none | 1.00 | "
            "3.00 | +2.00 | 1.91 | yes | yes |") in out

    _plant_ranks(pair[1], {"none": 1.5, "random-under": 1.5, "topup-over": 3.0})   # moves of 0.5 < CD
    code, out, _ = _gate(capsys, *pair)
    assert code == 0
    assert "**Pass**: 2 average rank(s) and 0 balanced_accuracy score(s) moved, none beyond the thresholds" in out
    # a tighter threshold of our own fails the same move, which still does not exceed the CD
    code, out, _ = _gate(capsys, *pair, "--rank-threshold", "0.25")
    assert code == 1
    assert "| 1.00 | 1.50 | +0.50 | 0.25 | yes | no |" in out


def test_added_and_removed_methods_are_listed_and_do_not_fail(pair, capsys):
    scores = pd.read_csv(pair[1] / "scores.csv")
    scores[scores["resampler"] != "topup-over"].to_csv(pair[1] / "scores.csv", index=False)

    def drop(stats):
        for view in stats["comparisons"]:
            view["average_ranks"] = {m: r + 0.75 for m, r in view["average_ranks"].items() if "topup-over" not in m}
    _edit_json(pair[1] / "stats.json", drop)
    code, out, _ = _gate(capsys, *pair, "--rank-threshold", "0.5")
    assert code == 0
    assert "- resamplers removed: topup-over" in out
    assert "that alone does not fail the gate" in out
    assert "no: methods or datasets changed" in out        # moves of 0.75 > 0.5, not like for like


def test_summary_goes_to_the_out_file_too(pair, tmp_path, capsys):
    code, out, _ = _gate(capsys, *pair, "--out", tmp_path / "comment" / "gate.md")
    assert code == 0
    assert (tmp_path / "comment" / "gate.md").read_text(encoding="utf-8") + "\n" == out


def test_names_are_escaped_for_markdown_tables(pair, capsys):
    hostile = "a|b <script>alert(1)</script>"
    for folder in pair:
        scores = pd.read_csv(folder / "scores.csv")
        scores["resampler"] = scores["resampler"].replace("none", hostile)
        if folder == pair[1]:
            scores.loc[scores["resampler"] == hostile, "balanced_accuracy_mean"] -= 0.1
        scores.to_csv(folder / "scores.csv", index=False)
    code, out, _ = _gate(capsys, *pair)
    assert code == 1
    # GitHub Flavored Markdown spec, "Tables (extension)" (from memory): a pipe inside a cell is written \|;
    # its "Raw HTML" section: a <tag> would pass through as HTML, so < and > become entities
    assert "| a\\|b &lt;script&gt;alert(1)&lt;/script&gt; |" in out
    assert "<script>" not in out and "a|b" not in out


@pytest.mark.parametrize("damage, file, field", [
    (lambda f: shutil.rmtree(f), "new", "folder"),
    (lambda f: (f / "stats.json").unlink(), "stats.json", "file"),
    (lambda f: (f / "stats.json").write_text("{\"comparisons\": [", encoding="utf-8"), "stats.json", "not valid JSON"),
    (lambda f: (f / "stats.json").write_text("{\"comparisons\": [{\"metric\": \"mcc\"}]}", encoding="utf-8"),
     "stats.json", "comparisons[0].ratio: missing"),
    (lambda f: _edit_json(f / "stats.json", lambda s: s["comparisons"][1].update(size=None)), "stats.json",
     "comparisons[1].size: None is neither text nor a number"),
    (lambda f: (f / "scores.csv").write_text("", encoding="utf-8"), "scores.csv", "file"),
    (lambda f: (f / "scores.csv").write_text("dataset,ratio\nx,natural\n", encoding="utf-8"), "scores.csv",
     "columns: missing size, resampler, learner, n_failed"),
    (lambda f: _edit_json(f / "manifest.json", lambda m: m.update(suite="other")), "manifest.json",
     "suite: 'other' differs from the baseline's 'screening'"),
    (lambda f: _edit_json(f / "stats.json", lambda s: s.update(
        comparisons=[c for c in s["comparisons"] if c["metric"] == "mcc"])), "stats.json", "metric: compares mcc"),
])
def test_bad_input_exits_2_naming_the_file(pair, capsys, damage, file, field):
    damage(pair[1])
    code, out, err = _gate(capsys, *pair)
    assert code == 2 and out == ""
    assert err.startswith("lopsided: error: ") and err.count("\n") == 1
    assert str(pair[1] / file if file != "new" else pair[1]) in err and field in err


def test_a_non_number_in_scores_is_named_by_column_and_row(pair, capsys):
    scores = pd.read_csv(pair[1] / "scores.csv")
    scores["balanced_accuracy_mean"] = scores["balanced_accuracy_mean"].astype(object)
    scores.loc[3, "balanced_accuracy_mean"] = "0.8;0.9"
    scores.to_csv(pair[1] / "scores.csv", index=False)
    code, _, err = _gate(capsys, *pair)
    assert code == 2
    assert f"{pair[1] / 'scores.csv'}: balanced_accuracy_mean: line 5: '0.8;0.9' is not a number" in err


def test_unknown_metric_and_negative_tolerance_exit_2(pair, capsys):
    code, _, err = _gate(capsys, *pair, "--metric", "balanced_acuracy")
    assert code == 2 and "balanced_acuracy_mean: no such column" in err and "did you mean 'balanced_accuracy'" in err
    code, _, err = _gate(capsys, *pair, "--tolerance", "-0.1")
    assert code == 2 and "--tolerance" in err


def test_diff_is_a_pure_function_of_two_loaded_folders(pair):
    result = diff(load_folder(pair[0]), load_folder(pair[1]), metric="mcc", tolerance=0.0)
    assert result.metric == "mcc" and result.unchanged and not result.failed
    assert result.rows_compared == 18 and result.added == () and result.removed == ()


# Quiet exits. Common practice for command-line tools: a reader that closes the pipe early (head, less)
# is not an error, so no traceback; we exit 0 (not 141 = 128 + SIGPIPE) so `set -o pipefail` scripts pass.
# Ctrl-C exits 130 = 128 + SIGINT (2): the Bash manual, "Exit Status": 128 + n for a fatal signal n.

def test_a_closed_pipe_gives_no_traceback_and_exit_0():
    reader, writer = os.pipe()
    os.close(reader)                 # closed before the command writes anything: every write fails with EPIPE
    try:
        done = subprocess.run([str(LOPSIDED), "list", "resamplers"], stdout=writer, stderr=subprocess.PIPE,
                              text=True, cwd=ROOT, check=False)
    finally:
        os.close(writer)
    assert "Traceback" not in done.stderr and "BrokenPipeError" not in done.stderr
    assert done.returncode == 0


def test_head_after_lopsided_in_a_pipefail_shell_exits_0():
    done = subprocess.run(["bash", "-c", f"set -o pipefail; '{LOPSIDED}' list resamplers | head -1"],
                          capture_output=True, text=True, cwd=ROOT, check=False)
    assert done.returncode == 0 and "Traceback" not in done.stderr
    assert done.stdout.startswith("none ") and done.stdout.count("\n") == 1


@pytest.mark.parametrize("command, words", [("list", "lopsided: interrupted\n"),
                                            ("run", "lopsided: interrupted; finished work units are stored")])
def test_ctrl_c_prints_one_line_and_exits_130(monkeypatch, capsys, command, words):
    def interrupted(args):
        raise KeyboardInterrupt
    monkeypatch.setitem(cli.COMMANDS, command, interrupted)
    argv = ["list", "resamplers"] if command == "list" else ["run", "bench/gate.toml"]
    assert main(argv) == 130
    out, err = capsys.readouterr()
    assert out == "" and err.startswith(words) and err.count("\n") == 1
