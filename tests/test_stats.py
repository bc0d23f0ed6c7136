"""Ranking statistics against scipy, scikit-posthocs, published tables and hand computations."""
import json

import numpy as np
import pandas as pd
import pytest
import scikit_posthocs
from scipy import stats

from lopsided.analysis import AnalysisError, compare
from lopsided.analysis.bayes import SignedRank
from lopsided.analysis.posthoc import bonferroni_dunn_q, holm, nemenyi_p, nemenyi_q, wilcoxon_p
from lopsided.analysis.ranks import friedman, rank_rows
from lopsided.cli import main


def random_scores(n=14, k=5, seed=0, ties=False):
    rng = np.random.default_rng(seed)
    values = rng.normal(size=(n, k)) + np.linspace(0, 1.5, k)
    if ties:
        values = np.round(values, 0)
    return pd.DataFrame(values, index=[f"d{i}" for i in range(n)], columns=[f"m{j}" for j in range(k)])


@pytest.mark.parametrize("ties", [False, True])
def test_tie_corrected_friedman_matches_scipy(ties):
    table = random_scores(ties=ties)
    result = friedman(rank_rows(table))
    reference = stats.friedmanchisquare(*[table[c] for c in table.columns])
    assert result.chi2_tie_corrected == pytest.approx(reference.statistic, rel=1e-10)
    assert result.p_tie_corrected == pytest.approx(reference.pvalue, rel=1e-8)


def test_uncorrected_friedman_and_iman_davenport_by_hand():
    """Demšar (2006), JMLR 7, eq. (1) and (2), computed here from the rank sums directly."""
    table = random_scores(n=9, k=4, seed=3, ties=True)
    R = rank_rows(table).to_numpy()
    n, k = R.shape
    rank_sums = R.sum(axis=0)
    chi2 = 12.0 / (n * k * (k + 1)) * np.sum(rank_sums ** 2) - 3.0 * n * (k + 1)
    F = (n - 1) * chi2 / (n * (k - 1) - chi2)
    result = friedman(rank_rows(table))
    assert result.chi2 == pytest.approx(chi2)
    assert result.p == pytest.approx(stats.chi2.sf(chi2, k - 1))
    assert result.iman_davenport_F == pytest.approx(F)
    assert result.iman_davenport_p == pytest.approx(stats.f.sf(F, k - 1, (k - 1) * (n - 1)))


def demsar_example_ranks():
    """14 datasets x 4 methods whose rank sums are 44, 28, 40.5 and 27.5: the average ranks 3.143, 2.000, 2.893
    and 1.964 of Demšar (2006), section 3.2.2 (the uncorrected Friedman statistic depends on the rank sums
    only). Scores are 5 - rank, so the best method (rank 1) scores highest; one tie gives the half ranks."""
    rows = [[4, 2, 3, 1]] * 3 + [[4, 1, 3, 2]] * 3 + [[3, 2, 4, 1]] * 2 + [
        [3, 1, 4, 2], [2, 1, 4, 3], [1, 3, 2, 4], [1, 4, 2, 3], [4, 2, 1, 3], [3, 4, 1.5, 1.5]]
    return pd.DataFrame(5.0 - np.array(rows), index=[f"d{i}" for i in range(14)], columns=list("ABCD"))


def test_demsar_worked_example_four_methods_fourteen_datasets():
    """Demšar (2006), JMLR 7, section 3.2.2 (from the paper's text): average ranks 3.143, 2.000, 2.893, 1.964
    over N = 14 datasets give chi2_F = 9.28 and F_F = 3.69, and the Nemenyi critical difference at alpha 0.05
    is 1.25; lopsided's own Friedman, Iman-Davenport and Nemenyi code must reproduce them."""
    table = demsar_example_ranks()
    assert rank_rows(table).sum().tolist() == [44, 28, 40.5, 27.5]
    result = compare(table)
    assert result.average_ranks[list("ABCD")].tolist() == pytest.approx([3.143, 2.000, 2.893, 1.964], abs=5e-4)
    assert result.friedman.chi2 == pytest.approx(9.28, abs=0.01)
    assert result.friedman.iman_davenport_F == pytest.approx(3.69, abs=0.01)
    assert result.nemenyi.cd == pytest.approx(1.25, abs=0.005)


