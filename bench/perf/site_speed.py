"""Time writing the whole leaderboard site for the committed KEEL results (30 datasets, 40 combinations,
4 metrics), and weigh the demo site's front page with everything it loads.

    .venv/bin/python bench/perf/site_speed.py [site folder to weigh, default results/quick]

Targets: the KEEL site written in under 10 s on 2 cores; results/quick/index.html plus its stylesheet,
script and figures under 2 MB. Prints the numbers; asserts nothing.
"""
import json
import re
import sys
import tempfile
import time
from pathlib import Path
from unittest import mock

import pandas as pd

from lopsided.planning.suite import load_suite
from lopsided.report import write_report
from lopsided.report.pool import usable_cores

ROOT = Path(__file__).resolve().parents[2]
KEEL, QUICK = ROOT / "results" / "keel", ROOT / "results" / "quick"
ROUNDS = 2


def write_keel_site(cells, suite, summary):
    """Seconds to write the KEEL site into a temporary folder; its page and figure counts."""
    with tempfile.TemporaryDirectory() as folder:
        clock = time.perf_counter()
        write_report(folder, suite, cells, [], summary)
        seconds = time.perf_counter() - clock
        return seconds, len(list(Path(folder).glob("*.html"))), len(list((Path(folder) / "figures").glob("*.svg")))


def time_keel_site():
    cells = pd.read_csv(KEEL / "cells.csv")
    suite = load_suite(ROOT / "bench" / "keel.toml").as_dict()
    summary = json.loads((KEEL / "manifest.json").read_text(encoding="utf-8"))
    cores, serial, parallel = usable_cores(), [], []
    for _ in range(ROUNDS):                       # alternated, best of each: less noise on a shared machine
        with mock.patch("lopsided.report.pool.usable_cores", return_value=1):
            serial.append(write_keel_site(cells, suite, summary)[0])
        seconds, pages, figures = write_keel_site(cells, suite, summary)
        parallel.append(seconds)
    serial, parallel = min(serial), min(parallel)
    print(f"KEEL site: {cells['dataset'].nunique()} datasets, {len(suite['resamplers']) * len(suite['learners'])} "
          f"combinations, {len(suite['metrics'])} metrics; {pages} pages, {figures} SVG figures")
    print(f"  best of {ROUNDS}: one process {serial:.2f} s; {cores} processes {parallel:.2f} s (target < 10 s); "
          f"speed-up {serial / parallel:.2f}x")


def page_weight(page):
    """Bytes of a page and of every local file it loads: stylesheet, script, images (inline SVG counts
    with the page itself)."""
    html = page.read_text(encoding="utf-8")
    loaded = set(re.findall(r'<(?:link|script|img)[^>]*?(?:href|src)="([^"#:]+)"', html))
    files = [page, *(page.parent / name for name in sorted(loaded))]
    return sum(f.stat().st_size for f in files), files


def main():
    time_keel_site()
    site = Path(sys.argv[1]) if len(sys.argv) > 1 else QUICK
    total, files = page_weight(site / "index.html")
    print(f"{site} front page: {total / 1e6:.2f} MB with {len(files) - 1} loaded file(s) (target < 2 MB)")
    for f in files:
        print(f"  {f.relative_to(site)}: {f.stat().st_size / 1e3:.0f} kB")
    return 0


if __name__ == "__main__":
    sys.exit(main())
