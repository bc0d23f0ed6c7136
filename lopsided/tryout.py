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
from dataclasses import dataclass, replace
from pathlib import Path

import numpy as np
import pandas as pd

from .analysis import AnalysisError
from .analysis.complexity import nearest_datasets
from .analysis.learning_curve import bootstrap_curve, needed_size
from .analysis.single_dataset import compare_to_best, verdict
from .benchmark import RunResult, overlap, run_suite
from .datasets import load_dataset
from .errors import LopsidedError, SuiteError
from .metrics import METRICS
from .report import write_report
from .report.curves import learning_curve_figure
from .report.tables import COMBINED, with_titles
from .specs import MethodSpec
from .suite import load_suite, spec_dict, suite_from_dict

BASELINE = "none"


@dataclass(frozen=True)
class TryResult:
    out: Path
    run: RunResult
    verdict: tuple[str, ...]


def parse_targets(texts) -> dict[str, float]:
    """['sensitivity=0.9'] -> {'sensitivity': 0.9}, each metric known and each target in (0, 1]."""
    targets = {}
    for text in texts:
        metric, sep, value = text.partition("=")
        metric = metric.strip()
        if not sep or metric not in METRICS:
            raise SuiteError("--target", text, "write METRIC=VALUE with a known metric, e.g. sensitivity=0.9; "
                             f"metrics: {', '.join(METRICS)}")
        try:
            targets[metric] = float(value)
        except ValueError:
            raise SuiteError("--target", text, f"{value!r} is not a number") from None
        if not 0 < targets[metric] <= 1:
            raise SuiteError("--target", text, "the target must lie in (0, 1]")
    return targets


def top_combinations(board: Path, metric: str, top: int) -> list[str]:
    """The ``top`` best 'resampler + learner' labels of a leaderboard folder's headline comparison."""
    path = board / "stats.json"
    if not path.is_file():
        raise SuiteError(path, "file", "no leaderboard here; run the suite first or name combinations with --with")
    comparisons = json.loads(path.read_text(encoding="utf-8")).get("comparisons", [])
    view = next((c for c in comparisons if c["view"] == "all" and c["metric"] == metric), None)
    if view is None:
        raise SuiteError(path, "comparisons", f"no all-combinations comparison of {metric}; name combinations "
                         "with --with")
    return list(view["average_ranks"])[:top]


def _split(label, resamplers, learners, where):
    """'smote + random-forest' -> (resampler spec, learner spec) from the suite's labels."""
    resampler, sep, learner = label.partition("+")
    resampler, learner = resampler.strip(), learner.strip()
    if not sep or resampler not in resamplers or learner not in learners:
        raise SuiteError(where, label, "write RESAMPLER + LEARNER with labels of the suite; resamplers: "
                         f"{', '.join(resamplers)}; learners: {', '.join(learners)}")
    return resamplers[resampler], learners[learner]


def try_suite(reference, base, combos, targets, sizes=None, repeats=None, folds=None, test="folds"):
    """A suite for one dataset: the combinations' resamplers (no resampling first) x their learners."""
    resamplers = {s.title: s for s in base.resamplers}
    resamplers.setdefault(BASELINE, MethodSpec(BASELINE))
    learners = {s.title: s for s in base.learners}
    pairs = [_split(label, resamplers, learners, "--with") for label in combos]
    chosen_r = [resamplers[BASELINE]] + [r for r, _ in pairs if r.title != BASELINE]
    chosen_l = [learner for _, learner in pairs]
    metrics = list(dict.fromkeys([*base.metrics, *targets, "sensitivity"]))
    slug = re.sub(r"[^A-Za-z0-9]+", "-", reference).strip("-")[:60]
    raw = {
        "name": f"try-{slug}", "seed": base.seed, "datasets": [reference],
        "description": f"{reference} against the top combinations of the suite {base.name!r}",
        "resamplers": [spec_dict(s) for s in dict.fromkeys(chosen_r)],
        "learners": [spec_dict(s) for s in dict.fromkeys(chosen_l)],
        "preprocessing": [spec_dict(s) for s in base.preprocessing], "metrics": metrics,
        "protocol": {"repeats": repeats or base.protocol.repeats, "folds": folds or base.protocol.folds,
                     "ratios": ["natural"], "sizes": sizes or ["all"], "min_minority": base.protocol.min_minority,
                     "test": test},
        "control": BASELINE,
    }
    return suite_from_dict(raw, source="lopsided try"), [f"{r.title}{COMBINED}{learner.title}" for r, learner in pairs]


