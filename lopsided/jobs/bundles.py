"""Shared results: portable bundles of stored cells, merged into another store, verified by recomputing a sample.

A cell's key hashes exactly what computes it (its coordinates, the dataset's identity, the code versions), so
cells can travel between machines and people: a cell stored under the same key is the same computation.

A **bundle** is one Parquet file (zstd-compressed): one row per cell, the columns of ``records.CellRow``
exactly as the store keeps them, and in the file's metadata a JSON header: format and version, when and by
which lopsided it was made, the versions of every package a result depends on, the suites the cells belong to
(fingerprint and content), the data checksums per dataset, the cell count and the sha256 of the cells (their
values in column order, one JSON line per cell, sorted by key).

**Import** merges a bundle into a store: a cell already stored with the same numbers is skipped, the same key
with other numbers is a conflict (nothing is written and each conflict is named), new cells are added in one
transaction. A bundle made with other package versions than this machine's is imported only after ``verify``
agrees, or with ``unverified=True``, which the store records and every leaderboard using those cells reports.

**Verify** recomputes a stratified sample of a bundle's cells here (every dataset, resampler and learner
represented) and counts those that agree exactly, within ``TOLERANCE``, or differ.
"""
import hashlib
import json
import os
import tempfile
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from .. import __version__
from ..errors import BundleError
from ..execution.store import SCHEMA_VERSION, Store, now
from ..records import CELL_COLUMNS, COLUMN_NAMES

FORMAT = "lopsided cell bundle"
BUNDLE_VERSION = 1
HEADER_KEY = b"lopsided.bundle"
COMPARED_VERSIONS = ("lopsided", "numpy", "scipy", "scikit-learn")   # what a cell's numbers depend on
TOLERANCE = 1e-6     # metric units: far above last-bit rounding (about 1e-15), far below one test row (>= 1e-4)
SHOWN = 20           # conflicts named one by one; the rest are counted
NUMBERS = ("status", "metrics", "n_train", "n_train_minority", "n_resampled", "n_test")   # what "same numbers" means


@dataclass(frozen=True)
class Bundle:
    """A bundle as read: its header (a dict, see the module docstring) and its cells (tuples in column order)."""

    path: Path
    header: dict
    rows: list

    @property
    def keys(self):
        return [row[0] for row in self.rows]


def data_sha256(rows):
    """sha256 of cells: one JSON line per cell (its values in column order), sorted by key."""
    digest = hashlib.sha256()
    for row in sorted(rows, key=lambda r: r[0]):
        digest.update(json.dumps(list(row), separators=(",", ":"), allow_nan=False).encode())
        digest.update(b"\n")
    return digest.hexdigest()


def _arrow_schema(header):
    import pyarrow as pa
    kinds = {"TEXT": pa.string(), "INTEGER": pa.int64(), "REAL": pa.float64()}
    fields = [pa.field(name, kinds[kind.split()[0]]) for name, kind in CELL_COLUMNS]
    return pa.schema(fields, metadata={HEADER_KEY: json.dumps(header, sort_keys=True).encode()})


