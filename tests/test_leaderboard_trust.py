"""A leaderboard that claims no more than its data allow: methods that stay, like-for-like sweeps,
winners per imbalance band, per-dataset tables, captions and a citation block."""
import contextlib
import io
import json
import re
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from lopsided.analysis import compare
from lopsided.cli import main
from lopsided.errors import SuiteError
from lopsided.execution.store import Store
from lopsided.options import StatsOptions
from lopsided.planning.suite import Protocol, load_suite
from lopsided.report import findings
from lopsided.report.figures import comparable_datasets, positions, sweep
from lopsided.report.winners import band_of, band_specs, winner_rows

ROOT = Path(__file__).resolve().parents[1]


def _strict_json(path):
    """json.loads that refuses NaN and Infinity, as a strict JSON reader would."""
    def refuse(name):
        raise ValueError(f"{path}: non-standard JSON constant {name}")
    return json.loads(Path(path).read_text(encoding="utf-8"), parse_constant=refuse)


def test_rank_on_two_agreeing_datasets_claims_nothing_and_reports_one_sixth(tmp_path, capsys):
    """Two datasets ranking three methods identically: under the null the chance of that is
    3! / (3!)^2 = 1/6 (each dataset's ranking uniform over 3! orders), so nothing can be rejected."""
    scores = tmp_path / "two.csv"
    scores.write_text("dataset,a,b,c\nd1,0.9,0.8,0.7\nd2,0.95,0.85,0.75\n", encoding="utf-8")
    assert main(["rank", str(scores), "--out", str(tmp_path / "r")]) == 0
    stats = _strict_json(tmp_path / "r" / "stats.json")
    assert stats["permutation"]["method"] == "exact"
    assert stats["permutation"]["p"] == pytest.approx(1 / 6, abs=1e-15)
    assert stats["decision"]["p"] == pytest.approx(1 / 6, abs=1e-15)
    assert stats["iman_davenport"]["F"] is None and "identically" in stats["iman_davenport"]["reason"]
    assert stats["decision"]["claims_allowed"] is False
    text = (tmp_path / "r" / "ranking.md").read_text(encoding="utf-8")
    assert "No significance claim" in text and "The Friedman test rejects" not in text and "inf" not in text.split()


def test_perfect_agreement_on_six_datasets_is_decided_by_the_exact_p_not_by_an_infinite_f():
    """Six datasets, three methods, identical rankings: exact p = 3! / 6^6 = 1/7776 (Friedman 1937)."""
    table = pd.DataFrame([[0.9, 0.8, 0.7]] * 6, columns=["a", "b", "c"], index=[f"d{i}" for i in range(6)])
    result = compare(table)
    assert result.friedman.iman_davenport_F is None
    assert result.friedman.decision_p == pytest.approx(1 / 6 ** 5, rel=1e-12)
    assert result.claims_allowed
    json.dumps(result.as_json(), allow_nan=False)


@pytest.fixture(scope="module")
def added(write_module_suite):
    """One real run of the conftest suite at its natural ratio with two resamplers added on the command line,
    built once for the module: (suite file, leaderboard folder with its store)."""
    suite = write_module_suite(ratios='["natural"]')
    out = suite.parent / "o"
    with contextlib.redirect_stdout(io.StringIO()):
        assert main(["run", str(suite), "--out", str(out), "--quiet",
                     "--add-resampler", "repeat-over", "--add-resampler", "plugins_for_tests:Halves"]) == 0
    return suite, out


def test_an_added_resampler_stays_through_reruns_and_reports_until_dropped(added, tmp_path, capsys):
    small_suite, out = added[0], tmp_path / "o"
    shutil.copytree(added[1], out)                 # a run with --add-resampler repeat-over and Halves
    assert main(["run", str(small_suite), "--out", str(out), "--quiet"]) == 0        # a plain rerun
    assert " 0 computed" in capsys.readouterr().out                                # nothing refitted
    manifest = _strict_json(out / "manifest.json")
    recorded = [m for m in manifest["methods"] if m["origin"] == "added"]
    assert [m["label"] for m in recorded] == ["repeat-over", "plugins_for_tests:Halves"]
    assert all("--add-resampler repeat-over" in m["command"] for m in recorded)
    board = (out / "leaderboard.md").read_text(encoding="utf-8")
    assert "plugins_for_tests:Halves" in board and "--add-resampler" in board
    assert main(["report", str(small_suite), "--out", str(out)]) == 0             # rebuilt: still there
    assert "plugins_for_tests:Halves" in pd.read_csv(out / "scores.csv")["resampler"].tolist()
    assert main(["report", str(small_suite), "--out", str(out), "--drop-resampler", "repeat-over"]) == 0
    scores = pd.read_csv(out / "scores.csv")
    assert "repeat-over" not in set(scores["resampler"]) and "plugins_for_tests:Halves" in set(scores["resampler"])
    db = Store(out / "store.sqlite")
    assert "repeat-over" in set(db.cells()["resampler"])                           # cells are kept
    db.close()
    assert main(["run", str(small_suite), "--out", str(out), "--quiet"]) == 0
    assert "repeat-over" not in set(pd.read_csv(out / "scores.csv")["resampler"])
    capsys.readouterr()
    assert main(["run", str(small_suite), "--out", str(out), "--quiet", "--drop-resampler", "none"]) == 2
    assert "listed in the suite file" in capsys.readouterr().err
    assert main(["report", str(small_suite), "--out", str(out), "--drop-resampler", "repeat-ovr"]) == 2
    assert "unknown added resampler 'repeat-ovr'" in capsys.readouterr().err       # repeat-over is dropped already


