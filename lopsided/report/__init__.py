"""The leaderboard folder: leaderboard.md, the static site (index.html and the pages of ``site.PAGES``,
static/), scores.csv, cells.csv, stats.json, manifest.json, citation.bib and figures/, rebuilt from stored
cells alone (no refitting).

Files are written into a temporary folder beside the target and moved into place one by
one, so a failure never leaves a half-written file behind.
"""
import json
import os
import re
import shutil
import tempfile
from pathlib import Path

import jinja2
import pandas as pd

from .. import __version__
from ..analysis import AnalysisError, compare
from ..analysis.cdplot import draw
from ..analysis.words import caption, claims
from ..metrics import METRICS
from ..records import point_label
from ..specs import MethodSpec
from .citations import citation_block
from .figures import SPREAD, sweep
from .heatmap import draw_rank_map, ranks_by_dataset
from .pool import local_pool
from .site import group_letters, top_group, write_site
from .tables import COMBINED, method_matrix, per_dataset_rows, points_of, scores_table, with_titles
from .winners import BANDS, winner_rows

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


def _titles(suite):
    return {kind[:-1]: {_canonical(s): s["label"] for s in suite[kind]} for kind in ("resamplers", "learners")}


def _canonical(spec):
    return MethodSpec(spec["name"], spec["params"]).canonical


def _slug(*parts):
    """A file-name-safe stem: letters, digits, dot, dash, underscore; parts joined by a dash."""
    return "-".join(re.sub(r"[^A-Za-z0-9._-]+", "_", str(p)).strip("_") for p in parts)


def section_tasks(suite, scores, figures_dir, alpha=0.05, rope=0.01):
    """One task per comparison: per protocol point, across all combinations and per learner.

    Every listed metric is compared at the first point, the headline metric (first listed) at the
    others. Within one learner, the suite's control resampler (default: the first listed; "none" for
    no test) is the control of the Bonferroni-Dunn test. Each task is the argument tuple of
    ``comparison_section``; CD plots go to ``figures_dir``.
    """
    tasks = []
    control = _control(suite)
    learners = [s["label"] for s in suite["learners"]]
    for index, (ratio, size) in enumerate(points_of(scores, suite["protocol"])):
        point = f"ratio={ratio}, size={size}"
        at_point = scores[(scores["ratio"] == ratio) & (scores["size"] == size)]
        for metric in suite["metrics"] if index == 0 else suite["metrics"][:1]:
            for learner in [None, *learners]:
                view = "all combinations" if learner is None else f"resamplers with {learner}"
                matrix = method_matrix(at_point, metric, ratio, size, learner)
                entry = {"point": point, "metric": metric, "view": view, "learner": learner,
                         "ratio": ratio, "size": size}
                tasks.append((entry, matrix, at_point if learner is None else at_point[at_point["learner"] == learner],
                              suite["metrics"], alpha, rope,
                              control if learner is not None and control in matrix.columns else None,
                              figures_dir / _slug("cd", metric, ratio, size, learner or "all")))
    return tasks


def comparison_section(entry, matrix, rows, metrics, alpha, rope, control, stem):
    """One comparison, its CD plot (``stem``.svg / .png), claims, caption and ranked table.

    Returns (section entry, stats.json item or None when the comparison could not be made).
    """
    ratio, size, metric, view, learner = (entry[k] for k in ("ratio", "size", "metric", "view", "learner"))
    try:
        result = compare(matrix, metric=metric, alpha=alpha, rope=rope, control=control)
    except AnalysisError as exc:
        return {**entry, "note": str(exc)}, None
    draw(result, str(stem), title=f"{metric} at {entry['point']}: {view}")
    entry = {**entry, "result": result, "figure": f"figures/{stem.name}.svg", "claims": claims(result),
             "caption": caption(result, f"{metric}, training ratio {ratio}, size {size}, {view}"),
             "table": _leaderboard_rows(result, rows, ratio, size, learner, metrics)}
    return entry, {"metric": metric, "ratio": ratio, "size": size, "view": "all" if learner is None else "learner",
                   "learner": learner, **result.as_json()}


