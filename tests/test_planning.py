"""Planning without running: cell counts, key stability and pending-cell selection."""
from dataclasses import replace

import pytest

from lopsided.benchmark import load_all
from lopsided.runner import pending, plan
from lopsided.specs import MethodSpec
from lopsided.suite import load_suite


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
