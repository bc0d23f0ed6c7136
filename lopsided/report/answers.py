"""The answer a practitioner needs, per learner: should I resample, with what, and what does it buy on the
metric I care about, against doing nothing and against simply moving the threshold. Built from the primary
analysis (``findings``); every sentence names the effect with its interval, the test that decides and what
it does not show.
"""
import math
from dataclasses import dataclass

from ..analysis.compare import Comparison
from ..analysis.effects import Effect, paired_effect
from ..analysis.words import listed
from ..methods.metrics import metric_name
from .findings import THRESHOLD_FREE, Study, Survival

THRESHOLD_METHOD = "threshold-moving"


def signed(value):
    """A difference with its sign and 3 decimals; one that rounds to zero keeps two significant digits
    (-0.00031, not -0.000), and an exact or negligible (< 5e-7) zero prints as 0.000."""
    if abs(value) >= 0.0005:
        return f"{value:+.3f}"
    if abs(value) < 5e-7:
        return "0.000"
    return f"{value:+.{1 - math.floor(math.log10(abs(value)))}f}"


def interval_text(interval):
    """'+0.084 [+0.060, +0.110]', or '+0.084 (no interval: ...)'."""
    if interval.low is None:
        return f"{signed(interval.mean)} ({interval.note})"
    return f"{signed(interval.mean)} [{signed(interval.low)}, {signed(interval.high)}]"


def change_text(effect, metric):
    """'changes balanced accuracy by +0.084 [+0.060, +0.110]': the mean difference with its interval, in neutral
    words (an interval describes the datasets; the tests make the claims)."""
    return f"changes {metric_name(metric)} by {interval_text(effect.datasets)} on average"


@dataclass(frozen=True)
class Answer:
    """One learner's answer at the primary point (see the module docstring)."""

    learner: str
    metric: str
    study: Study                   # the learner's primary comparison
    leader: str                    # first of the methods sharing the best average rank
    effect: Effect | None          # Effect of the leader against the control (None: the leader is the control)
    significant: bool
    control_p: float | None        # Holm-adjusted Wilcoxon p of the leader against the control
    threshold: Effect | None       # Effect of threshold moving against the control (None: not in the suite)
    over_threshold: Effect | None  # Effect of the leader against threshold moving
    others: tuple                  # (metric, Effect of the leader against the control) on the other metrics
    survival: Survival | None
    sentences: tuple
    kept_threshold: int = 0        # threshold-moving cells that kept the learner's own threshold (too few minority)

    @property
    def result(self) -> Comparison:
        """The primary comparison's numbers (an answer is made only where that comparison could be made)."""
        assert self.study.result is not None
        return self.study.result

    def as_json(self):
        def effect(e):
            return None if e is None else e.as_json()
        return {"learner": self.learner, "metric": self.metric, "leader": self.leader,
                "leaders": self.result.leaders, "effect": effect(self.effect), "significant": self.significant,
                "control_holm_p": self.control_p, "threshold_moving": effect(self.threshold),
                "leader_over_threshold_moving": effect(self.over_threshold),
                "other_metrics": {m: effect(e) for m, e in self.others}, "sentences": list(self.sentences)}


def answers(studies, primary, survival_of, threshold_label=None, families=None, kept=None):
    """One Answer per learner with a primary comparison that could be made. ``kept``: {learner: threshold-moving
    cells that kept the learner's own threshold}."""
    found = []
    for study in studies:
        spec = study.spec
        if not (study.ok and spec.role == "primary" and spec.kind == "point" and spec.learner is not None):
            continue
        others = [s for s in studies if s.ok and s.spec.kind == "point" and s.spec.learner == spec.learner
                  and (s.spec.ratio, s.spec.size) == (spec.ratio, spec.size) and s.spec.metric != spec.metric]
        found.append(_answer(study, others, survival_of(study), threshold_label, families,
                             (kept or {}).get(spec.learner, 0)))
    return found


def _answer(study, others, survival, threshold_label, families, kept=0):
    result, decision, spec = study.result, study.decision, study.spec
    control, leader = result.control, result.leaders[0]
    by_method = {e.method: e for e in study.effects} if study.reference == control else {}
    effect = by_method.get(leader)
    control_p = (study.against_control.get(leader) if study.against_control
                 else result.against_control.get(leader, {}).get("holm_p")) if control else None
    significant = bool(decision.rejects and control_p is not None and control_p < result.alpha)
    threshold = by_method.get(threshold_label) if threshold_label in result.methods else None
    over = None
    if threshold is not None and leader != threshold_label:
        over = paired_effect(leader, threshold_label, result.scores, families, tolerance=result.rope)
    other_effects = []
    for other in others:
        mine = {e.method: e for e in other.effects} if other.reference == control else {}
        other_effects.append((other.spec.metric, mine.get(leader)))
    answer = Answer(spec.learner, spec.metric, study, leader, effect, significant, control_p, threshold, over,
                    tuple(other_effects), survival, (), kept)
    return Answer(**{**answer.__dict__, "sentences": tuple(sentences(answer, threshold_label))})


