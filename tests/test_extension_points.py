"""One registry shape for every extension point, typed dataset parameters, read-only shared datasets."""
import numpy as np
import pandas as pd
import pytest

from lopsided import learners, preprocessing, resamplers
from lopsided.cli import main
from lopsided.datasets import DATASETS, load_dataset
from lopsided.errors import DatasetError, MethodError
from lopsided.registry import BUILT_IN, Registry


@pytest.mark.parametrize("registry, group", [(resamplers.REGISTRY, "lopsided.resamplers"),
                                             (learners.REGISTRY, "lopsided.learners"),
                                             (preprocessing.REGISTRY, "lopsided.preprocessing"),
                                             (DATASETS, "lopsided.datasets")])
def test_every_extension_point_is_one_registry_with_its_entry_point_group(registry, group):
    assert isinstance(registry, Registry) and registry.group == group
    rows = registry.describe()
    assert [r.name for r in rows[:len(registry.builtins)]] == list(registry.builtins)
    assert all(r.origin == BUILT_IN for r in rows[:len(registry.builtins)])
    with pytest.raises((MethodError, DatasetError), match="did you mean"):
        registry.resolve(next(iter(registry.builtins)) + "x")


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
    monkeypatch.setitem(DATASETS.builtins, "broken", (broken, "a broken adapter"))
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
