"""Critical-difference figure: methods on an average-rank axis, bars over groups the test cannot separate.

Our layout: the rank axis runs left (best) to right; the better half of the methods is named
on the left, the rest on the right, one row each, so long names never collide; bars under the
axis join methods closer than the critical difference; the CD is drawn to scale above the axis.
"""
import matplotlib
from matplotlib.figure import Figure

from .compare import MIN_DATASETS

INK, MUTED, BAR, MARK, GRID = "#1d2935", "#5b6b7a", "#2f7f79", "#c8553d", "#dfe4e8"
FONT = 9.0
ROW = 0.24          # inches per method row
CHAR = 0.068        # inches per character at FONT points (DejaVu Sans, measured on average text)


NAMED_AT_MOST = 16   # larger comparisons name their best NAMED_TOP and mark the rest on the axis unnamed
NAMED_TOP = 12


def draw(result, stem, title=None, bars=None, note=None):
    """Write ``stem``.svg and ``stem``.png; returns the two paths. ``bars``: draw the Nemenyi bars and the
    CD (default: when the comparison allows claims); without them the figure shows average ranks only and
    ``note`` (or a default) says why. With more than NAMED_AT_MOST methods only the best NAMED_TOP are
    named (the rest are dots on the axis, listed in the table beside the figure), so labels keep their size."""
    bars_shown = result.claims_allowed if bars is None else bars
    every = result.average_ranks.to_numpy()
    k = len(every)
    shown = k if k <= NAMED_AT_MOST else NAMED_TOP
    names = result.methods[:shown]
    ranks = every[:shown]
    left_n = (shown + 1) // 2
    label_in = (max(len(n) for n in names) + 7) * CHAR + 0.5
    scale_in = max(4.0, min(9.0, 0.55 * k))
    bars = [g for g in result.groups if result.methods.index(g[0]) < shown] if bars_shown else []
    height = 1.25 + ROW * (left_n + 1) + 0.14 * len(bars)
    width = scale_in + 2 * label_in
    fig = Figure(figsize=(width, height))
    ax = fig.add_axes((label_in / width, 0.0, scale_in / width, 1.0))
    ax.set_xlim(1, k)
    ax.set_ylim(-(height - 0.95) / ROW, 0.95 / ROW)
    ax.axis("off")
    _axis(ax, k)
    if bars_shown:
        _cd_scale(ax, result.nemenyi.cd, k)
    bar_base = -0.55
    for row, group in enumerate(bars):
        lo, hi = every[result.methods.index(group[0])], every[result.methods.index(group[-1])]
        y = bar_base - row * 0.55
        ax.plot([lo - 0.03, hi + 0.03], [y, y], color=BAR, lw=3.2, solid_capstyle="round")
    first_label = bar_base - len(bars) * 0.55 - 0.6
    for rank in every[shown:]:
        ax.plot([rank], [0], marker="o", ms=2.5, color=MUTED, clip_on=False)
    for i, (name, rank) in enumerate(zip(names, ranks)):
        on_left = i < left_n
        row = i if on_left else shown - 1 - i
        y = first_label - row
        edge = 1 - 0.03 * (k - 1) if on_left else k + 0.03 * (k - 1)
        ax.plot([rank, rank, edge], [0, y, y], color=MUTED, lw=0.8, clip_on=False)
        ax.plot([rank], [0], marker="o", ms=4, color=INK, clip_on=False)
        ax.text(edge + (-0.01 if on_left else 0.01) * (k - 1), y,
                f"{name}  {rank:.2f}" if on_left else f"{rank:.2f}  {name}",
                ha="right" if on_left else "left", va="center", fontsize=FONT, color=INK, clip_on=False)
    f = result.friedman
    caption = title or f"{result.metric}: average rank over {f.n_datasets} datasets (1 = best)"
    if not result.claims_allowed:
        verdict = note or f"no significance claim (N < {MIN_DATASETS}): no bars"
    elif bars_shown:
        verdict = f"bars: {result.nemenyi.test} test, alpha = {result.alpha:g}; {note or f'{f.decision_test} = {f.decision_p:.2g}'}"
    else:
        verdict = note or "the Friedman test does not reject: no bars"
    test = f"N = {f.n_datasets} datasets, k = {f.n_methods} methods; {verdict}"
    if shown < k:
        test += f"; the best {shown} named, {k - shown} more as grey dots (see the table)"
    fig.text(0.5, 1 - 0.18 / height, caption, ha="center", va="top", fontsize=FONT + 1.5, color=INK, weight="bold")
    fig.text(0.5, 1 - 0.42 / height, test, ha="center", va="top", fontsize=FONT - 0.5, color=MUTED)
    paths = (f"{stem}.svg", f"{stem}.png")
    with matplotlib.rc_context({"svg.fonttype": "none"}):
        fig.savefig(paths[0])
    fig.savefig(paths[1], dpi=120)
    return paths


def _axis(ax, k):
    ax.plot([1, k], [0, 0], color=INK, lw=1.2)
    for tick in range(1, k + 1):
        ax.plot([tick, tick], [0, 0.22], color=INK, lw=1.0)
        ax.text(tick, 0.35, str(tick), ha="center", va="bottom", fontsize=FONT - 0.5, color=INK)


def _cd_scale(ax, cd, k):
    y = 1.35
    end = min(1 + cd, k)
    ax.plot([1, end], [y, y], color=MARK, lw=2.0)
    for x in (1, end):
        ax.plot([x, x], [y - 0.15, y + 0.15], color=MARK, lw=1.5)
    ax.text(end + 0.05 * (k - 1) / 4, y, f"CD = {cd:.2f}", ha="left", va="center", fontsize=FONT - 0.5, color=MARK)
