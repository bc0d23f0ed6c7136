"""Plain-text method and dataset specs: ``name?param=value&param=value``.

One grammar for the command line and the suite file, so a method reads the same
everywhere: ``random-under?balance=0.5``, ``mypkg.methods:Halves?k=3``,
``spectra:serum?ratio=10&donors=60``.
"""
from dataclasses import dataclass, field
from urllib.parse import parse_qsl


def parse_value(text):
    """'3' -> 3, '0.5' -> 0.5, 'true' -> True, anything else stays a string."""
    lowered = text.strip().lower()
    if lowered in ("true", "false"):
        return lowered == "true"
    for kind in (int, float):
        try:
            return kind(text)
        except ValueError:
            pass
    return text


def split_query(text, typed=True):
    """'name?a=1&b=x' -> ('name', {'a': 1, 'b': 'x'}); repeated keys keep the last.

    ``typed=False`` keeps every value as the text written (dataset references: each adapter
    declares its parameters' types, datasets/params.py).
    """
    head, _, query = text.partition("?")
    pairs = parse_qsl(query, keep_blank_values=True, strict_parsing=False)
    return head.strip(), {k: parse_value(v) if typed else v for k, v in pairs}


def format_params(params):
    """{'b': 2, 'a': 1} -> 'a=1&b=2' (sorted, so equal specs print equal)."""
    return "&".join(f"{k}={_fmt(v)}" for k, v in sorted(params.items()))


def _fmt(value):
    return str(value).lower() if isinstance(value, bool) else str(value)


@dataclass(frozen=True)
class MethodSpec:
    """A resampler or learner as the user wrote it: registry name or import path, parameters, label."""

    name: str
    params: dict = field(default_factory=dict, hash=False, compare=False)
    label: str = ""

    @property
    def canonical(self):
        """Name plus sorted parameters: the identity used in cell keys."""
        return f"{self.name}?{format_params(self.params)}" if self.params else self.name

    @property
    def title(self):
        """What tables and plots show."""
        return self.label or self.canonical

    def as_json(self):
        """{name, params, label}: how suites in the store, bundles and the added-methods table keep it (the label
        written is the title)."""
        return {"name": self.name, "params": dict(self.params), "label": self.title}

    @classmethod
    def from_json(cls, data):
        """The spec back from ``as_json``."""
        return cls(data["name"], data["params"], data["label"])

    def __eq__(self, other):
        return isinstance(other, MethodSpec) and self.canonical == other.canonical

    def __hash__(self):
        return hash(self.canonical)


def parse_method(text, label=""):
    """'smote?k=5' -> MethodSpec('smote', {'k': 5})."""
    name, params = split_query(text)
    return MethodSpec(name, params, label)


@dataclass(frozen=True)
class Reference:
    """A dataset reference ``scheme:body?param=value#fragment``."""

    scheme: str
    body: str
    params: dict
    fragment: str
    text: str


def parse_reference(text):
    """'file:data/x.csv?label=y' -> Reference('file', 'data/x.csv', {'label': 'y'}, '', text); values stay text."""
    scheme, sep, rest = text.partition(":")
    if not sep:
        scheme, rest = "", text
    rest, _, fragment = rest.partition("#")
    body, params = split_query(rest, typed=False)
    fragment, fragment_params = split_query(fragment, typed=False)   # 'dir#name?x=1' reads like 'dir?x=1#name'
    return Reference(scheme.strip(), body, {**params, **fragment_params}, fragment, text.strip())
