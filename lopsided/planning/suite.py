"""The suite file (TOML): what to compare, on what data, under which protocol.

Every field is checked here, once, so later stages can trust the plan. Errors name the
file, the field and the allowed values: ``bench/quick.toml: protocol.ratios: ...``.
"""
import hashlib
import json
import math
import os
import re
import tomllib
from dataclasses import dataclass, replace
from pathlib import Path

from ..datasets import DATASETS
from ..datasets.files import utf8_problem
from ..errors import LopsidedError, MethodError, SuiteError, UsageError, did_you_mean, unknown
from ..injected import settable
from ..methods import learners, preprocessing, resamplers
from ..methods.metrics import METRICS
from ..specs import MethodSpec, parse_method, parse_reference
from .design import TestDesign, parse_design

TOP_KEYS = {"name", "seed", "description", "datasets", "resamplers", "learners", "metrics",
            "preprocessing", "protocol", "store", "out", "control", "primary"}
PRIMARY_KEYS = {"metric", "ratio", "size"}
PROTOCOL_KEYS = {"repeats", "folds", "holdout", "ratios", "sizes", "min_minority", "test", "timeout", "counting"}
COUNTING = ("rows", "groups")
RATIO_WORDS = ("natural", "balanced")
METHOD_KEYS = {"name", "params", "label"}
TOML_PLACE = re.compile(r"\s*\(at (?:line (\d+), column (\d+)|end of document)\)$")


@dataclass(frozen=True)
class Protocol:
    """Repeated stratified (grouped when the data has groups) k-fold, with sweep points.

    ``ratios``: training-set imbalance ratios (majority:minority) to cut, 'natural' or 'balanced'.
    ``sizes``: training-set sizes, or 'all'. Every ratio x size pair is a protocol point.
    ``holdout``: instead of k folds, one split per repeat with about this test share.
    ``timeout``: seconds a work unit may take before it is stopped and its cells stored as failed
    (None: no limit). It changes no cell's key: cells stored as failed are recomputed with --retry-failed.
    ``counting``: "rows", or "groups": ratios, sizes and min_minority count donors / specimens / particles.
    ``test``: the test design (``design.TestDesign``: folds, fixed, a designated cohort or an external set).
    """

    repeats: int = 3
    folds: int = 5
    holdout: float | None = None
    test: TestDesign = TestDesign()
    ratios: tuple = ("natural",)
    sizes: tuple = ("all",)
    min_minority: int = 5
    timeout: float | None = None
    counting: str = "rows"

    @property
    def unit(self):
        """What sizes, ratios and min_minority count: 'rows' or 'groups'."""
        return self.counting

    @property
    def points(self):
        return [(ratio, size) for ratio in self.ratios for size in self.sizes]

    @property
    def description(self):
        """The protocol's test design in words, with what sizes count."""
        counting = "; sizes, ratios and min_minority count groups (donors, specimens, particles)" \
            if self.counting == "groups" else ""
        return self.test.describe(self) + counting


