"""Inverse power law learning curves: how many minority samples a method needs to reach a target score.

Model (Figueroa, Zeng-Treitler, Kandula & Ngo 2012, "Predicting sample size required for classification
performance", BMC Medical Informatics and Decision Making 12:8):

    y(x) = (1 - a) - b x^c,   0 <= a <= 1,  b >= 0,  c < 0,

with x the number of minority training samples and y a score in [0, 1] (minority recall or the headline
metric); 1 - a is the asymptote, the score an unlimited minority class would reach. Fitted by weighted
nonlinear least squares with weights growing with x, as Figueroa et al. do (the larger training sets
give the less noisy and more relevant points); the default weights here, x / max(x), are our choice.

Fitting by variable projection: for fixed c the model is linear in (1 - a, b), so the best (a, b) under
the bounds has a closed form (minimum over the faces of the box), and only c needs a search: a grid in
log(-c) followed by golden-section refinement, vectorised over any number of curves at once. That
gives the starting point of ``fit_curve``'s scipy.optimize.least_squares fit and the bootstrap draws.
"""
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import least_squares

from .compare import AnalysisError

C_BOUNDS = (-3.0, -0.01)   # search range of c: a curve steeper than x^-3 is flat after the first few samples;
                           # one flatter than x^-0.01 is a straight line in log x that no score in [0, 1] fits
MAX_EXTRAPOLATION = 4.0    # common practice, not a theorem: answer sizes up to 4 x the largest measured
                           # minority count. The power law describes the measured range; how long it keeps
                           # holding beyond it is unknown, and past a few-fold step the fitted asymptote and
                           # exponent, not the data, decide the answer
_GRID = 97                 # grid points in log(-c): neighbouring values differ by 6 %
_GOLDEN_STEPS = 40         # shrinks the bracket around the best grid point by 0.618^40, about 4e-9
_PHI = (np.sqrt(5.0) - 1.0) / 2.0


def power_law(a, b, c, x):
    """y = (1 - a) - b x^c (Figueroa et al. 2012), broadcasting over arrays of parameters and counts."""
    return (1.0 - a) - b * x ** c


@dataclass(frozen=True)
class CurveFit:
    """Fitted y(x) = (1 - a) - b x^c (Figueroa et al. 2012)."""
    a: float                 # 1 - asymptote
    b: float
    c: float
    residual_sd: float       # sqrt(sum w (y - fit)^2 / sum w): weighted root mean square residual
    smallest_size: float     # measured range of x
    largest_size: float
    n_points: int

    @property
    def asymptote(self) -> float:
        """1 - a: the score the curve approaches with unlimited minority samples."""
        return 1.0 - self.a

    def predict(self, sizes) -> np.ndarray:
        """Scores the curve gives at the minority counts ``sizes``."""
        return power_law(self.a, self.b, self.c, np.asarray(sizes, dtype=float))


@dataclass(frozen=True)
class CurveBootstrap:
    """Refits of the curve on repeats (columns) resampled with replacement (percentile intervals: Efron & Tibshirani 1993, ch. 13)."""
    fit: CurveFit        # the fit on all repeats
    a: np.ndarray        # (draws,) per-draw parameters
    b: np.ndarray
    c: np.ndarray
    seed: int

    def band(self, sizes, percentiles: tuple[float, float] = (0.025, 0.975)) -> tuple[np.ndarray, np.ndarray]:
        """The draws' curves at the minority counts ``sizes``: their lower and upper percentiles (a 95 % band)."""
        draws = power_law(self.a[:, None], self.b[:, None], self.c[:, None], np.asarray(sizes, dtype=float)[None, :])
        low, high = np.quantile(draws, list(percentiles), axis=0)
        return low, high


