"""One shape for every extension point: resamplers, learners, preprocessing steps, metrics, dataset adapters.

A registry holds its built-ins, one ``Builtin`` record each (what builds it, one line saying what it is with
its source, the keys of the papers that define it), reads its entry-point group for plugins (loaded only when
used), and, where allowed, resolves ``package.module:Name`` import paths. ``build(spec, context)`` is the one
way a method is made from its spec; ``describe()`` says where each entry comes from: built-in, or the
plugin's distribution and version.
"""
from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass
from importlib import metadata
from typing import Any

from .errors import MethodError, unknown
from .injected import receivers
from .plugins import accepted_params, entry_point_objects, import_object
from .specs import MethodSpec

BUILT_IN = "built-in"


@dataclass(frozen=True)
class Builtin:
    """Everything lopsided says about one of its own entries, in one place."""

    factory: Callable[..., Any]       # a method's class or function, a metric's function, a scheme's loader
    summary: str                      # one line: what it is, with its source (no parameter values)
    citations: tuple[str, ...] = ()   # keys of report/citations.py ENTRIES: the papers that define it


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
        What the entries are, for messages ("resampler", "learner", "preprocessing step", "metric",
        "dataset scheme"); ``injected.INJECTED`` names the kinds each injected parameter goes to.
    builtins : dict
        name -> Builtin.
    entry_point_group : str or None
        Entry-point group third-party packages register under, e.g. ``"lopsided.resamplers"``; None: built-ins
        only.
    import_paths : bool
        Whether ``package.module:Name`` names resolve by import.
    error : type
        The LopsidedError subclass raised for unknown or broken names.
    """

    def __init__(self, kind: str, builtins: dict[str, Builtin], entry_point_group: str | None,
                 import_paths: bool = True, error: type[Exception] = MethodError):
        self.kind, self.builtins, self.group = kind, builtins, entry_point_group
        self.import_paths, self.error = import_paths, error

    def plugins(self) -> dict[str, metadata.EntryPoint]:
        """Entry points of the group that do not shadow a built-in (a built-in name always wins)."""
        if self.group is None:
            return {}
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
            return self.builtins[name].factory
        plugins = self.plugins()
        if name in plugins:
            try:
                return plugins[name].load()
            except Exception as exc:  # a plugin may fail in any way while importing
                raise self.error(f"{self.kind} {name!r} (entry point {plugins[name].value}): "
                                 f"cannot load ({type(exc).__name__}: {exc})") from None
        raise self.error(unknown(self.kind, name, self.names()))

    def citations(self, name: str) -> tuple[str, ...] | None:
        """The citation keys of a built-in (empty: nothing to cite); None for a plugin or an import path,
        whose users cite its authors."""
        entry = self.builtins.get(name)
        return None if entry is None else entry.citations

    def build(self, spec: MethodSpec, context: Mapping[str, Any] | None = None) -> Any:
        """A fresh object for ``spec``: its factory called with the spec's parameters and, from ``context``
        (injected name -> the runner's value), each injected parameter this factory receives
        (``injected.receivers``) that the spec does not set.

        Raises
        ------
        MethodError
            naming the method, for a parameter its factory does not take or a factory that fails.
        """
        factory = self.resolve(spec.name)
        params = dict(spec.params)
        for name in receivers(self.kind, factory, spec.name in self.builtins):
            if context is not None and name in context:
                params.setdefault(name, context[name])
        allowed = accepted_params(factory)
        if allowed is not None:
            for key in params:
                if key not in allowed:
                    raise MethodError(f"{self.kind} {spec.title}: {unknown('parameter', key, allowed)}")
        try:
            return factory(**params)
        except MethodError:
            raise
        except Exception as exc:
            raise MethodError(f"{self.kind} {spec.title}: cannot be built with {params} "
                              f"({type(exc).__name__}: {exc})") from None

    def describe(self) -> list[Listing]:
        """Every entry with its summary and origin, built-ins first."""
        rows = [Listing(name, entry.summary, BUILT_IN) for name, entry in self.builtins.items()]
        for name, ep in self.plugins().items():
            dist = getattr(ep, "dist", None)
            origin = f"plugin {dist.name} {dist.version}" if dist is not None else "plugin"
            rows.append(Listing(name, f"from {ep.value}", origin))
        return rows
