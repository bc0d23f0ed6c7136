"""Shared results: what a new method costs with the canonical bundle imported, against the whole suite.

Two measurements, printed as ratios of times taken in this one run:

* the import of the committed canonical bundle (results/keel-all/cells.parquet) into an empty store (target:
  under 30 s);
* on the first ``--datasets`` sets of the suite (the whole suite would take hours), side by side: (a) the suite
  from an empty store, (b) its bundle exported, imported into a fresh store, and the suite run again with one
  resampler added (``--add``): only the added method's cells are computed. Target, on the cells phase (import
  included): (b) / (a) <= 1.2 / (number of resamplers of the suite). Each run also rebuilds its leaderboard in
  full, a cost that does not shrink with the new cells; the whole-call ratio is printed beside it.

    .venv/bin/python bench/perf/bundle_reuse.py                   # keel-all, 6 datasets, adds random-under?balance=0.5
    .venv/bin/python bench/perf/bundle_reuse.py --datasets 10 --jobs 2
"""
import argparse
import json
import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

from lopsided.errors import LopsidedError
from lopsided.jobs.bundles import export, import_bundle
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.suite import load_suite

ROOT = Path(__file__).resolve().parents[2]


def timed(work):
    started = time.perf_counter()
    result = work()
    return time.perf_counter() - started, result


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--suite", default=str(ROOT / "bench" / "keel-all.toml"))
    parser.add_argument("--bundle", default=str(ROOT / "results" / "keel-all" / "cells.parquet"))
    parser.add_argument("--datasets", type=int, default=6)
    parser.add_argument("--add", default="random-under?balance=0.5")
    parser.add_argument("--jobs", type=int, default=2)
    args = parser.parse_args()
    from lopsided.jobs.run import run_suite
    try:
        suite = load_suite(args.suite)
    except LopsidedError as exc:
        print(f"bundle_reuse: {exc}", file=sys.stderr)
        return 1
    with tempfile.TemporaryDirectory(prefix="lopsided-reuse-") as scratch:
        scratch = Path(scratch)
        if Path(args.bundle).is_file():
            seconds, merged = timed(lambda: import_bundle(args.bundle, scratch / "canonical.sqlite"))
            size = Path(args.bundle).stat().st_size / 1e6
            print(f"import of {args.bundle} ({size:.1f} MB, {merged.added} cells) into an empty store: {seconds:.1f} s "
                  f"(target < 30 s)")
        else:
            print(f"no bundle at {args.bundle}: import not timed")
        part = replace(suite, datasets=suite.datasets[:args.datasets], name=f"{suite.name}-part")
        full, _ = timed(lambda: run_suite(part, RunOptions(out=scratch / "full", execution=ExecutionOptions(jobs=args.jobs, progress=False))))
        export(scratch / "full", scratch / "part.parquet")
        imported, _ = timed(lambda: import_bundle(scratch / "part.parquet", scratch / "fresh.sqlite"))
        added, result = timed(lambda: run_suite(part, RunOptions(out=scratch / "added", store=scratch / "fresh.sqlite", add_resamplers=(args.add,), execution=ExecutionOptions(jobs=args.jobs, progress=False))))
        made = {run: json.loads((scratch / run / "manifest.json").read_text()) for run in ("full", "added")}
        cells = made["added"]["cells"]
        k = len(part.resamplers)
        print(f"{len(part.datasets)} datasets x {k} resamplers x {len(part.learners)} learners (times: cells phase "
              f"+ leaderboard = whole call):")
        print(f"  (a) the suite from an empty store: {made['full']['seconds']:.1f} + "
              f"{full - made['full']['seconds']:.1f} = {full:.1f} s")
        print(f"  (b) import its bundle ({imported:.1f} s) and run it with --add-resampler {args.add}: "
              f"{made['added']['seconds']:.1f} + {added - made['added']['seconds']:.1f} = {added:.1f} s, "
              f"{cells['computed']} cells computed, {cells['reused']} reused")
        phase = (imported + made["added"]["seconds"]) / made["full"]["seconds"]
        print(f"  cells phase, ratio (b) / (a) = {phase:.3f} (target <= 1.2 / {k} = {1.2 / k:.3f})")
        print(f"  whole call, ratio (b) / (a) = {(imported + added) / full:.3f} (the leaderboard is rebuilt in full "
              f"either way: a fixed cost that a run of all 99 sets, hours of cells, makes small)")
    return 0


if __name__ == "__main__":
    sys.exit(main())
