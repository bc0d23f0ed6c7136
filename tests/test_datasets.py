"""Dataset adapters: files, bundled sets, synthetic spectra, and their errors."""
import numpy as np
import pandas as pd
import pytest

from lopsided.datasets import load_dataset
from lopsided.errors import DatasetError


def test_grouped_csv_round_trip(tmp_path):
    rng = np.random.default_rng(1)
    table = pd.DataFrame({"x1": rng.normal(size=30), "x2": rng.normal(size=30),
                          "donor": np.repeat([f"d{i}" for i in range(10)], 3),
                          "status": np.repeat(["ok"] * 8 + ["flag"] * 2, 3), "note": "n/a"})
    path = tmp_path / "films.csv"
    table.to_csv(path, index=False)
    data = load_dataset(f"file:{path}?label=status&group=donor&drop=note")
    np.testing.assert_allclose(data.X, table[["x1", "x2"]].to_numpy())
    assert data.classes == ("flag", "ok") and data.counts.tolist() == [6, 24]
    assert data.minority == 0 and data.imbalance_ratio == 4.0
    assert list(data.groups[:3]) == ["d0", "d0", "d0"]
    assert data.meta()["groups"] == 10


def test_file_errors_name_the_file_and_column(tmp_path):
    path = tmp_path / "t.csv"
    pd.DataFrame({"a": [1, 2], "kind": ["x", "y"], "txt": ["p", "q"]}).to_csv(path, index=False)
    with pytest.raises(DatasetError, match=r"t\.csv: no column 'knd' \(did you mean 'kind'\?\)"):
        load_dataset(f"file:{path}?label=knd")
    with pytest.raises(DatasetError, match=r"column 'txt' is not numeric; drop it with \?drop=txt"):
        load_dataset(f"file:{path}?label=kind")
    with pytest.raises(DatasetError, match="no such file"):
        load_dataset(f"file:{tmp_path}/absent.csv?label=kind")
    (tmp_path / "empty.csv").write_text("")
    with pytest.raises(DatasetError, match="empty.csv"):
        load_dataset(f"file:{tmp_path}/empty.csv?label=kind")


def test_one_vs_rest_bundled_set():
    data = load_dataset("sklearn:wine?positive=2")
    assert data.counts.tolist() == [130, 48]          # UCI wine: class 3 has 48 of 178 (UCI page)
    with pytest.raises(DatasetError, match="positive class '7' not among"):
        load_dataset("sklearn:wine?positive=7")
    with pytest.raises(DatasetError, match="did you mean 'digits'"):
        load_dataset("sklearn:digit")


def test_spectra_are_deterministic_per_seed_and_grouped():
    a = load_dataset("spectra:serum?donors=20&seed=4&region=fingerprint")
    b = load_dataset("spectra:serum?donors=20&seed=4&region=fingerprint&step=4")
    c = load_dataset("spectra:serum?donors=20&seed=5&region=fingerprint")
    np.testing.assert_array_equal(a.X, b.X)
    assert not np.allclose(a.X, c.X)
    assert a.axis[0] == 1800 and a.axis[-1] == 900 and len(a.axis) == a.X.shape[1]
    assert len(np.unique(a.groups)) == 20 and a.X.shape[0] == 60
    # class is a donor property: all replicates of a donor share it
    for donor in np.unique(a.groups):
        assert len(set(a.y[a.groups == donor])) == 1


def test_spectra_amide_one_is_the_strongest_serum_band():
    """Amide I near 1650 cm-1 dominates protein-rich films (Baker et al. 2014, Nat. Protoc. 9:1771; from memory)."""
    data = load_dataset("spectra:serum?donors=30&region=fingerprint&step=2")
    mean = data.X.mean(axis=0)
    assert abs(data.axis[np.argmax(mean)] - 1652) <= 6


def test_spectra_unknown_parameter_and_preset():
    with pytest.raises(DatasetError, match="unknown parameter 'donor'"):
        load_dataset("spectra:serum?donor=3")
    with pytest.raises(DatasetError, match="did you mean 'polymers'"):
        load_dataset("spectra:polymer")


def test_a_parameter_value_of_the_wrong_kind_is_a_clear_error():
    with pytest.raises(DatasetError, match=r"spectra:serum\?donors=abc: donors: 'abc' is not a whole number"):
        load_dataset("spectra:serum?donors=abc")