def export(source, out):
    """Write the cells of ``source`` to the bundle ``out``; returns its header.

    ``source``: a store (.sqlite) for every cell in it, or a leaderboard folder (with store.sqlite and
    manifest.json) for the cells of its suite's newest run (added resamplers included)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    from .run import versions
    source, out = Path(source), Path(out)
    suite_name, store_path = None, source
    if source.is_dir():
        manifest = source / "manifest.json"
        if not manifest.is_file() or not (source / "store.sqlite").is_file():
            raise BundleError(source, "folder", "not a leaderboard folder with its store (manifest.json and "
                              "store.sqlite); give the folder of `lopsided run` or a store file")
        suite_name, store_path = json.loads(manifest.read_text(encoding="utf-8"))["suite"], source / "store.sqlite"
    db = Store(store_path, create=False)
    try:
        keys = db.latest_run(suite_name).keys if suite_name else None
        rows = db.raw_cells(keys)
        suites = db.suites_of(set(r[0] for r in rows))
    finally:
        db.close()
    if not rows:
        raise BundleError(source, "cells", "no stored cells to export")
    header = {
        "format": FORMAT, "bundle_version": BUNDLE_VERSION, "created_at": now(), "lopsided": __version__,
        "store_schema": SCHEMA_VERSION, "versions": versions(), "suites": suites, "cells": len(rows),
        "datasets": _checksums(rows), "sha256": data_sha256(rows), "source": str(source),
    }
    columns = list(zip(*rows))
    table = pa.Table.from_arrays([pa.array(list(c), type=f.type) for c, f in zip(columns, _arrow_schema(header))],
                                 schema=_arrow_schema(header))
    out.parent.mkdir(parents=True, exist_ok=True)
    handle, staging = tempfile.mkstemp(prefix=".bundle-", dir=out.parent)
    os.close(handle)
    try:
        pq.write_table(table, staging, compression="zstd")
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(staging, 0o666 & ~umask)          # a file to share: the usual permissions, not mkstemp's 0600
        os.replace(staging, out)
    finally:
        Path(staging).unlink(missing_ok=True)
    return header


def _checksums(rows):
    """{dataset: sorted data checksums its cells were computed from}."""
    at_dataset, at_checksum = COLUMN_NAMES.index("dataset"), COLUMN_NAMES.index("dataset_checksum")
    found: dict[str, set[str]] = {}
    for row in rows:
        found.setdefault(row[at_dataset], set()).add(row[at_checksum])
    return {d: sorted(c) for d, c in sorted(found.items())}


def read(path):
    """The Bundle at ``path``, checked: a lopsided bundle of a format this version reads, with its columns,
    its cell count and the sha256 its header names (a truncated or altered file is refused)."""
    import pyarrow.parquet as pq
    path = Path(path)
    if not path.is_file():
        raise BundleError(path, "file", "no such bundle file")
    try:
        handle = pq.ParquetFile(path)
        metadata = handle.schema_arrow.metadata or {}
    except Exception as exc:     # pyarrow raises several kinds for files that are not Parquet or are cut short
        raise BundleError(path, "file", f"not a lopsided bundle: not a readable Parquet file "
                          f"({type(exc).__name__}: {' '.join(str(exc).split())[:120]})") from None
    if HEADER_KEY not in metadata:
        raise BundleError(path, "header", "not a lopsided bundle: the Parquet file has no lopsided header; make "
                          "one with `lopsided export`")
    try:
        header = json.loads(metadata[HEADER_KEY])
    except (json.JSONDecodeError, UnicodeDecodeError):
        raise BundleError(path, "header", "the lopsided header is not valid JSON (the file was altered)") from None
    _check_header(path, header)
    columns = handle.schema_arrow.names
    if columns != list(COLUMN_NAMES):
        raise BundleError(path, "columns", f"expected the cell columns of store schema {SCHEMA_VERSION} "
                          f"({len(COLUMN_NAMES)}), found {len(columns)}")
    try:
        table = handle.read()
    except Exception as exc:
        raise BundleError(path, "file", f"cannot read the cells ({type(exc).__name__}): the file is damaged or "
                          "cut short") from None
    rows = list(zip(*(table.column(name).to_pylist() for name in COLUMN_NAMES)))
    if len(rows) != header.get("cells"):
        raise BundleError(path, "cells", f"the header says {header.get('cells')} cells, the file holds {len(rows)}")
    if data_sha256(rows) != header.get("sha256"):
        raise BundleError(path, "sha256", "the cells do not match the header's checksum: the file was altered; "
                          "export it again")
    return Bundle(path, header, rows)


def _check_header(path, header):
    if not isinstance(header, dict) or header.get("format") != FORMAT:
        raise BundleError(path, "header", "not a lopsided bundle (its header names another format)")
    version = header.get("bundle_version")
    if not isinstance(version, int) or version > BUNDLE_VERSION:
        raise BundleError(path, "bundle_version", f"bundle format {version!r} was written by a newer lopsided "
                          f"({header.get('lopsided')}); this one ({__version__}) reads format {BUNDLE_VERSION}; "
                          "upgrade lopsided to read it")
    made = header.get("lopsided")
    if not isinstance(made, str) or _newer(made, __version__):
        raise BundleError(path, "lopsided", f"made by lopsided {made}, newer than this one ({__version__}); "
                          "upgrade lopsided to import it")
    for name in ("cells", "sha256", "versions", "suites", "datasets"):
        if name not in header:
            raise BundleError(path, f"header.{name}", "missing (the file was altered or not made by `lopsided export`)")


def _newer(made, here):
    def parts(text):
        return tuple(int(p) if p.isdigit() else 0 for p in text.split("."))
    return parts(made) > parts(here)


def other_versions(header):
    """{package: (in the bundle, here)} for the packages a cell's numbers depend on that differ from here."""
    from .run import versions
    here = versions()
    return {name: (header["versions"].get(name), here.get(name)) for name in COMPARED_VERSIONS
            if header["versions"].get(name) != here.get(name)}


