"""Planning: the cells of a suite and the work units that compute them, with stable keys and seeds.

A work unit is one resampled training set: (dataset, protocol point, repeat, fold, resampler). It is
resampled once and every learner of the suite is fitted on that same set. A cell is a work unit plus one
learner; its key hashes its coordinates (``records.Coordinates``) and the code versions, and its seed
derives from the coordinates alone, so adding a method never changes another cell and stored cells are
reused. Nothing here fits or stores anything.
"""
import hashlib
import json
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..methods import learners as learner_registry
from ..methods import preprocessing as preprocessing_registry
from ..methods import resamplers as resampler_registry
from ..plugins import code_version
from ..records import Coordinates, Point, SkippedFold
from ..specs import MethodSpec
from .protocol import Infeasible, class_orders, derive_seed, group_orders, point_counts, point_rows

PROTOCOL_VERSION = 1   # bump when splitting or subsetting changes what a cell computes


@dataclass(frozen=True)
class Cell:
    learner: MethodSpec
    key: str
    seed: int
    code: str           # the learner's code version, as planned (part of the key)


@dataclass(frozen=True)
class WorkUnit:
    key: str
    coords: Coordinates
    resampler: MethodSpec
    seed: int
    train: np.ndarray
    test: np.ndarray
    cells: tuple
    code: dict          # protocol, preprocessing and resampler code versions, as planned (part of the keys)

    def __str__(self):
        return f"{self.coords}, resampler {self.resampler.title}"

    def planned_versions(self):
        """The code versions the plan and the cell keys assume, shaped as ``worker_versions`` returns them."""
        return {**self.code, "learner": {c.learner.canonical: c.code for c in self.cells}}


@dataclass
class Plan:
    units: list
    skipped: list[SkippedFold] = field(default_factory=list)

    @property
    def keys(self):
        return [cell.key for unit in self.units for cell in unit.cells]


def _hash(payload):
    return hashlib.sha256(json.dumps(payload, sort_keys=True, default=str).encode()).hexdigest()[:24]


def plan(suite, datasets, split="grouped"):
    """Every cell of ``suite`` over the loaded ``datasets`` ({reference: Dataset}) plus skipped points.

    ``split="random"`` plans the cells of the first protocol point with groups ignored (the leaky
    split, to measure how much it inflates scores); only datasets with groups take part.
    """
    versions: dict[str, Any] = {
        "protocol": PROTOCOL_VERSION,
        "preprocessing": [code_version(preprocessing_registry.resolve(s.name)) for s in suite.preprocessing],
        "resampler": {s.canonical: code_version(resampler_registry.resolve(s.name)) for s in suite.resamplers},
        "learner": {s.canonical: code_version(learner_registry.resolve(s.name)) for s in suite.learners},
    }
    prep = tuple(s.canonical for s in suite.preprocessing)
    result = Plan(units=[])
    protocol = suite.protocol
    for reference in suite.datasets:
        data = datasets[reference]
        if split == "random" and data.groups is None:
            continue
        for repeat in range(protocol.repeats):
            splits = protocol.test.splits(data, protocol, derive_seed(suite.seed, reference, "split", repeat),
                                          derive_seed(suite.seed, reference, "split"), use_groups=split == "grouped")
            for fold, (train, test) in enumerate(splits):
                order_seed = derive_seed(suite.seed, reference, "order", repeat, fold)
                orders = (class_orders(data.y, train, order_seed) if protocol.counting == "rows" else
                          group_orders(data.y, data.groups, train, order_seed))
                available = {c: len(rows) for c, rows in orders.items()}
                for ratio, size in protocol.points if split == "grouped" else protocol.points[:1]:
                    point = Point(ratio, size)
                    wanted = point_counts(available, data.minority, ratio, size, protocol.min_minority, protocol.unit)
                    if isinstance(wanted, Infeasible):
                        result.skipped.append(SkippedFold(reference, point.ratio_label, point.size_label, repeat,
                                                          fold, wanted.reason))
                        continue
                    rows = point_rows(orders, wanted)
                    for spec in suite.resamplers:
                        coords = Coordinates(reference, data.identity, data.checksum, suite.seed, protocol.folds,
                                             point, repeat, fold, prep, spec.canonical, protocol.holdout,
                                             protocol.test.text, split, protocol.counting)
                        where = coords.payload()
                        code = {**versions, "resampler": versions["resampler"][spec.canonical]}
                        cells = tuple(
                            Cell(learner, _hash({**where, "learner": learner.canonical,
                                                 "code": {**code, "learner": versions["learner"][learner.canonical]}}),
                                 derive_seed(where, learner.canonical), versions["learner"][learner.canonical])
                            for learner in suite.learners)
                        unit_code = {k: code[k] for k in ("protocol", "preprocessing", "resampler")}
                        result.units.append(WorkUnit(_hash({**where, "code": code}), coords, spec,
                                                     derive_seed(where), rows, test, cells, unit_code))
    return result



def pending(full_plan, stored):
    """Units trimmed to the cells not yet stored (units with nothing left are dropped)."""
    todo = []
    for unit in full_plan.units:
        cells = tuple(c for c in unit.cells if c.key not in stored)
        if cells:
            todo.append(WorkUnit(unit.key, unit.coords, unit.resampler, unit.seed, unit.train, unit.test, cells,
                                 unit.code))
    return todo
