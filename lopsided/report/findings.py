"""What a leaderboard finds: every comparison it makes, with its role and adjusted p-value, effect sizes in
the metric's units, a family-level robustness check, the learner and resampler factors, and how far the
metrics agree. Pure computation on the scores table; the report turns it into words, pages and stats.json.

The plan of comparisons and the rule that chooses the primary point are fixed before the run:

* the **primary analysis**: the headline metric at one protocol point (the suite's ``primary``; else, chosen
  after the run by the rule, the point with the most datasets complete for every combination), all
  combinations and each learner: confirmatory, its omnibus tests Holm-adjusted among themselves and its tests
  against the control Holm-adjusted over every learner's comparisons with it;
* everything else is **exploratory**, Holm- (and Benjamini-Hochberg-) adjusted across every omnibus test of
  the leaderboard: the other metrics at the primary point, the headline metric at the other points, the
  imbalance bands and training sizes, and the learners compared with each other.
"""
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from ..analysis import AnalysisError, Comparison, compare
from ..analysis.agreement import kendall_tau, kendall_w
from ..analysis.effects import paired_effect
from ..analysis.multiplicity import Decision, decide, holm
from ..records import point_label
from .tables import COMBINED, method_matrix, points_of

THRESHOLD_FREE = ("average_precision", "roc_auc")   # ranking metrics: no decision threshold involved
FAMILY_DRAWS = 4000                                  # Bayesian draws in the family-level check (not reported)


@dataclass(frozen=True)
class Spec:
    """One planned comparison. ``kind``: "point" (a metric at a protocol point, all combinations or one
    learner), "band" / "size" (the headline metric within an imbalance band or at a training size, all
    combinations) or "learners" (learners against each other, each averaged over the resamplers)."""

    kind: str
    metric: str
    ratio: str
    size: str
    learner: str | None = None
    role: str = "exploratory"
    label: str = ""

    @property
    def view(self):
        if self.kind == "learners":
            return "learners (each averaged over the resamplers)"
        return "all combinations" if self.learner is None else f"resamplers with {self.learner}"

    @property
    def point(self):
        return f"ratio={self.ratio}, size={self.size}"


@dataclass(frozen=True)
class FamilyCheck:
    """The same comparison with one mean per dataset family (sets cut from one original dataset are not
    independent). ``result`` is None when there are fewer than two families."""

    families: int
    result: object = None
    decision: Decision | None = None
    note: str = ""


@dataclass
class Study:
    """A planned comparison with its numbers: the Comparison (None with ``note`` when it could not be made),
    its Decision, the effects against its reference, and the family-level check."""

    spec: Spec
    result: Comparison | None = None
    note: str = ""
    reference: str | None = None        # the control (a learner's comparison) or the best method
    effects: tuple = ()
    family: FamilyCheck | None = None
    decision: object = None
    figure: str | None = None
    per_dataset: dict = field(default_factory=dict)   # method -> [(dataset, fold Interval)] against the control
    against_control: dict = field(default_factory=dict)   # primary analysis: method -> p adjusted across learners
    claims: list = field(default_factory=list)         # words, set by the report
    caption: str = ""
    table: list = field(default_factory=list)
    survival: object = None
    family_words: str = ""

    @property
    def ok(self):
        return self.result is not None


@dataclass(frozen=True)
class PrimaryChoice:
    metric: str
    ratio: str
    size: str
    complete: int            # datasets complete for every combination at that point
    total: int
    declared: bool           # named in the suite file (else chosen by the rule)

    @property
    def reason(self):
        if self.declared:
            return "declared in the suite file (primary)"
        return (f"chosen after the run by the suite's rule: the protocol point with the most datasets complete for "
                f"every combination, {self.complete} of {self.total}; the first such point in the suite's order")


def complete_datasets(scores, metric, ratio, size):
    """Datasets scored by every combination that has any score at the point (a combination with none, e.g.
    a learner that refuses a resampler, is left out of every comparison there, so it does not count)."""
    matrix = method_matrix(scores, metric, ratio, size).dropna(axis=1, how="all")
    return int(matrix.notna().all(axis=1).sum()) if matrix.shape[1] else 0


def primary_point(suite, scores):
    """The primary analysis's metric and protocol point (see the module docstring)."""
    points = points_of(scores, suite.protocol)
    declared = suite.primary or {}
    metric = declared.get("metric", suite.headline)
    total = len(suite.datasets)
    if "ratio" in declared or "size" in declared:
        ratio = point_label(declared.get("ratio", suite.protocol.ratios[0]))
        size = point_label(declared.get("size", suite.protocol.sizes[0]))
        return PrimaryChoice(metric, ratio, size, complete_datasets(scores, metric, ratio, size), total, True)
    if not points:
        return None
    counts = [complete_datasets(scores, metric, r, s) for r, s in points]
    ratio, size = points[int(np.argmax(counts))]
    return PrimaryChoice(metric, ratio, size, max(counts), total, False)


