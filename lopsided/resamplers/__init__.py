"""Resampler registry: built-in names, the ``lopsided.resamplers`` entry-point group, import paths.

A resampler is any object with ``fit_resample(X, y) -> (X_res, y_res)`` and, optionally,
a ``random_state`` parameter.
"""
from ..errors import MethodError, unknown
from ..plugins import accepted_params, build, entry_point_objects, import_object
from .random import BootstrapOver, NoResampling, RandomUnder, RepeatOver, TopUpOver

BUILTIN = {
    "none": (NoResampling, "no resampling (baseline)"),
    "random-under": (RandomUnder, "random under-sampling of the larger classes, no duplicates (Japkowicz 2000)"),
    "repeat-over": (RepeatOver, "whole copies of the minority class, remainder drawn at random without replacement"),
    "bootstrap-over": (BootstrapOver, "minority class replaced by a bootstrap sample of the target size (Efron 1979)"),
    "topup-over": (TopUpOver, "all minority samples kept, only the missing number bootstrapped"),
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
