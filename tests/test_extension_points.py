"""One registry shape for every extension point, typed dataset parameters, read-only shared datasets."""
import numpy as np
import pandas as pd
import pytest

from lopsided.cli import main
from lopsided.datasets import DATASETS, load_dataset
from lopsided.errors import DatasetError, MethodError, SuiteError
from lopsided.injected import FIXED, INJECTED
from lopsided.methods import learners, metrics, preprocessing, resamplers
from lopsided.planning.suite import suite_from_dict
from lopsided.registry import BUILT_IN, Builtin, Registry
from lopsided.report.site import ran_with
from lopsided.specs import MethodSpec


@pytest.mark.parametrize("registry, group", [(resamplers.REGISTRY, "lopsided.resamplers"),
                                             (learners.REGISTRY, "lopsided.learners"),
                                             (preprocessing.REGISTRY, "lopsided.preprocessing"),
                                             (metrics.REGISTRY, None),
                                             (DATASETS, "lopsided.datasets")])
def test_every_extension_point_is_one_registry_with_its_entry_point_group(registry, group):
    assert isinstance(registry, Registry) and registry.group == group
    assert all(isinstance(entry, Builtin) and entry.summary for entry in registry.builtins.values())
    rows = registry.describe()
    assert [r.name for r in rows[:len(registry.builtins)]] == list(registry.builtins)
    assert all(r.origin == BUILT_IN for r in rows[:len(registry.builtins)])
    with pytest.raises((MethodError, DatasetError), match="did you mean"):
        registry.resolve(next(iter(registry.builtins)) + "x")


def test_lopsided_list_metrics_reads_the_metric_registry(capsys):
    assert main(["list", "metrics"]) == 0
    lines = capsys.readouterr().out.splitlines()
    assert [line.split()[0] for line in lines] == list(metrics.METRICS)
    assert all(BUILT_IN in line for line in lines)


def test_a_cell_is_scored_by_the_function_of_each_registered_metric():
    y, predicted = np.array([0, 0, 0, 1, 1]), np.array([0, 1, 0, 1, 0])
    scores = np.c_[1 - predicted, predicted].astype(float)
    part = metrics.outcome(y, predicted, scores, 1, 2)
    scored = metrics.score_cell(y, predicted, scores, 1, ("rest", "rare"))
    assert {name: entry.factory(part) for name, entry in metrics.METRICS.items()} == {
        name: scored[name] for name in metrics.METRICS}


def _suite(resampler):
    return {"name": "t", "datasets": ["sklearn:iris?positive=1"], "resamplers": [resampler],
            "learners": ["knn"], "preprocessing": []}


def test_the_runners_parameters_are_named_once_for_the_suite_the_build_and_the_methods_page():
    """injected.INJECTED decides what a suite may set, what each factory receives and what the Methods page
    leaves out."""
    assert FIXED == {p.name for p in INJECTED if not p.settable} == {"random_state", "axis"}
    for name in FIXED:
        with pytest.raises(SuiteError, match=rf"resamplers\[0\]\.params: smote: unknown parameter '{name}'"):
            suite_from_dict(_suite({"name": "smote", "params": {name: 1}}))
    suite_from_dict(_suite({"name": "smote-nc", "params": {"distances": "as-given", "nominal": [0]}}))  # settable
    built = resamplers.make_resampler(MethodSpec("smote-nc"), 7, one_unit=True, nominal=(2,))
    assert (built.random_state, built.distances, built.nominal) == (7, "as-given", (2,))
    given = resamplers.make_resampler(MethodSpec("smote-nc", {"nominal": (0,)}), 7, nominal=(2,))
    assert (given.distances, given.nominal) == ("standardized", (0,))             # the spec's own value wins
    plugin = resamplers.make_resampler(MethodSpec("plugins_for_tests:Halves"), 7, one_unit=True)
    assert plugin.random_state == 7 and not hasattr(plugin, "distances")      # distances: built-ins only
    step = preprocessing.make_preprocessing([MethodSpec("range", {"low": 2, "high": 3})], np.arange(5.0))
    assert step.transform(np.arange(10.0).reshape(2, 5)).tolist() == [[2.0, 3.0], [7.0, 8.0]]
    shown = ran_with(resamplers.REGISTRY, "smote", {})
    assert not FIXED & set(shown) and {"distances", "balance"} <= set(shown)


