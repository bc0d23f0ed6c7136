"""Sweep figures: a metric against the training imbalance ratio or size, one panel per learner."""
import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.ticker import NullFormatter  # noqa: E402
import pandas as pd  # noqa: E402

# Our palette: distinguishable in print and for the common colour-vision deficiencies.
COLOURS = ["#1d2935", "#2f7f79", "#c8553d", "#d9a441", "#6c5b9b", "#4c8fc6", "#8a9a5b", "#b5678d",
           "#7b6d5d", "#3f9e5d", "#a14a4a", "#5f7f9f"]


def sweep(scores, metric, axis, fixed, order, stem):
    """Mean ``metric`` over datasets (line) against ``axis`` ('ratio' or 'size') at the ``fixed``
    value of the other, with a band of +/- the mean sd over repeats and folds; SVG + PNG."""
    other = "size" if axis == "ratio" else "ratio"
    rows = scores[(scores[other] == fixed) & (scores["n_failed"] == 0)]
    rows = rows.assign(x=pd.to_numeric(rows[axis], errors="coerce")).dropna(subset=["x"])   # numeric points only
    if rows["x"].nunique() < 2:
        return None
    learners = list(dict.fromkeys(rows["learner"]))
    fig, axes = plt.subplots(1, len(learners), figsize=(3.4 * len(learners) + 1.6, 3.2), sharey=True, squeeze=False)
    for ax, learner in zip(axes[0], learners):
        part = rows[rows["learner"] == learner]
        for i, resampler in enumerate(r for r in order if r in set(part["resampler"])):
            line = part[part["resampler"] == resampler].groupby("x")[[f"{metric}_mean", f"{metric}_std"]].mean()
            mean, spread = line[f"{metric}_mean"], line[f"{metric}_std"].fillna(0)
            colour = COLOURS[i % len(COLOURS)]
            ax.plot(line.index, mean, marker="o", ms=3.5, lw=1.6, color=colour, label=resampler)
            ax.fill_between(line.index, mean - spread, mean + spread, color=colour, alpha=0.08, lw=0)
        ax.set_title(learner, fontsize=10)
        ax.set_xscale("log" if axis == "ratio" else "linear")
        ax.set_xticks(sorted(set(part["x"])))
        ax.set_xticklabels([f"{v:g}" for v in sorted(set(part["x"]))])
        ax.xaxis.set_minor_formatter(NullFormatter())
        ax.set_xlabel("training imbalance ratio (maj:min)" if axis == "ratio" else "training-set size")
        ax.grid(alpha=0.3, lw=0.6)
        for side in ("top", "right"):
            ax.spines[side].set_visible(False)
    axes[0][0].set_ylabel(f"{metric} (mean over datasets)")
    axes[0][-1].legend(loc="center left", bbox_to_anchor=(1.02, 0.5), frameon=False, fontsize=8)
    fig.suptitle(f"{metric} against training {axis} ({other} = {fixed}); band: +/- mean sd over repeats and folds",
                 fontsize=10, y=1.02)
    paths = (f"{stem}.svg", f"{stem}.png")
    fig.savefig(paths[0], bbox_inches="tight")
    fig.savefig(paths[1], dpi=110, bbox_inches="tight")
    plt.close(fig)
    return paths

