"""SQLite result store: one row per cell, committed in batches of whole work units.

The runner writes the rows of whole finished units in one transaction (every half second or
500 cells), so an interrupted run leaves only whole units behind and the next run resumes from
there. The write-ahead log is synced at checkpoints, not at every commit (``synchronous=NORMAL``,
SQLite documentation, "Write-Ahead Logging"): a power cut may lose the last batches, never the
store's consistency, and lost cells are simply computed again. Several suites may share a store;
the ``runs`` table records which cell keys each run planned.
"""
import json
import sqlite3
from dataclasses import asdict, dataclass
from datetime import datetime, timezone
from itertools import islice
from pathlib import Path

import pandas as pd

from ..errors import StoreError
from ..planning.suite import Suite, suite_from_json
from ..records import CELL_COLUMNS, COLUMN_NAMES, AddedMethod, RunSummary, SkippedFold
from ..specs import MethodSpec

SCHEMA_VERSION = 2      # 2: cells gained n_train_minority_groups (added to a schema-1 store when it is opened)
UPGRADES = {1: ["ALTER TABLE cells ADD COLUMN n_train_minority_groups INTEGER"]}
NAMES = list(COLUMN_NAMES)        # the cells table's columns: the fields of records.CellRow
METRICS_AT = NAMES.index("metrics")
READ_CHUNK = 100_000


def now():
    return datetime.now(timezone.utc).isoformat(timespec="seconds")


@dataclass(frozen=True)
class StoredRun:
    """A finished run as the runs table keeps it: its suite (read back through the suite validation), its
    manifest, its infeasible points fold by fold, and the cell keys its plan held."""

    suite: Suite
    summary: RunSummary
    skipped: tuple[SkippedFold, ...]
    keys: tuple[str, ...]