def _control(suite):
    """The Bonferroni-Dunn control label, or None ("none" in the suite)."""
    chosen = suite.get("control", "")
    if chosen == "none":
        return None
    return chosen or suite["resamplers"][0]["label"]


def per_dataset_tables(suite, scores, imbalance):
    """Headline metric at the first point, one datasets x resamplers table per learner, best marked."""
    points = points_of(scores, suite["protocol"])
    if not points:
        return []
    (ratio, size), metric = points[0], suite["metrics"][0]
    tables = []
    for learner in (s["label"] for s in suite["learners"]):
        matrix = method_matrix(scores, metric, ratio, size, learner)
        order = [s["label"] for s in suite["resamplers"] if s["label"] in matrix.columns]
        tables.append({"learner": learner, "metric": metric, "point": f"ratio={ratio}, size={size}",
                       "methods": order, "rows": per_dataset_rows(matrix[order], imbalance)})
    return tables


def _leaderboard_rows(result, scores, ratio, size, learner, metrics):
    rows = scores[(scores["ratio"] == ratio) & (scores["size"] == size)]
    if learner is not None:
        rows = rows[rows["learner"] == learner]
    key = rows["resampler"] if learner is not None else rows["resampler"] + COMBINED + rows["learner"]
    rows = rows[key.isin(result.methods) & rows["dataset"].isin(result.datasets)]
    key = key.loc[rows.index]
    per_dataset = rows.groupby(key)[[f"{m}_mean" for m in metrics]]
    means, spreads = per_dataset.mean(), per_dataset.std()
    letters, top = group_letters(result), set(top_group(result))
    out = []
    for place, (method, rank) in enumerate(result.average_ranks.items(), start=1):
        low, high = result.rank_intervals.loc[method]
        resampler, _, combined_learner = method.partition(COMBINED)
        out.append({"place": place, "method": method, "rank": rank, "low": low, "high": high,
                    "resampler": resampler, "learner": learner or combined_learner,
                    "means": [means.loc[method, f"{m}_mean"] for m in metrics],
                    "spreads": [spreads.loc[method, f"{m}_mean"] for m in metrics],
                    "group": letters.get(method, ""), "top": method in top})
    return out


def _rank_map(suite, scores, imbalance, figures_dir):
    """The rank map of the headline metric over all combinations at the first protocol point, or None.

    Rows: datasets by natural imbalance ratio; columns: combinations by mean rank over the datasets.
    """
    points = points_of(scores, suite["protocol"])
    if not points:
        return None
    (ratio, size), metric = points[0], suite["metrics"][0]
    ranks = ranks_by_dataset(method_matrix(scores, metric, ratio, size))
    ranks = ranks.loc[sorted(ranks.index, key=lambda d: (imbalance.get(d, float("inf")), d)),
                      ranks.mean(axis=0).sort_values(kind="mergesort").index]
    labels = [f"{d}  (IR {imbalance[d]:g})" if d in imbalance else d for d in ranks.index]
    point = f"ratio={ratio}, size={size}"
    stem = figures_dir / _slug("ranks", metric, ratio, size)
    draw_rank_map(ranks, labels, str(stem), f"Rank of {metric} on each dataset at {point} (1 = best)")
    return {"figure": f"figures/{stem.name}.svg", "metric": metric, "point": point,
            "missing": int(ranks.isna().to_numpy().sum()), "shape": ranks.shape}


SWEEP_METRICS = ("sensitivity", "specificity")   # recall of the minority class and of the rest


def sweep_tasks(suite, scores, figures_dir):
    """Every suite metric, then minority and majority recall, against ratio and against size: the
    argument tuples of ``figures.sweep`` (read back with ``sweep_entry``)."""
    tasks = []
    order = [s["label"] for s in suite["resamplers"]]
    metrics = list(dict.fromkeys([*suite["metrics"], *SWEEP_METRICS]))
    protocol = suite["protocol"]
    for axis, values, others in (("ratio", protocol["ratios"], protocol["sizes"]),
                                 ("size", protocol["sizes"], protocol["ratios"])):
        if len(values) < 2:
            continue
        for fixed in map(point_label, others):
            other = "size" if axis == "ratio" else "ratio"
            rows = scores[scores[other] == fixed]
            for metric in metrics:
                if f"{metric}_mean" in rows.columns:
                    tasks.append((rows, metric, axis, fixed, list(values), order,
                                  str(figures_dir / _slug("sweep", metric, axis, fixed))))
    return tasks


