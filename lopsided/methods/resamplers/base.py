"""What every built-in resampler shares: input checks, random generators, target class counts."""
import numpy as np

from ...errors import ResamplingError

__all__ = ["ResamplingError", "all_finite", "as_rng", "check_balance", "check_resampled", "check_shapes", "check_xy",
           "finite", "over_targets", "under_targets"]


def check_xy(X, y):
    """Float 2-D X with finite values and integer y of the same length with at least two classes."""
    X, y = check_shapes(X, y)
    return finite(X), y


def check_shapes(X, y):
    """``check_xy`` without the scan for non-finite values (for a method that checks only the rows it returns)."""
    X = np.asarray(X, dtype=np.float64)
    y = np.asarray(y)
    if X.ndim != 2 or y.ndim != 1 or len(X) != len(y):
        raise ResamplingError(f"X must be 2-D and y 1-D of the same length, got {X.shape} and {y.shape}")
    if len(np.unique(y)) < 2:
        raise ResamplingError("the training set holds one class only; there is nothing to rebalance")
    return X, y


def all_finite(X):
    """Whether every value of X is finite. A finite sum proves it (NaN and infinity propagate through a
    sum); only a sum that overflows needs the scan, value by value."""
    with np.errstate(over="ignore", invalid="ignore"):
        return bool(np.isfinite(np.sum(X))) or bool(np.isfinite(X).all())


def finite(X):
    """X, once every value is known to be finite (else a ResamplingError)."""
    if not all_finite(X):
        raise ResamplingError("X holds NaN or infinite values; impute them in the preprocessing list first")
    return X


def as_rng(random_state):
    """None, an int seed or a Generator -> numpy Generator."""
    if isinstance(random_state, np.random.Generator):
        return random_state
    return np.random.default_rng(random_state)


def check_balance(balance):
    if not (isinstance(balance, (int, float)) and 0 < balance <= 1):
        raise ResamplingError(f"balance={balance!r} must be in (0, 1]: the minority:majority ratio after resampling")
    return float(balance)


def over_targets(y, balance):
    """{class: extra samples needed} so every class reaches round(balance * largest count).

    Multi-class rule: each smaller class is raised relative to the largest class;
    classes already at or above the target are left alone. The target is rounded to the nearest
    count (a common reference implementation truncates it and takes a ratio for two classes only).
    """
    labels, counts = np.unique(y, return_counts=True)
    goal = int(round(check_balance(balance) * counts.max()))
    return {label: goal - count for label, count in zip(labels, counts) if count < goal}


def under_targets(y, balance):
    """{class: samples to keep} so no class exceeds round(smallest count / balance).

    Rounded to the nearest count, where a common reference implementation truncates (30 / 0.7:
    43 here, 42 there)."""
    labels, counts = np.unique(y, return_counts=True)
    cap = int(round(counts.min() / check_balance(balance)))
    return {label: cap for label, count in zip(labels, counts) if count > cap}


def check_resampled(name, X_in, y_in, X_out, y_out):
    """What a resampler must hand back before any learner sees it; names the rule broken."""
    X_out, y_out = np.asarray(X_out), np.asarray(y_out)
    rules = (
        (X_out.ndim == 2 and y_out.ndim == 1 and len(X_out) == len(y_out),
         "returns a 2-D X and a 1-D y of the same length"),
        (X_out.ndim == 2 and X_out.shape[1] == X_in.shape[1],
         f"keeps the number of features ({X_in.shape[1]})"),
        (np.issubdtype(X_out.dtype, np.number) and all_finite(X_out), "returns finite numbers only"),
        (np.isin(y_out, np.unique(y_in)).all(), "draws labels only from the input's labels"),
        (np.isin(np.unique(y_in), y_out).all(), "keeps at least one sample of every class"),
    )
    for ok, rule in rules:
        if not ok:
            raise ResamplingError(f"resampler {name} broke the rule: output {rule}")
    return X_out.astype(np.float64, copy=False), y_out.astype(y_in.dtype, copy=False)
