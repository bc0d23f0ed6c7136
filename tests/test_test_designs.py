"""Test designs: one fixed test part for every repeat, a designated cohort, an external test set."""
import numpy as np
import pandas as pd

from lopsided.cli import main
from lopsided.jobs.run import load_all, run_suite
from lopsided.jobs.tryout import try_dataset
from lopsided.options import ExecutionOptions, RunOptions, TryOptions
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests

SUITE = """
name = "design"
seed = 3
datasets = [{datasets}]
resamplers = ["none", "random-under"]
learners = ["logistic-regression"]
metrics = ["balanced_accuracy"]
[protocol]
repeats = 3
folds = 3
ratios = ["natural"]
sizes = [{sizes}]
min_minority = 3
test = "{test}"
"""


def _suite(tmp_path, datasets, test, sizes='"all"'):
    path = tmp_path / "design.toml"
    path.write_text(SUITE.format(datasets=datasets, test=test, sizes=sizes), encoding="utf-8")
    return path


def _table(path, n, seed, sites, donors_from=0, site_per="donor"):
    """Two rows per donor; the site is the donor's (or, with site_per="row", alternates within donors)."""
    rng = np.random.default_rng(seed)
    donor = np.arange(n) // 2
    label = np.where(donor % 5 == 0, "rare", "common")
    site = np.resize(sites, n)[donor] if site_per == "donor" else np.resize(sites, n)
    pd.DataFrame({"a": rng.normal(size=n) + (label == "rare"), "b": rng.normal(size=n), "site": site,
                  "donor": donors_from + donor, "label": label}).to_csv(path, index=False)
    return path


def test_a_fixed_test_part_is_shared_by_every_repeat_and_never_trained_on(tmp_path):
    suite = load_suite(_suite(tmp_path, '"sklearn:wine?positive=2"', "fixed", sizes="60"))
    units = plan(suite, load_all(suite)).units
    tests = {tuple(u.test) for u in units}
    assert len(tests) == 1                                            # one test part for all repeats
    test = set(next(iter(tests)))
    assert all(not test & set(u.train) for u in units)
    assert len({tuple(u.train) for u in units if u.resampler.name == "none"}) == 3   # training draws differ
    assert abs(len(test) / 178 - 1 / 3) < 0.02


def test_a_designated_cohort_is_the_test_part_and_must_share_no_donor(tmp_path, capsys):
    data = _table(tmp_path / "films.csv", 120, 1, ["north", "north", "south"])
    ref = f'"file:{data}?label=label&drop=site&group=donor"'
    suite = load_suite(_suite(tmp_path, ref, "column:site=south"))
    datasets = load_all(suite)
    frame = pd.read_csv(data)
    units = plan(suite, datasets).units
    assert all(set(u.test) == set(np.flatnonzero(frame["site"] == "south")) for u in units)
    assert all(not set(frame["donor"][u.test]) & set(frame["donor"][u.train]) for u in units)
    mixed = _table(tmp_path / "mixed.csv", 120, 1, ["north", "south"], site_per="row")   # each donor at both sites
    spanning = _suite(tmp_path, f'"file:{mixed}?label=label&drop=site&group=donor"', "column:site=south")
    assert main(["run", str(spanning), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert "protocol.test" in capsys.readouterr().err
    wrong = _suite(tmp_path, f'"file:{data}?label=label&drop=site"', "column:year=2020")
    assert main(["run", str(wrong), "--out", str(tmp_path / "o"), "--quiet"]) == 2
    assert "no column 'year' beside the features" in capsys.readouterr().err


def test_an_external_test_set_is_checked_and_used_as_the_only_test_part(tmp_path, capsys):
    train = _table(tmp_path / "train.csv", 100, 2, ["a"])
    other = _table(tmp_path / "other.csv", 40, 3, ["b"], donors_from=1000)
    ref = f'"file:{train}?label=label&drop=site,donor"'
    path = _suite(tmp_path, ref, f"file:{other}?label=label&drop=site,donor")
    result = run_suite(path, RunOptions(out=tmp_path / "o", execution=QUIET))
    assert set(result.cells["n_test"]) == {40}
    board = (tmp_path / "o" / "leaderboard.md").read_text(encoding="utf-8")
    assert "an external test set" in board and "not independent replications" in board
    mismatched = _suite(tmp_path, ref, f"file:{other}?label=label&drop=site")       # donor left in as a feature
    assert main(["run", str(mismatched), "--out", str(tmp_path / "p"), "--quiet"]) == 2
    assert "features differ" in capsys.readouterr().err


def test_try_on_a_fixed_test_part_makes_no_test_across_repeats(write_suite, tmp_path):
    suite = write_suite()
    result = try_dataset("sklearn:wine?positive=0", TryOptions(suite=suite, combos=("random-under + logistic-regression",), out=tmp_path / "t", test="fixed", execution=QUIET))
    assert any("not independent replications" in line for line in result.verdict)
    assert not any("t-test" in line for line in result.verdict)


def test_an_unknown_design_is_refused(tmp_path, capsys):
    assert main(["run", str(_suite(tmp_path, '"sklearn:wine?positive=2"', "halves")), "--quiet"]) == 2
    assert "protocol.test" in capsys.readouterr().err
