"""KEEL and OpenML adapters, offline: a KEEL-format fixture written here covers the parser everywhere; the
collection tests run when the KEEL wheel is in the cache (.ci/run fetches it first)."""
import hashlib
import textwrap
import zipfile

import numpy as np
import pandas as pd
import pytest

from lopsided.datasets import keel, load_dataset
from lopsided.datasets.cache import manifest
from lopsided.datasets.keelformat import parse_keel
from lopsided.errors import DatasetError

FIXTURE = textwrap.dedent("""\
    @relation film-batches
    @attribute Site {north, south,  east}
    @attribute Thickness real [0.1, 0.9]
    @attribute Age integer[0,90]
    @attribute Gain real [1.0, 1.0]
    @attribute Class {positive, negative}
    @inputs Site, Thickness, Age, Gain
    @outputs Class
    @data
    north, 0.50, 40, 1.0, positive
    south,0.20,33,1.0,positive   
    east ,  <null>, 61, 1.0, positive
    north, 0.70, 12, 1.0, negative
    north, 0.70, 12, 1.0, negative
    south, 0.35, 50, 1.0, positive
    """)


def test_parser_handles_the_pitfalls_of_keel_files():
    table = parse_keel(FIXTURE, "fixture")
    assert table.names == ("Site", "Thickness", "Age", "Gain")
    np.testing.assert_array_equal(table.X[:, 0], [0, 1, 2, 0, 0, 1])          # declared order north, south, east
    assert np.isnan(table.X[2, 1]) and table.X[1, 1] == 0.2                   # <null> and tight commas
    assert list(table.labels) == ["positive"] * 3 + ["negative"] * 2 + ["positive"]   # trailing spaces gone
    assert table.nominal == (0,)


def test_local_keel_folder_and_zip_with_curation(tmp_path):
    folder = tmp_path / "keel-download" / "film-batches"
    folder.mkdir(parents=True)
    (folder / "film-batches.dat").write_text(FIXTURE)
    data = load_dataset(f"keel:{tmp_path / 'keel-download'}#film-batches")
    assert data.classes == ("negative", "positive")
    assert data.minority == 0                            # decided by counts: 'positive' is the majority here
    assert data.X.shape == (6, 3) and "Gain" not in data.feature_names   # constant column dropped
    assert data.meta()["duplicates"] == 1 and data.groups is not None
    assert data.groups[3] == data.groups[4] and len(set(data.groups)) == 5  # the two copies share a group
    assert "1 duplicate row kept together in one fold" in data.provenance.note
    dropped = load_dataset(f"keel:{tmp_path / 'keel-download'}#film-batches?duplicates=drop&constant=keep")
    assert dropped.X.shape == (5, 4) and dropped.groups is None
    archive = tmp_path / "batches.zip"
    with zipfile.ZipFile(archive, "w") as z:
        z.write(folder / "film-batches.dat", "nested/film-batches.dat")
    np.testing.assert_array_equal(load_dataset(f"keel:{archive}#film-batches").X, data.X)


def test_malformed_keel_file_names_the_line(tmp_path):
    bad = FIXTURE.replace("south, 0.35, 50, 1.0, positive", "south, 0.35, 50, positive")
    with pytest.raises(DatasetError, match="line 15: 4 values, the header declares 5"):
        parse_keel(bad, "bad.dat")
    with pytest.raises(DatasetError, match="'west' is not a declared value of 'Site'"):
        parse_keel(FIXTURE.replace("north, 0.50", "west, 0.50"), "bad.dat")


def test_checksum_mismatch_is_refused(tmp_path, monkeypatch):
    monkeypatch.setenv("LOPSIDED_CACHE", str(tmp_path))
    spec = manifest("keel")["wheel"]
    fake = tmp_path / "keel" / spec["file"]
    fake.parent.mkdir(parents=True)
    fake.write_bytes(b"not the wheel")
    with pytest.raises(DatasetError, match="does not match lopsided/datasets/manifests/keel.toml"):
        keel.wheel(fetch=False)
    assert not fake.exists() and fake.with_suffix(fake.suffix + ".rejected").exists()


# KEEL imbalanced data-set table (KEEL repository page "imbalanced data sets" and Fernández et al. 2008,
# Fuzzy Sets Syst. 159:2378, Table 1), values from memory: name -> (instances, attributes, minority, majority).
KEEL_TABLE = {
    "ecoli-0_vs_1": (220, 7, 77, 143), "glass1": (214, 9, 76, 138), "pima": (768, 8, 268, 500),
    "iris0": (150, 4, 50, 100), "haberman": (306, 3, 81, 225), "yeast3": (1484, 8, 163, 1321),
    "ecoli4": (336, 7, 20, 316), "glass4": (214, 9, 13, 201), "vehicle0": (846, 18, 199, 647),
    "page-blocks0": (5472, 10, 559, 4913), "new_thyroid2": (215, 5, 35, 180), "segment0": (2308, 19, 329, 1979),
    "vowel0": (988, 13, 90, 898), "shuttle-c0-vs-c4": (1829, 9, 123, 1706), "yeast6": (1484, 8, 35, 1449),
    "abalone19": (4174, 8, 32, 4142), "cleveland-0_vs_4": (177, 13, 13, 164), "glass2": (214, 9, 17, 197),
}
have_wheel = pytest.mark.skipif(
    not (keel.cache_dir("keel") / manifest("keel")["wheel"]["file"]).is_file(),
    reason="KEEL wheel not in the cache (run `lopsided datasets fetch keel`; .ci/run does)")


