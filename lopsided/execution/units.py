"""The worker's side of a run: one work unit resampled once, every learner fitted and scored on it, within
its time limit, on whichever backend runs it. A stage that fails fails only its cells; what a method prints
or changes in its input is kept off the results and noted.
"""
import json
import os
import time
import traceback
from dataclasses import dataclass
from functools import lru_cache, partial

import numpy as np
import sklearn

from .. import __version__
from ..methods import learners as learner_registry
from ..methods import preprocessing as preprocessing_registry
from ..methods import resamplers as resampler_registry
from ..methods.metrics import predictions_and_scores, score_cell
from ..methods.resamplers.base import all_finite, check_resampled
from ..planning.plan import PROTOCOL_VERSION
from ..plugins import code_version
from ..records import CellRow
from .backends.containment import UnitTimeout, captured_output, time_limit
from .backends.worker import captured_warnings, limit_threads, one_job
from .store import now


@dataclass(frozen=True)
class Outcome:
    """What a worker sends back for one unit: its rows and the code versions it ran."""
    rows: list
    versions: dict      # protocol, preprocessing (list), resampler, learner ({canonical: version})


@lru_cache(maxsize=None)
def _version_of(factory):
    """code_version, once per resolved object and process (a reloaded module gives new objects)."""
    return code_version(factory)


def worker_versions(unit, preprocessing_specs):
    """The code versions of the unit's methods as resolved by the process that runs it."""
    return {"protocol": PROTOCOL_VERSION,
            "preprocessing": [_version_of(preprocessing_registry.resolve(s.name)) for s in preprocessing_specs],
            "resampler": _version_of(resampler_registry.resolve(unit.resampler.name)),
            "learner": {c.learner.canonical: _version_of(learner_registry.resolve(c.learner.name))
                        for c in unit.cells}}


def run_unit(unit, data, preprocessing_specs, timeout=None):
    """A worker's part for one unit, on every backend: BLAS / OpenMP limited to one thread, the code
    versions of the methods as this worker resolves them, then the unit's rows, within ``timeout``
    seconds (None: no limit)."""
    limit_threads()
    ran = worker_versions(unit, preprocessing_specs)
    try:
        with time_limit(timeout):
            rows = execute_unit(unit, data, preprocessing_specs, ran, timeout)
    except UnitTimeout:          # the limit struck between two stages
        rows = failed_rows(unit, _code_versions(unit, ran), _over_time(timeout), _basics(unit, data))
    return Outcome(rows, ran)


def _error_text(exc, timeout=None):
    """One line: what went wrong (exception type and message, the traceback's last frame for context)."""
    if isinstance(exc, UnitTimeout):
        return _over_time(timeout)
    if isinstance(exc, SystemExit):
        return f"called sys.exit({exc.code!r}); lopsided kept running"
    frame = traceback.extract_tb(exc.__traceback__)[-1] if exc.__traceback__ else None
    where = f" [{os.path.basename(frame.filename)}:{frame.lineno}]" if frame else ""
    return f"{type(exc).__name__}: {exc}{where}"


def _over_time(timeout):
    return f"stopped: the unit ran past its time limit of {timeout:g} s (protocol.timeout or --timeout)"


def _basics(unit, data):
    """The columns every row of a unit shares, as planned."""
    c = unit.coords
    return {"dataset": c.dataset, "dataset_checksum": c.dataset_checksum, "ratio": c.point.ratio_label,
            "size": c.point.size_label, "repeat": c.repeat, "fold": c.fold,
            "preprocessing": json.dumps(list(c.preprocessing)), "resampler": unit.resampler.canonical,
            "unit_key": unit.key, "n_train": len(unit.train), "n_test": len(unit.test),
            "n_train_minority": None if data is None else int((data.y[unit.train] == data.minority).sum()),
            "n_train_minority_groups": _minority_groups(unit, data)}


def _minority_groups(unit, data):
    """How many groups (donors, specimens, particles) the unit's minority training rows come from."""
    if data is None or data.groups is None:
        return None
    rows = unit.train[data.y[unit.train] == data.minority]
    return int(len(np.unique(np.asarray(data.groups)[rows])))


def _code_versions(unit, versions):
    """{cell key: the code_version text stored with it}."""
    code = {"lopsided": __version__, **{k: versions[k] for k in ("protocol", "preprocessing", "resampler")}}
    return {c.key: json.dumps({**code, "learner": versions["learner"][c.learner.canonical]}, sort_keys=True,
                              separators=(",", ":"))
            for c in unit.cells}


def failed_rows(unit, code_versions, error, base, cells=None, warning=None):
    """Rows of ``cells`` (default: all the unit's) stored as failed with ``error``."""
    return [CellRow(**base, key=c.key, learner=c.learner.canonical, seed=c.seed, code_version=code_versions[c.key],
                    status="failed", error=error, warning=warning, finished_at=now())
            for c in (unit.cells if cells is None else cells)]


def lost_rows(unit, reason):
    """Rows of a unit its backend lost (its worker died or was stopped), with the code versions planned."""
    return failed_rows(unit, _code_versions(unit, unit.planned_versions()), reason, _basics(unit, None))


