"""`lopsided try`: one precious dataset against the best combinations of a stored leaderboard.

Runs the top combinations of a suite's leaderboard (or the ones named) plus no resampling on the
user's dataset with the suite's protocol (grouped folds when the data have groups), then answers:
which combination to use here and whether the winner is really better (corrected resampled t-test,
Nadeau & Bengio 2003; Bayesian correlated t-test, Corani & Benavoli 2015), which benchmark datasets
are like this one and what won there (data-complexity meta-features, Ho & Basu 2002), and, from a
training-size sweep, how many minority samples a target needs (inverse power law learning curves,
Figueroa et al. 2012). Research evidence about this dataset, not a validated sample-size calculation.
"""
from __future__ import annotations

import json
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..analysis import AnalysisError
from ..analysis.complexity import nearest_datasets
from ..analysis.learning_curve import bootstrap_curve, needed_size
from ..analysis.single_dataset import compare_to_best, read_best_comparison
from ..datasets import load_dataset
from ..errors import BoardError, LopsidedError, UsageError
from ..methods.metrics import METRICS
from ..options import RunOptions, TryOptions
from ..planning.suite import load_suite, suite_from_dict
from ..records import DatasetDescription
from ..report import write_report
from ..report.tables import COMBINED, with_titles
from ..report.try_findings import LearningCurve, Neighbour, TryFindings
from ..specs import MethodSpec
from .run import RunResult, overlap, run_suite

BASELINE = "none"


@dataclass(frozen=True)
class TryResult:
    out: Path
    run: RunResult
    findings: TryFindings

    @property
    def verdict(self):
        return self.findings.verdict


def parse_targets(texts) -> dict[str, float]:
    """['sensitivity=0.9'] -> {'sensitivity': 0.9}, each metric known and each target in (0, 1]."""
    targets = {}
    for text in texts:
        metric, sep, value = text.partition("=")
        metric = metric.strip()
        if not sep or metric not in METRICS:
            raise UsageError("--target", text, "write METRIC=VALUE with a known metric, e.g. sensitivity=0.9; "
                             f"metrics: {', '.join(METRICS)}")
        try:
            targets[metric] = float(value)
        except ValueError:
            raise UsageError("--target", text, f"{value!r} is not a number") from None
        if not 0 < targets[metric] <= 1:
            raise UsageError("--target", text, "the target must lie in (0, 1]")
    return targets


def top_combinations(board: Path, metric: str, top: int) -> list[str]:
    """The ``top`` best 'resampler + learner' labels of a leaderboard folder's headline comparison."""
    path = board / "stats.json"
    if not path.is_file():
        raise BoardError(path, "file", "no leaderboard here; run the suite first or name combinations with --with")
    comparisons = json.loads(path.read_text(encoding="utf-8")).get("comparisons", [])
    view = next((c for c in comparisons if c["view"] == "all" and c["metric"] == metric), None)
    if view is None:
        raise BoardError(path, "comparisons", f"no all-combinations comparison of {metric}; name combinations "
                         "with --with")
    return list(view["average_ranks"])[:top]


def _split(label, resamplers, learners, where):
    """'smote + random-forest' -> (resampler spec, learner spec) from the suite's labels."""
    resampler, sep, learner = label.partition("+")
    resampler, learner = resampler.strip(), learner.strip()
    if not sep or resampler not in resamplers or learner not in learners:
        raise UsageError(where, label, "write RESAMPLER + LEARNER with labels of the suite; resamplers: "
                         f"{', '.join(resamplers)}; learners: {', '.join(learners)}")
    return resamplers[resampler], learners[learner]


def try_suite(reference, base, combos, options, count):
    """A suite for one dataset: the combinations' resamplers (no resampling first) x their learners, with the
    sizes, repeats, folds and test design of ``options`` (TryOptions) and sizes counting ``count``."""
    resamplers = {s.title: s for s in base.resamplers}
    resamplers.setdefault(BASELINE, MethodSpec(BASELINE))
    learners = {s.title: s for s in base.learners}
    pairs = [_split(label, resamplers, learners, "--with") for label in combos]
    chosen_r = [resamplers[BASELINE]] + [r for r, _ in pairs if r.title != BASELINE]
    chosen_l = [learner for _, learner in pairs]
    metrics = list(dict.fromkeys([*base.metrics, *options.targets, "sensitivity"]))
    slug = re.sub(r"[^A-Za-z0-9]+", "-", reference).strip("-")[:60]
    raw = {
        "name": f"try-{slug}", "seed": base.seed, "datasets": [reference],
        "description": f"{reference} against the top combinations of the suite {base.name!r}",
        "resamplers": [s.as_json() for s in dict.fromkeys(chosen_r)],
        "learners": [s.as_json() for s in dict.fromkeys(chosen_l)],
        "preprocessing": [s.as_json() for s in base.preprocessing], "metrics": metrics,
        "protocol": {"repeats": options.repeats or base.protocol.repeats, "folds": options.folds or base.protocol.folds,
                     "ratios": ["natural"], "sizes": list(options.sizes or ["all"]),
                     "min_minority": base.protocol.min_minority, "test": options.test, "counting": count},
        "control": BASELINE,
    }
    return suite_from_dict(raw, source="lopsided try"), [f"{r.title}{COMBINED}{learner.title}" for r, learner in pairs]


