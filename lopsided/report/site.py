"""The leaderboard site: a table of pages (output file -> template -> what it adds to the board) and the writer.

Every page extends ``base.html.j2`` and receives the ``Board`` as ``b`` plus what its builder returns; adding a
page is one ``Page`` entry and one template. The Overview opens with the answer per learner; the comparisons
live on one page per protocol point (a selector links them), so no page carries every figure. The folder is
self-contained: the stylesheet and script in ``static/`` are copied beside the pages, figures are our own
SVG files (linked with their PNG), and nothing is fetched from elsewhere.
"""
import shutil
from collections.abc import Callable
from dataclasses import dataclass
from importlib import resources
from itertools import groupby
from pathlib import Path

import numpy as np

from ..injected import FIXED
from ..methods import learners, resamplers
from ..methods.metrics import metric_name
from .citations import ENTRIES, formatted, short_reference
from .tables import COMBINED, method_matrix
from .winners import band_of

STATIC = ("site.css", "site.js")


@dataclass(frozen=True)
class Page:
    """One page of the site: the file written, its template, its menu title and its context builder."""

    file: str
    template: str
    title: str
    build: Callable = lambda board: {}
    shown: Callable = lambda board: True     # pages only some folders have (e.g. `lopsided try`)
    menu: bool = True                        # False: reached from another page (the other protocol points)


ROWS_AT_MOST = 400    # a larger board lists each dataset's best few combinations (scores.csv has all)
TOP_PER_DATASET = 5


