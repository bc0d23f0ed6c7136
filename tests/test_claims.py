"""Claims, multiplicity, effect sizes, agreement and leaders, checked against outside references.

Every expected value below comes from a published formula or worked example (named beside the check),
from scipy / scikit-posthocs as reference libraries, or from a hand computation written out in the test.
Values recalled from a book without looking them up are marked "from memory".
"""
import math

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from lopsided.analysis import compare
from lopsided.analysis.agreement import kendall_tau, kendall_w
from lopsided.analysis.compare import BAYES_DRAWS
from lopsided.analysis.effects import MIN_UNITS, bootstrap_mean, fold_interval, paired_effect
from lopsided.analysis.leaders import first_place_share, tied_first
from lopsided.analysis.multiplicity import Decision, benjamini_hochberg, decide, holm, single
from lopsided.analysis.words import claims

ALPHA = 0.05
POST_HOC_WORDS = ("better:", "worse:", "separates", "ranks first")


# --------------------------------------------------------------------------------------------------
# multiplicity.py: Holm and Benjamini-Hochberg against hand computations
# --------------------------------------------------------------------------------------------------

# Five made-up omnibus p-values (input order matters: the results must come back in this order).
FIVE_P = [0.012, 0.041, 0.039, 0.004, 0.250]


def test_holm_five_omnibus_p_values_by_hand():
    """Holm (1979), Scand. J. Statist. 6:65: sort ascending, multiply the i-th smallest by (m - i + 1),
    take the running maximum, cap at 1. Worked out by hand for FIVE_P (m = 5):

        sorted      0.004   0.012   0.039   0.041   0.250
        times       5       4       3       2       1
        product     0.020   0.048   0.117   0.082   0.250
        running max 0.020   0.048   0.117   0.117   0.250

    back in input order (0.012, 0.041, 0.039, 0.004, 0.250): 0.048, 0.117, 0.117, 0.020, 0.250."""
    assert holm(FIVE_P) == pytest.approx([0.048, 0.117, 0.117, 0.020, 0.250], abs=1e-12)


def test_holm_caps_at_one_by_hand():
    """Holm (1979): p = (0.4, 0.6, 0.9): products 1.2, 1.2, 0.9; running max 1.2, 1.2, 1.2; cap 1."""
    assert holm([0.4, 0.6, 0.9]) == pytest.approx([1.0, 1.0, 1.0], abs=1e-12)


def test_benjamini_hochberg_five_omnibus_p_values_by_hand():
    """Benjamini & Hochberg (1995), JRSS B 57:289, adjusted form: p_(i) m / i, running minimum from the
    largest down, cap 1. By hand for FIVE_P (m = 5):

        sorted        0.004   0.012   0.039   0.041    0.250
        m / i         5       5/2     5/3     5/4      1
        product       0.020   0.030   0.065   0.05125  0.250
        running min   0.020   0.030   0.05125 0.05125  0.250     (from the right: 0.065 -> 0.05125)

    back in input order: 0.030, 0.05125, 0.05125, 0.020, 0.250. (statsmodels is not installed, so there
    is no library reference here: hand computation only.)"""
    assert benjamini_hochberg(FIVE_P) == pytest.approx([0.030, 0.05125, 0.05125, 0.020, 0.250], abs=1e-12)


def test_benjamini_hochberg_step_up_and_cap_by_hand():
    """Benjamini & Hochberg (1995): p = (0.4, 0.6, 0.9): products 1.2, 0.9, 0.9; running min from the
    right 0.9, 0.9, 0.9 (all below the cap of 1)."""
    assert benjamini_hochberg([0.4, 0.6, 0.9]) == pytest.approx([0.9, 0.9, 0.9], abs=1e-12)
    assert len(benjamini_hochberg([])) == 0