def sweep_entry(task, drawn):
    """The template entry of one drawn sweep, or None when ``figures.sweep`` drew nothing."""
    if drawn is None:
        return None
    _, metric, axis, fixed, _, _, _ = task
    return {"axis": axis, "fixed": fixed, "metric": metric, "datasets": drawn["datasets"],
            "left_out": drawn["left_out"],
            "figure": f"figures/{Path(drawn['paths'][0]).name}" if drawn["paths"] else None}


def leakage_rows(grouped_cells, random_cells, suite):
    """Headline metric per dataset and learner under the grouped split and with groups ignored.

    Averaged over resamplers, repeats and folds at the first protocol point; the difference is how
    much a split that lets a donor / particle sit on both sides would have inflated the score.
    """
    metric = suite.headline
    titles = _titles(suite.as_dict())
    first = suite.protocol.points[0]
    label = (point_label(first[0]), point_label(first[1]))
    rows = []
    grouped, leaky = (with_titles(c[c["status"] == "ok"], titles) for c in (grouped_cells, random_cells))
    for (dataset, learner), part in leaky.groupby(["dataset", "learner"], sort=True):
        part = part[(part["ratio"] == label[0]) & (part["size"] == label[1])]
        honest = grouped[(grouped["dataset"] == dataset) & (grouped["learner"] == learner)
                         & (grouped["ratio"] == label[0]) & (grouped["size"] == label[1])]
        if part.empty or honest.empty:
            continue
        rows.append({"dataset": dataset, "learner": learner, "metric": metric,
                     "grouped": float(honest[metric].mean()), "random": float(part[metric].mean()),
                     "inflation": float(part[metric].mean() - honest[metric].mean())})
    return rows


def skipped_summary(skipped):
    """Infeasible points grouped by dataset and point, with how many folds and the first reason."""
    if not skipped:
        return []
    table = pd.DataFrame(skipped)
    grouped = table.groupby(["dataset", "ratio", "size"], sort=False)
    return [{"dataset": d, "ratio": r, "size": s, "folds": len(g), "reason": g["reason"].iloc[0]}
            for (d, r, s), g in grouped]


def design_text(protocol):
    """The protocol's test design in words."""
    r, test = protocol["repeats"], protocol.get("test", "folds")
    grouped = " (grouped where the data has groups)"
    if test == "folds":
        if protocol.get("holdout"):
            return f"{r} x stratified holdout, test share {protocol['holdout']}, a new test part per repeat{grouped}"
        return f"{r} x stratified {protocol['folds']}-fold cross-validation{grouped}"
    if test == "fixed":
        share = protocol.get("holdout") or 1 / protocol["folds"]
        return f"one fixed stratified test part (share {share:.2g}){grouped} shared by all {r} repeats"
    if test.startswith("column:"):
        return f"a designated test cohort ({test.removeprefix('column:')}) shared by all {r} repeats"
    return f"an external test set ({test}) shared by all {r} repeats"


def design_warning(protocol):
    """'' for cross-validation; otherwise why the repeats are not independent replications."""
    if protocol.get("test", "folds") == "folds":
        return ""
    return ("Every repeat is scored on the same test rows, so repeats are not independent replications: their "
            "spread shows training-sample variability only, and no statistic here treats them as independent "
            "samples (comparisons across datasets use one mean per dataset).")


