"""Finding methods by import path or entry point, the parameters a factory takes, and code versions."""
import hashlib
import importlib
import inspect
from importlib import metadata

from . import __version__
from .errors import MethodError


def import_object(path):
    """'package.module:Name' -> the object, or a MethodError naming what is missing."""
    module_name, _, attribute = path.partition(":")
    if not module_name or not attribute:
        raise MethodError(f"{path!r}: an import path looks like package.module:Name")
    try:
        module = importlib.import_module(module_name)
    except Exception as exc:  # a plugin module may fail in any way while importing
        raise MethodError(f"{path}: cannot import module {module_name!r} ({type(exc).__name__}: {exc})") from None
    try:
        obj = module
        for part in attribute.split("."):
            obj = getattr(obj, part)
    except AttributeError:
        raise MethodError(f"{path}: module {module_name!r} has no {attribute!r}") from None
    return obj


def entry_point_objects(group):
    """{name: entry point} for an entry-point group (loaded only when used)."""
    return {ep.name: ep for ep in metadata.entry_points(group=group)}


def code_version(obj):
    """What a stored result depends on: lopsided's version for its own code, else the
    plugin's distribution version, else a hash of the plugin's source file."""
    obj = getattr(obj, "func", obj)           # functools.partial
    module_name = getattr(obj, "__module__", "") or ""
    top = module_name.split(".")[0]
    if top == "lopsided":
        return f"lopsided {__version__}"
    if top in ("sklearn", "numpy", "scipy"):
        return f"{top} {metadata.version('scikit-learn' if top == 'sklearn' else top)}"
    distributions = metadata.packages_distributions().get(top, [])
    if distributions:
        return f"{distributions[0]} {metadata.version(distributions[0])}"
    module = inspect.getmodule(obj)
    if module is None:
        return "unknown"
    try:
        source = inspect.getsource(module)
    except (OSError, TypeError):
        return "unknown"
    return f"{module_name} source {hashlib.sha256(source.encode()).hexdigest()[:12]}"


def accepted_params(factory):
    """Parameter names a class or function accepts (None when it takes **kwargs).
    Arguments fixed by functools.partial are not offered."""
    try:
        signature = inspect.signature(factory)
    except (TypeError, ValueError):
        return None
    if any(p.kind is p.VAR_KEYWORD for p in signature.parameters.values()):
        return None
    fixed = set(getattr(factory, "keywords", {}) or {})
    return {name for name in signature.parameters if name != "self"} - fixed