def test_decide_families_by_hand():
    """decide(): primary tests are Holm-adjusted among themselves; exploratory ones with Holm over every
    test that may claim; a test without claims (or without p) joins no family and never rejects.

    Counted tests (claims allowed, p given): #0 primary 0.010, #1 primary 0.030, #2 exploratory 0.004,
    #3 exploratory 0.040.
    Primary family, Holm (1979) with m = 2: 0.010 * 2 = 0.020; 0.030 * 1 = 0.030 (running max 0.030).
    Run family, Holm with m = 4: sorted 0.004, 0.010, 0.030, 0.040 times 4, 3, 2, 1 = 0.016, 0.030,
    0.060, 0.040; running max 0.016, 0.030, 0.060, 0.060.
    Run family, Benjamini-Hochberg (1995), m = 4: 0.004 * 4 = 0.016, 0.010 * 4/2 = 0.020,
    0.030 * 4/3 = 0.040, 0.040 * 4/4 = 0.040; running min from the right: 0.016, 0.020, 0.040, 0.040."""
    tests = [("primary", 0.010, True), ("primary", 0.030, True), ("exploratory", 0.004, True),
             ("exploratory", 0.040, True), ("exploratory", 0.001, False), ("primary", 0.002, False),
             ("exploratory", None, True)]
    d = decide(tests, ALPHA)
    assert len(d) == len(tests)
    # primary: adjusted within the primary family only (not the run family, where #1 would be 0.060)
    assert d[0].adjusted == pytest.approx(0.020) and d[0].rejects
    assert d[1].adjusted == pytest.approx(0.030) and d[1].rejects
    assert d[1].run_holm == pytest.approx(0.060)
    # exploratory: adjusted across the whole run
    assert d[2].adjusted == pytest.approx(0.016) and d[2].rejects
    assert d[3].adjusted == pytest.approx(0.060) and not d[3].rejects   # raw 0.040 < alpha, adjusted not
    assert [x.run_holm for x in d[:4]] == pytest.approx([0.030, 0.060, 0.016, 0.060])
    assert [x.run_bh for x in d[:4]] == pytest.approx([0.020, 0.040, 0.016, 0.040])
    # family sizes: 2 primary, 4 counted (the two without claims and the one without p are not counted)
    assert all(x.primary_tests == 2 and x.run_tests == 4 for x in d)
    assert "2 omnibus tests of the primary analysis" in d[0].family
    assert "all 4 omnibus tests" in d[2].family
    # no claims allowed: no adjusted p, never rejects, even with a tiny raw p
    for x in (d[4], d[5]):
        assert not x.claims_allowed and x.adjusted is None and x.run_holm is None and x.run_bh is None
        assert not x.rejects
    assert d[6].adjusted is None and not d[6].rejects


def test_decide_without_claims_does_not_inflate_the_family():
    """Holm (1979) by hand: the same two primary p-values (0.020, 0.024) with and without a third test
    that may not claim. Family of 2: 0.020 * 2 = 0.040, 0.024 * 1 -> running max 0.040. Had the third
    test (p = 0.5) been counted, m = 3 would give 0.060: no longer below alpha."""
    alone = decide([("primary", 0.020, True), ("primary", 0.024, True)], ALPHA)
    with_other = decide([("primary", 0.020, True), ("primary", 0.024, True), ("primary", 0.5, False)], ALPHA)
    assert [x.adjusted for x in alone] == pytest.approx([0.040, 0.040])
    assert [x.adjusted for x in with_other[:2]] == pytest.approx([0.040, 0.040])
    assert all(x.rejects for x in with_other[:2])


def noisy_table(seed, n, k, step=0.0):
    rng = np.random.default_rng(seed)
    base = rng.uniform(0.5, 0.8, n)
    data = {f"m{j}": base + rng.normal(0, 0.05, n) + step * j for j in range(k)}
    return pd.DataFrame(data, index=[f"d{i:02d}" for i in range(n)])


def test_single_is_a_family_of_one():
    """A comparison that is the whole analysis: Holm over one test leaves its p unchanged (m = 1)."""
    result = compare(noisy_table(3, 12, 6, step=0.02), samples=2000)
    d = single(result)
    assert d.role == "primary" and d.primary_tests == 1 and d.run_tests == 1
    assert d.p == result.friedman.decision_p
    assert d.adjusted == pytest.approx(result.friedman.decision_p)
    assert d.rejects == (result.friedman.decision_p < ALPHA)


# --------------------------------------------------------------------------------------------------
# words.py: a non-rejecting omnibus test gates every post-hoc claim
# --------------------------------------------------------------------------------------------------

