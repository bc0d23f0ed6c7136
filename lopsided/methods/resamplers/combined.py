"""Over-sampling followed by cleaning (Batista, Prati & Monard 2004, SIGKDD Explorations 6:20):
SMOTE then removal of both members of every Tomek link; SMOTE then ENN over all classes. Both steps measure
distances in one space: the columns standardised over the training part given (``neighbours.Scaling``), so
the synthetic points do not shift the scale the cleaning step uses."""
import numpy as np

from .base import ResamplingError, as_rng, check_xy
from .cleaning import enn_removals, tomek_links
from .neighbours import Scaling
from .smote import Smote


class SmoteThenTomek:
    def __init__(self, balance=1.0, neighbours=5, distances="standardized", random_state=None):
        self.balance = balance
        self.neighbours = neighbours
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        scaling = Scaling.of(X, self.distances)
        X, y = Smote(self.balance, self.neighbours, self.distances, as_rng(self.random_state)).rebalance(X, y)
        keep = np.setdiff1d(np.arange(len(y)), tomek_links(scaling.apply(X), y).ravel())
        return X[keep], y[keep]


class SmoteThenEditing:
    def __init__(self, balance=1.0, neighbours=5, edit_neighbours=3, distances="standardized", random_state=None):
        self.balance = balance
        self.neighbours = neighbours
        self.edit_neighbours = edit_neighbours
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        scaling = Scaling.of(X, self.distances)
        X, y = Smote(self.balance, self.neighbours, self.distances, as_rng(self.random_state)).rebalance(X, y)
        keep = ~enn_removals(scaling.apply(X), y, self.edit_neighbours, np.ones(len(y), bool))
        if len(np.unique(y[keep])) < len(np.unique(y)):
            raise ResamplingError("editing removed every sample of a class; use fewer neighbours")
        return X[keep], y[keep]
