"""What a comparison allows one to claim, in plain sentences (for ranking.md and the leaderboard)."""

from .compare import MIN_DATASETS

LOW_POWER_DATASETS = 10   # common practice, not a theorem: below this the Friedman test has little power


def _statistic(f):
    """The omnibus numbers behind the decision, in one parenthesis."""
    if f.permutation is None:
        return f"Iman-Davenport F = {f.iman_davenport_F:.3g}, p = {f.iman_davenport_p:.3g}"
    kind = "exact permutation" if f.permutation.method == "exact" else (
        f"Monte Carlo permutation, {f.permutation.draws} draws, SE {f.permutation.standard_error:.2g}")
    return f"chi2_F = {f.chi2:.3g}, {kind} p = {f.permutation.p:.3g}; chi-square approximation p = {f.p:.3g}"


def claims(result):
    """Sentences, most important first."""
    f, n, k, a = result.friedman, result.friedman.n_datasets, result.friedman.n_methods, result.alpha
    best = result.methods[0]
    if not result.claims_allowed:
        return [f"No significance claim: {result.no_claim_reason}. The ranking below describes these datasets only "
                f"({_statistic(f)}).",
                "Rankings assume the datasets are independent; sets cut from the same original data are not."]
    lines = []
    if f.decision_p >= a:
        lines.append(f"The Friedman test finds no significant difference among the {k} methods at alpha = {a:g} "
                     f"({_statistic(f)}; N = {n} datasets): the data do not support any ranking claim.")
    else:
        lines.append(f"The Friedman test rejects equal performance of the {k} methods "
                     f"({_statistic(f)}; N = {n} datasets).")
    if f.iman_davenport_note:
        lines.append(f"Iman-Davenport F is {f.iman_davenport_note}.")
    top = next((g for g in result.groups if best in g), [best])
    if len(top) == k:
        lines.append(f"The Nemenyi test separates no two of the {k} methods "
                     f"(alpha = {a:g}, CD = {result.nemenyi.cd:.3g} ranks).")
    elif len(top) > 1:
        lines.append(f"The Nemenyi test (alpha = {a:g}, CD = {result.nemenyi.cd:.3g}) cannot separate the top "
                     f"{len(top)}: {', '.join(top)}.")
    beaten = [m for m in result.methods[1:] if result.nemenyi_p.loc[best, m] < a]
    if beaten and f.decision_p < a:
        lines.append(f"{best} ranks first and is significantly better (Nemenyi) than {len(beaten)} of the other "
                     f"{k - 1}: {', '.join(beaten)}.")
    elif f.decision_p < a:
        lines.append(f"{best} ranks first, but no method is significantly worse than it by the Nemenyi test.")
    if result.control is not None:
        better = [m for m, p in result.bonferroni_dunn_p.items()
                  if p < a and result.average_ranks[m] < result.average_ranks[result.control]]
        worse = [m for m, p in result.bonferroni_dunn_p.items()
                 if p < a and result.average_ranks[m] > result.average_ranks[result.control]]
        found = []
        if better:
            found.append(f"significantly better: {', '.join(better)}")
        if worse:
            found.append(f"significantly worse: {', '.join(worse)}")
        lines.append(f"Against the control {result.control} (Bonferroni-Dunn, CD = {result.bonferroni_dunn.cd:.3g}): "
                     + ("; ".join(found) if found else "no method differs significantly") + ".")
    equivalent = [(p["a"], p["b"]) for p in result.pairwise if p["bayes"]["equivalent"] >= 0.95]
    if equivalent:
        shown = "; ".join(f"{x} ~ {y}" for x, y in equivalent[:5])
        more = f" and {len(equivalent) - 5} more" if len(equivalent) > 5 else ""
        lines.append(f"Practically equivalent within +/-{result.rope:g} (Bayesian signed-rank, P(equivalent) >= 0.95): {shown}{more}.")
    if n < LOW_POWER_DATASETS:
        lines.append(f"Only {n} datasets: with fewer than {LOW_POWER_DATASETS} the Friedman test has little power, "
                     "so a non-significant result is inconclusive, not evidence of equivalence.")
    lines.append("Nemenyi is conservative (it controls all k(k-1)/2 comparisons at once); for a few planned pairs "
                 "use the Holm-corrected Wilcoxon p-values, and the Bayesian probabilities for practical relevance.")
    if f.decision_p >= a and any(p["holm_p"] < a for p in result.pairwise):
        lines.append("Some Holm-corrected Wilcoxon p-values fall below alpha, but with a non-significant omnibus test "
                     "they are not a licence for a ranking claim.")
    if result.dropped:
        lines.append(f"Left out because scores were missing (failed or not run), never imputed: {', '.join(result.dropped)}.")
    lines.append("Rankings assume the datasets are independent; sets cut from the same original data are not.")
    return lines


def caption(result, where):
    """One sentence to paste under the CD figure in a paper; ``where`` names the metric and protocol point."""
    f = result.friedman
    verdict = (f"too few datasets for a significance claim (N < {MIN_DATASETS})" if not result.claims_allowed else
               f"omnibus {f.decision_test} = {f.decision_p:.3g}")
    return (f"Critical-difference diagram of {f.n_methods} methods over N = {f.n_datasets} datasets ({where}): "
            f"average rank, 1 = best; methods joined by a bar are not separated by the "
            f"{result.nemenyi.test} test at alpha = {result.alpha:g} (CD = {result.nemenyi.cd:.2f}); {verdict}. "
            f"Statistics after Demšar (2006).")