def try_dataset(reference: str, options: TryOptions = TryOptions()) -> TryResult:
    """Run ``reference`` against a stored leaderboard's best combinations and write a verdict-led folder.

    Parameters
    ----------
    reference : str
        The user's dataset reference (e.g. ``file:films.csv?label=status&group=donor``).
    options : TryOptions
        The benchmark suite whose leaderboard (``board``, default its results folder) names the candidates;
        ``top`` of its best combinations (or the ``combos`` named, 'RESAMPLER + LEARNER'); learning-curve
        ``targets`` {metric: score} over training ``sizes`` (nested subsets, e.g. (40, 80, 160, "all"); at
        least 3); the ``test`` design: "folds" (repeated k-fold, default), "fixed", "column:NAME=VALUE" or an
        external dataset reference. With one test part for every repeat, no test treats the repeats as
        independent.

    Returns
    -------
    TryResult
        The folder written, the run, and what was found (TryFindings, with the verdict sentences).
    """
    base = load_suite(options.suite)
    if not isinstance(options.top, int) or options.top < 1:
        raise UsageError("--top", str(options.top), "give a whole number >= 1")
    board = Path(options.board) if options.board else (base.path(base.out) or Path("results") / base.name)
    labels = list(options.combos) or top_combinations(board, base.headline, options.top)
    data = load_dataset(reference)
    count = options.count or ("groups" if data.groups is not None else "rows")
    suite, wanted = try_suite(reference, base, labels, options, count)
    result = run_suite(suite, RunOptions(out=options.out or Path("results") / suite.name, command=options.command,
                                         execution=options.execution, stats=options.stats))
    cells = with_titles(result.cells[result.cells["status"] == "ok"], suite.titles)
    cells = cells.assign(method=cells["resampler"] + COMBINED + cells["learner"])
    keep = set(wanted) | {f"{BASELINE}{COMBINED}{s.title}" for s in suite.learners}
    cells = cells[cells["method"].isin(keep)]
    curves, curve_note = _curves(cells, options.targets, _rows_per_minority_group(data), count)
    findings = TryFindings(reference=reference, suite=base.name, board=str(board), wanted=tuple(wanted),
                           rope=options.stats.rope, count=count, curves=curves, curve_note=curve_note,
                           **_head_to_head(cells, suite, options.stats), **_neighbours(data, board, base.headline))
    write_report(result.out, suite, result.cells, result.summary, options.stats, findings)
    return TryResult(result.out, result, findings)


def _largest_point(cells):
    """Fold scores at the largest training size of the natural ratio ('all' if present)."""
    sizes = list(dict.fromkeys(cells["size"]))
    size = "all" if "all" in sizes else max(sizes, key=float)
    return cells[cells["size"] == size], size


def _head_to_head(cells, suite, stats):
    """The verdict, and each combination against the best at the largest training size: {verdict, table,
    metric, size, best} (the verdict alone when fewer than two combinations can be compared)."""
    at, size = _largest_point(cells)
    metric = suite.headline
    if suite.protocol.test.shared_test:
        return _fixed_test_summary(at, size, metric, suite.protocol.test.text)
    folds = at.pivot_table(index="method", columns=["repeat", "fold"], values=metric, aggfunc="first")
    folds = folds.dropna(axis=0, how="any")
    if len(folds) < 2:
        return {"verdict": (f"Fewer than two combinations have every fold scored at size {size}: no comparison.",)}
    comparison = compare_to_best(folds, float(at["n_train"].mean()), float(at["n_test"].mean()), stats.rope,
                                 stats.alpha)
    reading = read_best_comparison(comparison)
    table = comparison.as_frame().replace({np.nan: None}).to_dict(orient="records")
    lines = [f"On this dataset ({metric}, training size {size}, {comparison.n_folds} folds):", *reading.sentences]
    if len(at["repeat"].unique()) > 1 and len(at["fold"].unique()) > 1:
        lines.insert(1, "Fold results of repeated cross-validation overlap in training data, so both tests correct for "
                        "their correlation (Nadeau & Bengio 2003; Corani & Benavoli 2015).")
    return {"verdict": tuple(lines), "table": tuple(table), "metric": metric, "size": size, "best": comparison.best}


