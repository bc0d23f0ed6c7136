"""Resampler registry: built-in names, the ``lopsided.resamplers`` entry-point group, import paths.

A resampler is any object with ``rebalance(X, y) -> (X_res, y_res)`` and, optionally, a ``random_state``
parameter. Objects of other libraries whose method is ``fit_resample(X, y)`` are accepted through
``ForeignResampler``. Three optional extras: ``rebalance(X, y, groups=None)`` receives the training rows'
groups (donors, specimens, particles); ``sample_weight(y)`` gives per-row weights for the learner;
``adjust_learner(model, groups)`` wraps the learner (threshold moving).
"""
import inspect
from functools import partial

from ...errors import MethodError
from ...registry import Builtin, Registry
from .cleaning import NeighbourEditing, OneSided, TomekCleaning
from .clusters import KMeansCentres
from .combined import SmoteThenEditing, SmoteThenTomek
from .groups import GroupOver, GroupSmote, GroupUnder
from .nearmiss import NearMissUnder
from .random import BootstrapOver, NoResampling, RandomUnder, RepeatOver, TopUpOver
from .smote import Adasyn, BorderlineSmote, Smote, SmoteNominal
from .threshold import ThresholdMoving
from .weights import ClassWeights

BUILTIN = {
    "none": Builtin(NoResampling, "no resampling (baseline)"),    # trains on the data as it is: nothing to cite
    "class-weights": Builtin(ClassWeights, "no resampling; the learner weighs classes by n / (k n_c) (King & Zeng 2001)",
                             ("king2001",)),
    "threshold-moving": Builtin(ThresholdMoving, "no resampling; the learner's threshold moved to maximise the headline "
                                "metric in an inner cross-validation of the training part (Provost 2000)",
                                ("provost2000", "collell2018")),
    "random-under": Builtin(RandomUnder, "random under-sampling of the larger classes, no duplicates (Japkowicz 2000)",
                            ("japkowicz2000",)),
    "repeat-over": Builtin(RepeatOver, "whole copies of the minority class, remainder drawn at random without replacement",
                           ("japkowicz2000", "batista2004")),
    "bootstrap-over": Builtin(BootstrapOver, "minority class replaced by a bootstrap sample of the target size (Efron 1979)",
                              ("efron1979",)),
    "topup-over": Builtin(TopUpOver, "all minority samples kept, only the missing number bootstrapped",
                          ("batista2004", "efron1979")),
    "smote": Builtin(Smote, "SMOTE: points towards nearest minority neighbours, each minority sample seeding evenly "
                     "(Chawla et al. 2002)", ("chawla2002",)),
    "borderline-smote-1": Builtin(partial(BorderlineSmote, variant=1),
                                  "Borderline-SMOTE 1: SMOTE seeded only from the danger set (Han et al. 2005)",
                                  ("han2005", "chawla2002")),
    "borderline-smote-2": Builtin(partial(BorderlineSmote, variant=2),
                                  "Borderline-SMOTE 2: danger seeds, neighbours of any class, gap U(0, 0.5) if another "
                                  "(Han et al. 2005)", ("han2005", "chawla2002")),
    "adasyn": Builtin(Adasyn, "ADASYN: more synthetic points where other classes are near, exact total (He et al. 2008)",
                      ("he2008",)),
    "smote-nc": Builtin(SmoteNominal, "SMOTE-NC for nominal + continuous features, ?nominal=0,3 (Chawla et al. 2002, 6.1)",
                        ("chawla2002",)),
    "tomek-links": Builtin(TomekCleaning, "removes the larger-class member of each Tomek link, identical rows of two "
                           "labels included (Tomek 1976)", ("tomek1976",)),
    "enn": Builtin(NeighbourEditing, "edited nearest neighbours: removes majority samples most of whose neighbours are "
                   "of other classes (Wilson 1972)", ("wilson1972",)),
    "nearmiss-1": Builtin(partial(NearMissUnder, rule=1),
                          "NearMiss-1: majority closest to their nearest minority samples (Mani & Zhang 2003)",
                          ("mani2003",)),
    "nearmiss-2": Builtin(partial(NearMissUnder, rule=2),
                          "NearMiss-2: majority closest to their farthest minority samples (Mani & Zhang 2003)",
                          ("mani2003",)),
    "nearmiss-3": Builtin(partial(NearMissUnder, rule=3),
                          "NearMiss-3: nearest majority of each minority, then the farthest (Mani & Zhang 2003)",
                          ("mani2003",)),
    "one-sided-selection": Builtin(OneSided, "one-sided selection: 1-NN consistent subset minus Tomek links "
                                   "(Kubat & Matwin 1997)", ("kubat1997", "hart1968", "tomek1976")),
    "cluster-centres": Builtin(KMeansCentres, "majority replaced by k-means cluster centres (Yen & Lee 2009)",
                               ("yen2009",)),
    "smote-tomek": Builtin(SmoteThenTomek, "SMOTE, then both members of every Tomek link removed (Batista et al. 2004)",
                           ("batista2004", "chawla2002", "tomek1976")),
    "smote-enn": Builtin(SmoteThenEditing, "SMOTE, then ENN over all classes (Batista et al. 2004)",
                         ("batista2004", "chawla2002", "wilson1972")),
    "group-smote": Builtin(GroupSmote, "SMOTE between rows of different groups only: never two replicates of one donor",
                           ("chawla2002",)),
    "group-under": Builtin(GroupUnder, "random under-sampling of whole groups: donors, specimens or particles kept or "
                           "dropped whole", ("japkowicz2000",)),
    "group-over": Builtin(GroupOver, "random over-sampling by copies of whole groups (donors, specimens, particles)",
                          ("japkowicz2000", "batista2004")),
}
REGISTRY = Registry("resampler", BUILTIN, "lopsided.resamplers")
resolve = REGISTRY.resolve


