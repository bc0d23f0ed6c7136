"""The leaderboard folder: summary.md (for a pull request), leaderboard.md (the full report), the static site
(index.html and the pages of ``site.pages``, static/), scores.csv, cells.csv (.gz when large), stats.json, manifest.json,
citation.bib and figures/, rebuilt from stored cells alone (no refitting).

What the leaderboard finds is computed in ``findings`` (comparisons, decisions, effects, family checks) and
``answers`` (the per-learner answer); this module runs it on local processes, draws the figures, puts the
words beside the numbers into one ``Board`` record for the templates (the Suite, the RunSummary and the records
they hold travel into it whole), and writes the files. Files are written
into a temporary folder beside the target and moved into place one by one, so a failure never leaves a
half-written file behind.
"""
import json
import os
import re
import shutil
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

import jinja2
import numpy as np
import pandas as pd

from .. import __version__
from ..analysis.cdplot import draw
from ..analysis.compare import MIN_DATASETS
from ..analysis.words import caption, claims, listed
from ..methods.metrics import METRICS, metric_name
from ..options import StatsOptions
from ..planning.suite import Suite
from ..records import RunSummary, point_label
from . import findings
from .answers import THRESHOLD_METHOD, answers, interval_text, signed
from .citations import citation_block
from .curves import learning_curve_figure
from .figures import SPREAD, sweep
from .heatmap import draw_rank_map, ranks_by_dataset
from .pool import local_pool
from .tables import COMBINED, method_matrix, per_dataset_rows, scores_table, with_titles
from .try_findings import TryFindings
from .winners import BAND_NOTE, BANDS, band_specs, winner_rows

GZIP_CELLS_ABOVE = 50_000      # cells; above, cells.csv is written gzip-compressed (keel-all: 50 MB -> 7 MB)
CAUTION = ("Benchmark rankings are research evidence about methods on these datasets. They are not a "
           "validation of any diagnostic, screening or safety method; such use is governed by local "
           "regulation and licensed professional practice.")
ENV = jinja2.Environment(loader=jinja2.PackageLoader("lopsided.report", "templates"),
                         autoescape=jinja2.select_autoescape(["html", "html.j2"]), trim_blocks=True,
                         lstrip_blocks=True)


def prepare():
    """Compile every template now, e.g. while a run's workers compute (``write_report`` then finds them
    compiled: about 0.3 s of jinja2 compilation off the time after the last unit)."""
    for name in ENV.list_templates():
        ENV.get_template(name)


def markdown_text(value):
    """Text safe inside a Markdown table cell: pipes escaped, no raw HTML, one line."""
    text = " ".join(str(value).split())
    return text.replace("\\", "\\\\").replace("|", "\\|").replace("<", "&lt;").replace(">", "&gt;")


ENV.filters["md"] = markdown_text
ENV.filters["metric"] = metric_name
ENV.filters["interval"] = interval_text
ENV.filters["signed"] = signed
ENV.filters["plural"] = lambda n, word, words=None: f"{n} {word if n == 1 else (words or word + 's')}"
ENV.filters["if_none"] = lambda value, text: text if value is None else value


def _slug(*parts):
    """A file-name-safe stem: letters, digits, dot, dash, underscore; parts joined by a dash."""
    return "-".join(re.sub(r"[^A-Za-z0-9._-]+", "_", str(p)).strip("_") for p in parts)


def kept_threshold(cells, suite, primary):
    """{learner: threshold-moving cells at the primary point that kept the learner's own threshold}."""
    label = threshold_label(suite)
    if label is None or primary is None or "warning" not in cells:
        return {}
    at = cells[(cells["resampler"] == label) & (cells["ratio"] == primary.ratio) & (cells["size"] == primary.size)]
    kept = at[at["warning"].fillna("").str.contains("threshold moving: the training part has")]
    return kept.groupby("learner").size().to_dict()


def threshold_label(suite):
    """The label of the suite's threshold-moving baseline, or None."""
    return next((s.title for s in suite.resamplers if s.name == THRESHOLD_METHOD), None)


