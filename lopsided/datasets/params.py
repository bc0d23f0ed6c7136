"""Typed dataset-reference parameters: each adapter declares what it takes, with types and defaults.

References keep their parameters as the text the user wrote (``positive=007`` stays "007", a column
named "1" stays "1"); ``read_params`` converts them once, by declaration, and only this conversion
is reported as the user's mistake. Anything that goes wrong later inside an adapter is a bug and
surfaces as one.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

from ..errors import DatasetError, did_you_mean

WORDS = {int: "a whole number", float: "a finite number", bool: "true or false", str: "text"}
TRUE, FALSE = {"true", "1", "yes"}, {"false", "0", "no"}


@dataclass(frozen=True)
class Param:
    """One parameter of a dataset reference: its type, default (None = not given) and meaning."""

    kind: type
    default: Any = None
    text: str = ""


def convert(text: str, kind: type) -> Any:
    """The parameter text as ``kind``; ValueError when it is not one."""
    if kind is bool:
        lowered = text.strip().lower()
        if lowered not in TRUE | FALSE:
            raise ValueError(text)
        return lowered in TRUE
    if kind is int:
        return int(text.strip())
    if kind is float:
        value = float(text.strip())
        if not math.isfinite(value):
            raise ValueError(text)
        return value
    return text


def read_params(ref, declared: dict[str, Param]) -> dict[str, Any]:
    """Every declared parameter of ``ref`` converted to its type, defaults filled in.

    Raises
    ------
    DatasetError
        for an undeclared parameter (with the nearest declared name) or a value of the wrong kind.
    """
    refuse_unknown(ref, declared)
    values = {}
    for name, param in declared.items():
        raw = ref.params.get(name)
        if raw is None:
            values[name] = param.default
            continue
        try:
            values[name] = convert(str(raw), param.kind)
        except ValueError:
            raise DatasetError(f"{ref.text}: {name}: {raw!r} is not {WORDS[param.kind]}") from None
    return values


def refuse_unknown(ref, allowed):
    """DatasetError for the first parameter the adapter does not take, naming the allowed ones."""
    extra = sorted(set(ref.params) - set(allowed))
    if extra:
        raise DatasetError(f"{ref.text}: unknown parameter {extra[0]!r}{did_you_mean(extra[0], allowed)}; "
                           f"allowed: {', '.join(sorted(allowed))}")