def plan(suite, scores, primary, bands):
    """Every comparison of the leaderboard (``bands``: winners.band_specs), primary ones first."""
    learners = [s.title for s in suite.learners]
    specs = []
    for ratio, size in points_of(scores, suite.protocol):
        at_primary = (ratio, size) == (primary.ratio, primary.size)
        metrics = suite.metrics if at_primary else [primary.metric]
        for metric in sorted(metrics, key=lambda m: m != primary.metric):
            role = "primary" if at_primary and metric == primary.metric else "exploratory"
            views = [None, *learners] if len(learners) > 1 else learners    # one learner: one test, not two
            specs += [Spec("point", metric, ratio, size, learner, role) for learner in views]
    if len(learners) > 1:
        specs.append(Spec("learners", primary.metric, primary.ratio, primary.size, label="learners"))
    specs += bands
    return sorted(specs, key=lambda s: s.role != "primary")


def matrix_of(spec, scores, suite, imbalance):
    """The datasets x methods matrix a spec compares."""
    if spec.kind == "learners":
        return learner_matrix(scores, spec.metric, spec.ratio, spec.size, len(suite.resamplers))
    matrix = method_matrix(scores, spec.metric, spec.ratio, spec.size, spec.learner)
    if spec.kind == "band" and spec.ratio == "natural":
        from .winners import band_of
        matrix = matrix.loc[[d for d in matrix.index if band_of(imbalance.get(d, 1.0)) == spec.label]]
    return matrix


def learner_matrix(scores, metric, ratio, size, resamplers):
    """Datasets x learners: each learner's mean over the resamplers, only where every resampler has a score."""
    rows = scores[(scores["ratio"] == ratio) & (scores["size"] == size)]
    column = f"{metric}_mean"
    value = rows[column].where(rows["n_failed"] == 0) if column in rows else pd.Series(np.nan, index=rows.index)
    table = pd.DataFrame({"dataset": rows["dataset"], "learner": rows["learner"], "value": value})
    grouped = table.groupby(["dataset", "learner"])["value"]
    means = grouped.mean().where(grouped.count() == resamplers)
    return means.unstack("learner")


def compute(spec, matrix, families, stats, control, reference=None):
    """The numbers of one comparison at ``stats`` (StatsOptions: alpha, rope): (Comparison or None, note,
    effects, reference, FamilyCheck).

    Run on a report worker: no figure, no words. Effects are taken against a fixed reference, never one chosen
    from these results: in a learner's comparison its control; in the all-combinations view each combination
    against the control with the same learner (``reference``: the control's label, or None for no effects)."""
    if matrix.shape[0] == 0:
        return None, "no dataset has scores here", (), None, None
    try:
        result = compare(matrix, metric=spec.metric, alpha=stats.alpha, rope=stats.rope, control=control)
    except AnalysisError as exc:
        return None, str(exc), (), None, None
    if control is not None:
        effects = tuple(paired_effect(m, control, result.scores, families, tolerance=stats.rope)
                        for m in result.methods if m != control)
        return result, "", effects, control, family_check(result, families, stats, control)
    paired = {m: f"{reference}{COMBINED}{m.partition(COMBINED)[2]}" for m in result.methods} if reference else {}
    effects = tuple(paired_effect(m, paired[m], result.scores, families, tolerance=stats.rope)
                    for m in result.methods if paired.get(m) in result.scores and paired[m] != m)
    where = f"{reference} with the same learner" if effects else None
    return result, "", effects, where, family_check(result, families, stats, control)


def family_check(result, families, stats, control):
    """The comparison repeated on one mean per family (complete datasets only)."""
    if families is None:
        return None
    table = result.scores
    labels = pd.Series([families.get(d, d) for d in table.index], index=table.index)
    collapsed = table.groupby(labels).mean()
    try:
        found = compare(collapsed, metric=result.metric, alpha=stats.alpha, rope=stats.rope, control=control,
                        samples=FAMILY_DRAWS)
    except AnalysisError as exc:
        return FamilyCheck(len(collapsed), note=str(exc))
    return FamilyCheck(len(collapsed), found)


def with_decisions(studies, alpha):
    """Decisions for every study (dataset level) and for every family-level check, each in its own families;
    and, for the primary analysis, its tests against the control Holm-adjusted over every learner's comparisons
    with it (``Study.against_control``), so the whole primary analysis keeps its error rate."""
    tests = [(s.spec.role, s.result.friedman.decision_p if s.ok else None, s.ok and s.result.claims_allowed)
             for s in studies]
    for study, decision in zip(studies, decide(tests, alpha)):
        study.decision = decision
    primary = [s for s in studies if s.ok and s.spec.role == "primary" and s.result.control is not None]
    raw = [(s, m, t["wilcoxon_p"]) for s in primary for m, t in s.result.against_control.items()]
    for (study, method, _), adjusted in zip(raw, holm([p for _, _, p in raw])):
        study.against_control[method] = float(adjusted)
    checked = [s for s in studies if s.family is not None and s.family.result is not None]
    family_tests = [(s.spec.role, s.family.result.friedman.decision_p, s.family.result.claims_allowed) for s in checked]
    for study, decision in zip(checked, decide(family_tests, alpha)):
        study.family = FamilyCheck(study.family.families, study.family.result, decision, study.family.note)
    return studies


