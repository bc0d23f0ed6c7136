"""Many tests in one leaderboard: adjusted p-values across a family of omnibus tests.

A leaderboard runs one Friedman test per metric, protocol point and view. Claims rest on the declared
primary analysis (its own small family, Holm-adjusted); every other comparison is exploratory, and its
p-value is adjusted across all the run's omnibus tests:

* Holm (1979), Scand. J. Statist. 6:65, step-down: controls the family-wise error rate;
* Benjamini & Hochberg (1995), JRSS B 57:289, step-up: controls the false discovery rate (shown beside Holm;
  claims use Holm).
"""
from dataclasses import dataclass

import numpy as np

from .posthoc import holm


def benjamini_hochberg(p_values):
    """Benjamini-Hochberg adjusted p-values, in the input order: min over j >= i of m p_(j) / j, capped at 1."""
    p = np.asarray(p_values, dtype=float)
    m = len(p)
    if m == 0:
        return p
    order = np.argsort(p, kind="mergesort")
    scaled = p[order] * m / np.arange(1, m + 1)
    stepped = np.minimum.accumulate(scaled[::-1])[::-1]
    adjusted = np.empty(m)
    adjusted[order] = np.minimum(1.0, stepped)
    return adjusted



@dataclass(frozen=True)
class Decision:
    """What one comparison's omnibus test licenses, given its place in the leaderboard's tests.

    ``role``: "primary" (declared before the run: confirmatory) or "exploratory". ``p``: the omnibus test's
    own p-value (``FriedmanResult.decision_p``); ``adjusted``: Holm within the primary family for a primary
    comparison, Holm across every omnibus test of the run for an exploratory one; ``run_holm`` / ``run_bh``:
    across the run's family (Holm; Benjamini-Hochberg). ``rejects``: claims are allowed (enough datasets) and
    ``adjusted`` < alpha. Post-hoc claims (Nemenyi, tests against a control) are made only when it rejects.
    """

    role: str
    p: float | None
    adjusted: float | None
    run_holm: float | None
    run_bh: float | None
    primary_tests: int
    run_tests: int
    alpha: float
    claims_allowed: bool

    @property
    def rejects(self):
        return self.claims_allowed and self.adjusted is not None and self.adjusted < self.alpha

    @property
    def family(self):
        """The family its adjusted p-value was computed in, in words."""
        if self.role == "primary":
            return f"Holm over the {self.primary_tests} omnibus tests of the primary analysis"
        return f"Holm over all {self.run_tests} omnibus tests of this leaderboard"

    def as_json(self):
        return {"role": self.role, "p": self.p, "adjusted_p": self.adjusted, "adjusted_in": self.family,
                "run_holm_p": self.run_holm, "run_benjamini_hochberg_p": self.run_bh, "rejects": self.rejects,
                "alpha": self.alpha, "claims_allowed": self.claims_allowed}


def decide(tests, alpha):
    """One Decision per (role, p, claims_allowed) in ``tests``. Tests without claims (too few datasets)
    join no family; a family adjusts only the tests that can lead to a claim."""
    counted = [i for i, (_, p, allowed) in enumerate(tests) if allowed and p is not None]
    primary = [i for i in counted if tests[i][0] == "primary"]
    run_holm = dict(zip(counted, holm([tests[i][1] for i in counted])))
    run_bh = dict(zip(counted, benjamini_hochberg([tests[i][1] for i in counted])))
    primary_holm = dict(zip(primary, holm([tests[i][1] for i in primary])))
    decisions = []
    for i, (role, p, allowed) in enumerate(tests):
        adjusted = primary_holm.get(i) if role == "primary" else run_holm.get(i)
        decisions.append(Decision(role, p, None if adjusted is None else float(adjusted),
                                  None if i not in run_holm else float(run_holm[i]),
                                  None if i not in run_bh else float(run_bh[i]), len(primary), len(counted), alpha,
                                  bool(allowed)))
    return decisions


def single(result):
    """The Decision of a comparison that is the whole analysis (``lopsided rank``): its own family of one."""
    p = result.friedman.decision_p
    return decide([("primary", p, result.claims_allowed)], result.alpha)[0]


__all__ = ["Decision", "benjamini_hochberg", "decide", "holm", "single"]
