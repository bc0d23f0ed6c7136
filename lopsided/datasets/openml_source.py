"""``openml:ID[?target=NAME&positive=CLASS]``: a dataset from OpenML (Vanschoren et al. 2014,
SIGKDD Explorations 15(2):49), through the ``openml`` package.

Downloads go to the lopsided cache (openml's cache folder is set to it on each use); the
retry policy is one try, so an offline machine fails at once with a clear message instead of
waiting. The target is the dataset's default target unless ``target`` is given; nominal features
become integer codes (their category order). Version and md5 checksum are recorded.
"""
import numpy as np
import pandas as pd

from ..errors import DatasetError
from .cache import DOWNLOADS, cache_dir
from .dataset import Dataset, Provenance
from .labels import encode
from .params import Param, read_params

PARAMS = {"target": Param(str, None, "the class column (default: the dataset's default target)"),
          "positive": Param(str, None, "one class against the rest")}
CITATION = "Vanschoren, van Rijn, Bischl & Torgo (2014), OpenML: networked science in machine learning, SIGKDD Explor. 15(2):49"


def client():
    """The openml module, configured for our cache and a single try per call (no environment changes)."""
    import openml
    openml.config.set_root_cache_directory(str(cache_dir("openml")))
    openml.config.set_retry_policy("human", n_retries=1)
    return openml


def fetch(dataset_id):
    """The OpenMLDataset with its data file, or a DatasetError saying why not."""
    openml = client()
    cached = cache_dir("openml") / "org" / "openml" / "www" / "datasets" / str(dataset_id)
    if not DOWNLOADS.get() and not cached.is_dir():
        raise DatasetError(f"openml:{dataset_id}: not in the cache at {cache_dir('openml')}; this command does not "
                           "download (`lopsided run` does): run a suite that uses it first")
    try:
        return openml.datasets.get_dataset(dataset_id, download_data=True, download_qualities=False,
                                           download_features_meta_data=False)
    except Exception as exc:      # network errors, server errors, missing datasets all end here
        raise DatasetError(f"openml:{dataset_id}: cannot get it from OpenML or the cache at "
                           f"{cache_dir('openml')} ({type(exc).__name__}: {str(exc)[:200]}); "
                           "offline machines need a pre-filled cache") from None


def load(ref):
    values = read_params(ref, PARAMS)
    try:
        dataset_id = int(ref.body)
    except ValueError:
        raise DatasetError(f"{ref.text}: OpenML datasets are named by their integer id, e.g. openml:1464") from None
    dataset = fetch(dataset_id)
    target = values["target"] or dataset.default_target_attribute
    if not target:
        raise DatasetError(f"{ref.text}: the dataset has no default target; give ?target=COLUMN")
    try:
        X, y, nominal, names = dataset.get_data(target=target, dataset_format="dataframe")
    except Exception as exc:
        raise DatasetError(f"{ref.text}: cannot read the data with target {target!r} ({exc})") from None
    codes = []
    for column in X.columns:
        if isinstance(X[column].dtype, pd.CategoricalDtype) or X[column].dtype == object:
            codes.append(list(X.columns).index(column))
            X[column] = pd.Categorical(X[column]).codes.astype(float)
            X.loc[X[column] < 0, column] = np.nan
    labels, classes = encode(y.astype(str).to_numpy(), values["positive"], where=ref.text)
    return Dataset(
        name=dataset.name, X=X.to_numpy(dtype=np.float64), y=labels, classes=classes,
        provenance=Provenance(source=f"OpenML dataset {dataset_id} ({dataset.name})", version=str(dataset.version),
                              citation=dataset.citation or CITATION, licence=dataset.licence or "see OpenML",
                              family=dataset.name, note=f"md5 {dataset.md5_checksum}; target {target}"),
        feature_names=tuple(map(str, names)), nominal=tuple(codes),
    )
