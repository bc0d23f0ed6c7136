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
    left: float    # P(the first method is practically better)
    rope: float    # P(practically equivalent: within the region of practical equivalence)
    right: float   # P(the second method is practically better)


def dirichlet_weights(n, samples=4000, prior=1.0, seed=0):
    """(samples, n + 1) posterior weights; column 0 belongs to the pseudo-observation at zero.

    One matrix may serve every pair of a comparison (same n): common random numbers.
    """
    rng = np.random.default_rng(seed)
    gammas = np.concatenate([rng.gamma(prior, size=(samples, 1)), rng.gamma(1.0, size=(samples, n))], axis=1)
    return gammas / gammas.sum(axis=1, keepdims=True)


def signed_rank(first, second, rope, weights):
    """P(left), P(rope), P(right) for paired scores, higher = better; left = ``first`` is better.

    Sorting z turns each double sum into cumulative sums: O(samples x n) per pair, no n x n matrix.
    """
    z = np.concatenate([[0.0], np.asarray(second, dtype=float) - np.asarray(first, dtype=float)])
    order = np.argsort(z, kind="mergesort")
    zs, W = z[order], weights[:, order]
    C = np.concatenate([np.zeros((len(W), 1)), np.cumsum(W, axis=1)], axis=1)
    below = np.searchsorted(zs, -2.0 * rope - zs, side="left")      # j with z_j < -2r - z_i
    above = np.searchsorted(zs, 2.0 * rope - zs, side="right")      # j with z_j <= 2r - z_i
    theta_left = np.sum(W * C[:, below], axis=1)
    theta_right = np.sum(W * (C[:, -1:] - C[:, above]), axis=1)
    theta = np.stack([theta_left, 1.0 - theta_left - theta_right, theta_right], axis=1)
    share = np.bincount(np.argmax(theta, axis=1), minlength=3) / len(theta)
    return BayesResult(*map(float, share))
