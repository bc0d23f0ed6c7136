"""What a comparison allows one to claim, in plain sentences (for ranking.md and the leaderboard).

The omnibus test comes first and gates everything after it (Demšar 2006, section 3.2.2): post-hoc tests
(Nemenyi, tests against a control) are claimed only when the Friedman test rejects *after* adjustment for
the leaderboard's other omnibus tests (``multiplicity.Decision``); otherwise their numbers stay in
stats.json as exploratory and no sentence claims them.
"""

from .compare import MIN_DATASETS
from .multiplicity import single

LOW_POWER_DATASETS = 10   # common practice, not a theorem: below this the Friedman test has little power
LIST_AT_MOST = 6          # longer lists of methods are counted, not spelled out


def statistic(f):
    """The omnibus numbers behind the decision, in one parenthesis."""
    if f.permutation is None:
        return f"Iman-Davenport F = {f.iman_davenport_F:.3g}, p = {f.iman_davenport_p:.3g}"
    kind = (f"exact permutation p = {f.permutation.p:.3g}" if f.permutation.method == "exact" else
            f"Monte Carlo permutation p = {f.permutation.p:.3g} ({f.permutation.draws} draws, SE "
            f"{f.permutation.standard_error:.2g})")
    return f"chi2_F = {f.chi2:.3g}, {kind}; chi-square approximation p = {f.p:.3g}"


def listed(names):
    """'a, b and c', or 'a, b, c and 7 more' for long lists."""
    names = list(names)
    if len(names) > LIST_AT_MOST:
        return f"{', '.join(names[:LIST_AT_MOST - 1])} and {len(names) - LIST_AT_MOST + 1} more"
    return names[0] if len(names) == 1 else f"{', '.join(names[:-1])} and {names[-1]}"


def omnibus(result, decision):
    """One sentence: what the Friedman test decides for this comparison, adjusted for its family."""
    f, k, n, a = result.friedman, result.friedman.n_methods, result.friedman.n_datasets, result.alpha
    role = "primary analysis" if decision.role == "primary" else "exploratory comparison"
    adjusted = (f"adjusted p = {decision.adjusted:.3g}, {decision.family}" if decision.adjusted is not None
                else "no adjustment")
    if decision.rejects:
        return (f"The Friedman test rejects equal performance of the {k} methods ({statistic(f)}; N = {n} "
                f"datasets; {role}, {adjusted}).")
    if f.decision_p < a:
        return (f"The Friedman test gives p = {f.decision_p:.3g} ({statistic(f)}; N = {n} datasets), but not below "
                f"alpha = {a:g} after adjustment ({role}, {adjusted}): no ranking claim.")
    return (f"The Friedman test does not reject equal performance of the {k} methods at alpha = {a:g} "
            f"({statistic(f)}; N = {n} datasets; {role}): the data do not support any ranking claim.")


def claims(result, decision=None, against_control=None):
    """Sentences, most important first. ``decision``: the comparison's Decision (default: a family of one);
    ``against_control``: {method: adjusted p} of the tests against the control when their family is larger
    than this comparison's k - 1 (the primary analysis: every learner's comparisons with its control)."""
    decision = decision or single(result)
    f, n = result.friedman, result.friedman.n_datasets
    if not result.claims_allowed:
        return [f"No significance claim: {result.no_claim_reason}. The ranking below describes these datasets only "
                f"({statistic(f)})."]
    lines = [omnibus(result, decision)]
    if f.iman_davenport_note:
        lines.append(f"Iman-Davenport F is {f.iman_davenport_note}.")
    if decision.rejects:
        lines += _post_hoc(result, against_control)
    else:
        lines.append("Post-hoc numbers (Nemenyi, tests against the control, pairwise Wilcoxon) are in stats.json as "
                     "exploratory only: with the omnibus test not rejecting, none of them is claimed.")
    lines += _leaders(result)
    equivalent = [m for m, p in _with_best(result) if p is not None and p["equivalent"] >= 0.95]
    if equivalent:
        lines.append(f"Practically equivalent to {result.methods[0]} within +/-{result.rope:g} (Bayesian signed-rank, "
                     f"P(equivalent) >= 0.95 over {result.bayes_draws:,} draws; a probability, not a significance "
                     f"test): {listed(equivalent)}.")
    if n < LOW_POWER_DATASETS and not decision.rejects:
        lines.append(f"Only {n} datasets: with fewer than {LOW_POWER_DATASETS} the Friedman test has little power, "
                     "so a non-significant result is inconclusive, not evidence of equivalence.")
    if result.dropped:
        lines.append(f"Left out because scores were missing (failed or not run), never imputed: {listed(result.dropped)}.")
    return lines