@dataclass(frozen=True)
class PointPage:
    """One page of comparisons: one metric at one protocol point (all combinations, then each learner)."""

    ratio: str
    size: str
    metric: str
    file: str
    primary: bool           # the primary analysis's metric and point
    studies: tuple

    @property
    def title(self):
        return f"ratio {self.ratio}, size {self.size}"


@dataclass(frozen=True)
class SweepTask:
    """One sweep figure to draw: ``metric`` against ``axis`` ('ratio' or 'size') over the protocol's ``values``
    at the ``fixed`` label of the other axis, into ``stem``.svg and .png (``figures.sweep``)."""

    metric: str
    axis: str
    fixed: str
    values: tuple
    stem: str

    def rows(self, scores):
        """The scores at the fixed value of the other axis (what the figure draws from)."""
        return scores[scores["size" if self.axis == "ratio" else "ratio"] == self.fixed]


@dataclass(frozen=True)
class Sweep:
    """A sweep as the pages show it: the datasets drawn at every point, those left out, and the figure (None:
    no dataset is available at every point)."""

    metric: str
    axis: str
    fixed: str
    datasets: tuple
    left_out: tuple
    figure: str | None


@dataclass
class Board:
    """Everything the pages, leaderboard.md and summary.md show (see ``write_report``): the Suite, the run's
    RunSummary and the statistics options as they came, what the leaderboard finds, and `lopsided try`'s
    TryFindings in its folders."""

    suite: Suite
    summary: RunSummary
    stats: StatsOptions
    primary: findings.PrimaryChoice | None
    studies: list                       # findings.Study, with words (see ``_words``)
    answers: list
    agreement: object
    points: list[PointPage]             # one per metric and protocol point with comparisons
    winners: list
    per_dataset: list
    failures: list
    warnings: list
    citation: str
    scores: pd.DataFrame
    imbalance: dict
    families: dict | None
    rank_map: dict | None = None
    sweeps: list[Sweep] = field(default_factory=list)
    cells: pd.DataFrame | None = None   # every stored cell, methods under their labels
    tryout: TryFindings | None = None
    caution: str = CAUTION
    version: str = __version__
    spread: str = SPREAD
    bands: tuple = tuple(label for _, _, label in BANDS)
    band_note: str = BAND_NOTE
    metric_text: dict = field(default_factory=lambda: {name: m.summary for name, m in METRICS.items()})

    @property
    def control(self):
        return self.suite.control_label

    @property
    def cells_file(self):
        """cells.csv, gzip-compressed above GZIP_CELLS_ABOVE cells (pandas reads either with ``read_csv``)."""
        return "cells.csv.gz" if self.cells is not None and len(self.cells) > GZIP_CELLS_ABOVE else "cells.csv"

    @property
    def design(self):
        return self.suite.protocol.description

    @property
    def design_warning(self):
        return self.suite.protocol.test.warning

    @property
    def skipped(self):
        return self.summary.skipped

    @property
    def leakage(self):
        return self.summary.split_leakage or []

    @property
    def overall(self):
        """The primary analysis's all-combinations study, or None."""
        return next((s for s in self.studies if s.spec.role == "primary" and s.spec.learner is None
                     and s.spec.kind == "point"), None)

    @property
    def learners_study(self):
        return next((s for s in self.studies if s.spec.kind == "learners"), None)

    @property
    def factor_lines(self):
        return factor_lines(self)

    @property
    def metric_lines(self):
        return _metric_lines(self)

    @property
    def short(self):
        """{dataset reference: short display name}."""
        return short_names(self.suite.datasets)

    def page_of(self, study):
        """The comparisons page that holds ``study`` (index.html when none does)."""
        spec = study.spec
        return next((p.file for p in self.points if (p.ratio, p.size, p.metric) == (spec.ratio, spec.size, spec.metric)),
                    "index.html")

    def at(self, ratio, size, metric):
        """The page of ``metric`` at a protocol point, else that point's page of the primary metric, else None."""
        found = {(p.ratio, p.size, p.metric): p for p in self.points}
        fallback = found.get((ratio, size, self.primary.metric)) if self.primary else None
        return found.get((ratio, size, metric)) or fallback

    @property
    def unit(self):
        """What sizes count: 'rows' or 'groups' (donors, specimens, particles)."""
        return self.suite.protocol.counting


