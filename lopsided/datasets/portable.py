"""Arithmetic that gives the same bits on every x86-64 and ARM machine, for generated datasets.

numpy's vectorised ``exp``, ``log`` and ``power`` dispatch on CPU features at run time (AVX-512 code paths
among them) and do not promise the same last bit on every path; BLAS matrix products sum in an order that
depends on the kernel chosen for the CPU. A generated dataset is identified by its recipe, not its bytes, so
its bytes should still be the same everywhere. Here: the C library's scalar ``exp``, ``log`` and ``pow``
(since glibc 2.28 one implementation for every CPU with FMA, with errors claimed below one unit in the last
place; glibc 2.28 release notes, from memory), products summed term by term in a
fixed order with IEEE 754 operations that round correctly (+, -, *, /), and a final rounding of every value
to a multiple of ``QUANTUM``, which absorbs a last-bit difference except in the rare case that it straddles
a rounding boundary.
"""
import math

import numpy as np

QUANTUM = 2.0 ** -24       # about 6e-8: a unit peak at snr 1,000 has a noise sd of 1e-3, about 16,800 quanta
_exp = np.frompyfunc(math.exp, 1, 1)
_log = np.frompyfunc(math.log, 1, 1)
_pow = np.frompyfunc(math.pow, 2, 1)


def exp(x):
    """e^x, element by element, by the C library's scalar exp."""
    return np.asarray(_exp(np.asarray(x, dtype=np.float64)), dtype=np.float64)


def log(x):
    """Natural logarithm, element by element, by the C library's scalar log."""
    return np.asarray(_log(np.asarray(x, dtype=np.float64)), dtype=np.float64)


def power(base, exponent):
    """base ** exponent, element by element, by the C library's scalar pow."""
    return np.asarray(_pow(np.asarray(base, dtype=np.float64), np.asarray(exponent, dtype=np.float64)),
                      dtype=np.float64)


def weighted_sum(weights, shapes):
    """weights (n, b) @ shapes (b, p), summed over b in order, one correctly rounded operation at a time."""
    weights, shapes = np.asarray(weights, dtype=np.float64), np.asarray(shapes, dtype=np.float64)
    total = np.zeros((weights.shape[0], shapes.shape[1]))
    for j in range(shapes.shape[0]):
        total += weights[:, j:j + 1] * shapes[j]
    return total


def quantised(X):
    """X rounded to the nearest multiple of QUANTUM (exact: scaling by a power of two and rint)."""
    return np.rint(np.asarray(X, dtype=np.float64) / QUANTUM) * QUANTUM
