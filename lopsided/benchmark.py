"""The main job, end to end: suite file -> datasets -> plan -> store -> leaderboard folder."""
import platform
import time
from dataclasses import dataclass
from importlib import metadata
from pathlib import Path

from . import __version__
from . import resamplers as resampler_registry
from .datasets import load_dataset
from .errors import LopsidedError, StoreError, SuiteError
from .report import leakage_rows, skipped_summary, write_report
from .runner import plan, run_plan
from .specs import parse_method
from .store import Store, now
from .suite import load_suite, suite_from_dict

PACKAGES = ("numpy", "scipy", "scikit-learn", "pandas", "matplotlib", "jinja2")


@dataclass
class RunResult:
    out: Path
    store: Path
    summary: dict
    cells: object        # pandas DataFrame of this suite's stored cells


def versions():
    found = {"python": platform.python_version(), "lopsided": __version__}
    for name in PACKAGES:
        found[name] = metadata.version(name)
    return found


def extra_resamplers(texts):
    """--add-resampler values -> MethodSpecs, each checked to resolve."""
    specs = []
    for text in texts:
        spec = parse_method(text)
        try:
            resampler_registry.resolve(spec.name)
        except LopsidedError as exc:
            raise SuiteError("--add-resampler", text, str(exc)) from None
        specs.append(spec)
    return specs


def load_all(suite):
    """Every dataset of the suite; twin sets (the same samples and labels under two names, such as
    KEEL's new_thyroid1 and new_thyroid2) are refused, since rank-based tests would count one task twice.
    Different tasks cut from the same samples (glass1, glass6) are allowed: curated suites limit them per family."""
    datasets = {reference: load_dataset(reference) for reference in suite.datasets}
    seen = {}
    for reference, data in datasets.items():
        if data.checksum in seen:
            raise SuiteError(suite.source, "datasets", f"{seen[data.checksum]} and {reference} hold the same "
                             "samples and labels (twin sets); keep one of them")
        seen[data.checksum] = reference
    return datasets


def run_suite(path, jobs=1, out=None, store=None, add_resamplers=(), retry_failed=False, progress=True,
              alpha=0.05, rope=0.01, compare_split_leakage=False):
    """Run a suite file (or Suite) and write its leaderboard; stored cells are reused.

    ``compare_split_leakage`` also runs every grouped dataset with its groups ignored and reports
    how much the leaky random split inflates the headline metric.
    """
    suite = load_suite(path) if not hasattr(path, "protocol") else path
    suite = suite.with_resamplers(extra_resamplers(add_resamplers))
    if not isinstance(jobs, int) or jobs < 1:
        raise SuiteError("--jobs", "jobs", f"{jobs!r} is not a whole number >= 1")
    out = Path(out or Path("results") / suite.name)
    store_path = Path(store or suite.store or out / "store.sqlite")
    started, clock = now(), time.perf_counter()
    datasets = load_all(suite)
    full = plan(suite, datasets)
    leaky = plan(suite, datasets, split="random") if compare_split_leakage else None
    db = Store(store_path)
    try:
        run_id = db.begin_run(suite, full.keys)
        counts = run_plan(full, datasets, suite, db, jobs=jobs, retry_failed=retry_failed, progress=progress)
        cells = db.cells(full.keys)
        if leaky is not None:
            extra = run_plan(leaky, datasets, suite, db, jobs=jobs, retry_failed=retry_failed, progress=progress)
            for key in ("reused", "computed", "failed"):     # the leakage run counts as work done, not planned
                counts[key] += extra[key]
        summary = _summary(suite, datasets, full, cells, counts, started, time.perf_counter() - clock, jobs)
        if leaky is not None:
            summary["split_leakage"] = leakage_rows(cells, db.cells(leaky.keys), suite)
        db.finish_run(run_id, {**summary, "skipped": full.skipped})
    finally:
        db.close()
    write_report(out, suite.as_dict(), cells, full.skipped, summary, alpha=alpha, rope=rope)
    return RunResult(out, store_path, summary, cells)


def _summary(suite, datasets, full, cells, counts, started, seconds, jobs):
    ok = int((cells["status"] == "ok").sum()) if len(cells) else 0
    return {
        "suite": suite.name, "suite_fingerprint": suite.fingerprint, "suite_file": suite.source,
        "seed": suite.seed, "started_at": started, "finished_at": now(), "seconds": round(seconds, 2),
        "jobs": jobs, "versions": versions(),
        "cells": {"planned": counts["planned"], "ok": ok, "failed": len(cells) - ok,
                  "missing": counts["planned"] - len(cells), "reused": counts["reused"],
                  "computed": counts["computed"], "failed_now": counts["failed"],
                  "skipped_points": counts["skipped_points"]},
        "skipped": skipped_summary(full.skipped),
        "datasets": [{"reference": ref, **data.meta(), "checksum": data.checksum, "note": data.provenance.note}
                     for ref, data in datasets.items()],
    }


def rebuild_report(target, out=None, alpha=0.05, rope=0.01):
    """Rebuild a leaderboard folder from stored cells: ``target`` is a suite file or a store."""
    target = Path(target)
    if target.suffix == ".toml":
        suite = load_suite(target)
        out = Path(out or Path("results") / suite.name)
        store_path = Path(suite.store or out / "store.sqlite")
        if not store_path.is_file():
            raise StoreError(f"{store_path}: no result store for suite {suite.name!r}; run it first")
        datasets = load_all(suite)
        full = plan(suite, datasets)
        db = Store(store_path, create=False)
        cells = db.cells(full.keys)
        stored = db.known_keys(full.keys)
        counts = {"planned": len(full.keys), "reused": len(stored), "computed": 0, "failed": 0,
                  "skipped_points": len(full.skipped)}
        summary = _summary(suite, datasets, full, cells, counts, now(), 0.0, 0)
        leaky_cells = db.cells(plan(suite, datasets, split="random").keys)
        if len(leaky_cells):                  # a --compare-split-leakage run stored these
            summary["split_leakage"] = leakage_rows(cells, leaky_cells, suite)
        skipped = full.skipped
    else:
        db = Store(target, create=False)
        suite_dict, summary, keys = db.latest_run()
        suite = suite_from_dict(_as_raw(suite_dict), source=str(target))
        out = Path(out or Path("results") / suite.name)
        cells = db.cells(keys)
        skipped = summary.pop("skipped", [])
        summary["skipped"] = skipped_summary(skipped)
    db.close()
    write_report(out, suite.as_dict(), cells, skipped, summary, alpha=alpha, rope=rope)
    return out


def _as_raw(suite_dict):
    """A stored suite dict back into suite-file shape."""
    raw = dict(suite_dict)
    for kind in ("resamplers", "learners", "preprocessing"):
        raw[kind] = [{"name": s["name"], "params": s["params"], "label": s["label"]} for s in raw[kind]]
    return raw
