"""One full comparison of methods over datasets: ranks, omnibus tests, post-hoc tests, plain words."""
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..errors import AnalysisError, unknown
from . import bayes, posthoc
from . import ranks as rankmod
from .leaders import first_place_share, tied_first

MISSING_POLICIES = ("drop-datasets", "drop-methods")
MIN_DATASETS = 5   # our rule: below this no significance claim at all (see Comparison.no_claim_reason)
BAYES_DRAWS = 70_000   # Monte Carlo standard error of a posterior probability <= 0.5 / sqrt(draws) = 0.0019


@dataclass
class Comparison:
    metric: str
    higher_is_better: bool
    alpha: float
    rope: float
    average_ranks: pd.Series          # sorted, best first
    rank_intervals: pd.DataFrame      # bootstrap percentile interval per method
    friedman: rankmod.FriedmanResult
    nemenyi: posthoc.CriticalDifference
    nemenyi_alpha10: posthoc.CriticalDifference
    nemenyi_p: pd.DataFrame
    groups: list                      # lists of method names not significantly different
    pairwise: list                    # dicts a, b, wilcoxon_p, holm_p, nemenyi_p, bayes (pairs with the best
                                      # or the control only; None for the rest)
    control: str | None = None
    bonferroni_dunn: posthoc.CriticalDifference | None = None
    bonferroni_dunn_p: dict = field(default_factory=dict)
    against_control: dict = field(default_factory=dict)   # method -> Wilcoxon p and Holm p over the k - 1
    dropped: list = field(default_factory=list)   # what the missing-cell policy removed
    missing_policy: str = "drop-datasets"
    datasets: list = field(default_factory=list)
    scores: pd.DataFrame | None = None       # the complete datasets x methods table the ranks come from
    first_place: pd.Series | None = None     # bootstrap probability of the best average rank (leaders.py)
    leaders: list = field(default_factory=list)   # methods sharing the best average rank
    bayes_draws: int = BAYES_DRAWS

    @property
    def methods(self):
        return list(self.average_ranks.index)

    @property
    def claims_allowed(self):
        """False below MIN_DATASETS datasets: the report then makes no significance claim."""
        return self.friedman.n_datasets >= MIN_DATASETS

    @property
    def no_claim_reason(self):
        """Why no significance claim is made, or '' when claims are allowed."""
        if self.claims_allowed:
            return ""
        return (f"only {self.friedman.n_datasets} datasets: below {MIN_DATASETS} lopsided makes no significance "
                "claim (the Nemenyi and Bonferroni-Dunn critical differences rest on a large-sample "
                "approximation, and no two-sided Wilcoxon signed-rank test on 5 or fewer pairs can reach "
                "p < 0.05: its smallest p is 2 / 2^N)")

    def as_json(self):
        """The stats.json content."""
        f = self.friedman
        out = {
            "metric": self.metric, "higher_is_better": self.higher_is_better,
            "n_datasets": f.n_datasets, "n_methods": f.n_methods, "alpha": self.alpha, "rope": self.rope,
            "missing_policy": self.missing_policy, "dropped": self.dropped, "datasets": self.datasets,
            "average_ranks": {m: float(r) for m, r in self.average_ranks.items()},
            "rank_intervals": {m: [float(r.low), float(r.high)] for m, r in self.rank_intervals.iterrows()},
            "friedman": {"chi2": f.chi2, "p": f.p, "chi2_tie_corrected": f.chi2_tie_corrected,
                         "p_tie_corrected": f.p_tie_corrected, "dof": f.n_methods - 1,
                         "p_kind": "chi-square approximation (Friedman 1937)",
                         "reason": "" if np.isfinite(f.chi2_tie_corrected) else
                         "tie-corrected chi2 undefined: every dataset ties all methods"},
            "permutation": None if f.permutation is None else {
                "p": f.permutation.p, "method": f.permutation.method, "draws": f.permutation.draws,
                "standard_error": f.permutation.standard_error,
                "reason": f.iman_davenport_note or
                          "chi-square approximation not adequate (Demšar 2006: needs N > 10 and k > 5)"},
            "iman_davenport": {"F": f.iman_davenport_F, "p": f.iman_davenport_p,
                               "dof": [f.n_methods - 1, (f.n_methods - 1) * (f.n_datasets - 1)],
                               "reason": f.iman_davenport_note},
            "decision": {"p": f.decision_p, "test": f.decision_test, "claims_allowed": self.claims_allowed,
                         "reason": self.no_claim_reason},
            "nemenyi": {"q_alpha": self.nemenyi.q_alpha, "cd": self.nemenyi.cd,
                        "alpha_0.10": {"q_alpha": self.nemenyi_alpha10.q_alpha, "cd": self.nemenyi_alpha10.cd}},
            "groups": self.groups,
            "leaders": self.leaders,
            "first_place_share": {} if self.first_place is None else
                                       {m: float(v) for m, v in self.first_place.items()},
            "bayes_draws": self.bayes_draws,
            "pairwise": self.pairwise,
        }
        if self.control is not None and self.bonferroni_dunn is not None:
            out["bonferroni_dunn"] = {"control": self.control, "q_alpha": self.bonferroni_dunn.q_alpha,
                                      "cd": self.bonferroni_dunn.cd, "p": self.bonferroni_dunn_p}
            out["against_control"] = {"control": self.control, "test": "Wilcoxon signed-rank, Holm over the "
                                      f"{len(self.against_control)} comparisons with the control",
                                      "methods": self.against_control}
        return _finite(out)