@dataclass(frozen=True)
class Merge:
    """What an import did (or would have done): cells added, already stored alike, and conflicts."""

    added: int
    same: int
    conflicts: list = field(default_factory=list)    # one text per conflicting cell
    trust: str = ""
    suites: list = field(default_factory=list)
    datasets: int = 0


def _numbers(row):
    """The part of a cell that must agree for two stored copies to be the same result."""
    values = dict(zip(COLUMN_NAMES, row))
    metrics = json.loads(values["metrics"]) if values["metrics"] else None
    return tuple(metrics if name == "metrics" else values[name] for name in NUMBERS)


def _where(row):
    values = dict(zip(COLUMN_NAMES, row))
    return (f"{values['key']} ({values['dataset']}, ratio {values['ratio']}, size {values['size']}, repeat "
            f"{values['repeat']}, fold {values['fold']}, {values['resampler']} + {values['learner']})")


def import_bundle(path, store_path, trust=""):
    """Merge the bundle at ``path`` into the store at ``store_path`` (created if missing).

    ``trust``: why cells made with other package versions may be used here ('verified: ...' after
    ``verify`` agreed, or 'unverified'); without it such a bundle is refused. Conflicts (same key, other
    numbers) leave the store untouched and come back in ``Merge.conflicts``. Importing a bundle twice
    changes nothing."""
    bundle = read(path)
    differ = other_versions(bundle.header)
    if differ and not trust:
        listed = ", ".join(f"{name} {theirs} (here {ours})" for name, (theirs, ours) in differ.items())
        raise BundleError(bundle.path, "versions", f"made with {listed}: check that its numbers reproduce here with "
                          f"`lopsided import {bundle.path} --verify`, or take them as they are with --unverified "
                          "(every leaderboard using them then says so)")
    trust = trust or "same versions"
    db = Store(store_path)
    try:
        stored = {row[0]: row for row in db.raw_cells(bundle.keys)}
        conflicts = [_where(row) for row in bundle.rows if row[0] in stored and _numbers(row) != _numbers(stored[row[0]])]
        if conflicts:
            return Merge(0, 0, conflicts, trust)
        new = [row for row in bundle.rows if row[0] not in stored]
        db.add_imported(new, bundle.header, trust)
    finally:
        db.close()
    return Merge(len(new), len(bundle.rows) - len(new), [], trust,
                 [f"{s['name']} ({s['fingerprint']})" for s in bundle.header["suites"]], len(bundle.header["datasets"]))


@dataclass(frozen=True)
class Verification:
    """Cells of a bundle recomputed here: how many agree exactly, within TOLERANCE, or differ."""

    sampled: int
    exact: int
    close: int
    differ: list                       # texts naming the cells that differ (largest difference first)
    not_recomputed: list               # cells that could not be planned here (dataset or method missing)
    versions: dict                     # {package: (in the bundle, here)} that differ

    @property
    def agrees(self):
        return not self.differ and not self.not_recomputed and self.sampled > 0

    def summary(self):
        made = ", ".join(f"{n} {t} (here {o})" for n, (t, o) in self.versions.items()) or "the same versions as here"
        return (f"{self.sampled} cells recomputed here: {self.exact} agree exactly, {self.close} within {TOLERANCE:g}, "
                f"{len(self.differ)} differ, {len(self.not_recomputed)} could not be recomputed; bundle made with {made}")