def try_dataset(reference: str, suite_path: str | Path = "bench/quick.toml", board: str | Path | None = None,
                top: int = 5, combos: tuple[str, ...] = (), targets: dict[str, float] | None = None,
                sizes: list | None = None, repeats: int | None = None, folds: int | None = None,
                out: str | Path | None = None, jobs: int = 1, progress: bool = True, rope: float = 0.01,
                alpha: float = 0.05, command: str | None = None, test: str = "folds") -> TryResult:
    """Run ``reference`` against a stored leaderboard's best combinations and write a verdict-led folder.

    Parameters
    ----------
    reference : str
        The user's dataset reference (e.g. ``file:films.csv?label=status&group=donor``).
    suite_path : path
        The benchmark suite whose leaderboard (``board``, default its results folder) names the candidates.
    top : int
        How many of the leaderboard's best combinations to run (ignored when ``combos`` are given).
    combos : tuple of str
        'RESAMPLER + LEARNER' labels to run instead of the leaderboard's top.
    targets : dict
        {metric: score} the learning curves should reach (needs at least 3 training sizes).
    sizes : list, optional
        Training-set sizes for the learning curve (nested subsets), e.g. [40, 80, 160, "all"].
    test : str
        The test design: "folds" (repeated k-fold, default), "fixed", "column:NAME=VALUE" or an external
        dataset reference. With one test part for every repeat, no test treats the repeats as independent.

    Returns
    -------
    TryResult
        The folder written, the run, and the verdict sentences.
    """
    targets = targets or {}
    base = load_suite(suite_path)
    if not isinstance(top, int) or top < 1:
        raise SuiteError("--top", str(top), "give a whole number >= 1")
    board = Path(board) if board else (base.path(base.out) or Path("results") / base.name)
    labels = list(combos) or top_combinations(board, base.headline, top)
    suite, wanted = try_suite(reference, base, labels, targets, sizes, repeats, folds, test)
    result = run_suite(suite, jobs=jobs, out=out or Path("results") / suite.name, progress=progress,
                       alpha=alpha, rope=rope, command=command)
    titles = {kind[:-1]: {s.canonical: s.title for s in getattr(suite, kind)} for kind in ("resamplers", "learners")}
    cells = with_titles(result.cells[result.cells["status"] == "ok"], titles)
    cells = cells.assign(method=cells["resampler"] + COMBINED + cells["learner"])
    keep = set(wanted) | {f"{BASELINE}{COMBINED}{s.title}" for s in suite.learners}
    cells = cells[cells["method"].isin(keep)]
    section = {"reference": reference, "suite": base.name, "board": str(board), "wanted": wanted, "rope": rope}
    section.update(_head_to_head(cells, suite, rope, alpha))
    section.update(_neighbours(reference, board, base.headline))
    section["curves"] = _curves(cells, targets, _rows_per_minority_group(load_dataset(reference)))
    verdict = list(section.get("verdict", ()))
    summary = replace(result.summary, sections={"tryout": section, "verdict": verdict})
    figures = [(learning_curve_figure, (curve,), curve["figure"]) for curve in section["curves"] if curve.get("figure")]
    write_report(result.out, suite.as_dict(), result.cells, result.skipped, summary.as_json(), alpha=alpha, rope=rope,
                 extra_figures=figures)
    return TryResult(result.out, result, tuple(verdict))


def _largest_point(cells):
    """Fold scores at the largest training size of the natural ratio ('all' if present)."""
    sizes = list(dict.fromkeys(cells["size"]))
    size = "all" if "all" in sizes else max(sizes, key=float)
    return cells[cells["size"] == size], size


def _head_to_head(cells, suite, rope, alpha):
    at, size = _largest_point(cells)
    metric = suite.headline
    if suite.protocol.test != "folds":
        return _fixed_test_summary(at, size, metric, suite.protocol.test)
    folds = at.pivot_table(index="method", columns=["repeat", "fold"], values=metric, aggfunc="first")
    folds = folds.dropna(axis=0, how="any")
    if len(folds) < 2:
        return {"verdict": [f"Fewer than two combinations have every fold scored at size {size}: no comparison."]}
    comparison = compare_to_best(folds, float(at["n_train"].mean()), float(at["n_test"].mean()), rope, alpha)
    words = verdict(comparison)
    table = comparison.as_frame().replace({np.nan: None}).to_dict(orient="records")
    lines = [f"On this dataset ({metric}, training size {size}, {comparison.n_folds} folds):", *words.sentences]
    if len(at["repeat"].unique()) > 1 and len(at["fold"].unique()) > 1:
        lines.insert(1, "Fold results of repeated cross-validation overlap in training data, so both tests correct for "
                        "their correlation (Nadeau & Bengio 2003; Corani & Benavoli 2015).")
    return {"verdict": lines, "table": table, "metric": metric, "size": size, "best": comparison.best}


def _fixed_test_summary(at, size, metric, design):
    """One test part for every repeat: means and spread over repeats, no significance test (the repeats share
    their test rows, so they are not independent replications)."""
    means = at.groupby(["method", "repeat"])[metric].mean().groupby("method").agg(["mean", "std", "count"])
    means = means.sort_values("mean", ascending=False)
    best = str(means.index[0])
    table = [{"method": str(m), "mean": float(r["mean"]), "minus_best": None if m == best else
              float(r["mean"] - means["mean"].iloc[0]), "t": None, "p": None, "p_best_better": None,
              "p_equivalent": None, "p_method_better": None} for m, r in means.iterrows()]
    lines = [f"On this dataset ({metric}, training size {size}, test design {design}): {best} has the best mean "
             f"({means['mean'].iloc[0]:.4g}) over {int(means['count'].iloc[0])} repeats.",
             "Every repeat is scored on the same test rows, so the repeats are not independent replications: the "
             "spread between repeats reflects training-sample variability only, and no significance test is made "
             "across them. Compare on the repeated k-fold design (the default) for tests of the difference.",
             "These statements are about this one dataset: research evidence, not validation of a diagnostic or "
             "safety method."]
    return {"verdict": lines, "table": table, "metric": metric, "size": size, "best": best}


