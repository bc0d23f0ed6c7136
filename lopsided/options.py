"""What a command was asked to do, as frozen records: built once by the command line (or a notebook call) and
passed down whole, so no function forwards a dozen keywords.

``StatsOptions`` (--alpha, --rope) go to every leaderboard; ``ExecutionOptions`` say how work units run
(``execution.driver.run_plan``); ``RunOptions`` are `lopsided run`'s (``jobs.run.run_suite``), ``ReportOptions``
`lopsided report`'s (``jobs.run.rebuild_report``) and ``TryOptions`` `lopsided try`'s (``jobs.tryout.try_dataset``).
"""
from dataclasses import dataclass, field
from pathlib import Path


@dataclass(frozen=True)
class StatsOptions:
    """The significance level of every test, and the region of practical equivalence (score units) of the
    Bayesian tests and the wins / ties / losses counts."""

    alpha: float = 0.05
    rope: float = 0.01


@dataclass(frozen=True)
class ExecutionOptions:
    """How work units run: how many at once, on which backend (``execution.backends``), the per-unit time
    limit (None: the suite's ``protocol.timeout``), whether cells stored as failed are computed again, and
    whether progress is shown."""

    jobs: int = 1
    backend: str = "auto"
    scheduler: str | None = None
    timeout: float | None = None
    retry_failed: bool = False
    progress: bool = True


@dataclass(frozen=True)
class RunOptions:
    """`lopsided run`: where results go (None: the suite's ``out`` / ``store``, else results/<suite name> and
    its store.sqlite), resamplers added or dropped (kept in the store), whether the leaky random split is run
    beside the grouped one, and the command recorded in the manifest (None: the Python call)."""

    out: Path | str | None = None
    store: Path | str | None = None
    add_resamplers: tuple[str, ...] = ()
    drop_resamplers: tuple[str, ...] = ()
    split_leakage: bool = False
    command: str | None = None
    execution: ExecutionOptions = ExecutionOptions()
    stats: StatsOptions = StatsOptions()


@dataclass(frozen=True)
class ReportOptions:
    """`lopsided report`: the folder to rebuild (None: the suite's ``out`` or results/<suite name>), added
    resamplers to leave out from now on, and the command recorded in the manifest (None: the Python call)."""

    out: Path | str | None = None
    drop_resamplers: tuple[str, ...] = ()
    command: str | None = None
    stats: StatsOptions = StatsOptions()


@dataclass(frozen=True)
class TryOptions:
    """`lopsided try`: the benchmark suite and its leaderboard folder (None: the suite's results folder), how many
    of its best combinations (or which ``combos``: 'RESAMPLER + LEARNER'), learning-curve ``targets`` {metric:
    score} over training ``sizes``, repeats and folds (None: the suite's), the test design's text, what sizes
    count ("rows" or "groups"; None: groups when the data have groups), the folder written and the command."""

    suite: Path | str = "bench/quick.toml"
    board: Path | str | None = None
    top: int = 5
    combos: tuple[str, ...] = ()
    targets: dict[str, float] = field(default_factory=dict)
    sizes: tuple[int | str, ...] | None = None
    repeats: int | None = None
    folds: int | None = None
    test: str = "folds"
    count: str | None = None
    out: Path | str | None = None
    command: str | None = None
    execution: ExecutionOptions = ExecutionOptions()
    stats: StatsOptions = StatsOptions()