def test_the_leaderboard_has_winners_per_band_a_per_dataset_table_captions_and_citations(added):
    out = added[1]
    board = (out / "leaderboard.md").read_text(encoding="utf-8")
    for needle in ("## The answer, per learner", "## Who leads where", "## Per-dataset balanced accuracy with "
                   "logistic-regression", "_Average ranks of", "## How to cite", "@misc{run-tiny-", "demsar2006",
                   "against the control none"):
        assert needle in board, needle
    # summary.md: its own title, the leaderboard's answer section word for word, a pointer to the full report
    title, rest = (out / "summary.md").read_text(encoding="utf-8").split("\n", 1)
    answer, pointer = rest.rsplit("The full report: ", 1)
    assert title == "# tiny: summary" and pointer.startswith("`index.html` (the site, offline) and `leaderboard.md`")
    assert answer.lstrip().startswith("> **Caution.**") and "## The answer, per learner" in answer
    assert answer.strip() in board
    # the papers behind this suite's methods, datasets and statistics; nothing for a method it does not run
    keys = set(re.findall(r"^@\w+\{([^,]+),", (out / "citation.bib").read_text(encoding="utf-8"), re.MULTILINE))
    assert {"japkowicz2000",                      # random under-sampling (Japkowicz 2000)
            "batista2004",                        # top-up over-sampling (Batista et al. 2004)
            "cox1958", "breiman2001",             # logistic regression, random forests
            "aeberhard1991", "fisher1936",        # the wine and iris data
            "friedman1937", "nemenyi1963", "wilcoxon1945", "holm1979", "demsar2006"} <= keys
    assert "chawla2002" not in keys and "chawla2002" not in board          # no SMOTE in this suite
    stats = _strict_json(out / "stats.json")
    views = {(c["metric"], c["view"], c["learner"]) for c in stats["comparisons"]}
    assert ("balanced_accuracy", "all", None) in views
    assert "&amp;" in (out / "cite.html").read_text(encoding="utf-8")       # references with & are escaped
    _strict_json(out / "manifest.json")


def test_control_false_turns_the_tests_against_a_control_off_and_none_is_the_resampler(write_suite, tmp_path):
    suite = load_suite(write_suite(extra='control = false', ratios='["natural"]'))
    assert suite.control_label is None and suite.as_dict()["control"] is False
    assert load_suite(write_suite(extra='control = "none"', ratios='["natural"]')).control_label == "none"
    assert load_suite(write_suite(extra='control = "topup-over"', ratios='["natural"]')).control_label == "topup-over"
    with pytest.raises(SuiteError, match="control: unknown resampler 'off'.*write control = false"):
        load_suite(write_suite(extra='control = "off"', ratios='["natural"]'))
    with pytest.raises(SuiteError, match="control: unknown resampler 'topup-ovr' .did you mean 'topup-over'"):
        load_suite(write_suite(extra='control = "topup-ovr"', ratios='["natural"]'))


def _scores(values):
    """A scores table from {(dataset, ratio): {resampler: value}} for one learner."""
    rows = [{"dataset": d, "ratio": r, "size": "all", "resampler": m, "learner": "lr", "n_failed": 0,
             "balanced_accuracy_mean": v} for (d, r), methods in values.items() for m, v in methods.items()]
    return pd.DataFrame(rows)