def score_rows(board):
    """Every dataset x combination at the primary point: band, rank on the dataset (primary metric, among all
    combinations) and mean +/- sd of each suite metric; datasets by imbalance ratio. Above ROWS_AT_MOST rows,
    each dataset's best ``top`` (at most TOP_PER_DATASET, fewer when there are many datasets; among tied
    combinations the first in scores.csv's order), so every dataset keeps its rows and the page stays light."""
    primary, scores = board.primary, board.scores
    if primary is None:
        return {"rows": [], "all_rows": True, "top": None}
    ratio, size, metrics = primary.ratio, primary.size, board.suite.metrics
    ranks = method_matrix(scores, primary.metric, ratio, size).rank(axis=1, ascending=False, method="average")
    rows = scores[(scores["ratio"] == ratio) & (scores["size"] == size)]
    names = board.short
    out = []
    for r in rows.to_dict("records"):
        key = r["resampler"] + COMBINED + r["learner"]
        rank = ranks.loc[r["dataset"], key] if r["dataset"] in ranks.index and key in ranks.columns else np.nan
        ir = board.imbalance.get(r["dataset"])
        out.append({"dataset": r["dataset"], "name": names.get(r["dataset"], r["dataset"]), "ratio": ir,
                    "band": band_of(ir) if ir is not None else "", "resampler": r["resampler"],
                    "learner": r["learner"], "failed": int(r["n_failed"]), "cells": int(r["n_cells"]),
                    "rank": None if np.isnan(rank) else float(rank),
                    "scores": [(_number(r.get(f"{m}_mean")), _number(r.get(f"{m}_std"))) for m in metrics]})
    out.sort(key=lambda x: (x["ratio"] if x["ratio"] is not None else float("inf"), x["dataset"],
                            x["rank"] if x["rank"] is not None else float("inf")))
    if len(out) <= ROWS_AT_MOST:
        return {"rows": out, "all_rows": True, "top": None}
    top = min(TOP_PER_DATASET, max(1, ROWS_AT_MOST // len({r["dataset"] for r in out})))
    kept = [r for _, rows_of_one in groupby(out, key=lambda x: x["dataset"]) for r in list(rows_of_one)[:top]]
    return {"rows": kept, "all_rows": False, "top": top}


def _number(value):
    """A float, or None for a missing or undefined value."""
    return None if value is None or np.isnan(value) else float(value)


def dataset_cards(board):
    """One card per dataset, by imbalance ratio, with its band and the points skipped on it."""
    skipped: dict[str, list] = {}
    for s in board.skipped:
        skipped.setdefault(s.dataset, []).append(s)
    names = board.short
    cards = [{**d.as_json(), "short": names.get(d.reference, d.reference), "band": band_of(d.imbalance_ratio),
              "skipped": skipped.get(d.reference, [])} for d in board.summary.datasets]
    return {"cards": sorted(cards, key=lambda d: (d["imbalance_ratio"], d["reference"]))}


def _origin(name, listings):
    """built-in, the plugin's distribution, or an import path."""
    if name in listings:
        return listings[name].origin
    return "import path" if ":" in name else "unknown"


def method_cards(board):
    """One card per resampler and learner: description, the parameters it ran with (defaults filled in from its
    signature), origin, papers (linked to their references), failed cells."""
    origins = {(m.kind, m.label): m for m in board.summary.methods}
    cards = []
    for kind, registry in (("resampler", resamplers.REGISTRY), ("learner", learners.REGISTRY)):
        listings = {row.name: row for row in registry.describe()}
        for spec in getattr(board.suite, f"{kind}s"):
            label, name = spec.title, spec.name
            listing = listings.get(name)
            cards.append({
                "kind": kind, "label": label, "name": name, "given": spec.params,
                "params": ran_with(registry, name, spec.params),
                "text": listing.text if listing else "not a registered name: loaded from its import path",
                "source": _origin(name, listings), "entry": origins.get((kind, label)),
                "papers": [(key, short_reference(ENTRIES[key]), formatted(ENTRIES[key]))
                           for key in registry.citations(name) or ()],
                "failures": [f for f in board.failures if f[kind] == label],
                "warnings": [f for f in board.warnings if f[kind] == label]})
    return {"cards": cards}


def ran_with(registry, name, given):
    """{parameter: value} the method ran with: its factory's defaults, then what the suite gave (None when the
    factory cannot be inspected). The runner's own (``injected.FIXED``: random_state, the cell's seed) are left
    out."""
    import inspect
    try:
        factory = registry.resolve(name)
        signature = inspect.signature(factory)
    except Exception:   # an import path that no longer resolves: show what the suite gave
        return dict(given)
    fixed = getattr(factory, "keywords", {}) or {}
    defaults = {p.name: p.default for p in signature.parameters.values()
                if p.default is not inspect.Parameter.empty and p.name not in FIXED}
    return {**{k: v for k, v in defaults.items() if k not in fixed}, **fixed, **given}


def point_page(point):
    return lambda board: {"point": point}


def cite_page(board):
    from .citations import formatted_block
    return {"references": formatted_block(board.citation)}


def pages(board):
    """The pages this board has, in menu order."""
    found = [Page("index.html", "overview.html.j2", "Overview")]
    if board.tryout is not None:
        found.append(Page("try.html", "try.html.j2", "Your dataset", lambda b: {"t": b.tryout}))
    for i, point in enumerate(board.points):
        found.append(Page(point.file, "point.html.j2", "Comparisons" if i == 0 else f"{metric_name(point.metric)} at {point.title}",
                          point_page(point), menu=i == 0))
    if board.winners:
        found.append(Page("where.html", "where.html.j2", "Bands and sizes"))
    for i, table in enumerate(board.per_dataset):
        found.append(Page(f"per-dataset-{i + 1}.html", "per_dataset.html.j2", "Per dataset" if i == 0 else
                          f"Per dataset with {table['learner']}", lambda b, t=table: {"t": t}, menu=i == 0))
    if any(s.figure for s in board.sweeps):
        found.append(Page("sweeps.html", "sweeps.html.j2", "Sweeps", sweep_groups))
    found += [Page("ranks.html", "ranks.html.j2", "Rank map", score_rows),
              Page("datasets.html", "datasets.html.j2", "Datasets", dataset_cards),
              Page("methods.html", "methods.html.j2", "Methods", method_cards),
              Page("run.html", "run.html.j2", "Run", run_page),
              Page("cite.html", "cite.html.j2", "How to cite", cite_page)]
    return found


def sweep_groups(board):
    metrics: dict[str, list] = {}
    for f in board.sweeps:
        if f.figure:
            metrics.setdefault(f.metric, []).append(f)
    return {"metrics": [{"metric": m, "figures": figures} for m, figures in metrics.items()]}


def run_page(board):
    return {"versions": sorted(board.summary.versions.items()), "cells": board.summary.cells}


def write_site(env, folder, board, chosen=None):
    """Render every page (or the ``chosen`` ones) into ``folder`` and copy the static files into
    ``folder``/static."""
    folder = Path(folder)
    (folder / "static").mkdir(exist_ok=True)
    for name in STATIC:
        with resources.as_file(resources.files("lopsided.report") / "static" / name) as path:
            shutil.copyfile(path, folder / "static" / name)
    found = [p for p in (pages(board) if chosen is None else chosen) if p.shown(board)]
    menu = [(p.file, p.title) for p in found if p.menu]
    points = [(p.file, p.title) for p in found if p.template == "point.html.j2"]
    for page in found:
        text = env.get_template(page.template).render(b=board, **page.build(board), page=page, menu=menu,
                                                      point_menu=points)
        (folder / page.file).write_text(text, encoding="utf-8")