def _finite(value):
    """Strict JSON has no NaN or infinity: they become null (the block's 'reason' field says why)."""
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, list):
        return [_finite(v) for v in value]
    if isinstance(value, float) and not np.isfinite(value):
        return None
    return value


def apply_missing_policy(matrix, policy):
    """Remove incomplete datasets (rows) or methods (columns); never impute. Returns (table, dropped).

    A method with no score on any dataset is always removed first (it cannot be ranked, and under
    drop-datasets it would otherwise remove every dataset); it is listed among the dropped.
    """
    if policy not in MISSING_POLICIES:
        raise AnalysisError(unknown("missing-cell policy", policy, MISSING_POLICIES))
    empty = matrix.isna().all(axis=0)
    dropped = [f"{m} (no scores)" for m in empty[empty].index]
    matrix = matrix.loc[:, ~empty]
    axis = 1 if policy == "drop-datasets" else 0
    incomplete = matrix.isna().any(axis=axis)
    dropped += [str(x) for x in incomplete[incomplete].index]
    kept = matrix.loc[~incomplete] if axis == 1 else matrix.loc[:, ~incomplete]
    return kept, dropped


def compare(matrix, metric="score", higher_is_better=True, alpha=0.05, control=None, rope=0.01,
            missing="drop-datasets", samples=BAYES_DRAWS, seed=0):
    """Full comparison of the columns (methods) of ``matrix`` over its rows (datasets).

    ``samples``: posterior draws of the Bayesian signed-rank test, which is computed for the pairs a
    report speaks about: each method with the best, and with the control."""
    if not 0 < alpha < 1:
        raise AnalysisError(f"alpha={alpha} must lie between 0 and 1")
    if rope < 0:
        raise AnalysisError(f"rope={rope} must be zero or positive")
    # Rows and columns in name order: the result must not depend on the order of the input file.
    ordered = matrix.astype(float).sort_index(axis=0).sort_index(axis=1)
    table, dropped = apply_missing_policy(ordered, missing)
    n, k = table.shape
    if n < 2 or k < 2:
        raise AnalysisError(f"a comparison needs at least 2 complete datasets and 2 methods; "
                            f"have {n} x {k} after the {missing} policy (dropped: {dropped or 'none'})")
    if control is not None and control not in table.columns:
        raise AnalysisError(unknown("control method", control, table.columns))
    rank_table = rankmod.rank_rows(table, higher_is_better)
    mean_ranks = rank_table.mean(axis=0).sort_values(kind="mergesort")
    order = list(mean_ranks.index)
    rank_table, table = rank_table[order], table[order]
    nemenyi = posthoc.nemenyi_cd(alpha, k, n)
    p_matrix = posthoc.nemenyi_p(mean_ranks.to_numpy(), n)
    leaders = tied_first(mean_ranks)
    result = Comparison(
        metric=metric, higher_is_better=higher_is_better, alpha=alpha, rope=rope,
        average_ranks=mean_ranks,
        rank_intervals=rankmod.bootstrap_rank_intervals(rank_table, seed=seed),
        friedman=rankmod.friedman(rank_table),
        nemenyi=nemenyi, nemenyi_alpha10=posthoc.nemenyi_cd(0.10, k, n),
        nemenyi_p=pd.DataFrame(p_matrix, index=order, columns=order),
        groups=[[order[i] for i in run] for run in posthoc.cliques(mean_ranks.to_numpy(), nemenyi.cd)],
        pairwise=_pairwise(table, higher_is_better, rope, p_matrix, samples, seed, {*leaders, control}),
        dropped=dropped, missing_policy=missing, datasets=[str(d) for d in table.index],
        scores=table, first_place=first_place_share(rank_table, seed=seed), leaders=leaders,
        bayes_draws=samples,
    )
    if control is not None:
        result.control = control
        result.bonferroni_dunn = posthoc.bonferroni_dunn_cd(alpha, k, n)
        p = posthoc.bonferroni_dunn_p(mean_ranks.to_numpy(), n, order.index(control))
        result.bonferroni_dunn_p = {m: float(v) for m, v in zip(order, p) if m != control}
        result.against_control = _against_control(result.pairwise, control)
    return result


