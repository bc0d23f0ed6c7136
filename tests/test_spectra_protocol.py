"""Spectra in the protocol: learning curves, holdout, split leakage, measured and user spectra, PLS-DA."""
import numpy as np
import pandas as pd
import pytest
from sklearn.cross_decomposition import PLSRegression

from lopsided.datasets import load_dataset
from lopsided.errors import DatasetError
from lopsided.jobs.run import run_suite
from lopsided.methods.learners import PLSDA
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.protocol import class_orders, fold_splits, point_counts, point_rows

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests

SPECTRA_SUITE = """
name = "spectra-tiny"
seed = 5
datasets = ["spectra:serum?donors=36&ratio=2&replicates=3&effect=2&region=fingerprint&step=16"]
resamplers = ["none", "random-under"]
learners = ["pls-da", "linear-svm"]
metrics = ["balanced_accuracy"]
preprocessing = ["snv", {{ name = "savgol", params = {{ window = 5, order = 2, derivative = 1 }} }}]
[protocol]
repeats = 2
{split}
ratios = {ratios}
sizes = {sizes}
min_minority = 3
"""


def test_balanced_learning_curve_points_are_nested_and_balanced():
    data = load_dataset("spectra:polymers?particles=200&ratio=4&region=fingerprint&step=16")
    train, _ = fold_splits(data, 3, seed=2, holdout=0.3)[0]
    orders = class_orders(data.y, train, seed=3)
    available = {c: len(r) for c, r in orders.items()}
    previous = set()
    for size in (12, 24, 48):
        rows = point_rows(orders, point_counts(available, data.minority, "balanced", size, 2))
        assert np.bincount(data.y[rows], minlength=6).tolist() == [size // 6] * 6
        assert previous <= set(rows)
        previous = set(rows)


def test_holdout_gives_one_fixed_grouped_test_set_per_repeat():
    data = load_dataset("spectra:serum?donors=40&ratio=3&region=fingerprint&step=16")
    splits = fold_splits(data, 5, seed=1, holdout=0.25)
    assert len(splits) == 1
    train, test = splits[0]
    assert len(test) / len(data.y) == pytest.approx(0.25, abs=0.06)
    assert not set(data.groups[train]) & set(data.groups[test])


def test_random_split_inflates_the_score_of_replicated_donors(write_suite, tmp_path):
    """Replicates of one donor are more alike than donors (group effect > replicate effect), so a split that
    ignores donors reports a better score than the grouped one (the leakage the protocol prevents)."""
    text = SPECTRA_SUITE.format(split="folds = 3", ratios='["natural"]', sizes='["all"]')
    text = text.replace("effect=2", "effect=0").replace("replicates=3", "replicates=6")
    path = write_suite(text=text, name="leak.toml")
    result = run_suite(path, RunOptions(out=tmp_path / "o", split_leakage=True, execution=QUIET))
    rows = result.summary.split_leakage
    assert {r["learner"] for r in rows} == {"pls-da", "linear-svm"}
    assert all(r["grouped"] == pytest.approx(0.5, abs=0.15) for r in rows)    # no class effect: chance
    assert max(r["inflation"] for r in rows) > 0.05
    assert "Split leakage" in (tmp_path / "o" / "leaderboard.md").read_text()


def test_spectra_suite_with_preprocessing_and_learning_curve(write_suite, tmp_path):
    text = SPECTRA_SUITE.format(split="holdout = 0.3", ratios='["balanced"]', sizes="[8, 16, 24]")
    result = run_suite(write_suite(text=text, name="curve.toml"), RunOptions(out=tmp_path / "o", execution=QUIET))
    cells = result.cells
    assert (cells["status"] == "ok").all()
    assert sorted(cells["n_train"].unique()) == [8, 16, 24]
    assert (cells["n_train_minority"] * 2 == cells["n_train"]).all()
    figures = {p.name for p in (tmp_path / "o" / "figures").iterdir()}
    assert {"sweep-balanced_accuracy-size-balanced.svg", "sweep-sensitivity-size-balanced.svg"} <= figures


def test_measured_coffee_spectra_with_induced_imbalance():
    data = load_dataset("measured:coffee?positive=Vietnam&keep=5&seed=1")
    assert data.counts.tolist() == [40, 5] and data.X.shape == (45, 1841)
    assert "INDUCED" in data.provenance.note
    with pytest.raises(DatasetError, match="keep=30 must be between 1 and 20"):
        load_dataset("measured:coffee?positive=Vietnam&keep=30")


def test_wide_spectra_table_gives_a_wavenumber_axis(tmp_path):
    axis = np.arange(1800, 898, -4.0)
    rng = np.random.default_rng(0)
    table = pd.DataFrame(rng.random((12, len(axis))), columns=[f"{w:g}" for w in axis])
    table["particle"] = np.repeat(np.arange(6), 2)
    table["polymer"] = ["pe"] * 8 + ["pvc"] * 4
    path = tmp_path / "particles.csv"
    table.to_csv(path, index=False)
    data = load_dataset(f"file:{path}?label=polymer&group=particle")
    np.testing.assert_array_equal(data.axis, axis)
    assert data.meta()["groups"] == 6


def write_jdx(path, x0, dx, ys, yfactor=0.001):
    """A JCAMP-DX 4.24 file in the (X++(Y..Y)) AFFN form, written by hand (McDonald & Wilks 1988)."""
    lines = ["##TITLE=" + path.stem, "##JCAMP-DX=4.24", "##DATA TYPE=INFRARED SPECTRUM", "##XUNITS=1/CM",
             "##YUNITS=ABSORBANCE", f"##FIRSTX={x0}", f"##LASTX={x0 + dx * (len(ys) - 1)}",
             f"##NPOINTS={len(ys)}", "##XFACTOR=1", f"##YFACTOR={yfactor}", "##XYDATA=(X++(Y..Y))"]
    for start in range(0, len(ys), 8):
        values = " ".join(str(int(round(v / yfactor))) for v in ys[start:start + 8])
        lines.append(f"{x0 + dx * start:g} {values}")
    lines.append("##END=")
    path.write_text("\n".join(lines) + "\n")


def test_jcamp_folder_round_trip(tmp_path):
    rng = np.random.default_rng(2)
    spectra = np.round(rng.random((6, 20)), 3)
    for i, ys in enumerate(spectra):
        write_jdx(tmp_path / f"s{i}.jdx", 900, 2, ys)
    pd.DataFrame({"file": [f"s{i}.jdx" for i in range(6)], "class": ["a", "a", "a", "a", "b", "b"],
                  "donor": [1, 1, 2, 2, 3, 3]}).to_csv(tmp_path / "labels.csv", index=False)
    data = load_dataset(f"jcamp:{tmp_path}?labels=labels.csv&label=class&group=donor")
    np.testing.assert_allclose(data.X, spectra, atol=1e-9)
    np.testing.assert_allclose(data.axis, 900 + 2 * np.arange(20))
    assert data.counts.tolist() == [4, 2] and len(set(data.groups)) == 3


def test_jcamp_errors_name_the_file(tmp_path):
    write_jdx(tmp_path / "a.jdx", 900, 2, [0.1, 0.2, 0.3])
    write_jdx(tmp_path / "b.jdx", 901, 2, [0.1, 0.2, 0.3])
    (tmp_path / "bad.jdx").write_text("this is not a spectrum\n")
    pd.DataFrame({"file": ["a.jdx", "b.jdx"], "class": ["x", "y"]}).to_csv(tmp_path / "labels.csv", index=False)
    with pytest.raises(DatasetError, match=r"b\.jdx: its x axis differs"):
        load_dataset(f"jcamp:{tmp_path}?labels=labels.csv&label=class")
    pd.DataFrame({"file": ["a.jdx", "bad.jdx"], "class": ["x", "y"]}).to_csv(tmp_path / "l2.csv", index=False)
    with pytest.raises(DatasetError, match=r"bad\.jdx"):
        load_dataset(f"jcamp:{tmp_path}?labels=l2.csv&label=class")
    pd.DataFrame({"file": ["a.jdx", "missing.jdx"], "class": ["x", "y"]}).to_csv(tmp_path / "l3.csv", index=False)
    with pytest.raises(DatasetError, match="'missing.jdx' listed but not found"):
        load_dataset(f"jcamp:{tmp_path}?labels=l3.csv&label=class")


def test_pls_da_is_pls_regression_on_indicators_with_argmax():
    """Barker & Rayens (2003): PLS regression of one-hot class indicators; class = largest prediction."""
    rng = np.random.default_rng(3)
    X = rng.normal(size=(60, 15))
    y = (X[:, 0] + 0.5 * rng.normal(size=60) > 0.3).astype(int)
    model = PLSDA(n_components=3).fit(X, y)
    reference = PLSRegression(n_components=3).fit(X, np.c_[y == 0, y == 1].astype(float))
    np.testing.assert_allclose(model.decision_function(X), reference.predict(X))
    np.testing.assert_array_equal(model.predict(X), np.argmax(reference.predict(X), axis=1))
