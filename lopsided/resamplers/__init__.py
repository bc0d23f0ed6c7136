"""Resampler registry: built-in names, the ``lopsided.resamplers`` entry-point group, import paths.

A resampler is any object with ``fit_resample(X, y) -> (X_res, y_res)`` and, optionally,
a ``random_state`` parameter.
"""
from ..errors import MethodError, unknown
from ..plugins import accepted_params, build, entry_point_objects, import_object
from functools import partial

from .cleaning import EditedNearestNeighbours, OneSidedSelection, TomekLinks
from .clusters import ClusterCentres
from .combined import SMOTEENN, SMOTETomek
from .nearmiss import NearMiss
from .random import BootstrapOver, NoResampling, RandomUnder, RepeatOver, TopUpOver
from .smote import ADASYN, SMOTE, SMOTENC, BorderlineSMOTE
from .weights import ClassWeights

BUILTIN = {
    "none": (NoResampling, "no resampling (baseline)"),
    "class-weights": (ClassWeights, "no resampling; the learner weighs classes by n / (k n_c) (King & Zeng 2001)"),
    "random-under": (RandomUnder, "random under-sampling of the larger classes, no duplicates (Japkowicz 2000)"),
    "repeat-over": (RepeatOver, "whole copies of the minority class, remainder drawn at random without replacement"),
    "bootstrap-over": (BootstrapOver, "minority class replaced by a bootstrap sample of the target size (Efron 1979)"),
    "topup-over": (TopUpOver, "all minority samples kept, only the missing number bootstrapped"),
    "smote": (SMOTE, "SMOTE: points towards nearest minority neighbours, each minority sample seeding evenly (Chawla et al. 2002)"),
    "borderline-smote-1": (partial(BorderlineSMOTE, variant=1),
                           "Borderline-SMOTE 1: SMOTE seeded only from the danger set (Han et al. 2005)"),
    "borderline-smote-2": (partial(BorderlineSMOTE, variant=2),
                           "Borderline-SMOTE 2: danger seeds, neighbours of any class, gap U(0, 0.5) if another (Han et al. 2005)"),
    "adasyn": (ADASYN, "ADASYN: more synthetic points where other classes are near, exact total (He et al. 2008)"),
    "smote-nc": (SMOTENC, "SMOTE-NC for nominal + continuous features, ?nominal=0,3 (Chawla et al. 2002, 6.1)"),
    "tomek-links": (TomekLinks, "removes the larger-class member of each Tomek link, identical rows of two labels included (Tomek 1976)"),
    "enn": (EditedNearestNeighbours, "edited nearest neighbours: removes majority samples with 2+ of 3 neighbours from other classes (Wilson 1972)"),
    "nearmiss-1": (partial(NearMiss, version=1), "NearMiss-1: majority closest to their 3 nearest minority (Mani & Zhang 2003)"),
    "nearmiss-2": (partial(NearMiss, version=2), "NearMiss-2: majority closest to their 3 farthest minority (Mani & Zhang 2003)"),
    "nearmiss-3": (partial(NearMiss, version=3), "NearMiss-3: nearest majority of each minority, then the farthest (Mani & Zhang 2003)"),
    "one-sided-selection": (OneSidedSelection, "one-sided selection: 1-NN consistent subset minus Tomek links (Kubat & Matwin 1997)"),
    "cluster-centres": (ClusterCentres, "majority replaced by k-means cluster centres (Yen & Lee 2009)"),
    "smote-tomek": (SMOTETomek, "SMOTE, then both members of every Tomek link removed (Batista et al. 2004)"),
    "smote-enn": (SMOTEENN, "SMOTE, then ENN over all classes (Batista et al. 2004)"),
}
ENTRY_POINT_GROUP = "lopsided.resamplers"


def resolve(name):
    """Name or import path -> the resampler class (or factory)."""
    if ":" in name:
        return import_object(name)
    if name in BUILTIN:
        return BUILTIN[name][0]
    plugins = entry_point_objects(ENTRY_POINT_GROUP)
    if name in plugins:
        try:
            return plugins[name].load()
        except Exception as exc:
            raise MethodError(f"resampler {name!r} (entry point {plugins[name].value}): cannot load ({exc})") from None
    raise MethodError(unknown("resampler", name, [*BUILTIN, *plugins]))


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


def describe():
    """(name, description) rows, plugins included."""
    rows = [(name, text) for name, (_, text) in BUILTIN.items()]
    rows += [(name, f"plugin from {ep.value}") for name, ep in entry_point_objects(ENTRY_POINT_GROUP).items()]
    return rows