def factor_lines(board):
    """Which learner (the learners compared over the resamplers) and which resampler (whether the learners
    agree on the resamplers' order), in sentences."""
    lines = []
    learners = board.learners_study
    if learners is not None and learners.ok:
        result, decision = learners.result, learners.decision
        lead = listed(result.leaders)
        test = (f"the Friedman test rejects (adjusted p = {decision.adjusted:.3g}, exploratory)" if decision.rejects
                else "the Friedman test does not reject after adjustment (exploratory)")
        lines.append(f"Which learner: {lead} {'share' if len(result.leaders) > 1 else 'has'} the best average rank "
                     f"over the resamplers; {test}.")
    concordance = board.agreement.concordance if board.agreement else None
    if concordance is not None:
        alike = "alike" if concordance.w >= 0.7 else "partly alike" if concordance.w >= 0.3 else "differently"
        best = "; ".join(f"{learner}: {listed(leaders)}" for learner, leaders in board.agreement.best_by_learner.items())
        lines.append(f"Which resampler: the learners order the {concordance.objects} resamplers {alike} (Kendall's W = "
                     f"{concordance.w:.2f}; 1 = the same order, 0 = no agreement). A description, not a test: the "
                     f"learners are scored on the same datasets, so they are no independent judges. First by learner: "
                     f"{best}.")
    return lines


def _metric_lines(board):
    """One sentence on how far the metrics order the combinations alike."""
    if not board.agreement or not board.agreement.metric_tau:
        return []
    pairs = sorted(board.agreement.metric_tau.items(), key=lambda item: item[1][0])
    (first, second), (tau, p, n) = pairs[0]
    free = [m for m in board.suite.metrics if m in findings.THRESHOLD_FREE]
    which = (f"the orders by {metric_name(first)} and {metric_name(second)}" if len(pairs) == 1 else
             f"the least alike orders, by {metric_name(first)} and {metric_name(second)},")
    text = f"Metrics: over the {n} combinations, {which} agree with Kendall's tau = {tau:.2f} (1 = the same order)"
    if free and (first in free) != (second in free):
        text += ("; metrics that depend on the decision threshold and those that do not (average precision, ROC "
                 "AUC) can rank the methods differently, so choose by the metric your decision needs")
    return [text + "."]


def per_dataset_tables(suite, scores, imbalance, primary):
    """The primary metric at the primary point, one datasets x resamplers table per learner, best marked."""
    if primary is None:
        return []
    tables = []
    for learner in (s.title for s in suite.learners):
        matrix = method_matrix(scores, primary.metric, primary.ratio, primary.size, learner)
        order = [s.title for s in suite.resamplers if s.title in matrix.columns]
        tables.append({"learner": learner, "metric": primary.metric, "point": f"ratio={primary.ratio}, "
                       f"size={primary.size}", "methods": order, "rows": per_dataset_rows(matrix[order], imbalance)})
    return tables


def _table(study, scores, metrics, letters):
    """Ranked table rows of a point study: rank with interval, group letters and mean +- sd of every metric."""
    result, spec = study.result, study.spec
    rows = scores[(scores["ratio"] == spec.ratio) & (scores["size"] == spec.size)]
    if spec.learner is not None:
        rows = rows[rows["learner"] == spec.learner]
    key = rows["resampler"] if spec.learner is not None else rows["resampler"] + COMBINED + rows["learner"]
    rows = rows[key.isin(result.methods) & rows["dataset"].isin(result.datasets)]
    per_dataset = rows.groupby(key.loc[rows.index])[[f"{m}_mean" for m in metrics if f"{m}_mean" in rows]]
    means, spreads = per_dataset.mean(), per_dataset.std()
    effects = {e.method: e for e in study.effects}
    out = []
    for place, (method, rank) in enumerate(result.average_ranks.items(), start=1):
        low, high = result.rank_intervals.loc[method]
        resampler, _, learner = method.partition(COMBINED)
        out.append({"place": place, "method": method, "rank": rank, "low": low, "high": high,
                    "resampler": resampler, "learner": spec.learner or learner,
                    "means": [means.loc[method].get(f"{m}_mean") for m in metrics],
                    "spreads": [spreads.loc[method].get(f"{m}_mean") for m in metrics],
                    "group": letters.get(method, ""), "effect": effects.get(method),
                    "first": None if result.first_place is None else float(result.first_place.get(method, 0.0))})
    return out