def execute_unit(unit, data, preprocessing_specs, versions, timeout=None):
    """Resample the unit's training rows once, fit and score every learner; one row per cell.

    ``versions`` (from ``worker_versions``) is stored with each cell as the code it ran. A stage that
    raises, calls sys.exit or runs out of time fails its cells (after a resampler: all of them; after
    a learner: its own and, out of time, the ones not yet run); what a stage prints is kept off the
    terminal and noted in the rows' warning, as is a resampler that changed its input arrays in place.
    """
    X_train, y_train = data.X[unit.train], data.y[unit.train]
    X_test, y_test = data.X[unit.test], data.y[unit.test]
    groups = None if data.groups is None else np.asarray(data.groups)[unit.train]   # the training rows' only
    base = _basics(unit, data)
    ran = _code_versions(unit, versions)
    stage = "preprocessing"
    with captured_output() as printed:
        try:
            pipeline = preprocessing_registry.make_preprocessing(preprocessing_specs, data.axis)
            if pipeline is not None:
                X_train, X_test = pipeline.fit_transform(X_train, y_train), pipeline.transform(X_test)
            stage = f"resampler {unit.resampler.title}"
            started = time.perf_counter()
            resampler = one_job(resampler_registry.make_resampler(unit.resampler, unit.seed, data.axis is not None,
                                                                  data.nominal))
            X_given, y_given = X_train.copy(), y_train.copy()
            X_res, y_res = resampler_registry.resample(resampler, X_given, y_given, groups)
            X_res, y_res = check_resampled(unit.resampler.title, X_train, y_train, X_res, y_res)
            resample_seconds = time.perf_counter() - started
        except (Exception, SystemExit, UnitTimeout) as exc:
            return failed_rows(unit, ran, f"{stage}: {_error_text(exc, timeout)}", base,
                               warning=printed.summary(stage))
    mutated = not (np.array_equal(X_given, X_train, equal_nan=True) and np.array_equal(y_given, y_train))
    notes = [printed.summary(stage),
             f"{stage} changed its input arrays in place (it was given copies: no effect on the results)" if mutated
             else None]
    base.update(n_resampled=len(y_res), resample_seconds=resample_seconds)
    weights = resampler.sample_weight(y_res) if hasattr(resampler, "sample_weight") else None
    adjust = getattr(resampler, "adjust_learner", None)
    adjust = None if adjust is None else partial(adjust, groups=groups)
    # learners skip their own finite checks (in every fit and predict; a forest's in every tree) when the
    # test part is finite: the resampler output rules already proved the training part so. They skip
    # scikit-learn's parameter validation too: _fit_one checks every estimator's parameters once per cell.
    checked = all_finite(X_test)
    rows = []
    for position, cell in enumerate(unit.cells):
        try:
            with sklearn.config_context(assume_finite=checked, skip_parameter_validation=True):
                rows.append(_fit_one(cell, {**base, "code_version": ran[cell.key]}, X_res, y_res, weights, X_test,
                                     y_test, data, notes, adjust))
        except UnitTimeout:
            rows += failed_rows(unit, ran, f"learner {cell.learner.title}: {_over_time(timeout)}", base, [cell])
            rows += failed_rows(unit, ran, f"not run: the unit's time limit of {timeout:g} s ran out during learner "
                                f"{cell.learner.title}", base, unit.cells[position + 1:])
            break
    return rows


def _fit_one(cell, base, X_res, y_res, weights, X_test, y_test, data, notes, adjust=None):
    """Fit one learner on the resampled rows (through ``adjust``, the resampler's wrapper, if it has one)
    and score it on the test rows."""
    row = {**base, "key": cell.key, "learner": cell.learner.canonical, "seed": cell.seed}
    stage = f"learner {cell.learner.title}"
    with captured_warnings() as caught, captured_output() as printed:
        try:
            model = one_job(learner_registry.make_learner(cell.learner, cell.seed))
            learner_registry.check_parameters(model)
            if adjust is not None:
                model = adjust(model)
            started = time.perf_counter()
            model.fit(X_res, y_res, **learner_registry.weight_arguments(model, weights, cell.learner.title))
            fitted = time.perf_counter()
            predicted, scores = predictions_and_scores(model, X_test, len(data.classes))
            done = time.perf_counter()
            metrics = score_cell(y_test, predicted, scores, data.minority, data.classes)
        except (Exception, SystemExit) as exc:
            return CellRow(**row, status="failed", error=f"{stage}: {_error_text(exc)}",
                           warning=_warning_text(caught, notes, printed.summary(stage)), finished_at=now())
    return CellRow(**row, status="ok", metrics=json.dumps(metrics), fit_seconds=fitted - started,
                   predict_seconds=done - fitted, warning=_warning_text(caught, notes, printed.summary(stage)),
                   finished_at=now())


def _warning_text(caught, notes=(), printed=None):
    """The first warning a cell raised (e.g. a solver that did not converge) and how many there were,
    then any notes about the unit's methods (output printed, input changed), joined by '; '."""
    parts = [note for note in (*notes, printed) if note]
    if caught:
        category, message = caught[0]
        more = f" (+{len(caught) - 1} more)" if len(caught) > 1 else ""
        parts.insert(0, f"{category.__name__}: {str(message).splitlines()[0]}{more}")
    return "; ".join(parts) or None