def _best_line(sy, syy, sz, szz, syz):
    """Weighted least squares y ~ alpha + beta z with 0 <= alpha <= 1, beta <= 0; weights sum to 1.

    Inputs are the weighted sums of y, y^2, z, z^2, y z (broadcastable arrays). The constrained optimum
    of this convex problem is the best of the unconstrained optimum (when feasible) and the optima on
    the faces alpha = 0, alpha = 1 and beta = 0 (each clipped to its face). Returns (alpha, beta, sse).
    """
    def sse(alpha, beta):
        return syy - 2 * alpha * sy - 2 * beta * syz + alpha ** 2 + 2 * alpha * beta * sz + beta ** 2 * szz

    spread = szz - sz ** 2
    with np.errstate(divide="ignore", invalid="ignore"):
        beta_free = np.where(spread > 0, (syz - sy * sz) / np.where(spread > 0, spread, 1.0), 0.0)
    alpha_free = sy - beta_free * sz
    free_ok = (beta_free <= 0) & (alpha_free >= 0) & (alpha_free <= 1)
    candidates = [(alpha_free, beta_free)]
    for edge in (0.0, 1.0):
        candidates.append((np.full_like(syz, edge), np.minimum(0.0, (syz - edge * sz) / szz)))
    candidates.append((np.broadcast_to(np.clip(sy, 0.0, 1.0), syz.shape), np.zeros_like(syz)))
    errors = np.stack([sse(al, be) for al, be in candidates])
    errors[0] = np.where(free_ok, errors[0], np.inf)
    pick = np.argmin(errors, axis=0)
    alpha = np.choose(pick, [np.broadcast_to(al, syz.shape) for al, _ in candidates])
    beta = np.choose(pick, [np.broadcast_to(be, syz.shape) for _, be in candidates])
    return alpha, beta, np.min(errors, axis=0)


def _profile_fit(x, Y, w):
    """Best (a, b, c) for each row of Y (curves x points) at points x with weights w (summing to 1)."""
    sy, syy = Y @ w, (Y * Y) @ w
    u_low, u_high = np.log(-C_BOUNDS[1]), np.log(-C_BOUNDS[0])
    grid = np.linspace(u_low, u_high, _GRID)
    z = x[None, :] ** -np.exp(grid)[:, None]                                   # (grid, points)
    _, _, sse = _best_line(sy[:, None], syy[:, None], z @ w, (z * z) @ w, Y @ (w * z).T)
    best = np.argmin(sse, axis=1)

    def profile(u):
        zz = x[None, :] ** -np.exp(u)[:, None]                                 # (curves, points)
        return _best_line(sy, syy, zz @ w, (zz * zz) @ w, (Y * zz) @ w)

    low, high = grid[np.maximum(best - 1, 0)], grid[np.minimum(best + 1, _GRID - 1)]
    u1, u2 = high - _PHI * (high - low), low + _PHI * (high - low)
    f1, f2 = profile(u1)[2], profile(u2)[2]
    for _ in range(_GOLDEN_STEPS):
        left = f1 < f2                      # the minimum lies in [low, u2]
        high, low = np.where(left, u2, high), np.where(left, low, u1)
        new = np.where(left, high - _PHI * (high - low), low + _PHI * (high - low))
        f_new = profile(new)[2]
        u1, u2, f1, f2 = (np.where(left, new, u2), np.where(left, u1, new),
                          np.where(left, f_new, f2), np.where(left, f1, f_new))
    u = np.where(f1 < f2, u1, u2)
    u = np.where(np.minimum(f1, f2) <= sse[np.arange(len(best)), best], u, grid[best])
    alpha, beta, _ = profile(u)
    return 1.0 - alpha, -beta, -np.exp(u)


def _check_curve(sizes, scores):
    x, y = np.asarray(sizes, dtype=float), np.asarray(scores, dtype=float)
    if x.ndim != 1 or x.shape != y.shape:
        raise AnalysisError(f"sizes, scores: need two 1-D arrays of equal length; got shapes {x.shape} and {y.shape}")
    if not (np.isfinite(x).all() and (x > 0).all()):
        raise AnalysisError("sizes: minority counts must be positive finite numbers")
    if not (np.isfinite(y).all() and ((y >= 0) & (y <= 1)).all()):
        raise AnalysisError("scores: must be finite and lie in [0, 1] (a missing score leaves a gap: rerun it or "
                            "drop the point)")
    if len(np.unique(x)) < 3:
        raise AnalysisError(f"sizes: need at least 3 different minority counts to fit 3 parameters; "
                            f"got {len(np.unique(x))}")
    return x, y