def sample(rows, size, seed=0):
    """Indices of a stratified random sample: every dataset, resampler and learner at least once, then random
    cells up to ``size`` (ok cells only: a failed cell has no numbers to compare)."""
    names = {name: COLUMN_NAMES.index(name) for name in ("dataset", "resampler", "learner", "status")}
    ok = [i for i, row in enumerate(rows) if row[names["status"]] == "ok"]
    rng = np.random.default_rng(seed)
    order = [ok[i] for i in rng.permutation(len(ok))]
    chosen, covered = [], set[tuple[str, str]]()
    for i in order:
        marks = {(part, rows[i][names[part]]) for part in ("dataset", "resampler", "learner")}
        if not marks <= covered:
            chosen.append(i)
            covered |= marks
    rest = [i for i in order if i not in set(chosen)]
    return sorted(chosen + rest[: max(0, size - len(chosen))])


def verify(path, size=60, jobs=1, progress=False):
    """Recompute a stratified sample of the bundle's cells here and compare their metrics."""
    from ..execution.driver import run_plan
    from ..options import ExecutionOptions
    from ..planning.plan import Plan, pending, plan
    from ..planning.suite import suite_from_json
    from .run import load_all
    bundle = read(path)
    picked = [bundle.rows[i] for i in sample(bundle.rows, size)]
    wanted = {row[0]: row for row in picked}
    found, left = {}, dict(wanted)
    with tempfile.TemporaryDirectory(prefix="lopsided-verify-") as scratch:
        db = Store(Path(scratch) / "verify.sqlite")
        try:
            for entry in bundle.header["suites"]:
                if not left:
                    break
                suite = suite_from_json(entry["suite"], source=f"{bundle.path} ({entry['name']})")
                needed = {dict(zip(COLUMN_NAMES, r))["dataset"] for r in left.values()} & set(suite.datasets)
                if not needed:
                    continue
                suite = replace(suite, datasets=tuple(d for d in suite.datasets if d in needed))
                datasets = load_all(suite)
                full = plan(suite, datasets)
                todo = pending(Plan([u for u in full.units if any(c.key in left for c in u.cells)]),
                               set(full.keys) - set(left))
                if todo:
                    run_plan(Plan(todo), datasets, suite, db, ExecutionOptions(jobs=jobs, progress=progress))
                    recomputed = {row[0]: row for row in db.raw_cells([c.key for u in todo for c in u.cells])}
                    found.update(recomputed)
                    left = {k: v for k, v in left.items() if k not in recomputed}
        finally:
            db.close()
    exact, close, differ = 0, 0, []
    for key, row in found.items():
        gap = _largest_gap(wanted[key], row)
        if gap == 0:
            exact += 1
        elif gap <= TOLERANCE:
            close += 1
        else:
            differ.append((gap, f"{_where(row)}: largest difference {gap:.3g}"))
    return Verification(len(found), exact, close, [text for _, text in sorted(differ, reverse=True)],
                        [_where(row) for row in left.values()], other_versions(bundle.header))


def _largest_gap(theirs, ours):
    """The largest absolute difference between two cells' metrics (inf when status or metric names differ)."""
    a, b = _numbers(theirs), _numbers(ours)
    if a[0] != b[0]:
        return float("inf")
    first, second = a[1] or {}, b[1] or {}
    if set(first) != set(second):
        return float("inf")
    gaps = [abs(first[m] - second[m]) for m in first if first[m] is not None and second[m] is not None]
    if any((first[m] is None) != (second[m] is None) for m in first):
        return float("inf")
    return max(gaps, default=0.0)