# Demšar (2006), JMLR 7, Table 5(a): two-tailed Nemenyi critical values, k = 2..10.
NEMENYI_05 = [1.960, 2.343, 2.569, 2.728, 2.850, 2.949, 3.031, 3.102, 3.164]
NEMENYI_10 = [1.645, 2.052, 2.291, 2.459, 2.589, 2.693, 2.780, 2.855, 2.920]
# Table 5(b): Bonferroni-Dunn. The printed 2.724 at k = 9, alpha 0.05 disagrees with the normal
# quantile z(1 - 0.05/16) = 2.734 by 0.01; we compute from the distribution and treat the table
# entry as a misprint (every other entry agrees within rounding).
BONFERRONI_05 = [1.960, 2.241, 2.394, 2.498, 2.576, 2.638, 2.690, 2.734, 2.773]
BONFERRONI_10 = [1.645, 1.960, 2.128, 2.241, 2.326, 2.394, 2.450, 2.498, 2.539]


@pytest.mark.parametrize("k", range(2, 11))
def test_q_alpha_against_demsar_table_5(k):
    assert nemenyi_q(0.05, k) == pytest.approx(NEMENYI_05[k - 2], abs=1.5e-3)
    assert nemenyi_q(0.10, k) == pytest.approx(NEMENYI_10[k - 2], abs=1.5e-3)
    assert bonferroni_dunn_q(0.05, k) == pytest.approx(BONFERRONI_05[k - 2], abs=1.5e-3)
    assert bonferroni_dunn_q(0.10, k) == pytest.approx(BONFERRONI_10[k - 2], abs=1.5e-3)


def test_nemenyi_p_values_match_scikit_posthocs():
    table = random_scores(n=20, k=6, seed=2)
    ours = nemenyi_p(rank_rows(table).mean(axis=0).to_numpy(), len(table))
    theirs = scikit_posthocs.posthoc_nemenyi_friedman(table.to_numpy()).to_numpy()
    np.testing.assert_allclose(ours, theirs, atol=1e-6)


@pytest.mark.parametrize("seed", range(40))
def test_wilcoxon_p_with_ties_and_zeros_is_scipys(seed):
    """Scores on a coarse grid (ties and zero differences, as rounded scores give) on 5 to 16 datasets: the
    p-value is scipy.stats.wilcoxon's default, including its sign-flip permutation test for ties or zeros
    among at most 13 pairs, which wilcoxon_p evaluates vectorised."""
    rng = np.random.default_rng(seed)
    n = int(rng.integers(5, 17))
    a, b = rng.integers(0, 6, n) / 5, rng.integers(0, 6, n) / 5
    if seed % 10 == 0:
        b[1:] = a[1:]                            # a single non-zero difference
    if not np.any(a - b):
        b[0] = 1 - a[0] or 0.2
    assert wilcoxon_p(a, b) == pytest.approx(stats.wilcoxon(a - b).pvalue, rel=1e-12, abs=1e-15)


def test_pairwise_wilcoxon_matches_scipy_and_holm_is_applied():
    table = random_scores(n=16, k=4, seed=5)
    result = compare(table)
    for pair in result.pairwise:
        expected = stats.wilcoxon(table[pair["a"]] - table[pair["b"]]).pvalue
        assert pair["wilcoxon_p"] == pytest.approx(expected)
    raw = [p["wilcoxon_p"] for p in result.pairwise]
    assert [p["holm_p"] for p in result.pairwise] == pytest.approx(list(holm(raw)))