def _default_weights(x):
    return x / x.max()


def _finish(x, y, w, a, b, c):
    residual = y - power_law(a, b, c, x)
    return CurveFit(float(a), float(b), float(c), float(np.sqrt(np.sum(w * residual ** 2) / np.sum(w))),
                    float(x.min()), float(x.max()), len(x))


def fit_curve(sizes, scores, weights=None) -> CurveFit:
    """Weighted least-squares fit of y = (1 - a) - b x^c (Figueroa et al. 2012).

    Parameters
    ----------
    sizes : array-like of float, shape (m,)
        Minority training counts x (positive; repeated values allowed, e.g. one point per repeat);
        at least 3 different values.
    scores : array-like of float, shape (m,)
        Scores in [0, 1] at those counts.
    weights : array-like of float, shape (m,), optional
        Positive weights; default x / max(x).

    Returns
    -------
    CurveFit
        scipy.optimize.least_squares (trust region reflective, bounds 0 <= a <= 1, b >= 0,
        C_BOUNDS[0] <= c <= C_BOUNDS[1]) on the residuals sqrt(w) (fit - y), started from the
        variable-projection optimum (module docstring), with the analytic Jacobian.
    """
    x, y = _check_curve(sizes, scores)
    w = _default_weights(x) if weights is None else np.asarray(weights, dtype=float)
    if w.shape != x.shape or not (np.isfinite(w).all() and (w > 0).all()):
        raise AnalysisError(f"weights: need {len(x)} positive finite weights, one per point")
    w = w / w.sum()
    root = np.sqrt(w)
    start = np.concatenate(_profile_fit(x, y[None, :], w))

    def residuals(p):
        return root * (1.0 - p[0] - p[1] * x ** p[2] - y)

    def jacobian(p):
        power = x ** p[2]
        return np.column_stack([-root, -root * power, -root * p[1] * power * np.log(x)])

    lower, upper = [0.0, 0.0, C_BOUNDS[0]], [1.0, np.inf, C_BOUNDS[1]]
    solved = least_squares(residuals, np.clip(start, lower, upper), jac=jacobian, bounds=(lower, upper),
                           method="trf", xtol=1e-12, ftol=1e-12, gtol=1e-12)
    a, b, c = solved.x if solved.cost <= 0.5 * np.sum(residuals(start) ** 2) else start
    return _finish(x, y, w, a, b, c)


def bootstrap_curve(table: pd.DataFrame, draws: int = 1000, seed: int = 0) -> CurveBootstrap:
    """Bootstrap of the learning curve over repeats.

    Parameters
    ----------
    table : pandas.DataFrame
        Minority training counts as the index (at least 3 different), one column per repeat, scores in
        [0, 1]; every repeat scored at every count.
    draws : int
        Bootstrap draws; each picks as many repeats (columns) as the table has, with replacement, and
        refits the curve to their mean at each count.
    seed : int

    Returns
    -------
    CurveBootstrap
        ``fit`` is ``fit_curve`` on the mean over all repeats (with the default weights this has the
        same optimum as fitting every point); the draws are fitted by the vectorised variable-projection
        solver, which agrees with least_squares (tests/test_learning_curve.py).
    """
    if draws < 1:
        raise AnalysisError(f"draws: {draws} must be at least 1")
    if table.shape[1] < 1 or not table.index.is_unique:
        raise AnalysisError("table: need one row per distinct minority count and at least one repeat column")
    values = table.to_numpy(dtype=float)
    if not (np.isfinite(values).all() and ((values >= 0) & (values <= 1)).all()):
        raise AnalysisError("table: every repeat needs a score in [0, 1] at every minority count (a failed run "
                            "leaves a gap: rerun it, or drop that repeat column)")
    try:
        counts = np.asarray(table.index, dtype=float)
    except (TypeError, ValueError):
        raise AnalysisError(f"table: the index must hold minority training counts; "
                            f"got {list(table.index)[:5]}") from None
    x, mean = _check_curve(counts, values.mean(axis=1))
    fit = fit_curve(x, mean)
    w = _default_weights(x)
    rng = np.random.default_rng(seed)
    picks = rng.integers(0, values.shape[1], size=(draws, values.shape[1]))
    means = values[:, picks].mean(axis=2).T                                  # (draws, sizes)
    a, b, c = _profile_fit(x, means, w / w.sum())
    return CurveBootstrap(fit, a, b, c, seed)