def failed_omnibus_table(seed=0, n=12, k=8):
    """'good' beats the control 'ctl' on every dataset by a small, varying margin; six noisy methods
    scatter around the control, so the ranks as a whole look like noise."""
    rng = np.random.default_rng(seed)
    ctl = rng.uniform(0.5, 0.8, n)
    data = {"ctl": ctl, "good": ctl + 0.01 * (1 + np.arange(n) / n)}
    for j in range(k - 2):
        data[f"noisy{j}"] = ctl + rng.normal(0, 0.1, n)
    return pd.DataFrame(data, index=[f"d{i:02d}" for i in range(n)])


def test_failed_omnibus_claims_nothing_post_hoc():
    table = failed_omnibus_table()
    result = compare(table, alpha=ALPHA, control="ctl", samples=2000)
    # Preconditions, from scipy as the reference: the pair alone would be significant ...
    alone = stats.wilcoxon(table["good"], table["ctl"]).pvalue
    assert alone < ALPHA
    # exact two-sided signed-rank p with all 12 differences positive (Wilcoxon 1945): 2 / 2^12
    assert alone == pytest.approx(2 / 2 ** 12)
    assert result.against_control["good"]["holm_p"] < ALPHA   # even after Holm over the 7 control pairs
    # ... but the omnibus test does not reject
    assert result.friedman.decision_p >= ALPHA
    sentences = claims(result, single(result))
    text = " ".join(sentences)
    for word in POST_HOC_WORDS:
        assert word not in text, word
    assert "does not reject" in sentences[0]
    assert any("exploratory only" in s and "none of them is claimed" in s for s in sentences)


def test_failed_omnibus_case_would_claim_if_the_gate_opened():
    """The check above can fail: with a Decision that rejects, the same result claims 'better: good'
    (Holm p of good against ctl is below alpha, and no method is significantly worse)."""
    result = compare(failed_omnibus_table(), alpha=ALPHA, control="ctl", samples=2000)
    opened = Decision("primary", result.friedman.decision_p, 0.001, 0.001, 0.001, 1, 1, ALPHA, True)
    text = " ".join(claims(result, opened))
    assert "better: good" in text


def rejecting_table():
    """Friedman p between 0.01 and 0.05 here, and m5 beats the control m0 on all 12 datasets."""
    table = noisy_table(218, 12, 6)
    table["m5"] = table["m0"] + 0.01 * (1 + np.arange(12) / 12)
    return table


def test_raw_friedman_below_alpha_but_not_after_adjustment():
    table = rejecting_table()
    result = compare(table, alpha=ALPHA, control="m0", samples=2000)
    p = result.friedman.decision_p
    assert 0.01 < p < ALPHA                                      # precondition: the raw p rejects
    assert stats.wilcoxon(table["m5"], table["m0"]).pvalue < ALPHA   # scipy: the control pair alone would
    tests = [("primary", p, True)] + [("primary", 0.5, True)] * 4
    decision = decide(tests, ALPHA)[0]
    # Holm (1979) by hand: p is the smallest of five, so its adjusted value is 5 p (below the cap)
    assert decision.adjusted == pytest.approx(5 * p)
    assert decision.adjusted >= ALPHA and not decision.rejects
    sentences = claims(result, decision)
    first = sentences[0]
    assert f"gives p = {p:.3g}" in first
    assert f"but not below alpha = {ALPHA:g} after adjustment" in first
    assert f"adjusted p = {5 * p:.3g}" in first
    assert "Holm over the 5 omnibus tests of the primary analysis" in first
    assert "no ranking claim" in first
    text = " ".join(sentences)
    for word in POST_HOC_WORDS:
        assert word not in text, word
    assert any("exploratory only" in s for s in sentences)


def test_same_result_as_a_family_of_one_makes_the_control_claim():
    """The check above can fail: as a family of one (Holm with m = 1 leaves p < alpha) the same result
    rejects, and m5 (Wilcoxon against m0 below alpha after Holm over the 5 control pairs) is claimed better."""
    result = compare(rejecting_table(), alpha=ALPHA, control="m0", samples=2000)
    assert single(result).rejects
    assert result.against_control["m5"]["holm_p"] < ALPHA
    own = " ".join(claims(result, single(result)))
    assert "better: m5" in own


