"""`lopsided compare`: the regression gate between a baseline leaderboard folder and a new one.

Two rules, each on like-for-like numbers:

- ranks: a method's average rank in one comparison (Friedman ranks, Demšar 2006, JMLR 7, section 3.2.2)
  moves by more than a threshold; by default the baseline comparison's Nemenyi critical difference
  CD = q_alpha * sqrt(k (k + 1) / (6 N)) (Demšar 2006, section 3.2.2), the smallest rank difference the
  baseline itself could call significant. Comparisons whose methods or datasets changed are shown, not gated:
  their average ranks are over different sets.
- scores: the mean of one metric (default: the baseline's headline) in a dataset x ratio x size x resampler x
  learner row of scores.csv moves by more than a tolerance in metric units, or gains or loses its value
  (a row with failed cells has no value, as in the leaderboard's method matrices).

Methods, datasets or comparisons present in only one folder are listed, and never fail the gate alone.
Pure steps: ``load_folder`` (folder -> Leaderboard), ``diff`` (two -> GateResult), ``render`` (-> Markdown).
"""
import json
import math
from dataclasses import dataclass
from pathlib import Path

import pandas as pd

from ..errors import BoardError, did_you_mean
from ..records import point_label
from ..report import CAUTION, markdown_text

KEYS = ("dataset", "ratio", "size", "resampler", "learner")
VIEWS = ("all", "learner")
DEFAULT_TOLERANCE = 0.02
SHOWN = 20            # rows per table in the summary; the rest are counted
SAME = 1e-9           # float noise: far below one rank step (1/N) or a score's 8th significant digit
MEAN = "_mean"


@dataclass(frozen=True)
class Run:
    """Where a leaderboard folder came from, as its manifest.json says."""

    folder: str
    suite: str
    fingerprint: str
    version: str
    finished: str


@dataclass(frozen=True)
class RankRecord:
    """One comparison as stats.json records it: average ranks of methods in one view at one protocol point
    (the gate's reading; the statistics themselves are ``analysis.compare.Comparison``)."""

    metric: str
    ratio: str
    size: str
    view: str                 # "all" (resampler + learner combinations) or "learner"
    learner: str | None
    ranks: tuple              # ((method, average rank), ...)
    datasets: tuple
    cd: float | None          # Nemenyi critical difference; None when stats.json has none

    @property
    def key(self):
        return (self.metric, self.ratio, self.size, self.view, self.learner)

    @property
    def label(self):
        within = "all combinations" if self.view == "all" else f"resamplers with {self.learner}"
        return f"{self.metric}, ratio={self.ratio}, size={self.size}, {within}"


@dataclass(frozen=True, eq=False)
class Leaderboard:
    """What the gate reads from a leaderboard folder."""

    run: Run
    metrics: tuple            # metrics compared in stats.json, headline first
    comparisons: tuple        # RankRecord records
    scores: pd.DataFrame      # KEYS as text, n_failed, and every <metric>_mean column
    stats_path: str
    scores_path: str


@dataclass(frozen=True)
class RankMove:
    comparison: str
    method: str
    old: float
    new: float
    threshold: float | None   # None: no CD in the baseline and no --rank-threshold
    cd: float | None
    like_for_like: bool       # same methods and datasets in both folders

    @property
    def change(self):
        return self.new - self.old

    @property
    def beyond_threshold(self):
        return self.threshold is not None and abs(self.change) > self.threshold

    @property
    def beyond_cd(self):
        return self.cd is not None and abs(self.change) > self.cd

    @property
    def fails(self):
        return self.like_for_like and self.beyond_threshold


@dataclass(frozen=True)
class ScoreMove:
    row: tuple                # values of KEYS
    old: float | None         # None: no value (failed cells or undefined metric)
    new: float | None

    @property
    def change(self):
        return None if self.old is None or self.new is None else self.new - self.old

    @property
    def size(self):
        """How far it moved; a value gained or lost counts as the largest move."""
        return math.inf if self.change is None else abs(self.change)


@dataclass(frozen=True)
class GateResult:
    baseline: Run
    new: Run
    metric: str
    tolerance: float
    rank_threshold: float | None      # None: each comparison's baseline CD
    rank_moves: tuple                 # every rank that moved, failures first, then by size
    score_moves: tuple                # rows beyond tolerance, largest first
    score_changes_within: int         # rows that changed by at most the tolerance
    rows_compared: int
    added: tuple                      # ((kind, name), ...) in the new folder only
    removed: tuple                    # ((kind, name), ...) in the baseline only

    @property
    def rank_failures(self):
        return tuple(m for m in self.rank_moves if m.fails)

    @property
    def failed(self):
        return bool(self.rank_failures or self.score_moves)

    @property
    def unchanged(self):
        return not (self.rank_moves or self.score_moves or self.score_changes_within)


