"""Dataset adapters: one per reference scheme, all returning a `Dataset`.

``ADAPTERS`` maps a scheme to (loader, one-line description). A loader takes a parsed
`Reference` and returns a `Dataset` or raises `DatasetError`.
"""
from functools import lru_cache

from ..errors import DatasetError, unknown
from ..specs import parse_reference
from . import bundled, files, jcampdx, keel, measured, openml_source, spectra

ADAPTERS = {
    "sklearn": (bundled.load, "scikit-learn's bundled toy sets, one-vs-rest with ?positive= (smoke tests only)"),
    "spectra": (spectra.load, "synthetic mid-infrared spectra with donors/particles: " + ", ".join(spectra.PRESETS)),
    "file": (files.load, "your own CSV table: ?label=COLUMN[&group=COLUMN&positive=CLASS&drop=a,b]"),
    "keel": (keel.load, "the KEEL imbalanced collection (keel:NAME), or your KEEL files (keel:PATH#NAME)"),
    "openml": (openml_source.load, "an OpenML dataset by integer id: openml:ID[?target=NAME&positive=CLASS]"),
    "measured": (measured.load, "real infrared spectra shipped by a dependency: coffee (?positive=&keep= induces imbalance)"),
    "jcamp": (jcampdx.load, "a folder of JCAMP-DX spectra with a label table: ?labels=FILE.csv&label=COLUMN"),
}


@lru_cache(maxsize=32)
def load_dataset(reference):
    """'sklearn:wine?positive=2' -> Dataset. Results are cached per process (datasets are immutable)."""
    ref = parse_reference(reference)
    if ref.scheme not in ADAPTERS:
        raise DatasetError(f"{reference}: {unknown('dataset scheme', ref.scheme, ADAPTERS)}")
    try:
        return ADAPTERS[ref.scheme][0](ref)
    except (ValueError, TypeError) as exc:     # e.g. donors=abc: a parameter value of the wrong kind
        raise DatasetError(f"{reference}: a parameter has a value of the wrong kind ({exc})") from None


def available():
    """Rows of (reference example, description) for `lopsided list datasets`."""
    rows = [(f"sklearn:{name}?positive=CLASS", f"{text} (smoke tests only)") for name, (_, text) in bundled.LOADERS.items()]
    rows.append(("keel:NAME", ADAPTERS["keel"][1] + "; `lopsided datasets list --collection keel`"))
    rows.append(("openml:ID", ADAPTERS["openml"][1]))
    rows += [(f"spectra:{name}", text) for name, (_, _, text) in spectra.PRESETS.items()]
    rows.append(("measured:coffee?positive=Vietnam&keep=5", measured.SETS["coffee"] + "; imbalance induced"))
    rows.append(("file:PATH.csv?label=COLUMN", ADAPTERS["file"][1]))
    rows.append(("jcamp:FOLDER?labels=labels.csv&label=COLUMN", ADAPTERS["jcamp"][1]))
    return rows