def smallest_p(n, tests):
    """The smallest Holm-adjusted p-value a two-sided Wilcoxon signed-rank test on n pairs can reach in a family
    of ``tests``: its smallest p is 2 / 2^n (every difference of one sign), multiplied by the family size."""
    return min(1.0, tests * 2.0 / 2.0 ** n)


def _post_hoc(result, against_control=None):
    """Nemenyi and control claims, made only after a rejecting omnibus test. The direction of a difference from
    the control is the sign of the mean difference of the scores (the effect), not of the average ranks."""
    a, k, best = result.alpha, result.friedman.n_methods, result.methods[0]
    lines = []
    top = next((g for g in result.groups if best in g), [best])
    beaten = [m for m in result.methods[1:] if result.nemenyi_p.loc[best, m] < a]
    if len(top) == k:
        lines.append(f"The Nemenyi test (alpha = {a:g}, CD = {result.nemenyi.cd:.3g} ranks) separates no two of the "
                     f"{k} methods.")
    elif beaten:
        lines.append(f"{best} ranks first; the Nemenyi test (alpha = {a:g}, CD = {result.nemenyi.cd:.3g} ranks) "
                     f"separates it from {len(beaten)} of the other {k - 1}: {listed(beaten)}; the other "
                     f"{k - 1 - len(beaten)} are not separated from it (which is not evidence that they are equal).")
    else:
        lines.append(f"{best} ranks first, but the Nemenyi test (CD = {result.nemenyi.cd:.3g}) separates no method "
                     "from it.")
    if result.control is not None:
        adjusted = against_control or {m: t["holm_p"] for m, t in result.against_control.items()}
        family = (f"Holm over all {len(against_control)} comparisons with a control in the primary analysis"
                  if against_control else f"Holm over the {len(adjusted)} comparisons with it")
        sign = (1.0 if result.higher_is_better else -1.0)
        gain = {m: sign * float((result.scores[m] - result.scores[result.control]).mean()) for m in adjusted}
        better = [m for m, p in adjusted.items() if p < a and gain[m] > 0]
        worse = [m for m, p in adjusted.items() if p < a and gain[m] < 0]
        found = ([f"better: {listed(better)}"] if better else []) + ([f"worse: {listed(worse)}"] if worse else [])
        floor = smallest_p(result.friedman.n_datasets, len(adjusted))
        none = (f"no method differs significantly; with {result.friedman.n_datasets} datasets and {len(adjusted)} "
                f"comparisons none could (the smallest attainable adjusted p is {floor:.3g})" if floor >= a
                else "no method differs significantly")
        lines.append(f"Against the control {result.control} (Wilcoxon signed-rank, {family}): "
                     + ("; ".join(found) if found else none) + ".")
    return lines


def _leaders(result):
    """Ties at the top said as ties, and how often the leader ranks first over resampled datasets."""
    if len(result.leaders) > 1:
        return [f"{listed(result.leaders)} share the best average rank ({result.average_ranks.iloc[0]:.3f}): a tie, "
                "no order among them is claimed."]
    best = result.methods[0]
    share = None if result.first_place is None else float(result.first_place.get(best, 0.0))
    if share is None:
        return []
    return [f"{best} has the best average rank in {100 * share:.0f} % of bootstrap resamples of the datasets (a "
            "resampling share, not a probability: it leans towards the observed leader)."]


def _with_best(result):
    """(other method, its Bayesian signed-rank probabilities against the best) for each other method."""
    best = result.methods[0]
    for p in result.pairwise:
        if best in (p["a"], p["b"]) and p["bayes"] is not None:
            yield (p["b"] if p["a"] == best else p["a"]), p["bayes"]


def caption(result, where, decision=None):
    """One sentence to paste under the CD figure in a paper; ``where`` names the metric and protocol point."""
    decision = decision or single(result)
    f = result.friedman
    if not result.claims_allowed:
        verdict = f"too few datasets for a significance claim (N < {MIN_DATASETS}); no bars drawn"
    elif decision.rejects:
        verdict = (f"{f.decision_test} = {f.decision_p:.3g}, adjusted p = {decision.adjusted:.3g} "
                   f"({decision.family}); methods joined by a bar are not separated by the Nemenyi test at alpha = "
                   f"{result.alpha:g} (CD = {result.nemenyi.cd:.2f})")
    else:
        verdict = (f"the Friedman test does not reject (p = {f.decision_p:.3g}, adjusted p = "
                   f"{decision.adjusted:.3g}), so no Nemenyi bars are drawn")
    return (f"Average ranks of {f.n_methods} methods over N = {f.n_datasets} datasets ({where}; 1 = best); "
            f"{verdict}. Statistics after Demšar (2006).")