# --------------------------------------------------------------------------------------------------
# effects.py: bootstrap intervals, wins / ties / losses, families, corrected resampled t
# --------------------------------------------------------------------------------------------------

def test_bootstrap_of_a_constant_difference():
    """Every difference is 0.05: any resample has mean 0.05, so the percentile interval is [0.05, 0.05]
    (Efron & Tibshirani 1993, An Introduction to the Bootstrap, ch. 13)."""
    rng = np.random.default_rng(5)
    reference = rng.uniform(0.4, 0.9, 40)
    scores = pd.DataFrame({"ref": reference, "method": reference + 0.05},
                          index=[f"d{i:02d}" for i in range(40)])
    effect = paired_effect("method", "ref", scores)
    assert effect.datasets.n == 40
    assert effect.datasets.mean == pytest.approx(0.05, abs=1e-12)
    assert effect.datasets.low == pytest.approx(0.05, abs=1e-12)
    assert effect.datasets.high == pytest.approx(0.05, abs=1e-12)
    assert effect.datasets.excludes_zero
    assert (effect.wins, effect.ties, effect.losses) == (40, 0, 0)


def test_bootstrap_interval_close_to_normal_theory():
    """Efron & Tibshirani (1993), ch. 13: for a mean of roughly normal data the percentile interval is
    close to the normal-theory one, mean +- 1.96 sd / sqrt(n). Tolerance: each end within 15 % of the
    normal half-width (Monte Carlo error of an end with 4000 draws is about 4 % of a bootstrap sd; the
    plug-in sd is smaller than the n - 1 sd by a factor sqrt(99/100), 0.5 %)."""
    rng = np.random.default_rng(12345)
    d = rng.normal(0.03, 0.02, 100)
    interval = bootstrap_mean(d)
    half = 1.96 * d.std(ddof=1) / math.sqrt(len(d))
    assert interval.mean == pytest.approx(d.mean())
    assert interval.low == pytest.approx(d.mean() - half, abs=0.15 * half)
    assert interval.high == pytest.approx(d.mean() + half, abs=0.15 * half)


def test_bootstrap_below_least_gives_no_interval():
    interval = bootstrap_mean([0.3])
    assert interval.mean == 0.3 and interval.low is None and interval.high is None
    assert interval.note and not interval.excludes_zero


def test_wins_ties_losses_by_hand():
    """Tolerance 0.01, a tie being |d| <= 0.01. Differences (method - ref), counted by hand:
    +0.2 win, +0.005 tie, -0.005 tie, -0.3 loss, +0.011 win, 0.0 tie, -0.02 loss -> 2 wins, 3 ties, 2 losses.
    Reference 0.5 everywhere; no offset is within rounding distance of the tolerance."""
    d = np.array([0.2, 0.005, -0.005, -0.3, 0.011, 0.0, -0.02])
    ref = np.full(len(d), 0.5)
    scores = pd.DataFrame({"ref": ref, "m": ref + d}, index=[f"d{i}" for i in range(len(d))])
    effect = paired_effect("m", "ref", scores, tolerance=0.01)
    assert (effect.wins, effect.ties, effect.losses) == (2, 3, 2)
    assert effect.tolerance == 0.01


def test_wins_ties_losses_boundary_is_a_tie_exact_binary():
    """|d| equal to the tolerance is a tie (the module's own rule). 0.75 - 0.5 = 0.25 and 0.25 - 0.5 = -0.25
    are exact in binary floating point, so no rounding is involved."""
    scores = pd.DataFrame({"ref": [0.5, 0.5, 0.5], "m": [0.75, 0.25, 1.0]}, index=["a", "b", "c"])
    effect = paired_effect("m", "ref", scores, tolerance=0.25)
    assert (effect.wins, effect.ties, effect.losses) == (1, 2, 0)