def group_letters(result, decision):
    """{method: letters} of the Nemenyi groups (compact letter display; Piepho 2004, from memory), only when
    the omnibus test rejects after adjustment; {} otherwise (no post-hoc claim)."""
    if not decision.rejects:
        return {}
    methods = result.methods
    grouped = {m for group in result.groups for m in group}
    groups = sorted([*result.groups, *([m] for m in methods if m not in grouped)], key=lambda g: methods.index(g[0]))
    letters = {m: "" for m in methods}
    for i, group in enumerate(groups):
        letter = "abcdefghijklmnopqrstuvwxyz"[i % 26] + (str(i // 26) if i >= 26 else "")
        for method in group:
            letters[method] += letter
    return letters


def family_words(study, survival):
    """One sentence: what the study's claims look like when each dataset family counts once."""
    if survival is None:
        return ""
    if study.family.result is None:
        return f"Family level ({survival.families} families): {survival.note}."
    result = study.family.result
    if not result.claims_allowed:
        return (f"Family level: only {survival.families} families, too few for a significance claim (fewer than "
                f"{MIN_DATASETS}); the dataset-level claims above rest on datasets that are not independent.")
    parts = [f"Family level ({survival.families} families, one mean each): the Friedman test "
             + ("rejects too" if survival.omnibus else "does not reject after adjustment")]
    if survival.leader_kept:
        parts.append(f"the leader stays {listed(result.leaders)}")
    else:
        parts.append(f"the leader becomes {result.leaders[0]}" if len(result.leaders) == 1 else
                     f"the lead becomes a tie between {listed(result.leaders)}")
    for claims_of, what in ((survival.separated, f"separated from {study.result.methods[0]} by the Nemenyi test"),
                            (survival.control, f"different from the control {study.result.control}")):
        if claims_of:
            lost = [m for m, held in claims_of.items() if not held]
            if len(claims_of) == 1:
                parts.append(f"the one method {what}, {next(iter(claims_of))}, "
                             + ("does not stay so" if lost else "stays so"))
            else:
                parts.append(f"of the {len(claims_of)} methods {what}, {len(claims_of) - len(lost)} stay so"
                             + (f"; not: {listed(lost)}" if lost else ""))
    return "; ".join(parts) + "."


def _words(studies, scores, metrics):
    """Claims, caption, table and family sentence for every study (set on the Study)."""
    for study in studies:
        if not study.ok:
            continue
        spec, result = study.spec, study.result
        where = f"{metric_name(spec.metric)}, training ratio {spec.ratio}, size {spec.size}, {spec.view}"
        study.claims = claims(result, study.decision, study.against_control or None)
        study.caption = caption(result, where, study.decision)
        study.survival = findings.survival(study)
        study.family_words = family_words(study, study.survival)
        study.table = _table(study, scores, metrics, group_letters(result, study.decision)) if spec.kind != "learners" \
            else _table_learners(study)


def _table_learners(study):
    result = study.result
    effects = {e.method: e for e in study.effects}
    return [{"place": i, "method": m, "rank": r, "low": result.rank_intervals.loc[m, "low"],
             "high": result.rank_intervals.loc[m, "high"], "effect": effects.get(m), "group": "", "means": [],
             "spreads": [], "resampler": "", "learner": m,
             "first": float(result.first_place.get(m, 0.0))}
            for i, (m, r) in enumerate(result.average_ranks.items(), start=1)]


def _figures(studies, figures_dir, submit):
    """CD plots of every point study: Nemenyi bars only where the omnibus test rejects after adjustment."""
    jobs = []
    for study in studies:
        if not study.ok or study.spec.kind not in ("point", "learners"):
            continue
        spec = study.spec
        stem = figures_dir / _slug("cd", spec.metric, spec.ratio, spec.size, spec.learner or spec.kind)
        title = f"{metric_name(spec.metric)} at {spec.point}: {spec.view}"
        adjusted = study.decision.adjusted
        note = None if adjusted is None else (f"the Friedman test rejects (adjusted p = {adjusted:.2g})"
                                              if study.decision.rejects else
                                              f"the Friedman test does not reject (adjusted p = {adjusted:.2g}): no bars")
        jobs.append(submit(draw, study.result, str(stem), title, study.decision.rejects, note))
        study.figure = f"figures/{stem.name}.svg"
    for job in jobs:
        job.result()


def point_pages(studies, primary):
    """One page per metric and protocol point with at least one comparison made: the primary analysis's first,
    then the other metrics at its point, then the other points (a point where every comparison was refused, e.g.
    one complete dataset, has no page; leaderboard.md keeps the reason)."""
    made = {(s.spec.ratio, s.spec.size, s.spec.metric) for s in studies if s.spec.kind == "point" and s.ok}
    pages: dict[tuple[str, str, str], list] = {}
    for study in studies:
        if study.spec.kind == "point" and (study.spec.ratio, study.spec.size, study.spec.metric) in made:
            pages.setdefault((study.spec.ratio, study.spec.size, study.spec.metric), []).append(study)
    at_primary = (primary.ratio, primary.size)
    order = sorted(pages, key=lambda k: ((k[0], k[1]) != at_primary, k[2] != primary.metric))
    return [PointPage(r, s, m, f"point-{_slug(r, s, m)}.html", (r, s, m) == (*at_primary, primary.metric),
                  tuple(pages[(r, s, m)])) for r, s, m in order]


def _rank_map(scores, imbalance, figures_dir, primary, names):
    """The rank map of the primary metric over all combinations at the primary point, or None.

    Rows: datasets by natural imbalance ratio, named by their short names; columns: combinations by mean rank."""
    if primary is None:
        return None
    ratio, size, metric = primary.ratio, primary.size, primary.metric
    ranks = ranks_by_dataset(method_matrix(scores, metric, ratio, size))
    ranks = ranks.loc[sorted(ranks.index, key=lambda d: (imbalance.get(d, float("inf")), d)),
                      ranks.mean(axis=0).sort_values(kind="mergesort").index]
    labels = [f"{names.get(d, d)} (IR {imbalance[d]:.1f})" if d in imbalance else names.get(d, d) for d in ranks.index]
    point = f"ratio {ratio}, size {size}"
    stem = figures_dir / _slug("ranks", metric, ratio, size)
    draw_rank_map(ranks, labels, str(stem), f"Rank of {metric_name(metric)} on each dataset at {point} (1 = best)")
    return {"figure": f"figures/{stem.name}.svg", "metric": metric, "point": point,
            "missing": int(ranks.isna().to_numpy().sum()), "shape": ranks.shape}


SWEEP_METRICS = ("sensitivity", "specificity")   # recall of the minority class and of the rest


def sweep_tasks(suite, scores, figures_dir):
    """Every suite metric, then minority and majority recall, against ratio and against size, at each value of
    the other axis that has scores: one SweepTask per figure."""
    tasks = []
    metrics = list(dict.fromkeys([*suite.metrics, *SWEEP_METRICS]))
    protocol = suite.protocol
    for axis, values, others in (("ratio", protocol.ratios, protocol.sizes), ("size", protocol.sizes, protocol.ratios)):
        if len(values) < 2:
            continue
        tasks += [SweepTask(metric, axis, fixed, tuple(values), str(figures_dir / _slug("sweep", metric, axis, fixed)))
                  for fixed in map(point_label, others) for metric in metrics if f"{metric}_mean" in scores.columns]
    return tasks


def draw_sweep(task, rows, order):
    """``figures.sweep`` of one SweepTask on its ``rows`` (``task.rows``), resamplers in ``order`` -> Sweep, or
    None when it drew nothing."""
    drawn = sweep(rows, task.metric, task.axis, task.fixed, list(task.values), order, task.stem)
    if drawn is None:
        return None
    return Sweep(task.metric, task.axis, task.fixed, tuple(drawn["datasets"]), tuple(drawn["left_out"]),
                 f"figures/{Path(drawn['paths'][0]).name}" if drawn["paths"] else None)


def leakage_rows(grouped_cells, random_cells, suite):
    """Headline metric per dataset and learner under the grouped split and with groups ignored, with the
    difference's fold-level interval (``split_difference``): an interval that holds zero is within the noise of
    the folds, not optimism. Averaged over resamplers per (repeat, fold) at the first protocol point."""
    metric = suite.headline
    titles = suite.titles
    first = suite.protocol.points[0]
    label = (point_label(first[0]), point_label(first[1]))
    rows = []
    grouped, leaky = (with_titles(c[c["status"] == "ok"], titles) for c in (grouped_cells, random_cells))
    at = {name: part[(part["ratio"] == label[0]) & (part["size"] == label[1])] for name, part in
          (("grouped", grouped), ("random", leaky))}
    for (dataset, learner), part in at["random"].groupby(["dataset", "learner"], sort=True):
        honest = at["grouped"][(at["grouped"]["dataset"] == dataset) & (at["grouped"]["learner"] == learner)]
        if part.empty or honest.empty:
            continue
        grouped_folds = honest.groupby(["repeat", "fold"])[metric].mean().to_numpy()
        random_folds = part.groupby(["repeat", "fold"])[metric].mean().to_numpy()
        interval = split_difference(random_folds, grouped_folds, float(honest["n_train"].mean()),
                                    float(honest["n_test"].mean()))
        within = interval.low is not None and interval.low <= 0 <= interval.high
        rows.append({"dataset": dataset, "learner": learner, "metric": metric,
                     "grouped": float(honest[metric].mean()), "random": float(part[metric].mean()),
                     "inflation": interval.mean, "low": interval.low, "high": interval.high, "folds": interval.n,
                     "reading": "within noise" if within or interval.low is None else
                                ("optimism" if interval.low > 0 else "pessimism")})
    return rows


def split_difference(first, second, n_train, n_test, level=0.95):
    """Mean of ``first`` minus mean of ``second``, two cross-validations of the same data on different
    partitions (their folds are not paired), with an approximate interval: each mean's variance corrected for
    overlapping training parts as in Nadeau & Bengio (2003), (1/n + n_test/n_train) s^2, the two added, t with
    n - 1 degrees of freedom of the smaller side (conservative)."""
    from scipy import stats

    from ..analysis.effects import Interval
    first, second = np.asarray(first, dtype=float), np.asarray(second, dtype=float)
    mean = float(first.mean() - second.mean())
    n = min(len(first), len(second))
    if n < 2:
        return Interval(mean, None, None, n, "fewer than 2 folds: no interval")
    spread = sum((1 / len(x) + n_test / n_train) * x.var(ddof=1) for x in (first, second))
    half = stats.t.ppf(0.5 + level / 2, n - 1) * np.sqrt(spread)
    return Interval(mean, float(mean - half), float(mean + half), n)


def short_names(datasets):
    """{reference: short display name}: the part before '?' when that is unique, else the reference."""
    heads = [d.split("?")[0] for d in datasets]
    return {d: (h if heads.count(h) == 1 else d) for d, h in zip(datasets, heads)}


def make_board(suite, cells, summary, figures, stats=StatsOptions(), tryout=None):
    """Everything the leaderboard shows for ``suite`` (a Suite) from its stored ``cells`` and its run's
    ``summary`` (RunSummary), as a Board; CD plots, sweeps and the rank map are drawn into the folder ``figures``
    (the board links them as figures/NAME). Comparisons and figures run on local processes (``pool.local_pool``)."""
    titled = with_titles(cells, suite.titles)
    scores = scores_table(titled)
    imbalance = {d.reference: d.imbalance_ratio for d in summary.datasets}
    families = findings.families_of(summary.datasets)
    control, primary = suite.control_label, findings.primary_point(suite, scores)
    specs = [] if primary is None else findings.plan(suite, scores, primary, band_specs(suite.protocol, scores, primary))
    order = [s.title for s in suite.resamplers]
    with local_pool() as submit:
        sweeps = [submit(draw_sweep, task, task.rows(scores), order) for task in sweep_tasks(suite, scores, figures)]
        rank_map = submit(_rank_map, scores, imbalance, figures, primary, short_names(suite.datasets))
        numbers = [submit(findings.compute, spec, findings.matrix_of(spec, scores, suite, imbalance), families,
                          stats, control if spec.learner is not None and spec.kind == "point" else None,
                          control if spec.kind != "learners" else None)
                   for spec in specs]
        studies = []
        for spec, job in zip(specs, numbers):
            result, note, effects, reference, family = job.result()
            studies.append(findings.Study(spec, result, note, reference, effects, family))
        findings.with_decisions(studies, stats.alpha)
        _figures(studies, figures, submit)
        drawn_sweeps = [drawn for drawn in (job.result() for job in sweeps) if drawn is not None]
        drawn_map = rank_map.result()
    _words(studies, scores, suite.metrics)
    for study in studies:
        if study.ok and study.spec.role == "primary" and study.spec.learner is not None and control:
            study.per_dataset = findings.fold_intervals(titled, study, study.spec.metric, control)
    found = answers(studies, primary, findings.survival, threshold_label(suite), families,
                    kept_threshold(titled, suite, primary)) if primary else []
    return Board(
        suite=suite, summary=summary, stats=stats, primary=primary, studies=studies, answers=found,
        agreement=findings.agreement(studies, primary, suite.metrics) if primary else None,
        points=point_pages(studies, primary) if primary else [],
        winners=winner_rows(studies, suite.protocol, primary) if primary else [],
        per_dataset=per_dataset_tables(suite, scores, imbalance, primary),
        failures=_notes(titled, "error"), warnings=_notes(titled, "warning"),
        citation=citation_block(suite, summary).text(), scores=scores, imbalance=imbalance, families=families,
        rank_map=drawn_map, sweeps=drawn_sweeps, cells=titled, tryout=tryout)


def write_report(out, suite, cells, summary, stats=StatsOptions(), tryout=None):
    """Write the leaderboard folder for ``suite`` (a Suite) from its stored ``cells`` and its run's ``summary``
    (RunSummary): the Board (``make_board``) as summary.md, leaderboard.md and the site, and the data files;
    ``tryout`` (TryFindings of `lopsided try`) adds its page, its learning-curve figures and its manifest sections.
    """
    from .site import write_site
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=".report-", dir=out))
    try:
        figures = staging / "figures"
        figures.mkdir()
        for curve in tryout.fitted_curves if tryout else ():
            learning_curve_figure(curve, staging / curve.figure)
        board = make_board(suite, cells, summary, figures, stats, tryout)
        for name in ("summary.md", "leaderboard.md"):
            (staging / name).write_text(ENV.get_template(f"{name}.j2").render(b=board), encoding="utf-8")
        write_site(ENV, staging, board)
        # 8 significant digits in the CSV files (the store keeps full precision; the statistics use these)
        board.scores.to_csv(staging / "scores.csv", index=False, float_format="%.8g")
        board.cells.sort_values(["dataset", "ratio", "size", "repeat", "fold", "resampler", "learner"]).to_csv(
            staging / board.cells_file, index=False, float_format="%.8g")
        (staging / "stats.json").write_text(json.dumps(stats_json(board), indent=1, allow_nan=False),
                                            encoding="utf-8")
        manifest = summary.as_json() | (tryout.manifest_sections() if tryout else {})
        (staging / "manifest.json").write_text(json.dumps(manifest, indent=1, default=str, allow_nan=False),
                                               encoding="utf-8")
        (staging / "citation.bib").write_text(board.citation, encoding="utf-8")
        produced = {item.name for item in staging.iterdir()}
        _move_into_place(staging, out)
        _remove_stale_pages(out, produced)
    finally:
        shutil.rmtree(staging, ignore_errors=True)
    return out


