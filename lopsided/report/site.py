"""The leaderboard site: a table of pages (output file -> template -> context builder) and the writer.

Every page extends ``base.html.j2`` and receives the report context (see ``write_report``) plus what its
builder returns; adding a page is one ``Page`` entry and one template. The folder is self-contained: the
stylesheet and script in ``static/`` are copied beside the pages, figures are our own SVG files inlined
with a link to their SVG and PNG files, and nothing is fetched from elsewhere.

Significance groups use the compact letter display of Piepho (2004, Journal of Computational and
Graphical Statistics 13(2); from memory): methods that share a letter are not separated by the Nemenyi
test (Demšar 2006, section 3.2.2), shown only when the Friedman test rejects (Demšar's procedure) and
the comparison has at least ``MIN_DATASETS`` datasets.
"""
import shutil
import string
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from pathlib import Path

import numpy as np

from .. import learners as learner_registry
from .. import resamplers as resampler_registry
from ..analysis.compare import MIN_DATASETS
from .citations import LEARNERS, RESAMPLERS
from .tables import COMBINED, method_matrix, points_of
from .winners import band_of

STATIC = ("site.css", "site.js")


@dataclass(frozen=True)
class Page:
    """One page of the site: the file written, its template, its menu title and its context builder."""

    file: str
    template: str
    title: str
    build: Callable[[dict], dict]
    shown: Callable[[dict], bool] = lambda ctx: True     # pages only some folders have (e.g. `lopsided try`)


