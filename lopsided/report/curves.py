"""Learning-curve figure for `lopsided try`: measured points, the fitted inverse power law, its bootstrap
band and the target (Figueroa et al. 2012: y = (1 - a) - b x^c over minority training counts)."""
from pathlib import Path

import matplotlib
import numpy as np
from matplotlib.figure import Figure

from ..methods.metrics import metric_name

INK, CURVE, BAND, TARGET = "#1d2935", "#2f7f79", "#2f7f79", "#c8553d"


def learning_curve_figure(curve, svg_path):
    """Draw ``curve`` (a fitted try_findings.LearningCurve) to ``svg_path`` and the PNG beside it; returns the SVG
    path."""
    svg_path = Path(svg_path)
    svg_path.parent.mkdir(parents=True, exist_ok=True)
    fig = Figure(figsize=(5.2, 3.4))
    ax = fig.subplots()
    grid = np.asarray(curve.grid)
    ax.fill_between(grid, curve.band[0], curve.band[1], color=BAND, alpha=0.15, lw=0,
                    label="95 % bootstrap band (repeats)")
    ax.plot(grid, curve.fit.predict(grid), color=CURVE, lw=1.8, label="fitted (1 - a) - b x^c")
    for x, values in curve.measured.items():
        ax.plot([float(x)] * len(values), values, "o", ms=3, color=INK, alpha=0.55)
    ax.plot([], [], "o", ms=3, color=INK, label="measured (one point per repeat)")
    ax.axhline(curve.target, color=TARGET, lw=1.2, ls="--", label=f"target {curve.target:g}")
    if curve.size:
        ax.axvline(curve.size, color=TARGET, lw=0.8, ls=":")
    ax.set_xscale("log")
    ax.set_xlabel("minority samples in the training set")
    ax.set_ylabel(metric_name(curve.metric))
    ax.set_title(f"{curve.method}: {metric_name(curve.metric)} learning curve", fontsize=10)
    ax.grid(alpha=0.3, lw=0.6)
    ax.legend(fontsize=7, frameon=False, loc="best")
    for side in ("top", "right"):
        ax.spines[side].set_visible(False)
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(svg_path, bbox_inches="tight")
    fig.savefig(svg_path.with_suffix(".png"), dpi=110, bbox_inches="tight")
    return svg_path