def test_wins_ties_losses_boundary_is_a_tie_two_decimals():
    """Scores as printed in a paper's table, two decimals: 0.51 vs 0.50 and 0.49 vs 0.50 differ by exactly
    the tolerance 0.01 in decimal: both ties by the rule |d| <= tolerance."""
    scores = pd.DataFrame({"ref": [0.50, 0.50, 0.50], "m": [0.51, 0.49, 0.75]}, index=["a", "b", "c"])
    effect = paired_effect("m", "ref", scores, tolerance=0.01)
    assert (effect.wins, effect.ties, effect.losses) == (1, 2, 0)


def test_family_interval_needs_min_families():
    """Four families (< MIN_UNITS = 5): a mean but no interval, with a note saying why."""
    assert MIN_UNITS == 5
    names = [f"d{i}" for i in range(8)]
    scores = pd.DataFrame({"ref": np.full(8, 0.5), "m": 0.5 + np.linspace(0.01, 0.08, 8)}, index=names)
    families = {name: f"F{i // 2}" for i, name in enumerate(names)}      # F0..F3, two datasets each
    effect = paired_effect("m", "ref", scores, families=families)
    assert effect.families.n == 4
    assert effect.families.low is None and effect.families.high is None
    assert "families" in effect.families.note
    # by hand: family means (0.015, 0.035, 0.055, 0.075), their mean 0.045
    assert effect.families.mean == pytest.approx(0.045)
    assert effect.datasets.low is not None          # the dataset-level interval is still given


def test_family_interval_bootstraps_family_means():
    """24 families: F0..F3 hold three datasets each with d = 0.1, F4..F23 one dataset each with d = 0.
    By hand: four family means of 0.1 and twenty of 0, their mean 0.1 * 4 / 24 (the dataset mean would be
    12 * 0.1 / 32). A resample of the 24 family means contains X copies of 0.1 with X ~ Binomial(24, 1/6)
    (Davison & Hinkley 1997, section 3.8, cluster bootstrap; from memory), so the percentile interval ends are
    0.1 * q / 24 with q the 2.5 % and 97.5 % binomial quantiles (scipy): P(X <= 0) = 0.013, P(X <= 1) = 0.073
    give q_low = 1; P(X <= 7) = 0.965, P(X <= 8) = 0.988 give q_high = 8. Both ends are several Monte Carlo
    standard errors (0.0025 at 4000 draws) from a boundary."""
    names = [f"big{f}-{i}" for f in range(4) for i in range(3)] + [f"solo{f}" for f in range(4, 24)]
    d = np.array([0.1] * 12 + [0.0] * 20)
    scores = pd.DataFrame({"ref": np.full(32, 0.5), "m": 0.5 + d}, index=names)
    families = {name: (f"F{name[3]}" if name.startswith("big") else f"F{name[4:]}") for name in names}
    effect = paired_effect("m", "ref", scores, families=families)
    fam = effect.families
    assert fam.n == 24
    assert fam.mean == pytest.approx(0.1 * 4 / 24)
    assert effect.datasets.mean == pytest.approx(12 * 0.1 / 32)
    q_low, q_high = stats.binom.ppf([0.025, 0.975], 24, 1 / 6)
    assert (q_low, q_high) == (1, 8)
    assert fam.low == pytest.approx(0.1 * q_low / 24, abs=1e-12)
    assert fam.high == pytest.approx(0.1 * q_high / 24, abs=1e-12)


def test_few_families_get_the_student_t_interval():
    """Six family means (0.1, 0, 0, 0, 0, 0): below 20 units the interval is mean +- t_{5, 0.975} s / sqrt(6)
    (a percentile bootstrap of so few means is too narrow); t_{5, 0.975} = 2.571 (t table, from memory)."""
    names = [f"big{i}" for i in range(10)] + [f"solo{i}" for i in range(1, 6)]
    d = np.array([0.1] * 10 + [0.0] * 5)
    scores = pd.DataFrame({"ref": np.full(15, 0.5), "m": 0.5 + d}, index=names)
    families = {name: ("F0" if name.startswith("big") else f"F{name[-1]}") for name in names}
    fam = paired_effect("m", "ref", scores, families=families).families
    means = np.array([0.1, 0, 0, 0, 0, 0])
    half = 2.571 * means.std(ddof=1) / np.sqrt(6)
    assert (fam.low, fam.high) == pytest.approx((means.mean() - half, means.mean() + half), abs=1e-4)
    assert stats.t.ppf(0.975, 5) == pytest.approx(2.571, abs=5e-4)
    assert fam.note == "Student t interval"