@have_wheel
@pytest.mark.parametrize("name", sorted(KEEL_TABLE))
def test_collection_matches_the_published_keel_table(name):
    n, d, minority, majority = KEEL_TABLE[name]
    data = load_dataset(f"keel:{name}?constant=keep&duplicates=keep")
    assert (len(data.y), data.X.shape[1], int(data.counts.min()), int(data.counts.max())) == (n, d, minority, majority)


@have_wheel
def test_collection_loads_every_set_and_families_are_known():
    names = keel.collection_names()
    assert len(names) == 99
    families = manifest("keel")["collection"]["families"]
    for name in names:
        assert keel.family_of(name) in families, name
    car = load_dataset("keel:car-good")
    assert car.meta()["nominal"] == 6 and np.isfinite(car.X).all()
    assert set(manifest("keel")["collection"]["origin"]) <= set(families)


@have_wheel
@pytest.mark.parametrize("name, origin", [("pima", "clinical"), ("wisconsin", "clinical"), ("haberman", "clinical"),
                                          ("ecoli4", None), ("glass1", None)])
def test_notes_mark_clinical_origin(name, origin):
    """Data about patients says so in its note (UCI documentation of each set, from memory)."""
    note = load_dataset(f"keel:{name}").provenance.note
    assert (origin in note) if origin else ("clinical" not in note and "human" not in note)


@have_wheel
def test_wheel_checksum_is_the_recorded_one():
    path = keel.wheel(fetch=False)
    assert hashlib.sha256(path.read_bytes()).hexdigest() == manifest("keel")["wheel"]["sha256"]


def write_openml_cache(root, dataset_id):
    """OpenML's cache layout (root/org/openml/www/datasets/ID): description.xml and dataset.arff."""
    folder = root / "org" / "openml" / "www" / "datasets" / str(dataset_id)
    folder.mkdir(parents=True)
    (folder / "description.xml").write_text(textwrap.dedent(f"""\
        <oml:data_set_description xmlns:oml="http://openml.org/openml">
          <oml:id>{dataset_id}</oml:id>
          <oml:name>particle-screen</oml:name>
          <oml:version>2</oml:version>
          <oml:format>ARFF</oml:format>
          <oml:url>https://openml.invalid/data/{dataset_id}.arff</oml:url>
          <oml:default_target_attribute>status</oml:default_target_attribute>
          <oml:licence>CC0</oml:licence>
          <oml:status>active</oml:status>
        </oml:data_set_description>
        """))
    rows = "\n".join(f"{0.1 * i:.1f},{'north' if i % 2 else 'south'},{'flag' if i % 5 == 0 else 'ok'}"
                     for i in range(20))
    (folder / "dataset.arff").write_text("@RELATION particle-screen\n@ATTRIBUTE size NUMERIC\n"
                                         "@ATTRIBUTE site {north,south}\n@ATTRIBUTE status {flag,ok}\n@DATA\n" + rows + "\n")


def test_openml_adapter_runs_offline_from_a_prefilled_cache(tmp_path, monkeypatch):
    monkeypatch.setenv("LOPSIDED_CACHE", str(tmp_path))
    write_openml_cache(tmp_path / "openml", 990017)
    data = load_dataset("openml:990017")
    assert data.name == "particle-screen" and data.provenance.version == "2"
    assert data.counts.tolist() == [4, 16] and data.classes[data.minority] == "flag"
    assert data.nominal == (1,) and set(data.X[:, 1]) == {0.0, 1.0}
    flipped = load_dataset("openml:990017?positive=ok")
    assert flipped.classes == ("not ok", "ok")


def test_openml_fails_fast_and_clearly_offline(tmp_path, monkeypatch):
    import time

    import openml
    monkeypatch.setenv("LOPSIDED_CACHE", str(tmp_path))
    monkeypatch.setattr(openml.config, "server", "https://openml.invalid/api/v1/xml")   # offline even with a network
    started = time.perf_counter()
    with pytest.raises(DatasetError, match="openml:31: cannot get it from OpenML or the cache"):
        load_dataset("openml:31?target=class")
    assert time.perf_counter() - started < 30          # one try, not the default retry waits
    with pytest.raises(DatasetError, match="integer id"):
        load_dataset("openml:credit-g")


def test_openml_manifest_lists_imbalanced_binary_sets():
    entries = manifest("openml")["dataset"]
    assert len(entries) >= 30 and len({e["id"] for e in entries}) == len(entries)
    for e in entries:
        assert 0 < e["minority_count"] / e["n_instances"] < 0.36, e["name"]
    origin = {e["name"]: e.get("origin", "") for e in entries}
    assert origin["diabetes"].startswith("clinical") and origin["ilpd"].startswith("clinical")   # patients
    assert origin["adult"].startswith("human subjects") and origin["pc1"] == ""                 # people; software


def test_parquet_and_arff_files(tmp_path):
    table = pd.DataFrame({"a": np.arange(10.0), "kind": list("xxyyyyyyyy"), "site": list("pqpqpqpqpq")})
    table.to_parquet(tmp_path / "t.parquet")
    data = load_dataset(f"file:{tmp_path / 't.parquet'}?label=kind&nominal=site")
    assert data.X.shape == (10, 2) and data.nominal == (1,) and data.counts.tolist() == [2, 8]
    (tmp_path / "t.arff").write_text("@relation t\n@attribute a real\n@attribute site {p,q}\n@attribute kind {x,y}\n"
                                     "@data\n" + "\n".join(f"{i},{'pq'[i % 2]},{'x' if i < 2 else 'y'}" for i in range(10)))
    arff = load_dataset(f"file:{tmp_path / 't.arff'}?label=kind")
    np.testing.assert_array_equal(arff.X, data.X)
    assert arff.nominal == (1,)