@dataclass(frozen=True)
class Survival:
    """Which of a study's claims hold when each family counts once."""

    omnibus: bool                  # the family-level omnibus test rejects too (adjusted the same way)
    leader_kept: bool              # the same method (set) leads
    control: dict                  # method -> True / False: its significant difference from the control holds
    separated: dict                # method -> True / False: its Nemenyi separation from the best holds
    families: int
    note: str = ""


def survival(study):
    """How the study's dataset-level claims fare at family level (None without family labels)."""
    check = study.family
    if check is None:
        return None
    if check.result is None:
        return Survival(False, False, {}, {}, check.families, check.note)
    result, family = study.result, check.result
    alpha = result.alpha
    rejects = check.decision is not None and check.decision.rejects
    control = {}
    if study.decision.rejects and result.control is not None:
        adjusted = study.against_control or {m: t["holm_p"] for m, t in result.against_control.items()}
        for method, p in adjusted.items():
            if p < alpha:
                held = family.against_control.get(method, {}).get("holm_p", 1.0) < alpha
                same_side = (np.sign(family.average_ranks[method] - family.average_ranks[family.control])
                             == np.sign(result.average_ranks[method] - result.average_ranks[result.control]))
                control[method] = bool(rejects and held and same_side)
    separated = {}
    if study.decision.rejects:
        best = result.methods[0]
        for method in result.methods[1:]:
            if result.nemenyi_p.loc[best, method] < alpha:
                separated[method] = bool(rejects and best in family.nemenyi_p.index
                                         and family.nemenyi_p.loc[best, method] < alpha
                                         and family.average_ranks[best] < family.average_ranks[method])
    return Survival(rejects, set(family.leaders) == set(result.leaders), control, separated, check.families)


def fold_intervals(cells, study, metric, control):
    """Per method and dataset of a learner's comparison: the mean fold difference to the control with its
    corrected resampled t interval (``effects.fold_interval``), from the cells' per-fold scores."""
    from ..analysis.effects import fold_interval
    spec = study.spec
    rows = cells[(cells["ratio"] == spec.ratio) & (cells["size"] == spec.size) & (cells["learner"] == spec.learner)
                 & (cells["status"] == "ok")]
    rows = rows[rows["dataset"].isin(study.result.datasets)]
    folds = rows.pivot_table(index=["dataset", "repeat", "fold"], columns="resampler", values=metric, aggfunc="first")
    sizes = rows.groupby("dataset")[["n_train", "n_test"]].mean()
    found = {}
    for method in study.result.methods:
        if method == control or method not in folds.columns or control not in folds.columns:
            continue
        found[method] = [(dataset, fold_interval((part[method] - part[control]).dropna().to_numpy(),
                                                 sizes.loc[dataset, "n_train"], sizes.loc[dataset, "n_test"]))
                         for dataset, part in folds.groupby(level="dataset")]
    return found


@dataclass(frozen=True)
class Agreement:
    """Whether the learners agree on the order of the resamplers (Kendall's W over the learners' average
    ranks), and how the metrics' orders of all combinations agree (Kendall's tau)."""

    concordance: object            # agreement.Concordance, or None
    resamplers: tuple              # resamplers ranked by every learner
    best_by_learner: dict          # learner -> leaders
    metric_tau: dict               # (metric, metric) -> (tau, p, n methods)


def agreement(studies, primary, metrics):
    """Kendall's W of the learners' resampler ranks and Kendall's tau between metrics, at the primary point."""
    at = [s for s in studies if s.ok and s.spec.kind == "point" and (s.spec.ratio, s.spec.size)
          == (primary.ratio, primary.size)]
    per_learner = {s.spec.learner: s.result for s in at if s.spec.metric == primary.metric and s.spec.learner}
    common = sorted(set.intersection(*(set(r.methods) for r in per_learner.values()))) if per_learner else []
    concordance = None
    if len(per_learner) >= 2 and len(common) >= 3:
        ranks = np.array([[r.average_ranks[m] for m in common] for r in per_learner.values()])
        concordance = kendall_w(ranks, higher_is_better=False)
    overall = {s.spec.metric: s.result for s in at if s.spec.learner is None}
    tau = {}
    for i, first in enumerate(metrics):
        for second in metrics[i + 1:]:
            if first in overall and second in overall:
                shared = sorted(set(overall[first].methods) & set(overall[second].methods))
                if len(shared) >= 3:
                    value, p = kendall_tau([overall[first].average_ranks[m] for m in shared],
                                           [overall[second].average_ranks[m] for m in shared])
                    tau[(first, second)] = (value, p, len(shared))
    return Agreement(concordance, tuple(common), {learner: list(r.leaders) for learner, r in per_learner.items()}, tau)


def families_of(datasets):
    """{dataset reference: family} from the manifest's DatasetDescriptions, or None when no two datasets share a
    family (then there is no dependence to check)."""
    found = {d.reference: d.family or d.reference for d in datasets}
    return found if len(set(found.values())) < len(found) else None
