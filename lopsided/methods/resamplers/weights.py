"""Cost-sensitive learning as a baseline: no resampling, the learner weighs each class instead.

Weights w_c = n / (k * n_c) make every class carry the same total weight (the 'balanced'
heuristic of King & Zeng 2001, Political Analysis 9:137, as scikit-learn implements it). The
runner passes them as ``sample_weight`` to the learner's ``fit``; learners whose ``fit`` takes
no sample weights (k-NN) fail those cells with a message saying so.
"""
import numpy as np

from .base import check_xy


def balanced_weights(y):
    labels, counts = np.unique(y, return_counts=True)
    per_class = len(y) / (len(labels) * counts)
    return per_class[np.searchsorted(labels, y)]


class ClassWeights:
    """Returns the training set unchanged and asks the runner to weigh the classes."""

    def __init__(self, random_state=None):
        self.random_state = random_state

    def rebalance(self, X, y):
        return check_xy(X, y)

    @staticmethod
    def sample_weight(y):
        return balanced_weights(y)
