"""Sweep figures: a metric against the training imbalance ratio or size, one panel per learner.

Like for like: a figure uses the same datasets at every point of its axis (a dataset missing or
failed at any point is left out of the whole figure and named in the caption), so a line moves
because the ratio or size moved, not because the set of datasets changed. Word points ('natural':
each dataset's own ratio, 'balanced', 'all': every row the ratio allows) are not on the numeric
scale: they are drawn as hollow markers beside it, unconnected.
"""
import pandas as pd
from matplotlib.figure import Figure
from matplotlib.ticker import NullFormatter

from ..methods.metrics import metric_name
from ..records import point_label

# Our palette: every pair at least 13 CIE76 units apart in normal vision and under simulated deuteranopia
# and protanopia (Machado et al. 2009; checked in tests/test_site.py); each series also has its own marker.
COLOURS = ["#1d2935", "#2f7f79", "#c8553d", "#d9a441", "#6c5b9b", "#4c8fc6", "#0209db", "#0e0071",
           "#0e5ed6", "#6e0403", "#74bd92", "#56bfc5"]
MARKERS = ["o", "s", "^", "D", "v", "P", "X", "<", ">", "h", "*", "p"]
SPREAD = "+/- one standard error of the mean over datasets (sd of the datasets' means / sqrt(N))"


def comparable_datasets(rows, axis, values, methods):
    """Datasets scored (no failed cell) at every ``values`` of ``axis`` for every (resampler, learner)."""
    ok = rows[(rows["n_failed"] == 0) & rows[axis].isin(values)].dropna(subset=["value"])
    ok = ok[[pair in methods for pair in zip(ok["resampler"], ok["learner"])]]
    found = ok[["dataset", axis, "resampler", "learner"]].drop_duplicates().groupby("dataset").size()
    return sorted(found[found == len(values) * len(methods)].index)


def positions(values, axis):
    """{display label: x position} of the protocol's ``values`` (numbers, or words such as 'natural'):
    numbers on a log scale at their own value, words beside them."""
    numbers = sorted(v for v in values if not isinstance(v, str))
    words = [v for v in values if isinstance(v, str)]
    place = {point_label(v): float(v) for v in numbers}
    if not numbers:
        return {w: float(i + 1) for i, w in enumerate(words)}
    low, high = numbers[0], numbers[-1]
    for i, word in enumerate(words):
        place[word] = low / 2.0 ** (i + 1) if axis == "ratio" else high * 2.0 ** (i + 1)
    return place


def sweep(scores, metric, axis, fixed, values, order, stem):
    """Mean ``metric`` over the same datasets at each of the protocol's ``values`` of ``axis`` ('ratio' or
    'size': numbers or words, matched to the scores by their display label), at the ``fixed`` label of the
    other axis. Writes ``stem``.svg and .png; returns a dict with the paths, the datasets drawn and those
    left out, or None when fewer than two points or no dataset qualify."""
    other = "size" if axis == "ratio" else "ratio"
    rows = scores[scores[other] == fixed].assign(value=lambda t: t[f"{metric}_mean"])
    values = [v for v in values if point_label(v) in set(rows[axis])]
    if len(values) < 2:
        return None
    labels = [point_label(v) for v in values]
    methods = set(zip(rows["resampler"], rows["learner"]))
    kept = comparable_datasets(rows, axis, labels, methods)
    left_out = sorted(set(rows["dataset"]) - set(kept))
    if not kept:
        return {"datasets": [], "left_out": left_out, "paths": None}
    rows = rows[rows["dataset"].isin(kept) & rows[axis].isin(labels)]
    place = positions(values, axis)
    learners = list(dict.fromkeys(rows["learner"]))
    fig = Figure(figsize=(3.4 * len(learners) + 1.6, 3.2))
    axes = fig.subplots(1, len(learners), sharey=True, squeeze=False)[0]
    for ax, learner in zip(axes, learners):
        _panel(ax, rows[rows["learner"] == learner], axis, values, place, order)
        ax.set_title(learner, fontsize=10)
    axes[0].set_ylabel(f"{metric_name(metric)} (mean of {len(kept)} datasets)")
    axes[-1].legend(loc="center left", bbox_to_anchor=(1.02, 0.5), frameon=False, fontsize=8)
    fig.suptitle(f"{metric} against training {axis} ({other} = {fixed}); same {len(kept)} datasets at every point; "
                 "band: +/- 1 standard error over datasets", fontsize=9.5, y=1.02)
    paths = (f"{stem}.svg", f"{stem}.png")
    fig.savefig(paths[0], bbox_inches="tight")
    fig.savefig(paths[1], dpi=110, bbox_inches="tight")
    return {"datasets": kept, "left_out": left_out, "paths": paths}


def _panel(ax, part, axis, values, place, order):
    numeric = [point_label(v) for v in values if not isinstance(v, str)]
    words = [v for v in values if isinstance(v, str)]
    values = numeric + words
    drawn = [r for r in order if r in set(part["resampler"])]
    for i, resampler in enumerate(drawn):
        colour = COLOURS[i % len(COLOURS)]
        means = part[part["resampler"] == resampler].groupby(axis)["value"]
        line = pd.DataFrame({"mean": means.mean(), "sd": (means.std() / means.count() ** 0.5).fillna(0.0)})
        nudge = 1.07 ** (i - (len(drawn) - 1) / 2)     # word points side by side, not on top of each other
        if numeric:
            pts = line.loc[numeric].assign(x=[place[v] for v in numeric]).sort_values("x")
            ax.plot(pts["x"], pts["mean"], marker=MARKERS[i % len(MARKERS)], ms=4, lw=1.6, color=colour,
                    label=resampler)
            ax.fill_between(pts["x"], pts["mean"] - pts["sd"], pts["mean"] + pts["sd"], color=colour, alpha=0.07, lw=0)
        for word in words:
            ax.errorbar([place[word] * nudge], [line.loc[word, "mean"]], yerr=[line.loc[word, "sd"]],
                        fmt=MARKERS[i % len(MARKERS)], ms=4.5,
                        mfc="white", color=colour, lw=0.9, capsize=2,
                        label=resampler if not numeric and word == words[0] else None)
    ticks = sorted(place[v] for v in values)
    ax.set_xscale("log" if numeric else "linear")
    ax.set_xticks(ticks)
    ax.set_xticklabels([next(v for v in values if place[v] == t) for t in ticks])
    ax.xaxis.set_minor_formatter(NullFormatter())
    if numeric and words:
        edge = min(place[v] for v in numeric) if axis == "ratio" else max(place[v] for v in numeric)
        ax.axvline(edge / 1.41 if axis == "ratio" else edge * 1.41, color="#b8c2cc", lw=0.8, ls=":")
    ax.set_xlabel("training imbalance ratio (maj:min)" if axis == "ratio" else "training-set size")
    ax.grid(alpha=0.3, lw=0.6)
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