def stats_json(board):
    """Every statistic of the board: the primary analysis, each comparison with its decision and effects, the
    band / learner comparisons, the per-learner answers, the agreement measures."""
    from ..analysis.compare import _finite
    point, bands, learners = [], [], []
    for study in board.studies:
        item = _study_json(study)
        if study.spec.kind == "point":
            point.append(item)
        elif study.spec.kind == "band":
            bands.append(item)
        else:
            learners.append(item)
    primary = board.primary
    agreement = board.agreement
    return _finite({
        "primary": None if primary is None else {"metric": primary.metric, "ratio": primary.ratio,
                                                 "size": primary.size, "reason": primary.reason},
        "tests": {"primary": sum(1 for s in board.studies if s.decision and s.decision.role == "primary"
                                 and s.decision.claims_allowed),
                  "run": sum(1 for s in board.studies if s.decision and s.decision.claims_allowed),
                  "alpha": board.stats.alpha, "adjustment": "Holm (claims); Benjamini-Hochberg beside it"},
        "comparisons": point, "bands": bands, "learners": learners,
        "answers": [a.as_json() for a in board.answers],
        "agreement": None if agreement is None else {
            "kendall_w": None if agreement.concordance is None else {
                **agreement.concordance.__dict__, "note": "a description: the chi-square p assumes independent judges, "
                "and the learners share their datasets, so no claim rests on it"},
            "resamplers": list(agreement.resamplers), "best_by_learner": agreement.best_by_learner,
            "metric_tau": [{"metrics": list(k), "tau": v[0], "p": v[1], "methods": v[2]}
                           for k, v in agreement.metric_tau.items()]},
    })