def test_a_sweep_uses_the_same_datasets_at_every_point(tmp_path):
    """Dataset C exists at ratio 2 only: averaging it in at one x would move the line for no reason."""
    values = {("A", "natural"): {"x": 0.7, "y": 0.6}, ("A", "2"): {"x": 0.8, "y": 0.7}, ("A", "8"): {"x": 0.6, "y": 0.5},
              ("B", "natural"): {"x": 0.9, "y": 0.8}, ("B", "2"): {"x": 0.9, "y": 0.9}, ("B", "8"): {"x": 0.8, "y": 0.7},
              ("C", "2"): {"x": 0.1, "y": 0.1}}
    scores = _scores(values)
    kept = comparable_datasets(scores.assign(value=scores["balanced_accuracy_mean"]), "ratio", ["natural", "2", "8"],
                               {("x", "lr"), ("y", "lr")})
    assert kept == ["A", "B"]
    drawn = sweep(scores, "balanced_accuracy", "ratio", "all", ["natural", 2, 8], ["x", "y"], str(tmp_path / "s"))
    assert drawn["datasets"] == ["A", "B"] and drawn["left_out"] == ["C"]
    assert all(Path(p).stat().st_size > 0 for p in drawn["paths"])
    place = positions(["natural", 2, 8.0, 2.5], "ratio")         # the suite's values: numbers stay numbers
    assert place == {"2": 2.0, "2.5": 2.5, "8": 8.0, "natural": 1.0}   # 'natural' beside the scale: half the lowest


def test_winner_rows_split_the_natural_point_by_imbalance_band():
    """Bands IR < 3, 3-9, >= 9 (low / medium / high; Fernández et al. 2008, from memory)."""
    assert [band_of(r) for r in (1.0, 2.99, 3.0, 8.9, 9.0, 130.0)] == ["IR < 3", "IR < 3", "3 <= IR < 9",
                                                                      "3 <= IR < 9", "IR >= 9", "IR >= 9"]
    rng = np.random.default_rng(3)
    ratios = {f"d{i}": r for i, r in enumerate([1.5, 2, 2.5, 4, 5, 6, 7, 8, 10, 20, 40, 60, 80, 2.2, 5.5])}
    values = {(d, "natural"): {"best": 0.9 + rng.normal(0, 0.01), "mid": 0.7 + rng.normal(0, 0.01),
                               "low": 0.5 + rng.normal(0, 0.01)} for d in ratios}
    scores = _scores(values)
    primary = findings.PrimaryChoice("balanced_accuracy", "natural", "all", 15, 15, False)
    protocol = Protocol(ratios=("natural",), sizes=("all",))
    studies = [findings.Study(spec, *findings.compute(spec, findings.matrix_of(spec, scores, None, ratios), None,
                                                       StatsOptions(), None))
               for spec in band_specs(protocol, scores, primary)]
    findings.with_decisions(studies, 0.05)
    rows = winner_rows(studies, protocol, primary)
    by_band = {r["band"]: r["study"] for r in rows}
    assert [len(by_band[b].result.datasets) for b in ("IR < 3", "3 <= IR < 9", "IR >= 9")] == [4, 6, 5]
    assert all(s.result.leaders == ["best + lr"] for s in by_band.values())
    assert by_band["3 <= IR < 9"].decision.rejects                       # 6 datasets, the same order on each
    assert not by_band["IR < 3"].result.claims_allowed                    # four datasets: no claim
    assert by_band["IR < 3"].decision.run_tests == 2                      # the two bands that can claim share a family


CELL_COLUMNS = {"dataset", "ratio", "size", "repeat", "fold", "resampler", "learner", "status", "error", "warning",
                "resample_seconds", "fit_seconds", "predict_seconds", "n_train", "n_test", "seed"}


@pytest.mark.parametrize("folder", sorted(p.name for p in (ROOT / "results").iterdir() if p.is_dir()))
def test_committed_leaderboards_come_from_real_runs(folder):
    board = ROOT / "results" / folder
    manifest = _strict_json(board / "manifest.json")
    assert manifest["seconds"] > 0 and manifest["jobs"] >= 1 and manifest["command"].startswith("lopsided run ")
    assert manifest["started_at"] < manifest["finished_at"]
    assert {"chemotools", "openml", "numpy", "scikit-learn"} <= set(manifest["versions"])
    cells = board / ("cells.csv" if (board / "cells.csv").exists() else "cells.csv.gz")
    header = set(pd.read_csv(cells, nrows=0).columns)
    assert CELL_COLUMNS | set(load_suite(ROOT / "bench" / f"{folder}.toml").metrics) <= header
    _strict_json(board / "stats.json")
    text = (board / "leaderboard.md").read_text(encoding="utf-8")
    for needle in ("## The answer, per learner", "## Per-dataset", "## How to cite", "```bibtex", "research evidence"):
        assert needle in text, needle
    assert len((board / "summary.md").read_text(encoding="utf-8")) < 20_000     # fits a pull-request description
    heavy = {page.name: page.stat().st_size for page in board.glob("*.html") if page.stat().st_size >= 400_000}
    assert not heavy, f"pages over 400 kB of HTML: {heavy}"