def group_letters(result):
    """{method: letters} of the Nemenyi groups (compact letter display), or {} when no claim is allowed.

    A rejected Friedman test is required first; when it does not reject, every method shares 'a'.
    Groups are the CD-plot bars (``Comparison.groups``) plus a group of its own for a method in no bar.
    """
    if not result.claims_allowed:
        return {}
    methods = result.methods
    if result.friedman.decision_p >= result.alpha:
        return {m: "a" for m in methods}
    grouped = {m for group in result.groups for m in group}
    groups = sorted([*result.groups, *([m] for m in methods if m not in grouped)], key=lambda g: methods.index(g[0]))
    letters = {m: "" for m in methods}
    for i, group in enumerate(groups):
        letter = string.ascii_lowercase[i % 26] + (str(i // 26) if i >= 26 else "")
        for method in group:
            letters[method] += letter
    return letters


def top_group(result):
    """Methods the Nemenyi test cannot separate from the best (the best included), in rank order;
    every method when the Friedman test does not reject; [] when no claim is allowed."""
    letters = group_letters(result)
    if not letters:
        return []
    best = set(letters[result.methods[0]])
    return [m for m in result.methods if best & set(letters[m])]


LIST_AT_MOST = 4   # longer lists of tied methods are counted, not spelled out, in the verdict


def _first_place(best, tied, lower=None):
    """'best ranks first' with the methods not separated from it, listed when few, counted when many;
    ``lower`` (the others), when known, is named instead when it is the shorter list."""
    if not tied:
        return f"{best} ranks first, separated by the Nemenyi test from every other method."
    if len(tied) <= LIST_AT_MOST:
        return f"{best} ranks first; not separated from it by the Nemenyi test: {', '.join(tied)}."
    others = f" of the {len(tied) + len(lower)}" if lower is not None else ""
    text = f"{best} ranks first, but {len(tied)}{others} others are not separated from it by the Nemenyi test"
    if lower is not None and len(lower) <= LIST_AT_MOST:
        return text + (f"; only {', '.join(lower)} rank significantly lower." if lower else ".")
    return text + "."


def verdict(main, winners, alpha):
    """Plain sentences: the overall headline comparison, then one per imbalance band and training size."""
    lines = []
    if main is None:
        lines.append("No comparison of all combinations could be made (see the sections below for the reason).")
    else:
        result, n = main["result"], main["result"].friedman.n_datasets
        where = f"Overall ({main['metric']} at {main['point']}, {n} datasets): "
        if not result.claims_allowed:
            lines.append(f"{where}no method can be called better than another with fewer than {MIN_DATASETS} "
                         "datasets; the table only describes these datasets.")
        elif result.friedman.decision_p >= alpha:
            lines.append(f"{where}the Friedman test finds no significant difference among the "
                         f"{len(result.methods)} combinations (p = {result.friedman.decision_p:.3g}), so there is "
                         "no winner.")
        else:
            top = top_group(result)
            lower = [m for m in result.methods if m not in top]
            lines.append(where + _first_place(top[0], top[1:], lower))
    for w in winners:
        head = f"{w['by'].capitalize()} {w['band']} ({w['point']}, {w['n']} datasets): "
        if w["p"] is not None and w["p"] < alpha and w["n"] >= MIN_DATASETS:
            lines.append(head + _first_place(w["best"], w["tied"]))
        else:
            lines.append(head + w["claim"] + ".")
    return lines


def _main_section(sections, metric):
    """The all-combinations comparison of ``metric`` at the first protocol point (None if it failed)."""
    first = next((s for s in sections if s["metric"] == metric and s["learner"] is None), None)
    return first if first is not None and "result" in first else None


def _by_point(sections):
    """Sections grouped by metric and protocol point, in order: [{"metric", "point", "sections"}]."""
    groups = {}
    for s in sections:
        groups.setdefault((s["metric"], s["point"]), []).append(s)
    return [{"metric": m, "point": p, "sections": group} for (m, p), group in groups.items()]


def overview(ctx):
    headline = ctx["suite"]["metrics"][0]
    main = _main_section(ctx["sections"], headline)
    return {"headline": headline, "main": main, "verdict": verdict(main, ctx["winners"], ctx["alpha"]),
            "points": _by_point([s for s in ctx["sections"] if s["metric"] == headline])}


def other_metrics(ctx):
    headline = ctx["suite"]["metrics"][0]
    return {"points": _by_point([s for s in ctx["sections"] if s["metric"] != headline])}


def sweeps(ctx):
    metrics = {}
    for f in ctx["sweeps"]:
        metrics.setdefault(f["metric"], []).append(f)
    return {"metrics": [{"metric": m, "figures": figures} for m, figures in metrics.items()]}


def score_rows(scores, suite, imbalance):
    """Every dataset x combination at the first protocol point: band, rank on the dataset (headline
    metric, among all combinations) and mean +/- sd of each suite metric; datasets by imbalance ratio."""
    points = points_of(scores, suite["protocol"])
    if not points:
        return []
    (ratio, size), metrics = points[0], suite["metrics"]
    ranks = method_matrix(scores, metrics[0], ratio, size).rank(axis=1, ascending=False, method="average")
    rows = scores[(scores["ratio"] == ratio) & (scores["size"] == size)]
    out = []
    for r in rows.to_dict("records"):
        key = r["resampler"] + COMBINED + r["learner"]
        rank = ranks.loc[r["dataset"], key] if r["dataset"] in ranks.index and key in ranks.columns else np.nan
        ir = imbalance.get(r["dataset"])
        out.append({"dataset": r["dataset"], "ratio": ir, "band": band_of(ir) if ir is not None else "",
                    "resampler": r["resampler"], "learner": r["learner"], "failed": int(r["n_failed"]),
                    "cells": int(r["n_cells"]), "rank": None if np.isnan(rank) else float(rank),
                    "scores": [(_number(r.get(f"{m}_mean")), _number(r.get(f"{m}_std"))) for m in metrics]})
    out.sort(key=lambda x: (x["ratio"] if x["ratio"] is not None else float("inf"), x["dataset"],
                            x["rank"] if x["rank"] is not None else float("inf")))
    return out


def _number(value):
    """A float, or None for a missing or undefined value."""
    return None if value is None or np.isnan(value) else float(value)


def rank_map(ctx):
    return {"rows": score_rows(ctx["scores"], ctx["suite"], ctx["imbalance"])}


def dataset_cards(ctx):
    """One card per dataset, by imbalance ratio, with its band and the points skipped on it."""
    skipped = {}
    for s in ctx["skipped"]:
        skipped.setdefault(s["dataset"], []).append(s)
    cards = [{**d, "band": band_of(d["imbalance_ratio"]), "skipped": skipped.get(d["reference"], [])}
             for d in ctx["summary"].get("datasets", [])]
    return {"cards": sorted(cards, key=lambda d: (d["imbalance_ratio"], d["reference"]))}


def _origin(name, listings):
    """built-in, the plugin's distribution, or an import path."""
    if name in listings:
        return listings[name].origin
    return "import path" if ":" in name else "unknown"


def method_cards(ctx):
    """One card per resampler and learner: description, parameters, origin, papers, failed cells."""
    origins = {(m["kind"], m["label"]): m for m in ctx["methods"]}
    cards = []
    for kind, registry, papers in (("resampler", resampler_registry, RESAMPLERS),
                                   ("learner", learner_registry, LEARNERS)):
        listings = {row.name: row for row in registry.describe()}
        for spec in ctx["suite"][f"{kind}s"]:
            label, name = spec["label"], spec["name"]
            listing = listings.get(name)
            cards.append({
                "kind": kind, "label": label, "name": name, "params": spec["params"],
                "text": listing.text if listing else "not a registered name: loaded from its import path",
                "source": _origin(name, listings), "entry": origins.get((kind, label), {}),
                "papers": papers.get(name, ()),
                "failures": [f for f in ctx["failures"] if f[kind] == label],
                "warnings": [f for f in ctx["warnings"] if f[kind] == label]})
    return {"cards": cards}


def run_page(ctx):
    summary = ctx["summary"]
    return {"versions": sorted((summary.get("versions") or {}).items()), "cells": summary.get("cells", {})}


def cite_page(ctx):
    return {}


def try_page(ctx):
    return {"t": ctx["summary"]["tryout"]}


PAGES = (
    Page("index.html", "overview.html.j2", "Overview", overview),
    Page("try.html", "try.html.j2", "Your dataset", try_page, shown=lambda ctx: bool(ctx["summary"].get("tryout"))),
    Page("metrics.html", "metrics.html.j2", "Other metrics", other_metrics),
    Page("sweeps.html", "sweeps.html.j2", "Sweeps", sweeps),
    Page("ranks.html", "ranks.html.j2", "Rank map", rank_map),
    Page("datasets.html", "datasets.html.j2", "Datasets", dataset_cards),
    Page("methods.html", "methods.html.j2", "Methods", method_cards),
    Page("run.html", "run.html.j2", "Run", run_page),
    Page("cite.html", "cite.html.j2", "How to cite", cite_page),
)


def write_site(env, folder, ctx, pages=PAGES):
    """Render every page into ``folder`` and copy the static files into ``folder``/static."""
    folder = Path(folder)
    (folder / "static").mkdir(exist_ok=True)
    for name in STATIC:
        with resources.as_file(resources.files("lopsided.report") / "static" / name) as path:
            shutil.copyfile(path, folder / "static" / name)
    pages = [p for p in pages if p.shown(ctx)]
    menu = [(p.file, p.title) for p in pages]
    for page in pages:
        text = env.get_template(page.template).render(**ctx, **page.build(ctx), page=page, menu=menu)
        (folder / page.file).write_text(text, encoding="utf-8")