def test_holm_hand_worked_example():
    """Four p-values 0.01, 0.04, 0.03, 0.005 (the example of the Wikipedia article
    'Holm-Bonferroni method', from memory): adjusted 4*0.005, 3*0.01, 2*0.03, then max(0.04, 0.06)."""
    assert holm([0.01, 0.04, 0.03, 0.005]) == pytest.approx([0.03, 0.06, 0.06, 0.02])


def brute_force_thetas(first, second, rope, weights):
    """The double sums of Benavoli et al. (2017), written out with an explicit n x n loop."""
    z = np.r_[0.0, np.asarray(second) - np.asarray(first)]
    pair = z[:, None] + z[None, :]
    left = ((pair < -2 * rope) * 1.0)
    right = ((pair > 2 * rope) * 1.0)
    out = []
    for w in weights.T:
        tl, tr = w @ left @ w, w @ right @ w
        out.append(np.argmax([tl, 1 - tl - tr, tr]))
    return np.bincount(out, minlength=3) / len(out)


def test_bayesian_signed_rank_fast_form_equals_the_double_sum():
    rng = np.random.default_rng(9)
    a, b = rng.normal(0.8, 0.05, 25), rng.normal(0.8, 0.05, 25) + 0.015
    posterior = SignedRank(25, samples=400, seed=1)
    got = posterior(a, b, 0.01)
    assert [got.a_better, got.equivalent, got.b_better] == pytest.approx(list(brute_force_thetas(a, b, 0.01, posterior.weights)))


def test_bayesian_signed_rank_sanity():
    rng = np.random.default_rng(4)
    base = rng.uniform(0.6, 0.9, 30)
    posterior = SignedRank(30, seed=0)
    same = posterior(base, base + rng.normal(0, 0.001, 30), 0.01)
    assert same.equivalent > 0.99
    far = posterior(base + 0.1, base, 0.01)      # first better everywhere by 10 ropes
    assert far.a_better > 0.99
    assert posterior(base, base + 0.1, 0.01).b_better > 0.99


def test_two_methods_all_ties_and_lower_is_better():
    two = random_scores(n=10, k=2, seed=1)
    result = compare(two)
    assert result.friedman.n_methods == 2 and len(result.pairwise) == 1
    tied = pd.DataFrame(np.ones((8, 3)), columns=list("abc"))
    result = compare(tied)
    assert result.friedman.chi2 == 0 and list(result.average_ranks) == [2.0, 2.0, 2.0]
    assert result.pairwise[0]["wilcoxon_p"] == 1.0 and result.groups == [["a", "b", "c"]]
    errors = random_scores(seed=3)
    assert list(compare(errors, higher_is_better=False).average_ranks.index) == \
        list(compare(-errors).average_ranks.index)


def test_a_missing_cell_drops_that_dataset_and_says_so():
    table = random_scores(n=12, k=4)
    table.iloc[3, 1] = np.nan
    result = compare(table)
    assert result.friedman.n_datasets == 11 and result.dropped == ["d3"]
    result = compare(table, missing="drop-methods")
    assert result.friedman.n_methods == 3 and result.dropped == ["m1"]
    with pytest.raises(AnalysisError, match="at least 2 complete datasets"):
        compare(table.iloc[:1])


def test_rank_command_wide_and_long_give_the_same_statistics(tmp_path):
    table = random_scores(n=12, k=5, seed=8)
    wide = tmp_path / "wide.csv"
    table.rename_axis("dataset").to_csv(wide)
    long = tmp_path / "long.csv"
    table.rename_axis("dataset").reset_index().melt("dataset", var_name="method", value_name="score").to_csv(long, index=False)
    assert main(["rank", str(wide), "--out", str(tmp_path / "w"), "--control", "m0"]) == 0
    assert main(["rank", str(long), "--out", str(tmp_path / "l"), "--control", "m0"]) == 0
    a = json.loads((tmp_path / "w" / "stats.json").read_text())
    b = json.loads((tmp_path / "l" / "stats.json").read_text())
    assert a == b
    for key in ("n_datasets", "n_methods", "alpha", "average_ranks", "friedman", "iman_davenport", "nemenyi",
                "groups", "pairwise"):
        assert key in a
    assert set(a["friedman"]) >= {"chi2", "p", "chi2_tie_corrected", "p_tie_corrected"}
    assert set(a["pairwise"][0]) >= {"a", "b", "wilcoxon_p", "holm_p", "bayes"}
    for name in ("cd.svg", "cd.png", "ranking.md"):
        assert (tmp_path / "w" / name).is_file()


