"""``measured:coffee?positive=CLASS&keep=N&seed=S``: real infrared spectra shipped by a package we depend on.

coffee: 60 ATR-FTIR spectra of roasted coffee from three origins (Brasil, Ethiopia, Vietnam; 20 each),
as distributed with chemotools (``chemotools.datasets.load_coffee``). The file gives no wavenumber axis,
so features are indexed by position. With ``positive`` the task is one-vs-rest; ``keep`` keeps only N
spectra of the positive class (chosen at random with ``seed``): an imbalance induced by us, not measured.
Whether some of the 60 spectra are repeated scans of one coffee sample cannot be known: chemotools'
docstring, README and metadata (0.5) say only "coffee spectra from three different origins measured
off-line using ATR-FTIR". They are used without groups, and the dataset card says so.
"""
import numpy as np

from ..errors import DatasetError, unknown
from .dataset import Dataset, Provenance
from .labels import encode
from .params import Param, read_params

SETS = {"coffee": "60 ATR-FTIR spectra of coffee, 3 origins (chemotools)"}
REPLICATES = ("measured spectra, used without groups: whether some are repeated scans of one coffee sample is not "
              "documented by chemotools, so it cannot be known; if they are, grouped folds would be needed and "
              "these scores may be optimistic")
PARAMS = {"positive": Param(str, None, "the class to set against the rest"),
          "keep": Param(int, None, "keep only this many spectra of the positive class (an induced imbalance)"),
          "seed": Param(int, 0, "which spectra keep= keeps")}


def load(ref):
    if ref.body not in SETS:
        raise DatasetError(f"{ref.text}: {unknown('measured set', ref.body, SETS)}")
    values = read_params(ref, PARAMS)
    from chemotools.datasets import load_coffee
    spectra, labels = load_coffee()
    X = spectra.to_numpy(dtype=np.float64)
    raw = labels.iloc[:, 0].astype(str).to_numpy()
    positive = values["positive"]
    y, classes = encode(raw, positive, where=ref.text)
    note = REPLICATES
    if values["keep"] is not None:
        if positive is None:
            raise DatasetError(f"{ref.text}: keep= needs positive= (which class to thin out)")
        keep = values["keep"]
        members = np.flatnonzero(y == 1)
        if not 1 <= keep <= len(members):
            raise DatasetError(f"{ref.text}: keep={keep} must be between 1 and {len(members)}")
        rng = np.random.default_rng(values["seed"])
        dropped = rng.choice(members, len(members) - keep, replace=False)
        rows = np.setdiff1d(np.arange(len(y)), dropped)
        X, y = X[rows], y[rows]
        note = f"{REPLICATES}; imbalance INDUCED by keeping {keep} of {len(members)} {positive} spectra"
    query = ",".join(f"{k}={v}" for k, v in sorted(ref.params.items()))
    return Dataset(
        name=f"coffee[{query}]" if query else "coffee",
        X=X, y=y, classes=classes,
        provenance=Provenance(source="chemotools.datasets.load_coffee (ATR-FTIR)", version="chemotools 0.5",
                              citation="Cabaneros Lopez et al., chemotools; coffee spectra as distributed with it",
                              licence="as distributed with chemotools (MIT)", family="coffee", note=note),
        feature_names=tuple(str(c) for c in spectra.columns),
    )