class Store:
    """The cells of every run that wrote to ``path``."""

    def __init__(self, path, create=True):
        self.path = Path(path)
        if not create and not self.path.is_file():
            raise StoreError(f"{self.path}: no such result store")
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
            self.db = sqlite3.connect(self.path)
        except (OSError, sqlite3.Error) as exc:
            blocker = next((p for p in self.path.parents if p.is_file()), None)
            why = f"{blocker} is a file, not a folder" if blocker else " ".join(str(exc).split())
            raise StoreError(f"{self.path}: cannot create or open the store here: {why}") from None
        try:
            self._migrate(create)
            self.db.execute("PRAGMA synchronous=NORMAL")
        except sqlite3.DatabaseError as exc:
            self.db.close()
            raise StoreError(f"{self.path}: not a lopsided result store ({exc})") from None
        except StoreError:
            self.db.close()
            raise

    def _migrate(self, create=True):
        """Check what the file is before anything is written (a foreign, future or empty file stays as it
        was), then switch to write-ahead logging and create what is missing."""
        tables = sorted(name for (name,) in self.db.execute("SELECT name FROM sqlite_master WHERE type = 'table'"))
        if tables and "meta" not in tables:
            raise StoreError(f"{self.path}: not a lopsided result store: an SQLite database with other tables "
                             f"({', '.join(tables[:5])}); name another store file")
        if not tables and not create:
            raise StoreError(f"{self.path}: not a lopsided result store: an empty database")
        if tables:
            found = self.db.execute("SELECT value FROM meta WHERE key = 'schema'").fetchone()
            schema = str(found[0]) if found else "missing"
            if schema.isdigit() and int(schema) > SCHEMA_VERSION:
                raise StoreError(f"{self.path}: schema: store schema {schema} was written by a newer lopsided "
                                 f"(this one reads schema {SCHEMA_VERSION}); upgrade lopsided to read it")
            if not schema.isdigit() or int(schema) not in {*UPGRADES, SCHEMA_VERSION}:
                raise StoreError(f"{self.path}: schema: store schema {schema!r}, this lopsided reads "
                                 f"{SCHEMA_VERSION}; not a lopsided result store it can read")
            self._upgrade(int(schema))
        self.db.execute("PRAGMA journal_mode=WAL")
        columns = ", ".join(f"{name} {kind}" for name, kind in CELL_COLUMNS)
        with self.db:
            self.db.execute("CREATE TABLE IF NOT EXISTS meta (key TEXT PRIMARY KEY, value TEXT)")
            self.db.execute("INSERT OR IGNORE INTO meta VALUES ('schema', ?)", (str(SCHEMA_VERSION),))
            self.db.execute(f"CREATE TABLE IF NOT EXISTS cells ({columns})")
            self.db.execute("CREATE TABLE IF NOT EXISTS runs (run_id INTEGER PRIMARY KEY, suite TEXT, "
                            "fingerprint TEXT, suite_json TEXT, started_at TEXT, finished_at TEXT, "
                            "summary TEXT)")
            self.db.execute("CREATE TABLE IF NOT EXISTS run_cells (run_id INTEGER, key TEXT)")
            self.db.execute("CREATE TABLE IF NOT EXISTS added_methods (suite TEXT, kind TEXT, spec TEXT, "
                            "label TEXT, command TEXT, added_at TEXT, dropped_at TEXT, "
                            "PRIMARY KEY (suite, kind, label))")
            self.db.execute("CREATE TABLE IF NOT EXISTS imports (sha256 TEXT PRIMARY KEY, header TEXT, "
                            "imported_at TEXT, trust TEXT)")
            self.db.execute("CREATE TABLE IF NOT EXISTS cell_sources (key TEXT PRIMARY KEY, bundle TEXT)")

    def _upgrade(self, schema):
        """Bring an older store to SCHEMA_VERSION, one step at a time, each step in one transaction."""
        while schema < SCHEMA_VERSION:
            with self.db:
                for statement in UPGRADES[schema]:
                    self.db.execute(statement)
                schema += 1
                self.db.execute("UPDATE meta SET value = ? WHERE key = 'schema'", (str(schema),))

    def close(self):
        self.db.close()

    def _select(self, columns, keys, where=""):
        """Rows of ``columns`` for the given keys, queried in chunks (SQLite limits bound parameters)."""
        keys = list(keys)
        for start in range(0, len(keys), 500):
            chunk = keys[start:start + 500]
            marks = ",".join("?" * len(chunk))
            yield from self.db.execute(f"SELECT {columns} FROM cells WHERE key IN ({marks}){where}", chunk)

    def known_keys(self, keys, include_failed=True):
        """The subset of ``keys`` already stored (failed cells too, unless asked not to)."""
        status = "" if include_failed else " AND status = 'ok'"
        return {row[0] for row in self._select("key", keys, status)}

    def write_cells(self, rows):
        """Insert (or replace) the cells of whole work units (records.CellRow) in one transaction."""
        marks = ",".join("?" * len(NAMES))
        values = [row.values() for row in rows]
        with self.db:
            self.db.executemany(f"INSERT OR REPLACE INTO cells VALUES ({marks})", values)

    def begin_run(self, suite, keys):
        with self.db:
            cursor = self.db.execute(
                "INSERT INTO runs (suite, fingerprint, suite_json, started_at) VALUES (?, ?, ?, ?)",
                (suite.name, suite.fingerprint, json.dumps(suite.as_dict(), default=str), now()))
            run_id = cursor.lastrowid
            self.db.executemany("INSERT INTO run_cells VALUES (?, ?)", [(run_id, k) for k in keys])
        return run_id

    def finish_run(self, run_id, summary, skipped):
        """The run's manifest (RunSummary), its infeasible points fold by fold in place of the grouped ones."""
        kept = {**summary.as_json(), "skipped": [asdict(fold) for fold in skipped]}
        with self.db:
            self.db.execute("UPDATE runs SET finished_at = ?, summary = ? WHERE run_id = ?",
                            (now(), json.dumps(kept, default=str), run_id))

    def add_method(self, suite, kind, spec, command):
        """Record that ``suite`` gained ``spec`` (a MethodSpec) by ``command``.

        Adding a method that is already recorded keeps its first record; adding a dropped one again
        brings it back.
        """
        with self.db:
            self.db.execute("INSERT OR IGNORE INTO added_methods (suite, kind, spec, label, command, added_at) "
                            "VALUES (?, ?, ?, ?, ?, ?)", (suite, kind, json.dumps(spec.as_json()), spec.title,
                                                          command, now()))
            self.db.execute("UPDATE added_methods SET dropped_at = NULL WHERE suite = ? AND kind = ? AND label = ?",
                            (suite, kind, spec.title))

    def drop_method(self, suite, kind, label):
        """Leave an added method out of ``suite``'s leaderboards from now on (its cells stay). False if unknown."""
        with self.db:
            cursor = self.db.execute("UPDATE added_methods SET dropped_at = ? WHERE suite = ? AND kind = ? "
                                     "AND label = ? AND dropped_at IS NULL", (now(), suite, kind, label))
        return cursor.rowcount > 0

    def added_methods(self, suite, kind):
        """[AddedMethod] that ``suite`` gained and still has, oldest first."""
        rows = self.db.execute("SELECT spec, command, added_at FROM added_methods WHERE suite = ? AND kind = ? "
                               "AND dropped_at IS NULL ORDER BY added_at, rowid", (suite, kind))
        return [AddedMethod(MethodSpec.from_json(json.loads(spec)), command, added_at) for spec, command, added_at in rows]

    def latest_run(self, suite=None):
        """The newest finished run (of ``suite``, if named) as a StoredRun."""
        where, args = ("AND suite = ?", (suite,)) if suite else ("", ())
        row = self.db.execute(f"SELECT run_id, suite_json, summary FROM runs WHERE finished_at IS NOT NULL {where} "
                              "ORDER BY run_id DESC LIMIT 1", args).fetchone()
        if row is None:
            raise StoreError(f"{self.path}: no finished run" + (f" of suite {suite!r}" if suite else "")
                             + " in this store")
        keys = tuple(k for (k,) in self.db.execute("SELECT key FROM run_cells WHERE run_id = ?", (row[0],)))
        summary = json.loads(row[2] or "{}")
        skipped = tuple(SkippedFold(**fold) for fold in summary.get("skipped", ()))
        return StoredRun(suite_from_json(json.loads(row[1]), source=str(self.path)),
                         RunSummary.from_json({**summary, "skipped": []}), skipped, keys)

    def raw_cells(self, keys=None):
        """Stored cells as tuples in column order, exactly as kept (metrics as JSON text); only ``keys`` when given."""
        rows = self.db.execute("SELECT * FROM cells") if keys is None else self._select("*", keys)
        return list(rows)

    def suites_of(self, keys):
        """[{name, fingerprint, suite}] of the newest finished run of each suite whose plan holds any of ``keys``."""
        found = {}
        for run_id, name, fingerprint, suite in self.db.execute(
                "SELECT run_id, suite, fingerprint, suite_json FROM runs WHERE finished_at IS NOT NULL ORDER BY run_id"):
            planned = {k for (k,) in self.db.execute("SELECT key FROM run_cells WHERE run_id = ?", (run_id,))}
            if planned & keys:
                found[name] = {"name": name, "fingerprint": fingerprint, "suite": json.loads(suite)}
        return list(found.values())

    def add_imported(self, rows, header, trust):
        """Cells of a bundle, its header and why they may be used here, in one transaction (a bundle already
        imported keeps its first record)."""
        marks = ",".join("?" * len(NAMES))
        with self.db:
            self.db.executemany(f"INSERT INTO cells VALUES ({marks})", rows)
            self.db.execute("INSERT OR IGNORE INTO imports VALUES (?, ?, ?, ?)",
                            (header["sha256"], json.dumps(header), now(), trust))
            self.db.executemany("INSERT OR IGNORE INTO cell_sources VALUES (?, ?)",
                                [(row[0], header["sha256"]) for row in rows])

    def sources(self, keys):
        """[{bundle, cells, lopsided, versions, trust, imported_at}] of the bundles that brought any of ``keys``."""
        counts: dict[str, int] = {}
        for bundle in (b for (b,) in self._select_sources(keys)):
            counts[bundle] = counts.get(bundle, 0) + 1
        found = []
        for sha, count in counts.items():
            header, at, trust = self.db.execute("SELECT header, imported_at, trust FROM imports WHERE sha256 = ?",
                                                (sha,)).fetchone()
            header = json.loads(header)
            found.append({"bundle": sha[:16], "cells": count, "lopsided": header.get("lopsided"),
                          "versions": {k: header["versions"].get(k) for k in ("numpy", "scipy", "scikit-learn")},
                          "trust": trust, "imported_at": at, "created_at": header.get("created_at")})
        return found

    def _select_sources(self, keys):
        keys = list(keys)
        for start in range(0, len(keys), 500):
            chunk = keys[start:start + 500]
            yield from self.db.execute(f"SELECT bundle FROM cell_sources WHERE key IN ({','.join('?' * len(chunk))})",
                                       chunk)

    def cells(self, keys=None):
        """Stored cells as a DataFrame, metrics expanded into columns; only ``keys`` when given.

        Read READ_CHUNK rows at a time, so that only one chunk's Python objects (row tuples, metric
        dicts) exist at once: a million cells stay well under 2 GB (bench/perf/backends.py)."""
        rows = self.db.execute("SELECT * FROM cells") if keys is None else self._select("*", keys)
        parts = [_frame(chunk) for chunk in iter(lambda: list(islice(rows, READ_CHUNK)), [])]
        if len(parts) <= 1:
            return parts[0] if parts else _frame([])
        # a numeric column that was all NULL in one chunk comes back as objects: infer it once more
        return pd.concat(parts, ignore_index=True).infer_objects()


def _frame(rows):
    """Rows of the cells table as a DataFrame, the metrics JSON expanded into one column per metric
    (parsed as one JSON array: one parser call per chunk, metric names shared)."""
    table = pd.DataFrame.from_records(rows, columns=NAMES, exclude=["metrics"], coerce_float=True)
    parsed = json.loads("[" + ",".join(row[METRICS_AT] or "{}" for row in rows) + "]")
    return pd.concat([table, pd.DataFrame(parsed, index=table.index)], axis=1)
