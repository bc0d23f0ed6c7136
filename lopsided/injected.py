"""The parameters the runner gives a method's factory, named once.

Suite validation refuses the fixed ones in a suite's ``params`` (``settable``), the Methods page leaves them out
of the parameters a method ran with (``FIXED``), and ``Registry.build`` gives each to the factories that take it
(``receivers``). Arguments of a method's calls are the resampler contract's, not parameters: ``groups`` (the
training rows' donors, specimens or particles) to ``rebalance`` and ``adjust_learner``, per-row weights to the
learner's ``fit``.
"""
from collections.abc import Callable
from dataclasses import dataclass
from typing import Any

from .plugins import accepted_params


@dataclass(frozen=True)
class Injected:
    """One parameter the runner gives: its name, what it gives in words, and to which factories."""

    name: str
    gives: str                     # what the runner passes, for people
    kinds: tuple[str, ...]         # the registries (Registry.kind) whose factories receive it
    settable: bool = False         # a suite may set it and the runner's value is only a default; else refused
    builtins_only: bool = False    # given to lopsided's own methods only
    unread_too: bool = False       # given also to a factory whose parameters cannot be read (**kwargs)


INJECTED = (
    Injected("random_state", "the cell's seed (a learner gets it in every random_state inside the built model)",
             ("resampler",), unread_too=True),
    Injected("axis", "the dataset's feature axis (wavenumbers), None without one", ("preprocessing step",)),
    Injected("distances", '"as-given" on a dataset with a feature axis (spectra: one unit for every column)',
             ("resampler",), settable=True, builtins_only=True),
    Injected("nominal", "the dataset's nominal columns (for SMOTE-NC)", ("resampler",), settable=True,
             builtins_only=True),
)
FIXED = frozenset(p.name for p in INJECTED if not p.settable)     # the runner's alone, whatever the method


def settable(factory: Callable[..., Any]) -> set[str] | None:
    """Parameter names a suite may give ``factory``: those it takes but the fixed ones (None: any, since its
    parameters cannot be read)."""
    allowed = accepted_params(factory)
    return None if allowed is None else allowed - FIXED


def receivers(kind: str, factory: Callable[..., Any], builtin: bool) -> list[str]:
    """Names of the injected parameters the runner gives ``factory``, of registry ``kind`` (``builtin``: one of
    lopsided's own), in the order of ``INJECTED``."""
    allowed = accepted_params(factory)
    return [p.name for p in INJECTED if kind in p.kinds and (builtin or not p.builtins_only)
            and (p.unread_too if allowed is None else p.name in allowed)]
