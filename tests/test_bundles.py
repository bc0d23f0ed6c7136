"""Cells that travel: a bundle exported from one store and imported into another gives the same leaderboard,
stores of two halves of a suite merge into the leaderboard of the whole, verify finds a cell whose numbers do
not reproduce, a conflict writes nothing and names the cells, and a plugin added on an imported bundle costs
only its own cells."""
import json

import pyarrow as pa
import pyarrow.parquet as pq
import pytest

from lopsided.cli import main
from lopsided.execution.store import Store
from lopsided.jobs.bundles import HEADER_KEY, data_sha256, export, import_bundle, read, verify
from lopsided.records import COLUMN_NAMES

SUITE = """
name = "{name}"
seed = 5
datasets = {datasets}
resamplers = ["none", "random-under", "smote"]
learners = ["logistic-regression"]
metrics = ["balanced_accuracy", "mcc"]
[protocol]
repeats = 1
folds = 2
min_minority = 3
"""
DATASETS = ["sklearn:wine?positive=2", "sklearn:iris?positive=1", "sklearn:wine?positive=0",
            "sklearn:digits?positive=3", "spectra:serum?donors=24&ratio=3&region=fingerprint&step=16"]


def suite(folder, name, datasets=DATASETS):
    path = folder / f"{name}.toml"
    path.write_text(SUITE.format(name=name, datasets=json.dumps(datasets)), encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def whole(tmp_path_factory):
    """One run of the whole suite: (folder, suite path, its board)."""
    folder = tmp_path_factory.mktemp("bundles")
    path = suite(folder, "whole")
    assert main(["run", str(path), "--out", str(folder / "board"), "--quiet"]) == 0
    return folder, path, folder / "board"


def rewritten(path, out, change):
    """The bundle at ``path`` with ``change(rows)`` applied and a header that matches the changed cells (as a
    machine that computed other numbers would write it)."""
    table = pq.read_table(path)
    header = json.loads(table.schema.metadata[HEADER_KEY])
    rows = [list(r) for r in zip(*(table.column(n).to_pylist() for n in table.column_names))]
    change(rows)
    rows = [tuple(r) for r in rows]
    header["sha256"] = data_sha256(rows)
    columns = [list(c) for c in zip(*rows)]
    changed = pa.Table.from_arrays([pa.array(c, type=f.type) for c, f in zip(columns, table.schema)],
                                   schema=table.schema.with_metadata({HEADER_KEY: json.dumps(header).encode()}))
    pq.write_table(changed, out)
    return out


def test_export_then_import_gives_a_byte_identical_leaderboard(whole, tmp_path):
    folder, path, board = whole
    header = export(board, tmp_path / "cells.parquet")
    assert header["cells"] == 5 * 2 * 3 and header["suites"][0]["name"] == "whole"
    assert read(tmp_path / "cells.parquet").header == header
    merged = import_bundle(tmp_path / "cells.parquet", tmp_path / "store.sqlite")
    assert (merged.added, merged.same, merged.conflicts) == (30, 0, [])
    again = import_bundle(tmp_path / "cells.parquet", tmp_path / "store.sqlite")
    assert (again.added, again.same) == (0, 30)                                  # twice changes nothing
    assert main(["run", str(path), "--out", str(tmp_path / "board"), "--store", str(tmp_path / "store.sqlite"),
                 "--quiet"]) == 0
    manifest = json.loads((tmp_path / "board" / "manifest.json").read_text())
    assert manifest["cells"]["computed"] == 0 and manifest["imported"][0]["cells"] == 30
    assert (tmp_path / "board" / "stats.json").read_bytes() == (board / "stats.json").read_bytes()


def test_the_stores_of_two_halves_merge_into_the_leaderboard_of_the_whole(whole, tmp_path):
    folder, path, board = whole
    for half, datasets in (("first", DATASETS[:2]), ("second", DATASETS[2:])):
        assert main(["run", str(suite(tmp_path, half, datasets)), "--out", str(tmp_path / half), "--quiet"]) == 0
        assert main(["export", str(tmp_path / half), "--out", str(tmp_path / f"{half}.parquet")]) == 0
        assert main(["import", str(tmp_path / f"{half}.parquet"), "--store", str(tmp_path / "merged.sqlite")]) == 0
    assert main(["run", str(path), "--out", str(tmp_path / "merged"), "--store", str(tmp_path / "merged.sqlite"),
                 "--quiet"]) == 0
    assert json.loads((tmp_path / "merged" / "manifest.json").read_text())["cells"]["computed"] == 0
    assert (tmp_path / "merged" / "stats.json").read_bytes() == (board / "stats.json").read_bytes()


def test_verify_finds_exactly_the_cell_whose_numbers_do_not_reproduce(whole, tmp_path):
    folder, path, board = whole
    export(board, tmp_path / "cells.parquet")
    at = pq.read_table(tmp_path / "cells.parquet").column_names.index("metrics")
    keyed = {}

    def alter(rows):
        target = next(r for r in rows if r[at] and r[COLUMN_NAMES.index("resampler")] == "smote")
        keyed["key"] = target[0]
        target[at] = json.dumps({**json.loads(target[at]), "mcc": json.loads(target[at])["mcc"] + 0.05})
    rewritten(tmp_path / "cells.parquet", tmp_path / "altered.parquet", alter)
    checked = verify(tmp_path / "altered.parquet", size=100)                  # every cell: the sample is all 30
    assert checked.sampled == 30 and checked.exact == 29 and checked.close == 0
    assert len(checked.differ) == 1 and checked.differ[0].startswith(keyed["key"])
    assert "largest difference 0.05" in checked.differ[0] and not checked.agrees
    assert verify(tmp_path / "cells.parquet", size=8).agrees


def test_a_conflict_names_the_cells_and_writes_nothing(whole, tmp_path, capsys):
    folder, path, board = whole
    export(board, tmp_path / "cells.parquet")
    at = pq.read_table(tmp_path / "cells.parquet").column_names.index("metrics")

    def alter(rows):
        for row in rows[:3]:
            row[at] = json.dumps({**json.loads(row[at]), "balanced_accuracy": 0.0})
    rewritten(tmp_path / "cells.parquet", tmp_path / "other.parquet", alter)
    store = tmp_path / "store.sqlite"
    import_bundle(tmp_path / "cells.parquet", store)
    before = store.read_bytes()
    assert main(["import", str(tmp_path / "other.parquet"), "--store", str(store)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert len([line for line in err if line.startswith("conflict: ")]) == 3
    assert err[-1].startswith("lopsided: error: ") and "3 cells are stored" in err[-1] and "nothing was imported" in err[-1]
    assert store.read_bytes() == before


def test_a_bundle_of_other_versions_needs_verify_or_is_reported_as_unverified(whole, tmp_path, capsys):
    folder, path, board = whole
    export(board, tmp_path / "cells.parquet")
    table = pq.read_table(tmp_path / "cells.parquet")
    header = json.loads(table.schema.metadata[HEADER_KEY])
    header["versions"]["scikit-learn"] = "0.0.1"
    pq.write_table(table.replace_schema_metadata({HEADER_KEY: json.dumps(header).encode()}), tmp_path / "old.parquet")
    store = tmp_path / "store.sqlite"
    assert main(["import", str(tmp_path / "old.parquet"), "--store", str(store)]) == 2
    assert "--verify" in capsys.readouterr().err and not store.exists()
    assert main(["import", str(tmp_path / "old.parquet"), "--store", str(store), "--verify", "--sample", "6"]) == 0
    assert "verified here: " in capsys.readouterr().out
    assert main(["run", str(path), "--out", str(tmp_path / "board"), "--store", str(store), "--quiet"]) == 0
    imported = json.loads((tmp_path / "board" / "manifest.json").read_text())["imported"]
    assert imported[0]["versions"]["scikit-learn"] == "0.0.1" and imported[0]["trust"].startswith("verified here")
    assert "Imported cells." in (tmp_path / "board" / "summary.md").read_text()


def test_a_plugin_added_on_an_imported_bundle_computes_only_its_own_cells(whole, tmp_path, capsys):
    folder, path, board = whole
    export(board, tmp_path / "cells.parquet")
    import_bundle(tmp_path / "cells.parquet", tmp_path / "store.sqlite")
    capsys.readouterr()
    assert main(["run", str(path), "--out", str(tmp_path / "board"), "--store", str(tmp_path / "store.sqlite"),
                 "--quiet", "--add-resampler", "plugins_for_tests:Halves"]) == 0
    manifest = json.loads((tmp_path / "board" / "manifest.json").read_text())
    assert manifest["cells"]["reused"] == 30 and manifest["cells"]["computed"] == 10      # 5 datasets x 2 folds
    db = Store(tmp_path / "store.sqlite")
    try:
        assert len(db.cells()) == 40
    finally:
        db.close()