def _study_json(study):
    spec = study.spec
    head = {"metric": spec.metric, "ratio": spec.ratio, "size": spec.size,
            "view": {"point": "all" if spec.learner is None else "learner", "band": "band",
                     "learners": "learners"}[spec.kind], "learner": spec.learner, "label": spec.label}
    if not study.ok:
        return {**head, "note": study.note}
    item = {**head, **study.result.as_json(), "decision": {**study.result.as_json()["decision"],
                                                           **study.decision.as_json()},
            "effects": {"reference": study.reference, "items": [e.as_json() for e in study.effects]}}
    if study.family is not None:
        family = study.family
        item["families"] = {"n": family.families, "note": family.note,
                            "average_ranks": None if family.result is None else
                            {m: float(r) for m, r in family.result.average_ranks.items()},
                            "decision": None if family.decision is None else family.decision.as_json(),
                            "survives": None if study.survival is None else {
                                "omnibus": study.survival.omnibus, "leader": study.survival.leader_kept,
                                "against_control": study.survival.control, "separated_from_best": study.survival.separated}}
    if study.per_dataset:
        item["fold_intervals"] = {m: [{"dataset": d, "mean": i.mean, "low": i.low, "high": i.high, "folds": i.n}
                                      for d, i in rows] for m, rows in study.per_dataset.items()}
    return item


def _notes(cells, column):
    """Cells with text in ``column`` ('error' or 'warning'), grouped by method, with the first text."""
    if column not in cells.columns:
        return []
    noted = cells[cells[column].notna()]
    grouped = noted.groupby(["resampler", "learner"], sort=True)
    return [{"resampler": r, "learner": learner, "cells": len(g), "text": g[column].iloc[0]}
            for (r, learner), g in grouped]


def _remove_stale_pages(out, produced):
    """Pages of an earlier report of ours that this one no longer has (a protocol point or a page that went),
    and the cells file in the form this report did not write: only our own pages (they link static/site.css)
    are removed; any other file stays."""
    for page in out.glob("*.html"):
        if page.name not in produced and 'href="static/site.css"' in page.read_text(encoding="utf-8", errors="replace"):
            page.unlink()
    for name in {"cells.csv", "cells.csv.gz"} - produced:      # the cells went from one form to the other
        (out / name).unlink(missing_ok=True)


def _move_into_place(staging, out):
    for item in staging.iterdir():
        if item.is_dir() and (out / item.name).exists():
            shutil.rmtree(out / item.name)
        os.replace(item, out / item.name)
