"""``file:PATH?label=COLUMN[&group=COLUMN&positive=CLASS&drop=a,b&nominal=c,d]``: a user's own table.

CSV (.csv, tab-separated .tsv), Parquet (.parquet) or ARFF / KEEL text (.arff, .dat) with one label
column; every other column must be numeric unless dropped or declared nominal (``nominal=`` columns
become integer codes in sorted order; ARFF / KEEL nominal attributes keep their declared order).
Missing values (empty cells) stay NaN; infinite values are refused. Spectra layout: when every feature column's header is a number, the headers
are the feature axis (wavenumbers, cm-1), so spectral range selection works.
"""
import csv
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import DatasetError, did_you_mean
from .cache import file_sha256
from .dataset import Dataset, Provenance
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
    if not ref.body.strip():
        raise DatasetError(f"{ref.text}: no file named; write file:PATH.csv?label=COLUMN")
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
        name = non_numeric[0]
        raise DatasetError(f"{path}: column {name!r} is not numeric; drop it with ?drop={name}, "
                           f"or declare it nominal with ?nominal={name}")
    if table[label].isna().any():
        row = int(np.flatnonzero(table[label].isna().to_numpy())[0]) + 2
        raise DatasetError(f"{path}: line {row}: empty label in column {label!r}")
    y, classes = encode(table[label].to_numpy(), values["positive"], where=f"{path}: column {label!r}")
    X = features.to_numpy(dtype=np.float64)
    if np.isinf(X).any():
        row, column = np.argwhere(np.isinf(X))[0]
        raise DatasetError(f"{path}: column {features.columns[column]!r}: infinite value in data row {row + 1}; "
                           "write a number, or leave the cell empty for a missing value")
    return Dataset(
        name=path.stem,
        X=X,
        y=y,
        classes=classes,
        groups=groups,
        axis=_numeric_headers(features.columns),
        nominal=tuple(nominal),
        provenance=Provenance(source=str(path), version=file_sha256(path)[:16], family=path.stem),
        feature_names=tuple(str(c) for c in features.columns),
        annotations={str(c): table[c].astype(str).to_numpy() for c in [group, *dropped] if c},
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
    if suffix in (".arff", ".dat"):
        parsed = parse_keel(path.read_text(encoding="latin-1"), where=str(path), target=label)
        table = pd.DataFrame(parsed.X, columns=parsed.names)
        table[label] = parsed.labels
        declared = [parsed.names[i] for i in parsed.nominal]
    elif suffix == ".parquet":
        try:
            table = pd.read_parquet(path)
        except (OSError, ValueError) as exc:
            raise DatasetError(f"{path}: not a readable Parquet table ({one_line(exc)})") from None
    else:
        table = read_csv(path, "\t" if suffix == ".tsv" else ",", (label, *text_columns))
    if table.empty:
        raise DatasetError(f"{path}: the table has no rows")
    return table, declared


def read_csv(path, sep=",", text_columns=()):
    """A CSV (``sep=","``) or TSV file as a table, ``text_columns`` read as written.

    Checked first, so that each problem is one clear DatasetError: the file is UTF-8, not empty, not
    separated by semicolons, its column names are unique, and every line has as many values as the header
    names columns (a short or long line is refused, never padded with missing values or shifted).
    """
    try:
        with open(path, encoding="utf-8-sig", newline="") as handle:
            rows = csv.reader(handle, delimiter=sep)
            try:
                header = _checked_header(path, next((row for row in rows if any(v.strip() for v in row)), None), sep)
                for row in rows:
                    if len(row) != len(header) and any(value.strip() for value in row):
                        raise DatasetError(f"{path}: line {rows.line_num}: {_count(len(row), 'value')}, "
                                           f"the header names {_count(len(header), 'column')}")
            except csv.Error as exc:
                raise DatasetError(f"{path}: line {rows.line_num}: not readable as CSV ({exc})") from None
    except UnicodeDecodeError:
        raise DatasetError(f"{path}: {': '.join(utf8_problem(path))}") from None
    except OSError as exc:
        raise DatasetError(f"{path}: cannot read the file ({exc.strerror})") from None
    as_text = {c: str for c in text_columns if c in header}
    try:
        return pd.read_csv(path, sep=sep, dtype=as_text, index_col=False, encoding="utf-8")
    except (pd.errors.ParserError, ValueError) as exc:
        raise DatasetError(f"{path}: not a readable table ({one_line(exc)})") from None


def _checked_header(path, header: list[str] | None, sep) -> list[str]:
    """The header line, or a DatasetError naming what is wrong with it."""
    if header is None:
        raise DatasetError(f"{path}: the file is empty (no header line)")
    if len(header) == 1 and ";" in header[0]:
        kind = "tab" if sep == "\t" else "comma"
        raise DatasetError(f"{path}: looks semicolon-separated; lopsided reads {kind}-separated files: "
                           "save it with that separator and decimal points")
    seen = set()
    for name in header:
        if "\n" in name or "\r" in name:
            raise DatasetError(f"{path}: column {name!r}: a line break inside a column name; rename the column")
        if name in seen:
            raise DatasetError(f"{path}: column {name!r} appears twice in the header; give each column its own name")
        seen.add(name)
    return header


def _count(n, word):
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def utf8_problem(path):
    """('line N', 'not UTF-8 text (byte 0x..); ...') for a file that does not decode as UTF-8."""
    data = Path(path).read_bytes()
    try:
        data.decode("utf-8")
    except UnicodeDecodeError as exc:
        line = data.count(b"\n", 0, exc.start) + 1
        return f"line {line}", f"not UTF-8 text (byte 0x{data[exc.start]:02x}); save the file as UTF-8"
    return "file", "not UTF-8 text; save the file as UTF-8"


def one_line(exc):
    """An exception's message on one line (some readers end theirs with a newline)."""
    return " ".join(str(exc).split())


def _require_columns(path, table, columns):
    for column in columns:
        if column is not None and column not in table.columns:
            hint = did_you_mean(column, table.columns)
            raise DatasetError(f"{path}: no column {column!r}{hint}; columns: {', '.join(map(str, table.columns))}")
