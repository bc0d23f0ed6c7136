"""Fuzzers: random bytes and mutated valid files fed to every reader and validator of user input.

The one property (issue 11): a reader either succeeds or raises lopsided's own LopsidedError, whose message
the command line prints as one line; any other exception is a bug. Each property is bounded (about 200
examples, no deadline, a fixed seed) so the file stays quick; `pytest --hypothesis-show-statistics` reports the
counts.
"""
import itertools
import os
import string

import pytest
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st

from lopsided.datasets import load_dataset
from lopsided.datasets.cache import no_downloads
from lopsided.datasets.jcampdx import read_spectrum
from lopsided.datasets.keelformat import parse_keel
from lopsided.errors import LopsidedError
from lopsided.planning.suite import PROTOCOL_KEYS, TOP_KEYS, load_suite, suite_from_dict
from lopsided.specs import parse_reference

# A fixed seed: every run tries the same examples, so a failure reproduces; set LOPSIDED_FUZZ_EXAMPLES to search further.
FUZZ = settings(max_examples=int(os.environ.get("LOPSIDED_FUZZ_EXAMPLES", "200")), deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
NAMES = itertools.count()     # a new file name per example: load_dataset caches by reference

CSV = ("x1,x2,donor,label\n0.1,1.0,d0,flag\n0.2,1.1,d0,ok\n0.3,,d1,ok\n0.4,1.3,d1,flag\n"
       "0.5,1.4,d2,ok\n\"0.6\",1.5,d2,ok\n")
KEEL = """@relation polymers
@attribute band1 real [0.0, 1.0]
@attribute 'band 2' integer[0,9]
@attribute colour {amber, clear}
@attribute class {PE, PET}
@inputs band1, 'band 2', colour
@outputs class
@data
0.1, 3, amber, PET
0.2,4,clear,PE
0.3, ?, <null>, PE
% a comment
0.4,6,amber,PET
"""
ARFF = """% micro-plastic particles
@RELATION particles
@ATTRIBUTE band1 NUMERIC
@ATTRIBUTE band2 REAL
@ATTRIBUTE class {PE,PP}
@DATA
0.1,0.2,PE
0.3,0.4,PP
0.5,?,PE
"""
JCAMP = """##TITLE=serum film 1
##JCAMP-DX=4.24
##DATA TYPE=INFRARED SPECTRUM
##XUNITS=1/CM
##YUNITS=ABSORBANCE
##XFACTOR=1.0
##YFACTOR=0.5
##FIRSTX=1000
##LASTX=1009
##NPOINTS=10
##XYDATA=(X++(Y..Y))
1000 1 2 3 4 5
1005 6 7 8 9 10
##END=
"""
JCAMP_PAIRS = """##TITLE=polymer particle
##JCAMP-DX=5.01
##DATA TYPE=INFRARED SPECTRUM
##XUNITS=1/CM
##YUNITS=ABSORBANCE
##NPOINTS=4
##XYPOINTS=(XY..XY)
1000.0, 0.1; 1001.0, 0.2
1002.0, 0.3; 1003.0, 0.4
##END=
"""
SUITE = """name = "fuzz"
seed = 3
description = "serum-film screening"
datasets = ["sklearn:iris?positive=1", "spectra:serum?donors=24"]
resamplers = ["none", { name = "random-under", params = { balance = 0.5 }, label = "under" }]
learners = ["logistic-regression"]
preprocessing = ["standardize"]
metrics = ["balanced_accuracy", "mcc"]
control = "none"

[protocol]
repeats = 2
folds = 3
ratios = ["natural", 4]
sizes = ["all", 40]
min_minority = 3
"""

# Characters that matter to the formats, mixed with anything at all.
SPECIAL = st.sampled_from(list(",;\t\n\r\"'{}[]@?#%=.-+e0123456789 ") + ["inf", "nan", "<null>", "##", "@data",
                                                                        "\ufeff", "\x00"])
ANY_CHAR = st.one_of(SPECIAL, st.characters())


@st.composite
def mutated(draw, text, pieces=ANY_CHAR):
    """``text`` after 1 to 8 random insertions, deletions and replacements of characters or short pieces."""
    chars = list(text)
    for _ in range(draw(st.integers(1, 8))):
        operation = draw(st.sampled_from(("insert", "delete", "replace")))
        at = draw(st.integers(0, max(len(chars) - 1, 0)))
        if operation == "insert":
            chars.insert(at, draw(pieces))
        elif chars and operation == "delete":
            del chars[at:at + draw(st.integers(1, 12))]
        elif chars:
            chars[at] = draw(pieces)
    return "".join(chars)


def texts(valid):
    """Mutations of a valid example, or arbitrary text."""
    return st.one_of(mutated(valid), st.lists(ANY_CHAR, max_size=120).map("".join))


def raw_files(valid):
    """File contents: mutated examples (UTF-8 or Latin-1 bytes) or random bytes."""
    encoded = texts(valid).flatmap(lambda text: st.sampled_from(
        [text.encode("utf-8", "surrogatepass"), text.encode("latin-1", "replace")]))
    return st.one_of(encoded, st.binary(max_size=400))


def only_lopsided_errors(call, *args, **kwargs):
    """Run ``call``; succeeding or raising a LopsidedError are both fine, anything else fails the test."""
    try:
        return call(*args, **kwargs)
    except LopsidedError as exc:
        assert str(exc).strip() and "\n" not in str(exc), repr(str(exc))
        return None


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz")


@FUZZ
@given(content=raw_files(CSV), suffix=st.sampled_from([".csv", ".tsv"]),
       query=st.sampled_from(["?label=label", "?label=label&group=donor", "?label=label&drop=donor&positive=ok",
                              "?label=label&nominal=donor", "?label=x1&group=donor"]))
def test_csv_reader(folder, content, suffix, query):
    path = folder / f"table{next(NAMES)}{suffix}"
    path.write_bytes(content.replace(b",", b"\t") if suffix == ".tsv" else content)
    only_lopsided_errors(load_dataset, f"file:{path}{query}")


@FUZZ
@given(text=st.one_of(texts(KEEL), texts(ARFF)), target=st.sampled_from([None, "class", "band1", "colour"]))
def test_keel_and_arff_parser(text, target):
    only_lopsided_errors(parse_keel, text, where="fuzz.dat", target=target)


@FUZZ
@given(content=st.one_of(raw_files(JCAMP), raw_files(JCAMP_PAIRS)))
def test_jcamp_reader(folder, content):
    path = folder / f"spectrum{next(NAMES)}.jdx"
    path.write_bytes(content)
    only_lopsided_errors(read_spectrum, path)


REFERENCE_CHARS = string.ascii_lowercase[:12] + "0123456789:?&=#,/._-"
SCHEMES = st.sampled_from(["file", "jcamp", "keel", "sklearn", "spectra", "measured", "openml", "", "nope"])


@FUZZ
@given(reference=st.one_of(
    st.text(REFERENCE_CHARS, max_size=40),
    st.tuples(SCHEMES, st.text(REFERENCE_CHARS, max_size=30)).map(":".join)))
def test_reference_parser_and_adapter_dispatch(folder, reference):
    body = parse_reference(reference).body      # pure: never raises
    assume(not body.startswith("/") and ".." not in body)      # paths stay inside the test's own folder
    with no_downloads():
        only_lopsided_errors(load_dataset, reference, base=folder)


SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-3, 60), st.floats(allow_nan=True), st.text(max_size=8),
                    st.sampled_from(["natural", "balanced", "all", "none", "smote", "mcc", "standardize",
                                     "logistic-regression", "sklearn:iris?positive=1", "no_such_package_for_tests:Thing",
                                     "collections:OrderedDict", "math:pi", "random-under?balance=2", ""]))