def _against_control(pairwise, control):
    """Every method's Wilcoxon p against the control, Holm-adjusted over those k - 1 comparisons (the
    planned family of a comparison with a control; Demšar 2006, section 3.2.2; Benavoli et al. 2016)."""
    raw = {p["b"] if p["a"] == control else p["a"]: p["wilcoxon_p"] for p in pairwise if control in (p["a"], p["b"])}
    adjusted = posthoc.holm(list(raw.values()))
    return {m: {"wilcoxon_p": w, "holm_p": float(h)} for (m, w), h in zip(raw.items(), adjusted)}


def _pairwise(table, higher_is_better, rope, p_matrix, samples, seed, focus):
    """Every pair: Wilcoxon (Holm over all pairs) and Nemenyi p; the Bayesian signed-rank probabilities with
    their Monte Carlo standard error for the pairs that involve a method of ``focus`` (leaders, control)."""
    oriented = table.to_numpy(dtype=float) * (1.0 if higher_is_better else -1.0)
    names = list(table.columns)
    pairs = posthoc.all_pairs(names)
    posterior = bayes.SignedRank(len(table), samples=samples, seed=seed)
    wilcoxon = [posthoc.wilcoxon_p(oriented[:, i], oriented[:, j]) for i, j in pairs]
    adjusted = posthoc.holm(wilcoxon)
    rows = []
    for (i, j), w, h in zip(pairs, wilcoxon, adjusted):
        b = posterior(oriented[:, i], oriented[:, j], rope) if {names[i], names[j]} & focus else None
        rows.append({"a": names[i], "b": names[j], "wilcoxon_p": w, "holm_p": float(h),
                     "nemenyi_p": float(p_matrix[i, j]),
                     "bayes": None if b is None else {
                         "a_better": b.a_better, "equivalent": b.equivalent, "b_better": b.b_better,
                         "standard_error": bayes.monte_carlo_error(max(b.a_better, b.equivalent, b.b_better,
                                                                       key=lambda q: q * (1 - q)), samples)}})
    return rows