def make_resampler(spec, random_state=None, one_unit=False, nominal=()):
    """A fresh resampler for ``spec`` with its seed set (when it takes one), and for a built-in what the data
    say, unless the spec says otherwise: ``one_unit`` (the columns share one unit: a feature axis, spectra),
    so a method that measures distances searches them as given rather than standardised
    (``neighbours.Scaling``); ``nominal``, the dataset's nominal columns, for SMOTE-NC."""
    context = {"random_state": random_state, "nominal": tuple(nominal), **({"distances": "as-given"} if one_unit else {})}
    resampler = REGISTRY.build(spec, context)
    if callable(getattr(resampler, "rebalance", None)):
        return resampler
    if callable(getattr(resampler, "fit_resample", None)):
        return ForeignResampler(resampler)
    raise MethodError(f"resampler {spec.title}: has neither rebalance(X, y) nor fit_resample(X, y)")


def takes_groups(method):
    return "groups" in inspect.signature(method).parameters


class ForeignResampler:
    """A resampler of another library, whose method is ``fit_resample(X, y)``, seen through our contract:
    ``rebalance`` calls it (with the rows' groups when it takes them); everything else (parameters, n_jobs,
    optional extras) is the object's own."""

    def __init__(self, inner):
        self.inner = inner

    def rebalance(self, X, y, groups=None):
        if groups is not None and takes_groups(self.inner.fit_resample):
            return self.inner.fit_resample(X, y, groups=groups)
        return self.inner.fit_resample(X, y)

    def __getattr__(self, name):
        if name == "inner":
            raise AttributeError(name)
        return getattr(self.inner, name)


def resample(resampler, X, y, groups=None):
    """``resampler.rebalance(X, y)``, with the rows' ``groups`` when its rebalance takes them."""
    if groups is not None and takes_groups(resampler.rebalance):
        return resampler.rebalance(X, y, groups=groups)
    return resampler.rebalance(X, y)
