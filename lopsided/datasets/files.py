"""``file:PATH?label=COLUMN[&group=COLUMN&positive=CLASS&drop=a,b&nominal=c,d]``: a user's own table.

CSV (.csv, tab-separated .tsv), Parquet (.parquet) or ARFF / KEEL text (.arff, .dat) with one label
column; every other column must be numeric unless dropped or declared nominal (``nominal=`` columns
become integer codes in sorted order; ARFF / KEEL nominal attributes keep their declared order).
Missing values stay NaN. Spectra layout: when every feature column's header is a number, the headers
are the feature axis (wavenumbers, cm-1), so spectral range selection works.
"""
from pathlib import Path

import numpy as np
import pandas as pd

from ..dataset import Dataset, Provenance
from ..errors import DatasetError, did_you_mean
from .cache import file_sha256
from .keelformat import parse_keel
from .labels import encode
from .params import Param, read_params

PARAMS = {
    "label": Param(str, None, "the column holding the class"),
    "group": Param(str, None, "a column of donor / specimen / particle ids: grouped splitting"),
    "positive": Param(str, None, "one class against the rest"),
    "drop": Param(str, "", "comma-separated columns to leave out"),
    "nominal": Param(str, "", "comma-separated nominal columns (integer-coded in sorted order)"),
}


def load(ref):
    path = Path(ref.body)
    values = read_params(ref, PARAMS)
    if not path.is_file():
        raise DatasetError(f"{path}: no such file")
    label, group = values["label"], values["group"]
    if label is None:
        raise DatasetError(f"{ref.text}: say which column holds the class, e.g. ?label=class")
    table, declared = _read(path, label, [group] if group else [])
    _require_columns(path, table, [label, group])
    dropped = [c for c in values["drop"].split(",") if c]
    _require_columns(path, table, dropped)
    groups = table[group].astype(str).to_numpy() if group is not None else None
    features = table.drop(columns=[c for c in [label, group, *dropped] if c])
    nominal_names = [c for c in values["nominal"].split(",") if c]
    _require_columns(path, table, nominal_names)
    for column in nominal_names:
        features[column] = pd.Categorical(features[column].astype("string")).codes.astype(float)
        features.loc[features[column] < 0, column] = np.nan
    nominal = sorted({list(features.columns).index(c) for c in [*nominal_names, *declared] if c in features.columns})
    non_numeric = [c for c in features.columns if not pd.api.types.is_numeric_dtype(features[c])]
    if non_numeric:
        raise DatasetError(f"{path}: column {non_numeric[0]!r} is not numeric; drop it with ?drop={non_numeric[0]}")
    if table[label].isna().any():
        row = int(np.flatnonzero(table[label].isna().to_numpy())[0]) + 2
        raise DatasetError(f"{path}: line {row}: empty label in column {label!r}")
    y, classes = encode(table[label].to_numpy(), values["positive"], where=f"{path}: column {label!r}")
    return Dataset(
        name=path.stem,
        X=features.to_numpy(dtype=np.float64),
        y=y,
        classes=classes,
        groups=groups,
        axis=_numeric_headers(features.columns),
        nominal=tuple(nominal),
        provenance=Provenance(source=str(path), version=file_sha256(path)[:16], family=path.stem),
        feature_names=tuple(str(c) for c in features.columns),
    )


def _numeric_headers(columns):
    """The headers as a float axis when all of them are numbers, else None."""
    try:
        return np.array([float(c) for c in columns])
    except ValueError:
        return None


def _read(path, label, text_columns=()):
    """(table, names of declared nominal columns) for any supported file type; in CSV / TSV the label
    and ``text_columns`` are read as written (a class '007' stays '007')."""
    suffix = path.suffix.lower()
    declared = []
    try:
        if suffix in (".arff", ".dat"):
            parsed = parse_keel(path.read_text(encoding="latin-1"), where=str(path), target=label)
            table = pd.DataFrame(parsed.X, columns=parsed.names)
            table[label] = parsed.labels
            declared = [parsed.names[i] for i in parsed.nominal]
        elif suffix == ".parquet":
            table = pd.read_parquet(path)
        else:
            header = pd.read_csv(path, sep="\t" if suffix == ".tsv" else ",", nrows=0).columns
            as_text = {c: str for c in (label, *text_columns) if c in header}
            table = pd.read_csv(path, sep="\t" if suffix == ".tsv" else ",", dtype=as_text)
    except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError, OSError, ValueError) as exc:
        raise DatasetError(f"{path}: not a readable {suffix.lstrip('.') or 'CSV'} table ({exc})") from None
    if table.empty:
        raise DatasetError(f"{path}: the table has no rows")
    return table, declared


def _require_columns(path, table, columns):
    for column in columns:
        if column is not None and column not in table.columns:
            hint = did_you_mean(column, table.columns)
            raise DatasetError(f"{path}: no column {column!r}{hint}; columns: {', '.join(map(str, table.columns))}")