def test_fold_interval_corrected_resampled_t_by_hand():
    """Nadeau & Bengio (2003) as written in Bouckaert & Frank (2004): mean +- t_{n-1, 0.975}
    sqrt((1/n + n_test/n_train) var(d)), var with n - 1. Ten folds of 10-fold CV on 100 examples:
    n_train = 90, n_test = 10. t_{9, 0.975} = 2.262 (t table, from memory; scipy.stats.t below)."""
    d = [0.02, 0.015, 0.03, -0.005, 0.01, 0.025, 0.018, 0.007, 0.012, 0.022]
    n = len(d)
    mean = sum(d) / n
    var = sum((x - mean) ** 2 for x in d) / (n - 1)
    t = stats.t.ppf(0.975, n - 1)
    assert t == pytest.approx(2.262, abs=5e-4)
    half = t * math.sqrt((1 / n + 10 / 90) * var)
    interval = fold_interval(d, n_train=90, n_test=10)
    assert interval.n == n
    assert interval.mean == pytest.approx(mean)
    assert interval.low == pytest.approx(mean - half)
    assert interval.high == pytest.approx(mean + half)
    # the correction widens the naive t interval, t sqrt(var / n), by sqrt(1 + n n_test / n_train)
    naive = t * math.sqrt(var / n)
    assert (interval.high - interval.low) / (2 * naive) == pytest.approx(math.sqrt(1 + n * 10 / 90))


def test_fold_interval_degenerate_cases():
    same = fold_interval([0.02] * 5, n_train=80, n_test=20)
    assert same.low == pytest.approx(0.02) and same.high == pytest.approx(0.02)
    one = fold_interval([0.02], n_train=80, n_test=20)
    assert one.low is None and one.high is None and one.note


# --------------------------------------------------------------------------------------------------
# agreement.py: Kendall's W and tau
# --------------------------------------------------------------------------------------------------

# Siegel (1956), Nonparametric Statistics for the Behavioral Sciences, section on the Kendall coefficient
# of concordance (from memory): three judges rank six objects.
SIEGEL_RANKS = np.array([[1, 6, 3, 2, 5, 4],
                         [1, 5, 6, 4, 2, 3],
                         [6, 3, 2, 5, 4, 1]], dtype=float)


def test_kendall_w_siegel_worked_example():
    """Siegel (1956), from memory: rank sums 8, 14, 11, 11, 11, 8; s = 25.5;
    W = 25.5 / (1/12 * 9 * (216 - 6)) = 0.162. Recomputed here: mean rank sum m (k + 1) / 2 = 10.5;
    s = 2 * 2.5^2 + 3.5^2 + 3 * 0.5^2 = 12.5 + 12.25 + 0.75 = 25.5; 1/12 * 9 * 210 = 157.5;
    W = 25.5 / 157.5 = 0.1619..."""
    sums = SIEGEL_RANKS.sum(axis=0)
    assert sums.tolist() == [8, 14, 11, 11, 11, 8]
    s = float(np.sum((sums - 3 * 7 / 2) ** 2))
    assert s == 25.5
    w_hand = s / (1 / 12 * 3 ** 2 * (6 ** 3 - 6))
    assert w_hand == pytest.approx(0.162, abs=5e-4)
    result = kendall_w(SIEGEL_RANKS, higher_is_better=False)
    assert result.w == pytest.approx(w_hand, rel=1e-12)
    assert (result.judges, result.objects, result.dof) == (3, 6, 5)
    # chi-square = m (k - 1) W is Friedman's statistic with judges as blocks (scipy: one argument per object)
    reference = stats.friedmanchisquare(*SIEGEL_RANKS.T)
    assert result.chi2 == pytest.approx(3 * 5 * w_hand, rel=1e-12)
    assert result.chi2 == pytest.approx(reference.statistic, rel=1e-10)
    assert result.p == pytest.approx(reference.pvalue, rel=1e-8)