def test_a_plugin_entry_point_is_listed_with_its_package_and_version(tmp_path, monkeypatch, capsys):
    """A distribution on sys.path with an entry point in the learners group (the packaging metadata
    format: a .dist-info folder with METADATA and entry_points.txt) is found, resolved and listed."""
    info = tmp_path / "tiny_learner_plugin-2.5.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: tiny-learner-plugin\nVersion: 2.5\n")
    (info / "entry_points.txt").write_text("[lopsided.learners]\ntiny-learner = sklearn.dummy:DummyClassifier\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    assert learners.resolve("tiny-learner").__name__ == "DummyClassifier"
    assert main(["list", "learners"]) == 0
    line = next(row for row in capsys.readouterr().out.splitlines() if row.startswith("tiny-learner"))
    assert "plugin tiny-learner-plugin 2.5" in line and "sklearn.dummy:DummyClassifier" in line


def test_dataset_parameters_are_text_until_their_adapter_types_them(tmp_path):
    table = pd.DataFrame({"1": ["a", "b", "a", "a"] * 5, "x": np.arange(20.0), "code": ["007", "7"] * 10})
    path = tmp_path / "t.csv"
    table.to_csv(path, index=False)
    assert load_dataset(f"file:{path}?label=1").classes == ("a", "b")              # a column named "1"
    coded = load_dataset(f"file:{path}?label=code&positive=007&drop=1")
    assert coded.classes == ("not 007", "007")                                       # not the number 7
    with pytest.raises(DatasetError, match=r"donors: 'many' is not a whole number"):
        load_dataset("spectra:serum?donors=many")
    with pytest.raises(DatasetError, match=r"effect: 'strong' is not a finite number"):
        load_dataset("spectra:serum?effect=strong")


def test_a_bug_inside_an_adapter_is_not_reported_as_the_users_mistake(monkeypatch):
    def broken(ref):
        raise ValueError("an adapter bug")
    monkeypatch.setitem(DATASETS.builtins, "broken", Builtin(broken, "a broken adapter"))
    with pytest.raises(ValueError, match="an adapter bug"):
        load_dataset("broken:x")


def test_shared_datasets_cannot_be_changed_by_one_caller_for_the_next():
    data = load_dataset("sklearn:iris?positive=1")
    with pytest.raises(ValueError, match="read-only"):
        data.X[0, 0] = 99.0
    assert load_dataset("sklearn:iris?positive=1").X[0, 0] != 99.0


def test_datasets_show_prints_a_spectral_axis(capsys):
    assert main(["datasets", "show", "spectra:serum?region=fingerprint&step=8&donors=10"]) == 0
    assert "1800-904 cm-1, 113 points, step 8" in capsys.readouterr().out


def test_a_resampler_of_another_library_joins_through_fit_resample_and_ours_through_rebalance():
    """Our contract is rebalance(X, y); an object with only fit_resample(X, y) (the common resampling
    libraries' name) is wrapped, its parameters and extras its own."""
    import numpy as np

    from lopsided.methods.resamplers import ForeignResampler, make_resampler, resample
    from lopsided.specs import MethodSpec
    foreign = make_resampler(MethodSpec("plugins_for_tests:Halves"), 3)
    ours = make_resampler(MethodSpec("random-under"), 3)
    assert isinstance(foreign, ForeignResampler) and foreign.random_state == 3
    assert not isinstance(ours, ForeignResampler) and callable(ours.rebalance)
    X, y = np.arange(40.0).reshape(20, 2), np.r_[np.zeros(15, int), np.ones(5, int)]
    X_out, y_out = resample(foreign, X, y)
    assert len(y_out) < len(y) and set(y_out) == {0, 1}