def test_rank_command_bad_input_is_one_clear_error(tmp_path, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("dataset,a,b\nd1,0.5,zero\nd2,0.4,0.3\n")
    assert main(["rank", str(bad), "--out", str(tmp_path / "o")]) == 2
    assert "'b' on 'd1' is not a number" in capsys.readouterr().err
    assert main(["rank", str(tmp_path / "none.csv"), "--out", str(tmp_path / "o")]) == 2
    good = tmp_path / "good.csv"
    random_scores(n=5, k=3).rename_axis("dataset").to_csv(good)
    assert main(["rank", str(good), "--out", str(tmp_path / "o"), "--control", "m9"]) == 2
    assert "unknown control method 'm9'" in capsys.readouterr().err


def test_wilcoxon_exact_p_by_enumeration_and_no_difference_at_all():
    """Two-sided exact signed-rank p (Wilcoxon 1945) by enumerating all 2^n sign patterns of the ranks, here and
    independently of scipy (which lopsided calls): n = 5 differences all positive give p = 2 / 32; with one of
    them negative (the smallest), R+ = 14 of 15 and p = 2 * 2 / 32. Every difference zero: p = 1 by our rule."""
    from itertools import product

    from lopsided.analysis.posthoc import wilcoxon_p
    def exact(d):
        ranks = stats.rankdata(np.abs(d))
        observed = ranks[d > 0].sum()
        sums = [sum(r for r, s in zip(ranks, signs) if s) for signs in product((0, 1), repeat=len(d))]
        tail = min(np.mean([t >= observed for t in sums]), np.mean([t <= observed for t in sums]))
        return min(1.0, 2 * tail)
    a = np.array([0.91, 0.84, 0.77, 0.88, 0.95])
    for b in (a - [0.05, 0.04, 0.03, 0.02, 0.01], a - [0.05, 0.04, 0.03, 0.02, -0.01]):
        assert wilcoxon_p(a, b) == pytest.approx(exact(a - b), rel=1e-12)
    assert exact(a - (a - [0.05, 0.04, 0.03, 0.02, 0.01])) == pytest.approx(2 / 32)
    assert wilcoxon_p(a, a) == 1.0


def test_claims_say_what_the_numbers_allow():
    from lopsided.analysis.words import claims
    rng = np.random.default_rng(1)
    strong = pd.DataFrame(rng.normal(size=(20, 4)) * 0.01 + [0.9, 0.7, 0.5, 0.3], columns=["w", "x", "y", "z"])
    text = " ".join(claims(compare(strong, control="z", samples=2000)))
    assert "rejects equal performance" in text and "w ranks first; the Nemenyi test" in text
    assert "Against the control z (Wilcoxon signed-rank, Holm over the 3 comparisons with it): better: w, x and y" in text
    noise = pd.DataFrame(rng.normal(size=(6, 3)), columns=["a", "b", "c"])
    text = " ".join(claims(compare(noise, samples=2000)))
    assert "does not reject equal performance of the 3 methods" in text
    assert "Only 6 datasets" in text and "little power" in text


def test_a_method_without_any_score_is_dropped_not_every_dataset():
    table = random_scores(n=8, k=4)
    table["m2"] = np.nan
    result = compare(table)
    assert result.friedman.n_datasets == 8 and result.friedman.n_methods == 3
    assert result.dropped == ["m2 (no scores)"]
