"""Cluster-centre under-sampling (Yen & Lee 2009, Expert Syst. Appl. 36:5718, cluster-based
under-sampling): each class above the target is replaced by the centres of k-means clusters
(Lloyd 1982), one centre per kept sample. The centres are new points, not original samples. By default
k-means runs on columns standardised over the rows given and the centres are mapped back into the original
units (``neighbours.Scaling``)."""
import numpy as np
from sklearn.cluster import KMeans

from .base import check_xy, under_targets
from .neighbours import Scaling


class KMeansCentres:
    def __init__(self, balance=1.0, distances="standardized", random_state=None):
        self.balance = balance
        self.distances = distances
        self.random_state = random_state

    def rebalance(self, X, y):
        X, y = check_xy(X, y)
        scaling = Scaling.of(X, self.distances)
        Z = scaling.apply(X)
        caps = under_targets(y, self.balance)
        rows = [X[~np.isin(y, list(caps))]]
        labels = [y[~np.isin(y, list(caps))]]
        for label, cap in caps.items():
            model = KMeans(n_clusters=cap, n_init=1, random_state=self.random_state).fit(Z[y == label])
            rows.append(scaling.undo(model.cluster_centers_))
            labels.append(np.full(cap, label, dtype=y.dtype))
        return np.concatenate(rows), np.concatenate(labels)
