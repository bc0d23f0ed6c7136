"""Over-sampling followed by cleaning (Batista, Prati & Monard 2004, SIGKDD Explorations 6:20):
SMOTE then removal of both members of every Tomek link; SMOTE then ENN over all classes."""
from .base import as_rng
from .cleaning import NeighbourEditing, TomekCleaning
from .smote import Smote


class SmoteThenTomek:
    def __init__(self, balance=1.0, neighbours=5, random_state=None):
        self.balance = balance
        self.neighbours = neighbours
        self.random_state = random_state

    def fit_resample(self, X, y):
        X, y = Smote(self.balance, self.neighbours, as_rng(self.random_state)).fit_resample(X, y)
        return TomekCleaning(remove="both").fit_resample(X, y)


class SmoteThenEditing:
    def __init__(self, balance=1.0, neighbours=5, edit_neighbours=3, random_state=None):
        self.balance = balance
        self.neighbours = neighbours
        self.edit_neighbours = edit_neighbours
        self.random_state = random_state

    def fit_resample(self, X, y):
        X, y = Smote(self.balance, self.neighbours, as_rng(self.random_state)).fit_resample(X, y)
        return NeighbourEditing(self.edit_neighbours, classes="all").fit_resample(X, y)