def _neighbours(reference, board, metric, k=3):
    """The benchmark datasets most like this one (meta-features) and what won on each."""
    data = load_dataset(reference)
    shown = {key: data.meta()[key] for key in ("n", "d", "minority_count", "imbalance_ratio", "groups")}
    shown.update(overlap(data))
    mine = {**shown, "f1": float("inf") if shown["f1_separable"] else shown["f1"]}
    manifest_path, scores_path = board / "manifest.json", board / "scores.csv"
    if not manifest_path.is_file() or not scores_path.is_file():
        return {"meta": shown, "neighbours": [], "neighbour_note": f"no leaderboard at {board} to compare with"}
    others = {d["reference"]: {**d, "f1": float("inf") if d.get("f1_separable") else d.get("f1")}
              for d in json.loads(manifest_path.read_text(encoding="utf-8"))["datasets"]}
    others = {name: d for name, d in others.items() if d["f1"] is not None and d.get("n1") is not None}
    if len(others) < 1:
        return {"meta": shown, "neighbours": [], "neighbour_note": "the leaderboard records no F1 / N1 meta-features; "
                "rebuild it with this lopsided version"}
    scores = pd.read_csv(scores_path)
    first = scores[(scores["ratio"] == scores["ratio"].iloc[0]) & (scores["size"] == scores["size"].iloc[0])]
    rows = []
    for near in nearest_datasets(mine, others, k=min(k, len(others))):
        here = first[first["dataset"] == near.name].dropna(subset=[f"{metric}_mean"])
        best = here.sort_values(f"{metric}_mean", ascending=False).head(1)
        rows.append({"dataset": near.name, "distance": near.distance,
                     "imbalance_ratio": others[near.name]["imbalance_ratio"],
                     "won": (best["resampler"] + COMBINED + best["learner"]).iloc[0] if len(best) else None,
                     "score": float(best[f"{metric}_mean"].iloc[0]) if len(best) else None})
    return {"meta": shown, "neighbours": rows}


def _rows_per_minority_group(data):
    """Spectra per donor / particle in the minority class (None without groups): turns a needed number of
    minority spectra into a number of minority donors to collect."""
    if data.groups is None:
        return None
    rows = data.y == data.minority
    return float(rows.sum() / len(np.unique(np.asarray(data.groups)[rows])))


def _curves(cells, targets, per_group=None):
    """Per method and target metric: the learning curve over minority training counts, and the needed count
    (also in minority donors / particles when the data have groups: count / ``per_group``)."""
    sizes = [s for s in dict.fromkeys(cells["size"])]
    if not targets:
        return []
    if len(sizes) < 3:
        return [{"note": "a learning curve needs at least 3 training sizes: give --sizes, e.g. --sizes 20,40,80,all"}]
    found = []
    for metric, target in targets.items():
        for method, part in cells.groupby("method", sort=True):
            table = part.groupby(["size", "repeat"])[metric].mean().unstack("repeat")
            counts = part.groupby("size")["n_train_minority"].mean()
            table.index = [float(counts[s]) for s in table.index]
            table = table.sort_index()
            try:
                model = bootstrap_curve(table.dropna(axis=1), draws=1000, seed=0)
            except (AnalysisError, LopsidedError) as exc:
                found.append({"method": method, "metric": metric, "target": target, "status": "no fit",
                              "reason": str(exc)})
                continue
            need = needed_size(model, target)
            grid = np.geomspace(table.index[0], max(table.index[-1], need.size or 0) * 1.2, 60)
            draws = (1 - model.a[:, None]) - model.b[:, None] * grid[None, :] ** model.c[:, None]
            low, high = np.quantile(draws, [0.025, 0.975], axis=0)
            groups = {key: None if value is None or per_group is None else value / per_group
                      for key, value in (("groups", need.size), ("groups_low", need.low), ("groups_high", need.high))}
            found.append({"method": method, "metric": metric, "target": target, "status": need.status,
                          "size": need.size, "low": need.low, "high": need.high, "reason": need.reason, **groups,
                          "a": model.fit.a, "b": model.fit.b, "c": model.fit.c,
                          "figure": "figures/" + re.sub(r"[^A-Za-z0-9._-]+", "_", f"curve-{metric}-{method}") + ".svg",
                          "grid": grid.tolist(), "band": [low.tolist(), high.tolist()],
                          "measured": {float(k): [float(v) for v in row] for k, row in table.iterrows()}})
    return found
