"""``sklearn:NAME[?positive=CLASS]``: scikit-learn's bundled toy sets, for smoke tests.

A positive class turns the set into a one-vs-rest binary task (``sklearn:digits?positive=0``
is about 1:9). These are small, clean and old: good for checking the plumbing, not for
conclusions about methods.
"""
import numpy as np
from sklearn import datasets as skdata

from ..errors import DatasetError, unknown
from .dataset import Dataset, Provenance
from .labels import encode
from .params import Param, read_params

LOADERS = {
    "digits": (skdata.load_digits, "UCI optical recognition of handwritten digits (8x8 images), 10 classes"),
    "iris": (skdata.load_iris, "Fisher's iris measurements, 3 classes"),
    "wine": (skdata.load_wine, "UCI wine recognition, chemical analysis, 3 classes"),
}
CITATION = "Dua & Graff, UCI Machine Learning Repository; bundled with scikit-learn"
PARAMS = {"positive": Param(str, None, "the positive class: its name, or its index among the set's classes")}


def load(ref):
    if ref.body not in LOADERS:
        raise DatasetError(f"{ref.text}: {unknown('scikit-learn set', ref.body, LOADERS)}")
    positive = read_params(ref, PARAMS)["positive"]
    bunch = LOADERS[ref.body][0]()
    names = np.array([str(n) for n in bunch.target_names], dtype=object)
    raw = names[bunch.target]
    if positive is not None and positive not in set(names):
        if not (positive.isdigit() and int(positive) < len(names)):
            raise DatasetError(f"{ref.text}: positive class {positive!r} not among {list(names)}")
        positive = names[int(positive)]
    y, classes = encode(raw, positive, where=ref.text)
    name = ref.body if positive is None else f"{ref.body}-{positive}-vs-rest"
    return Dataset(
        name=name,
        X=np.asarray(bunch.data, dtype=np.float64),
        y=y,
        classes=classes,
        provenance=Provenance(
            source=f"scikit-learn load_{ref.body}",
            citation=CITATION,
            licence="see scikit-learn's dataset documentation",
            family=ref.body,
            note="smoke-test set" + ("; imbalance induced by one-vs-rest" if positive is not None else ""),
        ),
        feature_names=tuple(str(f) for f in getattr(bunch, "feature_names", [])),
    )
