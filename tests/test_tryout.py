"""`lopsided try`: a user's dataset against a stored leaderboard's best combinations."""
import json

import pytest

from lopsided.benchmark import run_suite
from lopsided.cli import main
from lopsided.errors import SuiteError
from lopsided.tryout import parse_targets, try_dataset

SERUM = "spectra:serum?ratio=4&donors=60&effect=2&region=fingerprint&step=16&seed=5"


def test_targets_are_checked():
    assert parse_targets(["sensitivity=0.9", "g_mean=0.75"]) == {"sensitivity": 0.9, "g_mean": 0.75}
    for bad in ("sensitivity", "recall=0.9", "sensitivity=high", "sensitivity=1.5"):
        with pytest.raises(SuiteError, match="--target"):
            parse_targets([bad])


def test_try_runs_the_top_combinations_and_writes_a_verdict_led_folder(write_suite, tmp_path, capsys):
    suite = write_suite()
    run_suite(suite, out=tmp_path / "board", progress=False)
    manifest = json.loads((tmp_path / "board" / "manifest.json").read_text())
    assert all("n1" in d and "f1_separable" in d for d in manifest["datasets"])     # meta-features recorded
    code = main(["try", SERUM, "--suite", str(suite), "--board", str(tmp_path / "board"), "--top", "2",
                 "--sizes", "16,32,all", "--target", "sensitivity=0.8", "--out", str(tmp_path / "mine"), "--quiet"])
    assert code == 0
    printed = capsys.readouterr().out
    assert "has the best mean score" in printed and "research evidence" in printed
    board = (tmp_path / "mine" / "leaderboard.md").read_text(encoding="utf-8")
    assert board.index("## Verdict on") < board.index("### Methods")                   # headed by the verdict
    for needle in ("corrected t", "P(equivalent)", "nearest benchmark dataset", "minority samples needed"):
        assert needle in board, needle
    manifest = json.loads((tmp_path / "mine" / "manifest.json").read_text())
    section = manifest["tryout"]
    assert len(section["wanted"]) == 2 and len(section["neighbours"]) == 3
    assert {c["status"] for c in section["curves"]} <= {"estimated", "never reaches", "too far", "no fit"}
    assert all((tmp_path / "mine" / c["figure"]).is_file() for c in section["curves"] if c.get("figure"))
    page = (tmp_path / "mine" / "try.html").read_text(encoding="utf-8")
    assert "Verdict on" in page and "How many minority samples" in page and page.count("<svg") >= 1
    assert 'href="try.html"' in (tmp_path / "mine" / "index.html").read_text(encoding="utf-8")
    again = try_dataset(SERUM, suite_path=suite, board=tmp_path / "board", top=2, sizes=[16, 32, "all"],
                        out=tmp_path / "mine", progress=False)
    assert again.run.summary.cells.computed == 0                                 # stored cells reused


def test_try_without_a_leaderboard_says_what_to_do(write_suite, tmp_path, capsys):
    assert main(["try", SERUM, "--suite", str(write_suite()), "--board", str(tmp_path / "none")]) == 2
    assert "run the suite first or name combinations with --with" in capsys.readouterr().err
