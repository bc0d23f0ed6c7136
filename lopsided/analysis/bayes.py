"""Bayesian signed-rank test (Benavoli, Mangili, Corani, Zaffalon & Ruggeri 2014, ICML;
tutorial form in Benavoli, Corani, Demšar & Zaffalon 2017, JMLR 18(77), section 5).

The differences z_1..z_n get a Dirichlet-process posterior whose prior puts one
pseudo-observation (weight ``prior``) at z_0 = 0, so the weights of (z_0, ..., z_n) are
Dirichlet(prior, 1, ..., 1). For each draw w:
    theta_left  = sum_ij w_i w_j [z_i + z_j < -2 r]
    theta_right = sum_ij w_i w_j [z_i + z_j >  2 r]
    theta_rope  = 1 - theta_left - theta_right
and P(left), P(rope), P(right) are the shares of draws in which that theta is the largest.
"""
from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class BayesResult:
    a_better: float     # P(the first method is practically better): theta_left is the largest
    equivalent: float   # P(practically equivalent: within the region of practical equivalence)
    b_better: float     # P(the second method is practically better): theta_right is the largest


def monte_carlo_error(probability, draws):
    """Standard error of a probability estimated as a share of ``draws`` posterior draws: sqrt(p (1 - p) / S)."""
    return float(np.sqrt(probability * (1.0 - probability) / draws))


def dirichlet_weights(n, samples=4000, prior=1.0, seed=0):
    """(n + 1, samples) posterior weights, one column per draw; row 0 is the pseudo-observation at zero."""
    rng = np.random.default_rng(seed)
    gammas = np.concatenate([rng.gamma(prior, size=(1, samples)), rng.gamma(1.0, size=(n, samples))], axis=0)
    return gammas / gammas.sum(axis=0, keepdims=True)


class SignedRank:
    """Posterior draws shared by every pair of one comparison (common random numbers, fixed seed).

    Sorting z turns each double sum into cumulative sums: O(samples x n) per pair, no n x n
    matrix; scratch buffers are reused across pairs (fresh multi-megabyte arrays per pair cost
    more in page faults than the arithmetic).
    """

    def __init__(self, n, samples=4000, prior=1.0, seed=0):
        self.weights = dirichlet_weights(n, samples, prior, seed)
        self._sorted = np.empty_like(self.weights)
        self._cumulative = np.zeros((n + 2, samples))
        self._picked = np.empty_like(self.weights)

    def __call__(self, first, second, rope):
        """P(a better), P(equivalent), P(b better) for paired scores a = ``first``, b = ``second``, higher = better."""
        z = np.concatenate([[0.0], np.asarray(second, dtype=float) - np.asarray(first, dtype=float)])
        order = np.argsort(z, kind="mergesort")
        zs, W, C = z[order], self._sorted, self._cumulative
        np.take(self.weights, order, axis=0, out=W)
        for m, row in enumerate(W):                 # C[m] = sum of the first m sorted weights, per draw
            np.add(C[m], row, out=C[m + 1])
        below = np.searchsorted(zs, -2.0 * rope - zs, side="left")      # j with z_j < -2r - z_i
        above = np.searchsorted(zs, 2.0 * rope - zs, side="right")      # j with z_j <= 2r - z_i
        theta_left = np.einsum("ij,ij->j", W, np.take(C, below, axis=0, out=self._picked))
        theta_right = 1.0 - np.einsum("ij,ij->j", W, np.take(C, above, axis=0, out=self._picked))
        theta = np.stack([theta_left, 1.0 - theta_left - theta_right, theta_right])
        share = np.bincount(np.argmax(theta, axis=0), minlength=3) / theta.shape[1]
        return BayesResult(*map(float, share))
