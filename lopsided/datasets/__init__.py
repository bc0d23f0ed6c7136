"""Dataset adapters: one per reference scheme, all returning a `Dataset`.

``ADAPTERS`` maps a scheme to its ``Builtin`` record (loader, one line with an example); ``DATASETS`` is their
registry, which also reads the ``lopsided.datasets`` entry-point group (a plugin registers a loader
for a new scheme). A loader takes a parsed `Reference` and returns a `Dataset` or raises `DatasetError`.
"""
from dataclasses import replace
from functools import lru_cache
from pathlib import Path

from ..errors import DatasetError
from ..registry import Builtin, Registry
from ..specs import parse_reference
from . import bundled, files, jcampdx, keel, measured, openml_source, spectra
from .dataset import Dataset

ADAPTERS = {   # a data source is cited by what its reference names: report/citations.py SCHEMES
    "sklearn": Builtin(bundled.load, "scikit-learn's bundled toy sets, one-vs-rest: sklearn:" + "|".join(bundled.LOADERS)
                       + "?positive=CLASS (smoke tests only)"),
    "spectra": Builtin(spectra.load, "synthetic mid-infrared spectra with donors / particles: spectra:"
                       + "|".join(spectra.PRESETS) + "?ratio=10&seed=1"),
    "file": Builtin(files.load, "your own table (CSV, TSV, Parquet, ARFF, KEEL .dat): "
                    "file:PATH.csv?label=COLUMN[&group=COLUMN&positive=CLASS&drop=a,b&nominal=c,d]"),
    "keel": Builtin(keel.load, "the KEEL imbalanced collection, keel:NAME (`lopsided datasets list --collection keel`), "
                    "or your own KEEL files, keel:PATH#NAME"),
    "openml": Builtin(openml_source.load, "an OpenML dataset by integer id: openml:ID[?target=NAME&positive=CLASS]"),
    "measured": Builtin(measured.load, "real infrared spectra shipped by a dependency: "
                        "measured:coffee?positive=Vietnam&keep=6 (keep= induces the imbalance)"),
    "jcamp": Builtin(jcampdx.load, "a folder of JCAMP-DX spectra with a label table: "
                     "jcamp:FOLDER?labels=labels.csv&label=COLUMN"),
}
DATASETS = Registry("dataset scheme", ADAPTERS, "lopsided.datasets", import_paths=False, error=DatasetError)


PATH_SCHEMES = ("file", "jcamp", "keel")   # schemes whose body can be a path (keel: with #NAME)


def load_dataset(reference: str, base: str | Path | None = None) -> Dataset:
    """Load a dataset from its reference.

    Parameters
    ----------
    reference : str
        ``scheme:body?param=value``, e.g. ``"sklearn:wine?positive=2"`` or ``"spectra:serum?ratio=8"``.
    base : str or Path, optional
        Folder that relative paths in ``file:``, ``jcamp:`` and ``keel:PATH#NAME`` references are taken
        from (a suite's own folder); default: the current folder.

    Returns
    -------
    Dataset
        Cached per process; its arrays are read-only, so callers share it safely.

    Raises
    ------
    DatasetError
        for an unknown scheme, an unknown parameter, a value of the wrong kind or unreadable data.
    """
    return _load(reference, None if base is None else str(base))


@lru_cache(maxsize=32)
def _load(reference, base):
    ref = parse_reference(reference)
    if base is not None and ref.scheme in PATH_SCHEMES and (ref.scheme != "keel" or ref.fragment):
        path = Path(ref.body).expanduser()
        if not path.is_absolute():
            ref = replace(ref, body=str(Path(base) / path))
    return DATASETS.resolve(ref.scheme)(ref)
