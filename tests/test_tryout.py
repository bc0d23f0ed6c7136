"""`lopsided try`: a user's dataset against a stored leaderboard's best combinations."""
import json

import pytest

from lopsided.cli import main
from lopsided.errors import UsageError
from lopsided.jobs.tryout import parse_targets, try_dataset
from lopsided.options import ExecutionOptions, TryOptions

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests

SERUM = "spectra:serum?ratio=4&donors=60&effect=2&region=fingerprint&step=16&seed=5"


def test_targets_are_checked():
    assert parse_targets(["sensitivity=0.9", "g_mean=0.75"]) == {"sensitivity": 0.9, "g_mean": 0.75}
    for bad in ("sensitivity", "recall=0.9", "sensitivity=high", "sensitivity=1.5"):
        with pytest.raises(UsageError, match="--target"):
            parse_targets([bad])


def test_try_runs_the_top_combinations_and_writes_a_verdict_led_folder(tiny_board, tmp_path, capsys):
    suite, board_folder, _ = tiny_board                    # read only: `try` writes into its own --out
    manifest = json.loads((board_folder / "manifest.json").read_text())
    assert all("n1" in d and "f1_separable" in d for d in manifest["datasets"])     # meta-features recorded
    code = main(["try", SERUM, "--suite", str(suite), "--board", str(board_folder), "--top", "2",
                 "--sizes", "16,24,all", "--target", "sensitivity=0.8", "--out", str(tmp_path / "mine"), "--quiet"])
    assert code == 0
    printed = capsys.readouterr().out
    assert "has the best mean score" in printed and "research evidence" in printed
    board = (tmp_path / "mine" / "leaderboard.md").read_text(encoding="utf-8")
    assert board.index("## Verdict on") < board.index("### Methods")                   # headed by the verdict
    for needle in ("corrected t", "P(equivalent)", "nearest benchmark dataset", "minority donors / particles needed"):
        assert needle in board, needle
    manifest = json.loads((tmp_path / "mine" / "manifest.json").read_text())
    section = manifest["tryout"]
    assert len(section["wanted"]) == 2 and len(section["neighbours"]) == 3
    assert {c["status"] for c in section["curves"]} <= {"estimated", "never reaches", "too far", "no fit"}
    assert all((tmp_path / "mine" / c["figure"]).is_file() for c in section["curves"] if c.get("figure"))
    page = (tmp_path / "mine" / "try.html").read_text(encoding="utf-8")
    assert "Verdict on" in page and "How many minority samples" in page and page.count('<img src="figures/') >= 1
    assert section["count"] == "groups" and all(c.get("unit") == "groups" for c in section["curves"] if "unit" in c)
    assert 'href="try.html"' in (tmp_path / "mine" / "index.html").read_text(encoding="utf-8")
    again = try_dataset(SERUM, TryOptions(suite=suite, board=board_folder, top=2, sizes=(16, 24, "all"),
                                           out=tmp_path / "mine", execution=QUIET))
    assert again.run.summary.cells.computed == 0                                 # stored cells reused


def test_try_without_a_leaderboard_says_what_to_do(write_suite, tmp_path, capsys):
    assert main(["try", SERUM, "--suite", str(write_suite()), "--board", str(tmp_path / "none")]) == 2
    assert "run the suite first or name combinations with --with" in capsys.readouterr().err
