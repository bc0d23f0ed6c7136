"""Turn raw labels into integer class codes, optionally one positive class against the rest."""
import numpy as np

from ..errors import DatasetError


def encode(labels, positive=None, where="labels"):
    """Raw labels -> (codes, class names).

    Without ``positive`` every distinct label is a class (sorted by its text).
    With ``positive`` the task is one-vs-rest: code 1 for that label, 0 for the rest.
    """
    text = np.array([str(v).strip() for v in labels], dtype=object)
    names = sorted(set(text))
    if positive is None:
        if len(names) < 2:
            raise DatasetError(f"{where}: needs at least two classes, found {names}")
        codes = np.searchsorted(np.array(names, dtype=object), text)
        return codes.astype(np.int64), tuple(names)
    wanted = str(positive).strip()
    if wanted not in names:
        raise DatasetError(f"{where}: positive class {wanted!r} not among the labels {names}")
    if len(names) < 2:
        raise DatasetError(f"{where}: only one class present, one-vs-rest impossible")
    return (text == wanted).astype(np.int64), (f"not {wanted}", wanted)