def _fixed_test_summary(at, size, metric, design):
    """One test part for every repeat: means and spread over repeats, no significance test (the repeats share
    their test rows, so they are not independent replications)."""
    means = at.groupby(["method", "repeat"])[metric].mean().groupby("method").agg(["mean", "std", "count"])
    means = means.sort_values("mean", ascending=False)
    best = str(means.index[0])
    table = tuple({"method": str(m), "mean": float(r["mean"]), "minus_best": None if m == best else
                   float(r["mean"] - means["mean"].iloc[0]), "t": None, "p": None, "p_best_better": None,
                   "p_equivalent": None, "p_method_better": None} for m, r in means.iterrows())
    lines = (f"On this dataset ({metric}, training size {size}, test design {design}): {best} has the best mean "
             f"({means['mean'].iloc[0]:.4g}) over {int(means['count'].iloc[0])} repeats.",
             "Every repeat is scored on the same test rows, so the repeats are not independent replications: the "
             "spread between repeats reflects training-sample variability only, and no significance test is made "
             "across them. Compare on the repeated k-fold design (the default) for tests of the difference.",
             "These statements are about this one dataset: research evidence, not validation of a diagnostic or "
             "safety method.")
    return {"verdict": lines, "table": table, "metric": metric, "size": size, "best": best}


def _neighbours(data, board, metric, k=3):
    """This dataset's meta-features and the benchmark datasets most like it, with what won on each: {meta,
    neighbours, neighbour_note (only when there are none)}."""
    shown = {key: data.meta()[key] for key in ("n", "d", "minority_count", "imbalance_ratio", "groups")}
    shown.update(overlap(data))
    mine = {**shown, "f1": float("inf") if shown["f1_separable"] else shown["f1"]}
    manifest_path, scores_path = board / "manifest.json", board / "scores.csv"
    if not manifest_path.is_file() or not scores_path.is_file():
        return {"meta": shown, "neighbour_note": f"no leaderboard at {board} to compare with"}
    described = [DatasetDescription.from_json(d) for d in json.loads(manifest_path.read_text(encoding="utf-8"))["datasets"]]
    others = {d.reference: {**d.as_json(), "f1": float("inf") if d.f1_separable else d.f1} for d in described
              if (d.f1 is not None or d.f1_separable) and d.n1 is not None}
    if len(others) < 1:
        return {"meta": shown, "neighbour_note": "the leaderboard records no F1 / N1 meta-features; rebuild it with "
                "this lopsided version"}
    scores = pd.read_csv(scores_path)
    first = scores[(scores["ratio"] == scores["ratio"].iloc[0]) & (scores["size"] == scores["size"].iloc[0])]
    rows = []
    for near in nearest_datasets(mine, others, k=min(k, len(others))):
        here = first[first["dataset"] == near.name].dropna(subset=[f"{metric}_mean"])
        best = here.sort_values(f"{metric}_mean", ascending=False).head(1)
        rows.append(Neighbour(near.name, near.distance, others[near.name]["imbalance_ratio"],
                              (best["resampler"] + COMBINED + best["learner"]).iloc[0] if len(best) else None,
                              float(best[f"{metric}_mean"].iloc[0]) if len(best) else None))
    return {"meta": shown, "neighbours": tuple(rows)}


def _rows_per_minority_group(data):
    """Spectra per donor / particle in the minority class (None without groups): turns a needed number of
    minority spectra into a number of minority donors to collect."""
    if data.groups is None:
        return None
    rows = data.y == data.minority
    return float(rows.sum() / len(np.unique(np.asarray(data.groups)[rows])))


def _curves(cells, targets, per_group=None, count="rows"):
    """Per target metric and method: the LearningCurve over minority training counts, with the needed count;
    returns (curves, note), the note saying why there are none when the sizes cannot give a curve.

    ``count="groups"``: the curve runs over minority donors / particles (measured, cell by cell) and the answer
    is a number of minority groups, also given in spectra (groups x ``per_group``, the minority rows per group);
    ``count="rows"``: over minority rows, also given in groups (rows / ``per_group``) when the data have groups."""
    if not targets:
        return (), ""
    if len(set(cells["size"])) < 3:
        return (), "a learning curve needs at least 3 training sizes: give --sizes, e.g. --sizes 20,40,80,all"
    found = []
    for metric, target in targets.items():
        for method, part in cells.groupby("method", sort=True):
            table = part.groupby(["size", "repeat"])[metric].mean().unstack("repeat")
            counts = part.groupby("size")["n_train_minority_groups" if count == "groups" else "n_train_minority"].mean()
            table.index = [float(counts[s]) for s in table.index]
            table = table.sort_index()
            try:
                model = bootstrap_curve(table.dropna(axis=1), draws=1000, seed=0)
            except (AnalysisError, LopsidedError) as exc:
                found.append(LearningCurve(method, metric, target, count, failure=str(exc)))
                continue
            need = needed_size(model, target)
            grid = np.geomspace(table.index[0], max(table.index[-1], need.size or 0) * 1.2, 60)
            low, high = model.band(grid)
            found.append(LearningCurve(method, metric, target, count, model.fit, need, tuple(grid.tolist()),
                                       (tuple(low.tolist()), tuple(high.tolist())),
                                       {float(k): [float(v) for v in row] for k, row in table.iterrows()}, per_group))
    return tuple(found), ""
