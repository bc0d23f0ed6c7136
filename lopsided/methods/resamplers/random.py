"""Random re-sampling: under-sampling and three ways of over-sampling by copying.

The three over-samplers differ only in how the extra minority rows are drawn; all keep
the other classes untouched and return originals first, then the added rows.
"""
import numpy as np

from .base import as_rng, check_shapes, check_xy, finite, over_targets, under_targets


class NoResampling:
    """Baseline: the training set as it is."""

    def __init__(self, random_state=None):
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        return X, y


class RandomUnder:
    """Random under-sampling of the larger classes down to the target balance.

    Reference: Japkowicz (2000), "The class imbalance problem: significance and
    strategies", Proc. IC-AI. Never duplicates a sample.
    """

    def __init__(self, balance=1.0, random_state=None):
        self.balance = balance
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_shapes(X, y)              # only the rows kept need to be finite: checked once chosen
        rng = as_rng(self.random_state)
        caps = under_targets(y, self.balance)
        parts = [np.flatnonzero(y == label) for label in np.unique(y) if label not in caps]
        parts += [rng.choice(np.flatnonzero(y == label), cap, replace=False) for label, cap in caps.items()]
        keep = np.sort(np.concatenate(parts))
        return finite(X[keep]), y[keep]


class _CopyOver:
    """Shared body: each smaller class is replaced by ``_class_rows(members, extra, rng)``."""

    def __init__(self, balance=1.0, random_state=None):
        self.balance = balance
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        rng = as_rng(self.random_state)
        extras = over_targets(y, self.balance)
        parts = [np.flatnonzero(~np.isin(y, list(extras)))]
        for label, extra in extras.items():
            parts.append(self._class_rows(np.flatnonzero(y == label), extra, rng))
        rows = np.concatenate(parts)
        return X[rows], y[rows]

    def _class_rows(self, members, extra, rng):
        """Positions of the ``extra`` added rows of one class, drawn from ``members``."""
        raise NotImplementedError


class RepeatOver(_CopyOver):
    """Whole copies of the minority class as often as they fit, the remainder drawn without replacement.

    With n minority samples and m extra rows, every sample appears 1 + m // n or 2 + m // n
    times: the most even duplication possible (classical random over-sampling by replication,
    e.g. Ling & Li 1998, KDD, "Data mining for direct marketing").
    """

    @staticmethod
    def _class_rows(members, extra, rng):
        whole, rest = divmod(extra, len(members))
        return np.concatenate([np.tile(members, 1 + whole), rng.choice(members, rest, replace=False)])


class BootstrapOver(_CopyOver):
    """The minority class replaced by a bootstrap sample of the target size (Efron 1979).

    Some originals may be missing from the result: drawing m from n with replacement leaves
    each original out with probability (1 - 1/n)^m, about 1/e when m = n.
    """

    @staticmethod
    def _class_rows(members, extra, rng):
        return rng.choice(members, len(members) + extra, replace=True)


class TopUpOver(_CopyOver):
    """Every original minority sample kept once, only the missing number bootstrapped."""

    @staticmethod
    def _class_rows(members, extra, rng):
        return np.concatenate([members, rng.choice(members, extra, replace=True)])
