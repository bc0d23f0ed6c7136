"""``jcamp:FOLDER?labels=TABLE.csv&label=COLUMN[&group=COLUMN&positive=CLASS]``: JCAMP-DX spectra.

JCAMP-DX is the IUPAC open exchange format for spectra (McDonald & Wilks 1988, Appl. Spectrosc.
42:151). Each file holds one spectrum; the label table (CSV, path relative to FOLDER unless absolute)
has a ``file`` column naming each file plus the label and optional group columns. Files are read
with the ``jcamp`` package; every spectrum must share the first one's x axis (no silent interpolation).
"""
import contextlib
import hashlib
import io
from pathlib import Path

import numpy as np

from ..errors import DatasetError, did_you_mean
from .dataset import Dataset, Provenance
from .files import read_csv
from .labels import encode
from .params import Param, read_params

PARAMS = {"labels": Param(str, None, "the label table (CSV with a file column), relative to the folder"),
          "label": Param(str, None, "the class column of the label table"),
          "group": Param(str, None, "a column of donor / specimen ids: grouped splitting"),
          "positive": Param(str, None, "one class against the rest")}


def read_spectrum(path):
    """(x, y) of one JCAMP-DX file, or a DatasetError naming the file.

    A data block shorter or longer than ##NPOINTS declares (a truncated file) and infinite values are
    refused; the reader's own remarks on such files (it prints them) are kept off the terminal.
    """
    import jcamp
    try:
        with contextlib.redirect_stdout(io.StringIO()):
            record = jcamp.readfile(str(path))
        x, y = np.asarray(record["x"], dtype=float), np.asarray(record["y"], dtype=float)
    except Exception as exc:   # the reader raises many kinds of errors on malformed files
        message = " ".join(str(exc).split())
        raise DatasetError(f"{path}: not a readable JCAMP-DX spectrum ({type(exc).__name__}: {message})") from None
    if x.ndim != 1 or y.ndim != 1 or len(x) < 2:
        raise DatasetError(f"{path}: JCAMP-DX file holds no x/y data table")
    if len(x) != len(y):
        raise DatasetError(f"{path}: NPOINTS: the header declares {len(x)} points, the data block holds "
                           f"{len(y)} values; the file looks truncated")
    if not np.isfinite(x).all():
        raise DatasetError(f"{path}: FIRSTX / LASTX: the x axis is not finite numbers")
    if np.isinf(y).any():
        raise DatasetError(f"{path}: the data block holds an infinite value")
    return x, y


def load(ref):
    if not ref.body.strip():
        raise DatasetError(f"{ref.text}: no folder named; write jcamp:FOLDER?labels=labels.csv&label=COLUMN")
    folder = Path(ref.body)
    values = read_params(ref, PARAMS)
    if not folder.is_dir():
        raise DatasetError(f"{folder}: no such folder of JCAMP-DX files")
    for needed in ("labels", "label"):
        if values[needed] is None:
            raise DatasetError(f"{ref.text}: say {needed}=..., e.g. ?labels=labels.csv&label=class")
    table_path = Path(values["labels"])
    table_path = table_path if table_path.is_absolute() else folder / table_path
    if not table_path.is_file():
        raise DatasetError(f"{table_path}: no such label table")
    table = read_csv(table_path)
    for column in ["file", values["label"], values["group"]]:
        if column is not None and column not in table.columns:
            raise DatasetError(f"{table_path}: no column {column!r}{did_you_mean(column, table.columns)}")
    if table.empty:
        raise DatasetError(f"{table_path}: lists no spectra")
    axis, rows, digest = None, [], hashlib.sha256()
    for name in table["file"]:
        path = folder / str(name)
        if not path.is_file():
            raise DatasetError(f"{table_path}: file {name!r} listed but not found in {folder}")
        x, y = read_spectrum(path)
        digest.update(path.read_bytes())
        if axis is None:
            axis = x
        elif len(x) != len(axis) or not np.allclose(x, axis, rtol=1e-6, atol=1e-9):
            raise DatasetError(f"{path}: its x axis differs from {table['file'].iloc[0]}'s; "
                               "resample all spectra to one axis first")
        rows.append(y)
    labels, classes = encode(table[values["label"]].to_numpy(), values["positive"],
                             where=f"{table_path}: column {values['label']!r}")
    group = values["group"]
    return Dataset(
        name=folder.name, X=np.vstack(rows), y=labels, classes=classes,
        groups=table[group].astype(str).to_numpy() if group else None, axis=axis,
        provenance=Provenance(source=str(folder), version=digest.hexdigest()[:16], family=folder.name,
                              note="JCAMP-DX spectra"),
        feature_names=tuple(f"{v:g}" for v in np.asarray(axis)),
    )
