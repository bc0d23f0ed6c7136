"""Reader for the KEEL data format (ARFF-like text: @relation, @attribute, @inputs, @outputs, @data).

KEEL: Alcalá-Fdez et al. (2011), J. Multiple-Valued Logic & Soft Computing 17:255, "KEEL data-mining
software tool: data set repository". Handles what the imbalanced collection's files contain: labels
and values with stray spaces, uneven spacing after commas, `<null>` or `?` for missing values, and
nominal attributes, coded as integers in their declared order (the declared encoding). A header that
lies is refused with the line: a row with more or fewer values than attributes, a value outside its
attribute's declared type or values (the class too), an attribute declared twice; so is an infinite value.
"""
import re
from dataclasses import dataclass

import numpy as np

from ..errors import DatasetError

MISSING = {"<null>", "?", ""}
ATTRIBUTE = re.compile(r"@attribute\s+('[^']*'|\S+)\s+(.*)$", re.IGNORECASE)


@dataclass(frozen=True)
class KeelTable:
    relation: str
    names: tuple           # feature names, in file order
    nominal: tuple         # indices of nominal features
    levels: dict           # feature index -> declared values (nominal only)
    X: np.ndarray          # float, NaN for missing
    labels: np.ndarray     # raw class labels, stripped


def _attribute(line, where):
    match = ATTRIBUTE.match(line.strip())
    if not match:
        raise DatasetError(f"{where}: malformed @attribute line: {line.strip()[:80]!r}")
    name, kind = match.group(1).strip("'"), match.group(2).strip()
    if kind.startswith("{"):
        if not kind.endswith("}"):
            raise DatasetError(f"{where}: attribute {name!r}: unclosed value list")
        return name, [v.strip() for v in kind[1:-1].split(",") if v.strip()]
    base = re.split(r"[\s\[]", kind, maxsplit=1)[0].lower()     # 'integer[0,3]' has no space before the range
    if base not in ("real", "integer", "numeric"):
        raise DatasetError(f"{where}: attribute {name!r}: unknown type {base!r}")
    return name, None


def parse_keel(text, where="<keel>", target=None):
    """KEEL (or simple ARFF) text -> KeelTable. The class is ``target`` if given, else the
    @outputs attribute, else the last one."""
    relation, attributes, outputs, rows = "", [], None, []
    lines = iter(text.splitlines())
    for number, line in enumerate(lines, start=1):
        stripped = line.strip()
        lowered = stripped.lower()
        if not stripped or stripped.startswith("%"):
            continue
        if lowered.startswith("@relation"):
            relation = stripped.split(None, 1)[1].strip() if " " in stripped else ""
        elif lowered.startswith("@attribute"):
            attributes.append(_attribute(stripped, f"{where}: line {number}"))
        elif lowered.startswith("@output"):
            outputs = [v.strip() for v in stripped.split(None, 1)[-1].split(",")]
        elif lowered.startswith("@input"):
            continue
        elif lowered.startswith("@data"):
            start = number
            rows = [(n, row) for n, row in enumerate(lines, start=start + 1) if row.strip()]
            break
        else:
            raise DatasetError(f"{where}: line {number}: unexpected header line {stripped[:60]!r}")
    if not attributes:
        raise DatasetError(f"{where}: no @attribute lines: not a KEEL file")
    if not rows:
        raise DatasetError(f"{where}: no data rows after @data")
    names = [name for name, _ in attributes]
    twice = sorted({name for name in names if names.count(name) > 1})
    if twice:
        raise DatasetError(f"{where}: attribute {twice[0]!r} is declared twice; give each attribute its own name")
    if target is not None:
        if target not in names:
            raise DatasetError(f"{where}: no attribute {target!r}; attributes: {', '.join(names)}")
        target = names.index(target)
    else:
        target = names.index(outputs[0]) if outputs and outputs[0] in names else len(names) - 1
    features = [i for i in range(len(names)) if i != target]
    X = np.full((len(rows), len(features)), np.nan)
    labels = []
    for r, (number, row) in enumerate(rows):
        values = [v.strip() for v in row.split(",")]
        if len(values) != len(names):
            raise DatasetError(f"{where}: line {number}: {len(values)} values, the header declares {len(names)}")
        labels.append(_label(values[target], attributes[target], where, number))
        for c, i in enumerate(features):
            X[r, c] = _value(values[i], attributes[i], where, number)
    levels = {c: attributes[i][1] for c, i in enumerate(features) if attributes[i][1] is not None}
    return KeelTable(relation, tuple(names[i] for i in features), tuple(sorted(levels)), levels, X,
                     np.array(labels, dtype=object))


def _label(text, attribute, where, number):
    name, levels = attribute
    if text in MISSING:
        raise DatasetError(f"{where}: line {number}: no value for the class attribute {name!r}")
    if levels is not None and text not in levels:
        raise DatasetError(f"{where}: line {number}: class {text!r} is not a declared value of {name!r}; "
                           f"declared: {', '.join(levels)}")
    return text


def _value(text, attribute, where, number):
    name, levels = attribute
    if text in MISSING:
        return np.nan
    if levels is not None:
        if text not in levels:
            raise DatasetError(f"{where}: line {number}: {text!r} is not a declared value of {name!r}")
        return float(levels.index(text))
    try:
        value = float(text)
    except ValueError:
        raise DatasetError(f"{where}: line {number}: {text!r} is not a number for attribute {name!r}") from None
    if np.isinf(value):
        raise DatasetError(f"{where}: line {number}: attribute {name!r}: {text!r} is infinite; "
                           "write a number, or ? for a missing value")
    return value
