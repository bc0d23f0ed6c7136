"""Resampler registry: built-in names, the ``lopsided.resamplers`` entry-point group, import paths.

A resampler is any object with ``fit_resample(X, y) -> (X_res, y_res)`` and, optionally,
a ``random_state`` parameter.
"""
from functools import partial

from ..errors import MethodError
from ..plugins import accepted_params, build
from ..registry import Registry
from .cleaning import NeighbourEditing, OneSidedSelection, TomekCleaning
from .clusters import KMeansCentres
from .combined import SmoteThenEditing, SmoteThenTomek
from .nearmiss import NearMissUnder
from .random import BootstrapOver, NoResampling, RandomUnder, RepeatOver, TopUpOver
from .smote import Adasyn, BorderlineSmote, Smote, SmoteNominal
from .weights import ClassWeights

BUILTIN = {
    "none": (NoResampling, "no resampling (baseline)"),
    "class-weights": (ClassWeights, "no resampling; the learner weighs classes by n / (k n_c) (King & Zeng 2001)"),
    "random-under": (RandomUnder, "random under-sampling of the larger classes, no duplicates (Japkowicz 2000)"),
    "repeat-over": (RepeatOver, "whole copies of the minority class, remainder drawn at random without replacement"),
    "bootstrap-over": (BootstrapOver, "minority class replaced by a bootstrap sample of the target size (Efron 1979)"),
    "topup-over": (TopUpOver, "all minority samples kept, only the missing number bootstrapped"),
    "smote": (Smote, "SMOTE: points towards nearest minority neighbours, each minority sample seeding evenly (Chawla et al. 2002)"),
    "borderline-smote-1": (partial(BorderlineSmote, variant=1),
                           "Borderline-SMOTE 1: SMOTE seeded only from the danger set (Han et al. 2005)"),
    "borderline-smote-2": (partial(BorderlineSmote, variant=2),
                           "Borderline-SMOTE 2: danger seeds, neighbours of any class, gap U(0, 0.5) if another (Han et al. 2005)"),
    "adasyn": (Adasyn, "ADASYN: more synthetic points where other classes are near, exact total (He et al. 2008)"),
    "smote-nc": (SmoteNominal, "SMOTE-NC for nominal + continuous features, ?nominal=0,3 (Chawla et al. 2002, 6.1)"),
    "tomek-links": (TomekCleaning, "removes the larger-class member of each Tomek link, identical rows of two labels included (Tomek 1976)"),
    "enn": (NeighbourEditing, "edited nearest neighbours: removes majority samples with 2+ of 3 neighbours from other classes (Wilson 1972)"),
    "nearmiss-1": (partial(NearMissUnder, rule=1), "NearMiss-1: majority closest to their 3 nearest minority (Mani & Zhang 2003)"),
    "nearmiss-2": (partial(NearMissUnder, rule=2), "NearMiss-2: majority closest to their 3 farthest minority (Mani & Zhang 2003)"),
    "nearmiss-3": (partial(NearMissUnder, rule=3), "NearMiss-3: nearest majority of each minority, then the farthest (Mani & Zhang 2003)"),
    "one-sided-selection": (OneSidedSelection, "one-sided selection: 1-NN consistent subset minus Tomek links (Kubat & Matwin 1997)"),
    "cluster-centres": (KMeansCentres, "majority replaced by k-means cluster centres (Yen & Lee 2009)"),
    "smote-tomek": (SmoteThenTomek, "SMOTE, then both members of every Tomek link removed (Batista et al. 2004)"),
    "smote-enn": (SmoteThenEditing, "SMOTE, then ENN over all classes (Batista et al. 2004)"),
}
REGISTRY = Registry("resampler", BUILTIN, "lopsided.resamplers")
resolve = REGISTRY.resolve
describe = REGISTRY.describe


def make_resampler(spec, random_state=None):
    """A fresh resampler for ``spec`` with its seed set (when it takes one)."""
    factory = resolve(spec.name)
    params = dict(spec.params)
    allowed = accepted_params(factory)
    if allowed is None or "random_state" in allowed:
        params.setdefault("random_state", random_state)
    resampler = build("resampler", spec.title, factory, params)
    if not callable(getattr(resampler, "fit_resample", None)):
        raise MethodError(f"resampler {spec.title}: has no fit_resample(X, y) method")
    return resampler
