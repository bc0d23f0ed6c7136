"""One shape for every extension point: resamplers, learners, preprocessing steps, dataset adapters.

A registry holds the built-ins (name -> (factory, one-line description)), reads its entry-point group
for plugins (loaded only when used), and, where allowed, resolves ``package.module:Name`` import paths.
``describe()`` says where each entry comes from: built-in, or the plugin's distribution and version.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass
from importlib import metadata
from typing import Any

from .errors import MethodError, unknown
from .plugins import entry_point_objects, import_object

BUILT_IN = "built-in"


@dataclass(frozen=True)
class Listing:
    """One row of ``lopsided list``: a name, what it is, and where it comes from."""

    name: str
    text: str
    origin: str


class Registry:
    """Named factories of one kind.

    Parameters
    ----------
    kind : str
        What the entries are, for messages ("resampler", "learner", "preprocessing step", "dataset scheme").
    builtins : dict
        name -> (factory, one-line description with the method's source).
    entry_point_group : str
        Entry-point group third-party packages register under, e.g. ``"lopsided.resamplers"``.
    import_paths : bool
        Whether ``package.module:Name`` names resolve by import.
    error : type
        The LopsidedError subclass raised for unknown or broken names.
    """

    def __init__(self, kind: str, builtins: dict[str, tuple[Callable[..., Any], str]], entry_point_group: str,
                 import_paths: bool = True, error: type[Exception] = MethodError):
        self.kind, self.builtins, self.group = kind, builtins, entry_point_group
        self.import_paths, self.error = import_paths, error

    def plugins(self) -> dict[str, metadata.EntryPoint]:
        """Entry points of the group that do not shadow a built-in (a built-in name always wins)."""
        return {name: ep for name, ep in entry_point_objects(self.group).items() if name not in self.builtins}

    def names(self) -> list[str]:
        return [*self.builtins, *self.plugins()]

    def __contains__(self, name: str) -> bool:
        return name in self.builtins or name in self.plugins()

    def resolve(self, name: str) -> Callable[..., Any]:
        """Name, plugin name or import path -> the factory (class or function).

        Raises
        ------
        LopsidedError
            (the registry's ``error`` type) naming the unknown name and the nearest known one.
        """
        if self.import_paths and ":" in name:
            return import_object(name)
        if name in self.builtins:
            return self.builtins[name][0]
        plugins = self.plugins()
        if name in plugins:
            try:
                return plugins[name].load()
            except Exception as exc:  # a plugin may fail in any way while importing
                raise self.error(f"{self.kind} {name!r} (entry point {plugins[name].value}): "
                                 f"cannot load ({type(exc).__name__}: {exc})") from None
        raise self.error(unknown(self.kind, name, self.names()))

    def describe(self) -> list[Listing]:
        """Every entry with its description and origin, built-ins first."""
        rows = [Listing(name, text, BUILT_IN) for name, (_, text) in self.builtins.items()]
        for name, ep in self.plugins().items():
            dist = getattr(ep, "dist", None)
            origin = f"plugin {dist.name} {dist.version}" if dist is not None else "plugin"
            rows.append(Listing(name, f"from {ep.value}", origin))
        return rows
