"""Seconds for `lopsided try` with the top 5 combinations of the quick leaderboard on a 300-spectrum dataset,
5 x 5-fold cross-validation, 2 jobs (target: under 60 s on 2 cores), from an empty store.

Needs the committed leaderboard results/quick (or run bench/quick.toml first).
    .venv/bin/python bench/perf/try_speed.py
"""
import tempfile
import time
from pathlib import Path

from lopsided.jobs.tryout import try_dataset
from lopsided.options import ExecutionOptions, TryOptions

ROOT = Path(__file__).resolve().parents[2]
DATASET = "spectra:serum?ratio=5&donors=100&replicates=3&effect=1.2&region=fingerprint&seed=11"   # 300 spectra


def main():
    with tempfile.TemporaryDirectory() as folder:
        started = time.perf_counter()
        result = try_dataset(DATASET, TryOptions(suite=ROOT / "bench" / "quick.toml", board=ROOT / "results" / "quick", top=5, repeats=5, folds=5, out=Path(folder) / "try", execution=ExecutionOptions(jobs=2, progress=False)))
        seconds = time.perf_counter() - started
    cells = result.run.summary.cells
    print(f"lopsided try, top 5 + no resampling, 300 spectra, 5 x 5-fold, 2 jobs: {seconds:.1f} s "
          f"({cells.computed} cells; target < 60 s)")


if __name__ == "__main__":
    main()