@dataclass(frozen=True)
class NeededSize:
    """Minority count at which the fitted curve reaches a target score."""
    target: float
    status: str            # "estimated", "never reaches" or "too far"
    size: float | None     # from the fit on all data; None unless status is "estimated"
    low: float | None      # percentile interval over bootstrap draws (None without a bootstrap, or when that
    high: float | None     # end lies beyond the extrapolation limit or never reaches the target)
    limit: float           # MAX_EXTRAPOLATION x the largest measured minority count
    reason: str            # which rule stopped the answer or opened the interval; "" when none did


def _inverse(a, b, c, target):
    """x with (1 - a) - b x^c = target; inf where the asymptote 1 - a does not exceed the target."""
    a, b, c = (np.asarray(v, dtype=float) for v in (a, b, c))
    gap = 1.0 - a - target
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = np.where(b > 0, (gap / np.where(b > 0, b, 1.0)) ** (1.0 / c), 0.0)
    return np.where(gap > 0, x, np.inf)


def needed_size(model: CurveFit | CurveBootstrap, target: float, level: float = 0.95) -> NeededSize:
    """Minority training count needed for the curve to reach ``target``, with a bootstrap interval.

    Parameters
    ----------
    model : CurveFit or CurveBootstrap
        A fitted curve; a bootstrap adds the percentile interval.
    target : float
        Score in (0, 1].
    level : float
        Coverage of the percentile interval.

    Returns
    -------
    NeededSize
        x = ((1 - a - target) / b)^(1/c) from the fit on all data, or a refusal saying which rule
        stopped it: "never reaches" when the asymptote 1 - a is at or below the target, "too far" when x
        exceeds MAX_EXTRAPOLATION times the largest measured count. The size may lie below the smallest
        measured count (the curve is already above the target there); it is 0 for a flat curve (b = 0)
        above the target. Interval ends that fall beyond the limit are None and ``reason`` says so.
    """
    if not (0 < target <= 1):
        raise AnalysisError(f"target: {target} must lie in (0, 1]")
    if not (0 < level < 1):
        raise AnalysisError(f"level: {level} must lie between 0 and 1")
    fit = model.fit if isinstance(model, CurveBootstrap) else model
    limit = MAX_EXTRAPOLATION * fit.largest_size
    rule = (f"MAX_EXTRAPOLATION: lopsided answers up to {MAX_EXTRAPOLATION:g} x the largest measured minority "
            f"count ({fit.largest_size:g}), i.e. {limit:g} (common practice, not a theorem)")
    point = float(_inverse(fit.a, fit.b, fit.c, target))
    if not np.isfinite(point):
        return NeededSize(target, "never reaches", None, None, None, limit,
                          f"the fitted asymptote 1 - a = {fit.asymptote:.4g} does not exceed the target {target:g}")
    if point > limit:
        return NeededSize(target, "too far", None, None, None, limit,
                          f"the fit needs about {point:.4g}, beyond the extrapolation limit; {rule}")
    if not isinstance(model, CurveBootstrap):
        return NeededSize(target, "estimated", point, None, None, limit, "")
    sizes = _inverse(model.a, model.b, model.c, target)
    sizes = np.where(sizes > limit, np.inf, sizes)
    tail = (1.0 - level) / 2.0
    low, high = (float(v) for v in np.quantile(sizes, [tail, 1.0 - tail], method="inverted_cdf"))
    reason = ""
    if not np.isfinite(high):
        share = float(np.mean(np.isinf(sizes)))
        reason = (f"{share:.0%} of the bootstrap draws never reach the target or need more than the limit: "
                  f"the interval is open above; {rule}")
    return NeededSize(target, "estimated", point, low if np.isfinite(low) else None,
                      high if np.isfinite(high) else None, limit, reason)
