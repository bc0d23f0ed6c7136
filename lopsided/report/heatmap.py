"""Rank map: one row per dataset (ordered by imbalance ratio), one column per method, each cell coloured by
the method's rank on that dataset (1 = best; ties share the mean rank, as in Demšar 2006, section 3.2.2).

Drawn with matplotlib's object API (``Figure``), settings scoped with ``rc_context``: nothing global changes.
The colour ramp is our own: lightness falls steadily from the worst rank (pale) to the best (dark), so
the order survives every colour-vision deficiency and greyscale printing.
"""
import matplotlib
import numpy as np
from matplotlib.colors import LinearSegmentedColormap
from matplotlib.figure import Figure

INK, MISSING = "#1d2935", "#d8d4cc"
RAMP = LinearSegmentedColormap.from_list("lopsided-rank", ["#14323f", "#2f6f78", "#8fb8a4", "#f4ecd8"])
CHAR = 0.066          # inches per character of tick-label text at 8 points
CELL = 0.26           # inches per cell
MAX_NUMBERS = 400     # above this many cells the rank numbers are left out (the colour bar still reads)
WHITE_BELOW = 0.225   # cell luminance where white and ink text have equal contrast (WCAG 2.1 ratio, 3.8:1)


def ranks_by_dataset(matrix, higher_is_better=True):
    """Per-dataset ranks of a datasets x methods score ``matrix``; a missing score stays missing and the
    others are ranked among themselves."""
    return matrix.rank(axis=1, ascending=not higher_is_better, method="average")


def draw_rank_map(ranks, row_labels, stem, title):
    """Write ``stem``.svg and .png of a ranks table (rows and columns in the order to draw); returns the
    two paths. ``row_labels`` name the rows (dataset with its imbalance ratio)."""
    n_rows, n_cols = ranks.shape
    label_in = max(len(t) for t in row_labels) * CHAR + 0.3
    top_in = max(len(str(c)) for c in ranks.columns) * CHAR + 0.5
    width, height = label_in + CELL * n_cols + 1.3, top_in + CELL * n_rows + 0.35
    fig = Figure(figsize=(width, height))
    ax = fig.add_axes((label_in / width, 0.2 / height, CELL * n_cols / width, CELL * n_rows / height))
    values = np.ma.masked_invalid(ranks.to_numpy(dtype=float))
    ramp = RAMP.with_extremes(bad=MISSING)
    image = ax.imshow(values, cmap=ramp, vmin=1, vmax=max(n_cols, 2), aspect="auto", interpolation="nearest")
    ax.set_xticks(range(n_cols), [str(c) for c in ranks.columns], rotation=90, fontsize=8)
    ax.set_yticks(range(n_rows), row_labels, fontsize=8)
    ax.xaxis.tick_top()
    ax.tick_params(length=0)
    for side in ax.spines.values():
        side.set_visible(False)
    if n_rows * n_cols <= MAX_NUMBERS:
        for (row, col), rank in np.ndenumerate(ranks.to_numpy(dtype=float)):
            if np.isfinite(rank):
                ax.text(col, row, f"{rank:g}", ha="center", va="center", fontsize=6.5,
                        color="white" if _luminance(ramp(image.norm(rank))) < WHITE_BELOW else INK)
    bar = fig.add_axes(((label_in + CELL * n_cols + 0.25) / width, 0.2 / height, 0.14 / width,
                        CELL * n_rows / height))
    scale = fig.colorbar(image, cax=bar)
    scale.ax.invert_yaxis()
    scale.set_label("rank on the dataset (1 = best)", fontsize=8)
    scale.ax.tick_params(labelsize=7)
    fig.text(0.01, 1 - 0.12 / height, title, ha="left", va="top", fontsize=9, color=INK, weight="bold")
    paths = (f"{stem}.svg", f"{stem}.png")
    with matplotlib.rc_context({"svg.fonttype": "none", "font.size": 8}):
        fig.savefig(paths[0])
        fig.savefig(paths[1], dpi=110)
    return paths


def _luminance(rgba):
    """Relative luminance of an sRGB colour (WCAG 2.1 definition): picks white or ink text on a cell."""
    linear = [c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4 for c in rgba[:3]]
    return 0.2126 * linear[0] + 0.7152 * linear[1] + 0.0722 * linear[2]
