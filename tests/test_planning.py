"""Planning without running: cell counts, key stability and pending-cell selection."""
from dataclasses import fields, replace
from pathlib import Path

import pandas as pd
import pytest

from lopsided.execution.store import Store
from lopsided.jobs.run import load_all
from lopsided.planning.plan import pending, plan
from lopsided.planning.suite import load_suite
from lopsided.records import CellRow, Coordinates, Point
from lopsided.specs import MethodSpec


@pytest.fixture
def suite(write_suite):
    return load_suite(write_suite())


@pytest.fixture
def datasets(suite):
    return load_all(suite)


def _cells(full):
    return {cell.key: cell for unit in full.units for cell in unit.cells}


def test_a_plan_has_one_unit_per_training_set_and_one_cell_per_learner(suite, datasets):
    full = plan(suite, datasets)
    p = suite.protocol
    assert len(full.units) == len(suite.datasets) * p.repeats * p.folds * len(p.points) * len(suite.resamplers)
    assert all(len(unit.cells) == len(suite.learners) for unit in full.units)
    assert len(set(full.keys)) == len(full.keys)                    # every cell has its own key
    assert len({u.key for u in full.units}) == len(full.units)


def test_keys_and_seeds_do_not_depend_on_the_other_methods_of_the_suite(suite, datasets):
    before = _cells(plan(suite, datasets))
    bigger = suite.with_resamplers([MethodSpec("repeat-over")])
    after = _cells(plan(bigger, datasets))
    assert set(before) < set(after)
    assert all(after[key].seed == cell.seed for key, cell in before.items())
    assert len(after) - len(before) == len(before) // len(suite.resamplers)


def test_keys_change_with_what_a_cell_computes(suite, datasets):
    keys = set(plan(suite, datasets).keys)
    assert keys.isdisjoint(plan(replace(suite, seed=suite.seed + 1), datasets).keys)
    changed = replace(suite, learners=(suite.learners[0], MethodSpec("random-forest", {"n_estimators": 11})))
    other = set(plan(changed, datasets).keys)
    kept = keys & other
    assert kept and len(kept) == len(keys) // 2                     # the unchanged learner's cells stay
    assert plan(suite, datasets).keys == plan(suite, datasets).keys  # deterministic


def test_pending_keeps_only_cells_not_stored_and_drops_empty_units(suite, datasets):
    full = plan(suite, datasets)
    first_unit = full.units[0]
    stored = {cell.key for cell in first_unit.cells} | {full.units[1].cells[0].key}
    todo = pending(full, stored)
    assert len(todo) == len(full.units) - 1                          # the whole first unit is done
    assert todo[0].key == full.units[1].key and len(todo[0].cells) == len(suite.learners) - 1
    assert sum(len(u.cells) for u in todo) == len(full.keys) - len(stored)
    assert pending(full, set(full.keys)) == []


def test_the_committed_gate_cells_keep_their_keys():
    """Keys hash Coordinates.payload(): the plan of bench/gate.toml today has exactly the keys of the
    cells committed in results/gate (a change of the payload would orphan every stored cell)."""
    root = Path(__file__).parents[1]
    gate = load_suite(root / "bench" / "gate.toml")
    committed = pd.read_csv(root / "results" / "gate" / "cells.csv")
    assert set(plan(gate, load_all(gate)).keys) == set(committed["key"])


def test_the_store_columns_are_the_fields_of_a_cell_row(tmp_path):
    db = Store(tmp_path / "s.sqlite")
    try:
        table = [(name, kind, bool(primary)) for _, name, kind, _, _, primary in db.db.execute("PRAGMA table_info(cells)")]
    finally:
        db.close()
    assert [name for name, _, _ in table] == [f.name for f in fields(CellRow)]
    kinds = {name: kind for name, kind, _ in table}
    assert {name: kinds[name] for name in ("key", "ratio", "repeat", "n_train", "fit_seconds", "metrics")} == {
        "key": "TEXT", "ratio": "TEXT", "repeat": "INTEGER", "n_train": "INTEGER", "fit_seconds": "REAL",
        "metrics": "TEXT"}
    assert [name for name, _, primary in table if primary] == ["key"]


def test_coordinates_leave_default_options_out_of_the_key_payload():
    where = Coordinates("sklearn:wine", "data abc", "abc", 7, 5, Point(2.0, "all"), 0, 1, ("snv",), "smote")
    assert where.payload() == {"dataset": "sklearn:wine", "ratio": "2", "size": "all", "repeat": 0, "fold": 1,
                               "dataset_identity": "data abc", "folds": 5, "suite_seed": 7, "preprocessing": ["snv"],
                               "resampler": "smote"}
    leaky = replace(where, split="random", holdout=0.25)
    assert leaky.payload() == {**where.payload(), "split": "random", "holdout": 0.25}
    assert str(leaky) == "sklearn:wine, ratio 2, size all, repeat 0, fold 1, split random"