def test_kendall_w_direction_of_scores():
    """Scores with higher = better rank the same as the negated scores with lower = better."""
    rng = np.random.default_rng(7)
    scores = rng.normal(size=(5, 7))
    assert kendall_w(scores).w == pytest.approx(kendall_w(-scores, higher_is_better=False).w, rel=1e-12)


def test_kendall_w_perfect_agreement():
    """Identical rankings: W = 1 by definition (Kendall & Babington Smith 1939)."""
    row = np.array([0.9, 0.7, 0.8, 0.1])
    assert kendall_w(np.tile(row, (4, 1))).w == pytest.approx(1.0)


def test_kendall_w_with_ties_matches_scipy_tie_corrected_friedman():
    """Scores rounded to one decimal so judges tie objects; scipy's friedmanchisquare applies the tie
    correction 1 - sum(t^3 - t) / (n k (k^2 - 1)), which equals the tie-corrected W's denominator."""
    rng = np.random.default_rng(11)
    scores = np.round(rng.uniform(0, 0.6, size=(7, 5)), 1)
    assert any(len(np.unique(row)) < len(row) for row in scores)      # ties really present
    result = kendall_w(scores)
    reference = stats.friedmanchisquare(*scores.T)
    assert result.chi2 == pytest.approx(reference.statistic, rel=1e-10)
    assert result.p == pytest.approx(reference.pvalue, rel=1e-8)
    m, k = scores.shape
    assert result.w == pytest.approx(reference.statistic / (m * (k - 1)), rel=1e-10)


def test_kendall_tau_equals_scipy():
    first = [0.9, 0.8, 0.8, 0.4, 0.3, 0.35, 0.1]
    second = [0.7, 0.9, 0.6, 0.6, 0.2, 0.1, 0.15]
    tau, p = kendall_tau(first, second)
    reference = stats.kendalltau(first, second)
    assert tau == pytest.approx(reference.statistic, rel=1e-12)
    assert p == pytest.approx(reference.pvalue, rel=1e-12)


# --------------------------------------------------------------------------------------------------
# leaders.py: ties at the top, probability of ranking first
# --------------------------------------------------------------------------------------------------

def test_tied_first_reports_exact_ties():
    ranks = pd.Series({"zeta": 1.5, "alpha": 1.5, "mid": 3.0})
    assert sorted(tied_first(ranks)) == ["alpha", "zeta"]
    assert tied_first(pd.Series({"zeta": 1.4, "alpha": 1.6})) == ["zeta"]


def test_tied_leaders_in_compare_and_words():
    """A beats B on three datasets and B beats A on the other three; C is last everywhere: average ranks
    by hand A = B = (3 * 1 + 3 * 2) / 6 = 1.5, C = 3. No alphabetical winner."""
    table = pd.DataFrame({"A": [0.9, 0.9, 0.9, 0.8, 0.8, 0.8], "B": [0.8, 0.8, 0.8, 0.9, 0.9, 0.9],
                          "C": [0.1] * 6}, index=[f"d{i}" for i in range(6)])
    result = compare(table, samples=2000)
    assert sorted(result.leaders) == ["A", "B"]
    assert result.average_ranks["A"] == result.average_ranks["B"] == 1.5
    text = " ".join(claims(result))
    assert "A and B share the best average rank" in text
    assert "no order among them is claimed" in text
    assert "has the best average rank in" not in text


def rank_frame(rows, columns=("A", "B", "C")):
    return pd.DataFrame(np.array(rows, dtype=float), columns=list(columns))


def test_first_place_share_certain_leader():
    """A is best on every dataset: it has the best average rank in every resample, probability 1."""
    share = first_place_share(rank_frame([[1, 2, 3], [1, 3, 2]] * 5))
    assert share["A"] == pytest.approx(1.0) and share["B"] == 0 and share["C"] == 0