def sentences(a, threshold_label):
    """The answer in plain sentences, most important first."""
    result, decision = a.study.result, a.study.decision
    n, k, control, metric = result.friedman.n_datasets, result.friedman.n_methods, result.control, a.metric
    first = result.first_place.get(a.leader) if result.first_place is not None else None
    lead = (f"{listed(result.leaders)} share the best average rank among {k} resamplers on {metric_name(metric)}"
            if len(result.leaders) > 1 else f"{a.leader} ranks first among {k} resamplers on {metric_name(metric)}"
            + (f" (first in {100 * first:.0f} % of bootstrap resamples of the {n} datasets)" if first is not None else ""))
    effects = {e.method: e for e in a.study.effects} if a.study.reference == control else {}
    lines = []
    if control is None:
        lines.append(f"With {a.learner}: {lead}; no control resampler is set, so no effect against doing nothing.")
    elif a.leader == control and len(result.leaders) == 1:
        lines.append(f"With {a.learner}: {lead}: no resampler ranks above {control}.")
    else:
        tied = [m for m in result.leaders if m in effects]
        e = effects.get(a.leader) or effects[tied[0]]
        if e.datasets.low is None:       # too few datasets: the mean alone, and why there is no interval
            changes = "; ".join(f"{m} changes {metric_name(metric)} by {signed(effects[m].datasets.mean)} on average"
                                for m in tied)
            how = e.datasets.note
        else:
            changes = "; ".join(f"{m} {change_text(effects[m], metric)}" for m in tied)
            how = "mean difference with its 95 % interval"
        lines.append(f"With {a.learner}: {lead}; against {control} on {n} datasets, {changes} ({how}; wins {e.wins} / "
                     f"ties {e.ties} / losses {e.losses}, a tie within +/-{e.tolerance:g}).")
        lines.append(_significance(a, decision, result))
        gainer = max(effects.values(), key=lambda x: x.datasets.mean)
        if (gainer.method not in result.leaders and gainer.datasets.mean > 0
                and signed(gainer.datasets.mean) != signed(e.datasets.mean)):      # a gain the printed digits show
            lines.append(f"Ranks and mean differences order the resamplers differently: by mean difference "
                         f"{gainer.method} gains most ({interval_text(gainer.datasets)}).")
        if e.families is not None:
            lines.append(_families(a))
    if a.threshold is not None and control is not None:
        text = (f"Threshold moving alone (its threshold tuned for {metric_name(metric)} on each training part, the "
                f"resamplers untuned) {change_text(a.threshold, metric)} over {control}")
        if a.over_threshold is not None:
            gap = a.over_threshold.datasets
            text += f"; {a.leader} against threshold moving: {interval_text(gap)}"
            if gap.low is not None and gap.low <= 0 <= gap.high:
                text += (", an interval that holds zero: on these datasets resampling shows no gain over moving the "
                         "decision threshold (which is not evidence that the two are equal)")
            elif gap.low is not None:
                text += " (an interval on these datasets, not a test)"
        if a.kept_threshold:
            text += (f"; in {a.kept_threshold} cells the training part had too few minority rows or groups to tune a "
                     "threshold, and the learner kept its own")
        lines.append(text + ".")
    shown = [(m, e) for m, e in a.others if e is not None]
    if shown and a.leader != control:
        below = [metric_name(m) for m, e in shown if e.datasets.high is not None and e.datasets.high < 0]
        lines.append(f"On the other metrics (exploratory mean differences, not adjusted), {a.leader} against {control}: "
                     + "; ".join(f"{metric_name(m)} {interval_text(e.datasets)}" for m, e in shown) + "."
                     + (f" Its interval lies below zero on {listed(below)}: lower there on these datasets."
                        if below else ""))
        disagreement = "" if a.leader == threshold_label else _disagreement(a, shown)
        if disagreement:
            lines.append(disagreement)
    return lines


def _significance(a, decision, result):
    if not result.claims_allowed:
        return f"No significance claim: {result.no_claim_reason}."
    if not decision.rejects:
        return (f"Not a claim: the Friedman test of this learner's resamplers does not reject after adjustment "
                f"(p = {result.friedman.decision_p:.3g}, adjusted p = {decision.adjusted:.3g}, {decision.family}), "
                "so no resampler is called better or worse than another.")
    verdict = "significant" if a.significant else "not significant"
    family = (f"Holm over all {len(a.study.against_control)} comparisons with a control in the primary analysis"
              if a.study.against_control else f"Holm over the {len(result.against_control)} comparisons with "
              f"{result.control}")
    return (f"Against {result.control}: {verdict} (Wilcoxon signed-rank, {family}: p = {a.control_p:.3g}; after the "
            f"Friedman test rejects, adjusted p = {decision.adjusted:.3g}, {decision.role} analysis).")


def _families(a):
    e, s = a.effect, a.survival
    fam = e.families
    held = "" if s is None else (" The claim holds when each family counts once." if a.significant and
                                 s.control.get(a.leader, False) else
                                 " It does not hold when each family counts once (family-level test)."
                                 if a.significant else "")
    if fam.low is None:
        return f"Over dataset families: {signed(fam.mean)} ({fam.note}).{held}"
    return f"Over {fam.n} dataset families (one mean each): {interval_text(fam)}.{held}"


def _disagreement(a, shown):
    """A sentence when the headline (threshold-dependent) metric rises and a threshold-free one does not."""
    if a.metric in THRESHOLD_FREE or a.effect is None or a.effect.datasets.low is None or a.effect.datasets.low <= 0:
        return ""
    free = [(m, e) for m, e in shown if m in THRESHOLD_FREE and e.datasets.low is not None and e.datasets.low <= 0]
    if not free:
        return ""
    names = listed(metric_name(m) for m, _ in free)
    # reference from memory: van den Goorbergh, van Smeden, Timmerman & Van Calster (2022), JAMIA 29(9)
    return (f"The metrics disagree: the interval of {a.leader} on {metric_name(a.metric)}, which depends on the "
            f"decision threshold, lies above zero, but not on {names}, which does not: a pattern of a shifted threshold rather "
            "than a better ranking of cases (the central finding on rebalancing of van den Goorbergh et al. 2022, "
            "J Am Med Inform Assoc).")