@dataclass(frozen=True)
class Suite:
    name: str
    seed: int
    datasets: tuple
    resamplers: tuple
    learners: tuple
    metrics: tuple
    protocol: Protocol
    preprocessing: tuple = ()
    description: str = ""
    source: str = "<suite>"
    store: str | None = None     # as written; relative paths are taken from the suite file's folder
    out: str | None = None
    control: str | None = ""     # the resampler each learner's others are tested against: a label; "" = the first
                                 # resampler; None = no such test (control = false)
    primary: dict | None = None   # the primary analysis {metric, ratio, size} (each optional); None: chosen by rule

    @property
    def folder(self) -> Path | None:
        """The suite file's folder: relative paths in the suite are taken from here (None: no file)."""
        path = Path(self.source)
        return path.parent if path.suffix == ".toml" else None

    def path(self, text: str | None) -> Path | None:
        """A path written in the suite, resolved against the suite file's folder."""
        if text is None:
            return None
        path = Path(text).expanduser()
        return path if path.is_absolute() or self.folder is None else self.folder / path

    @property
    def control_label(self):
        """The resampler every other is tested against within a learner, or None."""
        if self.control is None:
            return None
        return self.control or self.resamplers[0].title

    @property
    def headline(self):
        """The first listed metric: what rankings and plots use first."""
        return self.metrics[0]

    @property
    def titles(self):
        """{"resampler": {canonical spec: title}, "learner": {...}}: how stored cells' methods are shown."""
        return {kind[:-1]: {s.canonical: s.title for s in getattr(self, kind)} for kind in ("resamplers", "learners")}

    def with_resamplers(self, extra):
        """The same suite with more resamplers appended (duplicates are refused)."""
        merged = list(self.resamplers)
        for spec in extra:
            spec = tuned_for(spec, self.headline, self.source, "--add-resampler")
            _check_new_label(merged, spec, self.source, "--add-resampler")
            merged.append(spec)
        return replace(self, resamplers=tuple(merged))

    def without_resamplers(self, labels):
        """The same suite without the resamplers titled ``labels``."""
        return replace(self, resamplers=tuple(s for s in self.resamplers if s.title not in set(labels)))

    def as_dict(self):
        """Plain, JSON-ready content (what the fingerprint and the store record)."""
        return {
            "name": self.name, "seed": self.seed, "description": self.description,
            "datasets": list(self.datasets),
            "resamplers": [s.as_json() for s in self.resamplers],
            "learners": [s.as_json() for s in self.learners],
            "preprocessing": [s.as_json() for s in self.preprocessing],
            "metrics": list(self.metrics),
            "protocol": {"repeats": self.protocol.repeats, "folds": self.protocol.folds,
                         "holdout": self.protocol.holdout, "test": self.protocol.test.text,
                         "ratios": list(self.protocol.ratios), "sizes": list(self.protocol.sizes),
                         "min_minority": self.protocol.min_minority,
                         **({"timeout": self.protocol.timeout} if self.protocol.timeout else {}),
                         **({"counting": self.protocol.counting} if self.protocol.counting != "rows" else {})},
            "control": False if self.control is None else self.control,
            **({"primary": dict(self.primary)} if self.primary else {}),
        }

    @property
    def fingerprint(self):
        text = json.dumps(self.as_dict(), sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()[:16]


def load_suite(path):
    """Read and validate a suite file -> Suite."""
    path = Path(path)
    if not path.is_file():
        raise SuiteError(path, "file", "no such suite file")
    try:
        raw = tomllib.loads(path.read_text(encoding="utf-8"))
    except UnicodeDecodeError:
        raise SuiteError(path, *utf8_problem(path)) from None
    except tomllib.TOMLDecodeError as exc:
        message = str(exc)
        place = TOML_PLACE.search(message)
        field = "file" if not place else f"line {place[1]}, column {place[2]}" if place[1] else "end of file"
        raise SuiteError(path, field, f"not valid TOML: {TOML_PLACE.sub('', message)}") from None
    return suite_from_dict(raw, source=str(path))


def suite_from_dict(raw, source="<suite>"):
    """Validate a parsed suite (as from TOML, the store or a bundle: ``Suite.as_dict`` reads back) -> Suite."""
    _no_unknown_keys(raw, TOP_KEYS, source, "")
    name = raw.get("name")
    if not isinstance(name, str) or not name.strip() or any(c in name for c in "/\\"):
        raise SuiteError(source, "name", "give the suite a short name without slashes, e.g. name = \"quick\"")
    seed = raw.get("seed", 0)
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        raise SuiteError(source, "seed", f"{seed!r} is not a non-negative whole number")
    metrics = raw.get("metrics", ["balanced_accuracy", "g_mean", "mcc", "roc_auc"])
    if not isinstance(metrics, list) or not metrics:
        raise SuiteError(source, "metrics", "list at least one metric; the first is the headline")
    for i, metric in enumerate(metrics):
        if not isinstance(metric, str) or metric not in METRICS:
            raise SuiteError(source, f"metrics[{i}]", unknown("metric", metric, METRICS))
    metrics = tuple(metrics)
    store, out = raw.get("store"), raw.get("out")
    for field, value in (("store", store), ("out", out)):
        if value is not None and (not isinstance(value, str) or not value.strip()):
            raise SuiteError(source, field, f"{value!r} is not a path")
    protocol = _protocol(raw.get("protocol", {}), source)
    resampler_specs = _methods(raw.get("resamplers", ["none"]), source, "resamplers", resolve_resampler)
    resampler_specs = tuple(tuned_for(spec, metrics[0], source, f"resamplers[{i}]")
                            for i, spec in enumerate(resampler_specs))
    return Suite(
        name=name.strip(),
        seed=seed,
        description=str(raw.get("description", "")),
        datasets=_datasets(raw.get("datasets"), source),
        resamplers=resampler_specs,
        learners=_methods(raw.get("learners"), source, "learners", learners.resolve),
        preprocessing=_methods(raw.get("preprocessing", []), source, "preprocessing", preprocessing.resolve, allow_empty=True),
        metrics=metrics,
        protocol=protocol,
        source=source,
        store=store,
        out=out,
        control=_control(raw.get("control", ""), resampler_specs, source),
        primary=_primary(raw.get("primary"), metrics, protocol, source),
    )


def suite_from_json(data, source):
    """A suite as ``Suite.as_dict`` wrote it (the store's runs table, bundle headers) -> Suite, through the same
    validation as a suite file; each method keeps only its name, parameters and label."""
    raw = dict(data)
    for kind in ("resamplers", "learners", "preprocessing"):
        raw[kind] = [{key: spec[key] for key in ("name", "params", "label")} for spec in raw[kind]]
    return suite_from_dict(raw, source)


def _primary(value, metrics, protocol, source):
    """The declared primary analysis: a table whose metric, ratio and size are among the suite's own."""
    if value is None:
        return None
    if not isinstance(value, dict):
        raise SuiteError(source, "primary", "write a table, e.g. primary = { metric = \"balanced_accuracy\", "
                         "ratio = \"natural\", size = \"all\" }")
    _no_unknown_keys(value, PRIMARY_KEYS, source, "primary.")
    for key, allowed in (("metric", metrics), ("ratio", protocol.ratios), ("size", protocol.sizes)):
        if key in value and value[key] not in allowed:
            raise SuiteError(source, f"primary.{key}", unknown(key, str(value[key]), [str(a) for a in allowed]))
    return dict(value)


def _control(value, specs, source):
    """'' (default: the first resampler), false (no test against a control) or a resampler label."""
    if value is False or value is None:
        return None
    labels = [s.title for s in specs]
    if not isinstance(value, str) or (value and value not in labels):
        hint = "; write control = false for no test against a control" if value in ("none", "off", "no") else ""
        raise SuiteError(source, "control", unknown("resampler", str(value), labels) + hint)
    return value


def _no_unknown_keys(table, allowed, source, prefix):
    for key in table:
        if key not in allowed:
            raise SuiteError(source, prefix + key,
                             f"unknown field{did_you_mean(key, allowed)}; allowed: {', '.join(sorted(allowed))}")


def _datasets(value, source):
    if not isinstance(value, list) or not value:
        raise SuiteError(source, "datasets", "list at least one dataset reference, e.g. [\"sklearn:wine?positive=2\"]")
    for i, text in enumerate(value):
        if not isinstance(text, str):
            raise SuiteError(source, f"datasets[{i}]", f"{text!r} is not a dataset reference string")
        reference = parse_reference(text)
        if reference.scheme not in DATASETS:
            raise SuiteError(source, f"datasets[{i}]", unknown("dataset scheme", reference.scheme, DATASETS.names()))
        if not reference.body.strip():
            raise SuiteError(source, f"datasets[{i}]", f"{text!r} names no dataset after "
                             f"'{reference.scheme}:'; e.g. \"sklearn:wine?positive=2\" or \"file:films.csv?label=status\"")
    if len(set(value)) != len(value):
        raise SuiteError(source, "datasets", "a dataset is listed twice")
    return tuple(value)


def _methods(value, source, field, resolve, allow_empty=False):
    if not isinstance(value, list) or (not value and not allow_empty):
        raise SuiteError(source, field, "give a list of names, import paths or {name, params, label} tables")
    specs: list[MethodSpec] = []
    for i, item in enumerate(value):
        where = f"{field}[{i}]"
        spec = _method(item, source, where)
        try:
            factory = resolve(spec.name)
        except LopsidedError as exc:
            raise SuiteError(source, where, str(exc)) from None
        if not callable(factory):
            raise SuiteError(source, where, f"{spec.name}: is {type(factory).__name__}, not a class or function")
        offered = settable(factory)
        for key in spec.params:
            if offered is not None and key not in offered:
                raise SuiteError(source, f"{where}.params", f"{spec.name}: {unknown('parameter', key, offered)}")
        _check_new_label(specs, spec, source, where)
        specs.append(spec)
    return tuple(specs)


def resolve_resampler(name):
    """The factory ``name`` resolves to; a class with neither ``rebalance`` nor ``fit_resample`` is refused
    before any work."""
    factory = resamplers.resolve(name)
    if isinstance(factory, type) and not any(callable(getattr(factory, m, None)) for m in ("rebalance", "fit_resample")):
        raise MethodError(f"{name}: {factory.__name__} has neither rebalance(X, y) nor fit_resample(X, y), so it is "
                          "not a resampler")
    return factory


def tuned_for(spec, headline, source, where):
    """A method that tunes a threshold for a metric (``tunes_for_metric``: threshold moving) with that metric
    written into its parameters, so that it shows in the cell keys: the headline metric unless the spec names
    one; it must depend on the threshold. Its label stays its name."""
    factory = resamplers.resolve(spec.name)
    if not getattr(factory, "tunes_for_metric", False):
        return spec
    from ..methods.resamplers.threshold import BY_COUNTS
    metric = spec.params.get("metric", headline)
    if metric not in BY_COUNTS:
        named = "its metric" if "metric" in spec.params else f"the headline metric {metric!r}"
        raise SuiteError(source, where, f"{spec.name}: moves a threshold to maximise a metric that depends on it, "
                         f"and {named} does not; give one of {', '.join(BY_COUNTS)}, e.g. "
                         f"{{ name = \"{spec.name}\", params = {{ metric = \"balanced_accuracy\" }} }}")
    return MethodSpec(spec.name, {**spec.params, "metric": metric}, spec.label or spec.name)


def added_resampler(text):
    """An --add-resampler value -> MethodSpec, refused unless it names a resampler."""
    spec = parse_method(text)
    try:
        resolve_resampler(spec.name)
    except LopsidedError as exc:
        raise UsageError("--add-resampler", text, str(exc).removeprefix(f"{spec.name}: ")) from None
    return spec


def check_writable(folder, source, field):
    """SuiteError unless ``folder`` exists as a writable folder or can be made: checked before any work."""
    folder = Path(folder)
    existing = next(p for p in (folder, *folder.parents) if p.exists())
    if not existing.is_dir():
        raise SuiteError(source, field, f"cannot write results here: {existing} is a file, not a folder")
    if not os.access(existing, os.W_OK | os.X_OK):
        raise SuiteError(source, field, f"cannot write results here: {existing} is read-only")


def _method(item, source, where):
    if isinstance(item, str):
        return parse_method(item)
    if isinstance(item, dict):
        _no_unknown_keys(item, METHOD_KEYS, source, where + ".")
        if not isinstance(item.get("name"), str):
            raise SuiteError(source, where + ".name", "say which method, e.g. name = \"random-under\"")
        params = item.get("params", {})
        if not isinstance(params, dict):
            raise SuiteError(source, where + ".params", "write parameters as a table, e.g. params = {balance = 0.5}")
        base = parse_method(item["name"])
        return MethodSpec(base.name, {**base.params, **params}, str(item.get("label", "")))
    raise SuiteError(source, where, f"{item!r} is neither a name nor a {{name, params, label}} table")


def _check_new_label(specs, spec, source, where):
    for other in specs:
        if other == spec or other.title == spec.title:
            raise SuiteError(source, where, f"{spec.title!r} is listed twice")


def _protocol(table, source):
    if not isinstance(table, dict):
        raise SuiteError(source, "protocol", "must be a table: [protocol]")
    _no_unknown_keys(table, PROTOCOL_KEYS, source, "protocol.")
    defaults = Protocol()
    repeats = _whole(table.get("repeats", defaults.repeats), source, "protocol.repeats", 1)
    folds = _whole(table.get("folds", defaults.folds), source, "protocol.folds", 2)
    min_minority = _whole(table.get("min_minority", defaults.min_minority), source, "protocol.min_minority", 2)
    ratios = _list(table.get("ratios", list(defaults.ratios)), source, "protocol.ratios")
    for value in ratios:
        if value not in RATIO_WORDS and (isinstance(value, bool) or not isinstance(value, (int, float))
                                         or not 1 <= value < math.inf):
            raise SuiteError(source, "protocol.ratios", f"{value!r} is not an imbalance ratio; allowed: "
                             "\"natural\", \"balanced\" or a number >= 1 (majority:minority)")
    sizes = _list(table.get("sizes", list(defaults.sizes)), source, "protocol.sizes")
    for value in sizes:
        if value != "all" and (isinstance(value, bool) or not isinstance(value, int) or value < 2 * min_minority):
            raise SuiteError(source, "protocol.sizes",
                             f"{value!r} is not a training-set size; allowed: \"all\" or a whole number >= {2 * min_minority}")
    holdout = table.get("holdout")
    if holdout is not None and (isinstance(holdout, bool) or not isinstance(holdout, (int, float))
                                or not 0 < holdout < 1):
        raise SuiteError(source, "protocol.holdout", f"{holdout!r} is not a test share between 0 and 1")
    counting = table.get("counting", defaults.counting)
    if counting not in COUNTING:
        raise SuiteError(source, "protocol.counting", f"{counting!r}{did_you_mean(str(counting), COUNTING)}; allowed: "
                         "\"rows\" (default) or \"groups\" (sizes, ratios and min_minority count donors, specimens or "
                         "particles)")
    return Protocol(repeats=repeats, folds=folds, holdout=holdout, ratios=tuple(ratios), sizes=tuple(sizes),
                    min_minority=min_minority, test=parse_design(table.get("test", "folds"), source),
                    timeout=unit_seconds(table.get("timeout"), source, "protocol.timeout"), counting=counting)


def unit_seconds(value, source, field):
    """A per-unit time limit: None, or a number of seconds > 0."""
    if value is None:
        return None
    if isinstance(value, bool) or not isinstance(value, (int, float)) or not 0 < value < math.inf:
        raise SuiteError(source, field, f"{value!r} is not a time limit; allowed: a number of seconds > 0")
    return float(value)


def _whole(value, source, field, lowest):
    if isinstance(value, bool) or not isinstance(value, int) or value < lowest:
        raise SuiteError(source, field, f"{value!r} is not a whole number >= {lowest}")
    return value


def _list(value, source, field):
    if not isinstance(value, list) or not value:
        raise SuiteError(source, field, "give a non-empty list")
    if len(set(map(str, value))) != len(value):
        raise SuiteError(source, field, "a value is listed twice")
    return value