def write_report(out, suite, cells, skipped, summary, alpha=0.05, rope=0.01, extra_figures=()):
    """Write the leaderboard folder for ``suite`` (a suite dict) from its stored ``cells``.

    Comparisons, CD plots, sweeps and the rank map are computed on local processes (``pool.local_pool``).
    Every template gets the report context: suite, summary (the manifest), caution, control, alpha, bands,
    winners, per_dataset, spread, methods, citation, skipped, failures, warnings, metric_text, version,
    leakage, scores (the scores table), imbalance (reference -> imbalance ratio), svg (inlines one of our
    figures), sections (comparisons with result, figure, caption, claims, table), rank_map and sweeps;
    each page of ``site.PAGES`` adds what its builder returns. ``extra_figures`` are (draw, args, path)
    triples drawn as ``draw(*args, staging / path)`` before the pages are rendered (e.g. `lopsided try`'s
    learning curves).
    """
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    staging = Path(tempfile.mkdtemp(prefix=".report-", dir=out))
    try:
        figures = staging / "figures"
        figures.mkdir()
        for draw_figure, args, relative in extra_figures:
            draw_figure(*args, staging / relative)
        titled = with_titles(cells, _titles(suite))
        scores = scores_table(titled)
        imbalance = {d["reference"]: d["imbalance_ratio"] for d in summary.get("datasets", [])}
        with local_pool() as submit:
            sweeps = [(t, submit(sweep, *t)) for t in sweep_tasks(suite, scores, figures)]
            rank_map = submit(_rank_map, suite, scores, imbalance, figures)
            sections = [submit(comparison_section, *t) for t in section_tasks(suite, scores, figures, alpha, rope)]
            context = {
                "suite": suite, "summary": summary, "caution": CAUTION, "control": _control(suite), "alpha": alpha,
                "bands": [label for _, _, label in BANDS],
                "winners": winner_rows(scores, suite, imbalance, alpha, rope),
                "per_dataset": per_dataset_tables(suite, scores, imbalance), "spread": SPREAD,
                "methods": summary.get("methods", []), "citation": citation_block(suite, summary).text(),
                "skipped": skipped_summary(skipped), "failures": _notes(titled, "error"),
                "warnings": _notes(titled, "warning"), "metric_text": METRICS, "version": __version__,
                "leakage": summary.get("split_leakage", []), "scores": scores, "imbalance": imbalance,
                "svg": lambda rel: _inline_svg(staging / rel),
                "design": design_text(suite["protocol"]), "design_warning": design_warning(suite["protocol"]),
            }
            done = [f.result() for f in sections]
            context.update(sections=[entry for entry, _ in done], rank_map=rank_map.result(),
                           sweeps=[e for e in (sweep_entry(t, f.result()) for t, f in sweeps) if e is not None])
        stats = [item for _, item in done if item is not None]
        (staging / "leaderboard.md").write_text(ENV.get_template("leaderboard.md.j2").render(**context),
                                                encoding="utf-8")
        write_site(ENV, staging, context)
        # 8 significant digits in the CSV files (the store keeps full precision)
        scores.to_csv(staging / "scores.csv", index=False, float_format="%.8g")
        titled.sort_values(["dataset", "ratio", "size", "repeat", "fold", "resampler", "learner"]).to_csv(
            staging / "cells.csv", index=False, float_format="%.8g")
        (staging / "stats.json").write_text(json.dumps({"comparisons": stats}, indent=1, allow_nan=False),
                                            encoding="utf-8")
        (staging / "manifest.json").write_text(json.dumps(summary, indent=1, default=str, allow_nan=False),
                                               encoding="utf-8")
        (staging / "citation.bib").write_text(context["citation"], encoding="utf-8")
        _move_into_place(staging, out)
    finally:
        shutil.rmtree(staging, ignore_errors=True)
    return out


def _notes(cells, column):
    """Cells with text in ``column`` ('error' or 'warning'), grouped by method, with the first text."""
    if column not in cells.columns:
        return []
    noted = cells[cells[column].notna()]
    grouped = noted.groupby(["resampler", "learner"], sort=True)
    return [{"resampler": r, "learner": learner, "cells": len(g), "text": g[column].iloc[0]}
            for (r, learner), g in grouped]


def _inline_svg(path):
    """One of our own SVG figures as an HTML element: the XML prolog and doctype dropped."""
    text = path.read_text(encoding="utf-8")
    return text[text.index("<svg"):]


def _move_into_place(staging, out):
    for item in staging.iterdir():
        if item.is_dir() and (out / item.name).exists():
            shutil.rmtree(out / item.name)
        os.replace(item, out / item.name)
