"""What a comparison allows one to claim, in plain sentences (for ranking.md and the leaderboard)."""

LOW_POWER_DATASETS = 10   # common practice, not a theorem: below this the Friedman test has little power


def claims(result):
    """Sentences, most important first."""
    f, n, k, a = result.friedman, result.friedman.n_datasets, result.friedman.n_methods, result.alpha
    best = result.methods[0]
    lines = []
    if f.iman_davenport_p >= a:
        lines.append(f"The Friedman test (Iman-Davenport form) finds no significant difference among the {k} methods "
                     f"at alpha = {a:g} (p = {f.iman_davenport_p:.3g}, N = {n} datasets): the data do not support any ranking claim.")
    else:
        lines.append(f"The Friedman test rejects equal performance of the {k} methods "
                     f"(Iman-Davenport F = {f.iman_davenport_F:.3g}, p = {f.iman_davenport_p:.3g}; "
                     f"chi2_F = {f.chi2:.3g}, p = {f.p:.3g}; N = {n} datasets).")
    top = next((g for g in result.groups if best in g), [best])
    if len(top) == k:
        lines.append(f"No two of the {k} methods differ significantly by the Nemenyi test "
                     f"(alpha = {a:g}, CD = {result.nemenyi.cd:.3g} ranks).")
    elif len(top) > 1:
        lines.append(f"No significant difference (Nemenyi, alpha = {a:g}, CD = {result.nemenyi.cd:.3g}) among the top "
                     f"{len(top)}: {', '.join(top)}.")
    beaten = [m for m in result.methods[1:] if result.nemenyi_p.loc[best, m] < a]
    if beaten and f.iman_davenport_p < a:
        lines.append(f"{best} ranks first and is significantly better (Nemenyi) than {len(beaten)} of the other "
                     f"{k - 1}: {', '.join(beaten)}.")
    elif f.iman_davenport_p < a:
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
    equivalent = [(p["a"], p["b"]) for p in result.pairwise if p["bayes"]["rope"] >= 0.95]
    if equivalent:
        shown = "; ".join(f"{x} ~ {y}" for x, y in equivalent[:5])
        more = f" and {len(equivalent) - 5} more" if len(equivalent) > 5 else ""
        lines.append(f"Practically equivalent within +/-{result.rope:g} (Bayesian signed-rank, P(rope) >= 0.95): {shown}{more}.")
    if n < LOW_POWER_DATASETS:
        lines.append(f"Only {n} datasets: with fewer than {LOW_POWER_DATASETS} the Friedman test has little power, "
                     "so a non-significant result is inconclusive, not evidence of equivalence.")
    lines.append("Nemenyi is conservative (it controls all k(k-1)/2 comparisons at once); for a few planned pairs "
                 "use the Holm-corrected Wilcoxon p-values, and the Bayesian probabilities for practical relevance.")
    if result.dropped:
        lines.append(f"Left out because scores were missing (failed or not run), never imputed: {', '.join(result.dropped)}.")
    lines.append("Rankings assume the datasets are independent; sets cut from the same original data are not.")
    return lines