def binomial_first_place(n, n_a):
    """Hand computation: resampling n datasets, A is first on X ~ Binomial(n, n_a / n) of them and B on
    the rest; A leads when X > n / 2 and ties (counted 1/2 each) when X = n / 2."""
    x = stats.binom(n, n_a / n)
    return x.sf(n // 2) + 0.5 * x.pmf(n // 2)


def test_first_place_share_symmetric_swap():
    """A best on half of 20 datasets and B on the other half (C third): by symmetry 0.5 each, exactly
    (the binomial hand computation gives 0.5 as well). Monte Carlo error: each draw contributes 0, 1/2 or 1,
    so the sd of the share over 4000 draws is at most 0.5 / sqrt(4000) = 0.008; tolerance 0.04 (5 sd)."""
    share = first_place_share(rank_frame([[1, 2, 3]] * 10 + [[2, 1, 3]] * 10))
    assert binomial_first_place(20, 10) == pytest.approx(0.5)
    assert share.sum() == pytest.approx(1.0)
    assert share["A"] == pytest.approx(0.5, abs=0.04)
    assert share["B"] == pytest.approx(0.5, abs=0.04)
    assert share["C"] == 0


def test_first_place_share_unequal_split():
    """A best on 12 of 20 datasets, B on 8: probability by the binomial hand computation above,
    P(X > 10) + P(X = 10) / 2 with X ~ Binomial(20, 0.6), about 0.81; same Monte Carlo tolerance of 0.04."""
    share = first_place_share(rank_frame([[1, 2, 3]] * 12 + [[2, 1, 3]] * 8))
    expected = binomial_first_place(20, 12)
    assert 0.78 < expected < 0.84
    assert share["A"] == pytest.approx(expected, abs=0.04)
    assert share["B"] == pytest.approx(1 - expected, abs=0.04)


def test_first_place_share_sums_to_one():
    rng = np.random.default_rng(4)
    ranks = pd.DataFrame(stats.rankdata(rng.normal(size=(9, 5)), axis=1), columns=list("abcde"))
    share = first_place_share(ranks, samples=1000)
    assert share.sum() == pytest.approx(1.0)
    assert (share >= 0).all()


# --------------------------------------------------------------------------------------------------
# compare.py: the Bayesian signed-rank probabilities, for the pairs the report speaks about
# --------------------------------------------------------------------------------------------------

def small_table(k, seed):
    rng = np.random.default_rng(seed)
    return pd.DataFrame(rng.uniform(size=(8, k)), columns=list("abcd"[:k]), index=[f"d{i}" for i in range(8)])


def hand_leaders(table):
    """Average ranks by scipy.stats.rankdata (1 = best), the methods at the minimum."""
    mean = stats.rankdata(-table.to_numpy(), axis=1).mean(axis=0)
    return {m for m, r in zip(table.columns, mean) if r == mean.min()}


@pytest.mark.parametrize("k, control, seed, skipped_pairs", [
    (3, None, 3, 1),     # one leader (c): the pair of the two others gets none
    (3, None, 1, 0),     # all three tie at average rank 2: all are leaders, every pair gets probabilities
    (4, "c", 1, 1),      # leader b, control c: only the pair (a, d) avoids both
])
def test_bayes_present_exactly_for_leader_or_control_pairs(k, control, seed, skipped_pairs):
    """8 datasets with the default draws (BAYES_DRAWS): each standard error is sqrt(p (1 - p) / draws) for
    the probability with the largest p (1 - p) (binomial standard error of a share), hence at most
    0.5 / sqrt(70000) = 0.00189 < 0.002."""
    table = small_table(k, seed)
    result = compare(table, control=control)
    focus = hand_leaders(table) | ({control} if control else set())
    assert set(result.leaders) == hand_leaders(table)
    assert len(result.pairwise) == k * (k - 1) // 2
    skipped = 0
    for pair in result.pairwise:
        involved = bool({pair["a"], pair["b"]} & focus)
        assert (pair["bayes"] is not None) == involved, pair
        if not involved:
            skipped += 1
            continue
        b = pair["bayes"]
        probabilities = [b["a_better"], b["equivalent"], b["b_better"]]
        assert sum(probabilities) == pytest.approx(1.0)
        spread = max(q * (1 - q) for q in probabilities)
        assert b["standard_error"] == pytest.approx(math.sqrt(spread / BAYES_DRAWS), rel=1e-12)
        assert b["standard_error"] < 0.002
    assert skipped == skipped_pairs