VALUES = st.recursive(SCALARS, lambda inner: st.one_of(
    st.lists(inner, max_size=4),
    st.dictionaries(st.sampled_from(["name", "params", "label", "balance", "k", "repeats", "folds", "ratios",
                                     "sizes", "holdout", "min_minority", "x"]), inner, max_size=4)),
    max_leaves=10)
VALID_SUITE = {"name": "fuzz", "seed": 3, "datasets": ["sklearn:iris?positive=1"], "resamplers": ["none", "smote"],
               "learners": ["logistic-regression"], "metrics": ["mcc"], "control": "none",
               "protocol": {"repeats": 2, "folds": 3, "ratios": ["natural", 4], "sizes": ["all", 40]}}


@st.composite
def suite_tables(draw):
    """A valid suite table with one to three fields (top level or protocol) removed or set to random values."""
    raw = {**VALID_SUITE, "protocol": dict(VALID_SUITE["protocol"])}
    for _ in range(draw(st.integers(1, 3))):
        inner = isinstance(raw.get("protocol"), dict) and draw(st.booleans())
        table = raw["protocol"] if inner else raw
        key = draw(st.sampled_from([*sorted(PROTOCOL_KEYS if inner else TOP_KEYS), "x"]))
        if draw(st.integers(0, 4)) == 0:
            table.pop(key, None)
        else:
            table[key] = draw(VALUES)
    return raw


@FUZZ
@given(raw=st.one_of(suite_tables(), st.dictionaries(st.sampled_from(sorted(TOP_KEYS)), VALUES, max_size=8)))
def test_suite_validator_on_random_tables(raw):
    only_lopsided_errors(suite_from_dict, raw, source="fuzz.toml")


@FUZZ
@given(text=mutated(SUITE))
def test_suite_file_reader_on_mutated_files(folder, text):
    path = folder / f"suite{next(NAMES)}.toml"
    path.write_text(text, encoding="utf-8", errors="surrogatepass")
    only_lopsided_errors(load_suite, path)