def load_folder(path):
    """A leaderboard folder (manifest.json, stats.json, scores.csv) -> Leaderboard."""
    folder = Path(path)
    if not folder.is_dir():
        raise BoardError(folder, "folder", "no such leaderboard folder; give the --out folder of `lopsided run`")
    manifest = _json(folder / "manifest.json")
    suite = manifest.get("suite")
    if not isinstance(suite, str) or not suite:
        raise BoardError(folder / "manifest.json", "suite", "missing; is this a leaderboard folder?")
    run = Run(str(folder), suite, str(manifest.get("suite_fingerprint", "unknown")),
              str((manifest.get("versions") or {}).get("lopsided", "unknown")),
              str(manifest.get("finished_at", "unknown")))
    stats_path = folder / "stats.json"
    comparisons = _comparisons(stats_path, _json(stats_path))
    metrics = tuple(dict.fromkeys(c.metric for c in comparisons))
    return Leaderboard(run, metrics, comparisons, _scores(folder / "scores.csv"), str(stats_path),
                       str(folder / "scores.csv"))


def _json(path):
    if not path.is_file():
        raise BoardError(path, "file", "missing; is this a leaderboard folder?")
    try:
        content = json.loads(path.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise BoardError(path, "file", f"not valid JSON ({exc})") from None
    if not isinstance(content, dict):
        raise BoardError(path, "top level", f"expected an object, found {type(content).__name__}")
    return content


def _comparisons(path, stats):
    records = stats.get("comparisons")
    if not isinstance(records, list):
        raise BoardError(path, "comparisons", "missing or not a list; rebuild an older folder with `lopsided report`")
    found, seen = [], set()
    for i, record in enumerate(records):
        where = f"comparisons[{i}]"
        if not isinstance(record, dict):
            raise BoardError(path, where, "not an object")
        for name in ("metric", "ratio", "size", "view", "average_ranks"):
            if name not in record:
                raise BoardError(path, f"{where}.{name}", "missing")
        for name in ("metric", "ratio", "size"):
            if not isinstance(record[name], str) and not _is_number(record[name]):
                raise BoardError(path, f"{where}.{name}", f"{record[name]!r} is neither text nor a number")
        if record["view"] not in VIEWS:
            raise BoardError(path, f"{where}.view", f"{record['view']!r} is not one of {', '.join(VIEWS)}")
        ranks = record["average_ranks"]
        if not isinstance(ranks, dict) or not all(_is_number(r) for r in ranks.values()):
            raise BoardError(path, f"{where}.average_ranks", "expected an object of method: average rank (numbers)")
        cd = (record.get("nemenyi") or {}).get("cd")
        if cd is not None and not _is_number(cd):
            raise BoardError(path, f"{where}.nemenyi.cd", f"{cd!r} is not a number")
        learner = record.get("learner")
        comparison = RankRecord(str(record["metric"]), point_label(record["ratio"]), point_label(record["size"]),
                                record["view"], None if learner is None else str(learner),
                                tuple((str(m), float(r)) for m, r in ranks.items()),
                                tuple(str(d) for d in record.get("datasets") or ()), cd)
        if comparison.key in seen:
            raise BoardError(path, where, f"a second record for {comparison.label}")
        seen.add(comparison.key)
        found.append(comparison)
    return tuple(found)


def _is_number(value):
    return isinstance(value, (int, float)) and not isinstance(value, bool) and math.isfinite(value)


def _scores(path):
    if not path.is_file():
        raise BoardError(path, "file", "missing; is this a leaderboard folder?")
    try:
        table = pd.read_csv(path, dtype=str, keep_default_na=False)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise BoardError(path, "file", f"not a readable CSV table ({exc})") from None
    missing = [c for c in (*KEYS, "n_failed") if c not in table.columns]
    if missing:
        raise BoardError(path, "columns", f"missing {', '.join(missing)}; expected the scores.csv of a leaderboard folder")
    numbers = ["n_failed", *(c for c in table.columns if c.endswith(MEAN))]
    out = table[list(KEYS)].copy()
    for column in numbers:
        text = table[column].str.strip()
        values = pd.to_numeric(text.where(text != ""), errors="coerce")
        bad = values.isna() & (text != "")
        if bad.any():
            row = bad.idxmax()
            raise BoardError(path, column, f"line {row + 2}: {table.at[row, column]!r} is not a number")
        out[column] = values
    twice = out.duplicated(list(KEYS))
    if twice.any():
        row = out[twice].iloc[0]
        raise BoardError(path, "rows", "two rows for " + ", ".join(f"{k}={row[k]}" for k in KEYS))
    return out


def diff(baseline, new, metric=None, rank_threshold=None, tolerance=DEFAULT_TOLERANCE):
    """Compare two Leaderboards -> GateResult (see the module docstring for the rules)."""
    _check_limit("--tolerance", tolerance)
    if rank_threshold is not None:
        _check_limit("--rank-threshold", rank_threshold)
    if new.run.suite != baseline.run.suite:
        raise BoardError(Path(new.run.folder) / "manifest.json", "suite",
                        f"{new.run.suite!r} differs from the baseline's {baseline.run.suite!r}; "
                        "compare two runs of the same suite")
    if baseline.metrics and new.metrics and set(baseline.metrics) != set(new.metrics):
        raise BoardError(new.stats_path, "metric", f"compares {', '.join(new.metrics)} but the baseline compares "
                        f"{', '.join(baseline.metrics)}; compare two runs of the same suite")
    metric = metric or _headline(baseline)
    for board in (baseline, new):
        if metric + MEAN not in board.scores.columns:
            known = [c[:-len(MEAN)] for c in board.scores.columns if c.endswith(MEAN)]
            raise BoardError(board.scores_path, metric + MEAN,
                            f"no such column: unknown metric {metric!r}{did_you_mean(metric, known)}")
    moves = _rank_moves(baseline, new, rank_threshold)
    score_moves, within, compared = _score_moves(baseline.scores, new.scores, metric, tolerance)
    if not compared:
        raise BoardError(new.scores_path, "rows", "no dataset x ratio x size x resampler x learner row in common "
                        "with the baseline, so nothing can be compared; compare two runs of the same suite")
    added, removed = _membership(baseline, new)
    return GateResult(baseline.run, new.run, metric, float(tolerance), rank_threshold, moves, score_moves,
                      within, compared, added, removed)


def _check_limit(option, value):
    if not _is_number(value) or value < 0:
        raise BoardError(option, "value", f"{value!r} is not a finite number >= 0")


def _headline(baseline):
    if not baseline.metrics:
        raise BoardError(baseline.stats_path, "comparisons", "empty, so there is no headline metric; give --metric")
    return baseline.metrics[0]


def _rank_moves(baseline, new, threshold):
    after = {c.key: c for c in new.comparisons}
    moves = []
    for before in baseline.comparisons:
        now = after.get(before.key)
        if now is None:
            continue
        ranks = dict(now.ranks)
        like = set(ranks) == {m for m, _ in before.ranks} and set(now.datasets) == set(before.datasets)
        for method, old in before.ranks:
            if method in ranks and abs(ranks[method] - old) > SAME:
                moves.append(RankMove(before.label, method, old, ranks[method],
                                      before.cd if threshold is None else float(threshold), before.cd, like))
    return tuple(sorted(moves, key=lambda m: (not m.fails, -abs(m.change))))


def _score_moves(before, after, metric, tolerance):
    """Rows beyond tolerance (largest first), the count within it, and how many rows both folders have."""
    column = metric + MEAN
    picked = [*KEYS, "n_failed", column]
    both = before[picked].merge(after[picked], on=list(KEYS), suffixes=("_old", "_new"))
    old, new = (_values(both, column, side) for side in ("_old", "_new"))
    moves, within = [], 0
    for row, a, b in zip(both[list(KEYS)].itertuples(index=False, name=None), old, new):
        if a is None and b is None:
            continue
        move = ScoreMove(row, a, b)
        if move.size > tolerance:
            moves.append(move)
        elif move.size > SAME:
            within += 1
    moves.sort(key=lambda m: (-m.size, m.row))
    return tuple(moves), within, len(both)


def _values(rows, column, side):
    """The rows' metric means; None where a row has failed cells or no value (as method_matrix treats it)."""
    value = rows[column + side].where(rows["n_failed" + side].fillna(0) == 0)
    return [None if pd.isna(v) else float(v) for v in value]


def _membership(baseline, new):
    """((kind, name), ...) present only in the new folder, and only in the baseline."""
    def names(board):
        found = {(kind, value) for kind in ("dataset", "resampler", "learner") for value in board.scores[kind]}
        return found | {("comparison", c.label) for c in board.comparisons}
    before, after = names(baseline), names(new)
    return tuple(sorted(after - before)), tuple(sorted(before - after))


def render(result):
    """The gate's Markdown summary, fit for a pull-request comment."""
    lines = [f"## lopsided compare: {'fail' if result.failed else 'pass'}", "", _verdict(result), ""]
    lines += _rank_table(result) + [""] + _score_table(result) + [""] + _membership_lines(result) + [""]
    lines += _runs_table(result) + ["", f"_{CAUTION}_", ""]
    return "\n".join(lines)


def _verdict(result):
    metric = markdown_text(result.metric)
    if result.failed:
        parts = []
        if result.rank_failures:
            parts.append(f"{len(result.rank_failures)} average rank(s) moved by more than the threshold")
        if result.score_moves:
            parts.append(f"{len(result.score_moves)} {metric} score(s) moved by more than {result.tolerance:g}")
        return f"**Fail**: {'; '.join(parts)}."
    if result.unchanged:
        text = f"**Pass**: no change in any average rank or {metric} score."
    else:
        hidden = sum(m.beyond_threshold for m in result.rank_moves)
        tail = (f"none beyond the thresholds except {hidden} rank move(s) in comparisons whose methods or "
                "datasets changed (shown, not gated)." if hidden else "none beyond the thresholds.")
        text = (f"**Pass**: {len(result.rank_moves)} average rank(s) and {result.score_changes_within} {metric} "
                f"score(s) moved, {tail}")
    if result.added or result.removed:
        text += " Methods or datasets were added or removed (listed below); that alone does not fail the gate."
    return text


def _rank_table(result):
    rule = ("each comparison's Nemenyi CD in the baseline" if result.rank_threshold is None
            else f"{result.rank_threshold:g} (--rank-threshold)")
    lines = ["### Average ranks that moved", "", f"Threshold: {rule}. A move beyond the CD is statistically "
             "meaningful at the baseline's alpha; moves where methods or datasets changed are not gated."]
    if not result.rank_moves:
        return lines + ["", "No average rank moved."]
    lines += ["", "| comparison | method | old rank | new rank | change | threshold | fails gate | beyond CD |",
              "|---|---|---:|---:|---:|---:|---|---|"]
    for m in result.rank_moves[:SHOWN]:
        gate = "yes" if m.fails else ("no: methods or datasets changed" if m.beyond_threshold else "no")
        lines.append(f"| {markdown_text(m.comparison)} | {markdown_text(m.method)} | {m.old:.2f} | {m.new:.2f} | "
                     f"{m.change:+.2f} | {_number(m.threshold, '.2f')} | {gate} | "
                     f"{'n/a' if m.cd is None else ('yes' if m.beyond_cd else 'no')} |")
    return lines + _rest(len(result.rank_moves), "moved ranks")


def _score_table(result):
    metric = markdown_text(result.metric)
    lines = [f"### {metric} scores beyond the tolerance {result.tolerance:g}", "",
             f"{result.rows_compared} rows in both folders; {result.score_changes_within} changed within the "
             "tolerance. n/a: no value (failed cells or an undefined metric)."]
    if not result.score_moves:
        return lines + ["", "No score moved beyond the tolerance."]
    lines += ["", "| dataset | ratio | size | resampler | learner | old | new | change |",
              "|---|---|---|---|---|---:|---:|---:|"]
    for m in result.score_moves[:SHOWN]:
        cells = " | ".join(markdown_text(v) for v in m.row)
        lines.append(f"| {cells} | {_number(m.old, '.4f')} | {_number(m.new, '.4f')} | {_number(m.change, '+.4f')} |")
    return lines + _rest(len(result.score_moves), "rows beyond the tolerance")


def _rest(total, what):
    return [] if total <= SHOWN else ["", f"... and {total - SHOWN} more {what}."]


def _number(value, spec):
    return "n/a" if value is None else format(value, spec)


def _membership_lines(result):
    lines = ["### Added and removed", "",
             "Methods, datasets and comparisons in only one folder; this alone does not fail the gate."]
    if not (result.added or result.removed):
        return lines + ["", "None: both folders hold the same methods, datasets and comparisons."]
    lines.append("")
    for word, items in (("added", result.added), ("removed", result.removed)):
        for kind in ("dataset", "resampler", "learner", "comparison"):
            names = [markdown_text(name) for k, name in items if k == kind]
            if names:
                lines.append(f"- {kind}s {word}: {'; '.join(names)}")
    return lines


def _runs_table(result):
    rows = [("folder", "folder"), ("suite", "suite"), ("suite fingerprint", "fingerprint"),
            ("lopsided version", "version"), ("finished", "finished")]
    lines = ["### Runs compared", "", "| | baseline | new |", "|---|---|---|"]
    for title, name in rows:
        lines.append(f"| {title} | {markdown_text(getattr(result.baseline, name))} | "
                     f"{markdown_text(getattr(result.new, name))} |")
    return lines


def gate(baseline_dir, new_dir, metric=None, rank_threshold=None, tolerance=DEFAULT_TOLERANCE):
    """Load both folders and compare them -> (GateResult, Markdown summary)."""
    result = diff(load_folder(baseline_dir), load_folder(new_dir), metric, rank_threshold, tolerance)
    return result, render(result)


def write_summary(path, text):
    """The summary into ``path`` (for --out), creating its folder."""
    path = Path(path)
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        path.write_text(text, encoding="utf-8")
    except OSError as exc:
        raise BoardError("--out", path, f"cannot write the summary ({exc.strerror})") from None
