"""The "How to cite" block: BibTeX that parses, a citation for every built-in method and data source,
suite text escaped, and CITATION.cff in step with the package."""
import re
from importlib import metadata
from pathlib import Path

import pytest

import lopsided
from lopsided.datasets import ADAPTERS, DATASETS, bundled, measured
from lopsided.datasets.cache import manifest
from lopsided.methods import learners, metrics, preprocessing, resamplers
from lopsided.planning.suite import suite_from_dict
from lopsided.records import CellTally, DatasetDescription, RunSummary
from lopsided.report.citations import (
    ENTRIES,
    LIBRARY,
    MEASURED_SETS,
    SCHEMES,
    SKLEARN_SETS,
    SOFTWARE_TITLE,
    STATISTICS,
    citation_block,
)

CFF = Path(__file__).resolve().parents[1] / "CITATION.cff"

# Required fields per entry type: Patashnik (1988), BibTeXing, section 3.1 (from memory).
REQUIRED = {"article": {"author", "title", "journal", "year"}, "book": {"author", "title", "publisher", "year"},
            "inproceedings": {"author", "title", "booktitle", "year"},
            "phdthesis": {"author", "title", "school", "year"}, "misc": set()}
ENTRY_START = re.compile(r"@([a-z]+)\{([A-Za-z0-9_:.-]+),\n")
FIELD_START = re.compile(r"\s*([a-z]+) = \{")
SEPARATOR = re.compile(r"\s*,")


def _braced(text, start):
    """(content, index after the closing brace) of the balanced group opening at text[start] == '{'."""
    depth = 0
    for i in range(start, len(text)):
        depth += {"{": 1, "}": -1}.get(text[i], 0)
        if depth == 0:
            return text[start + 1:i], i + 1
    raise AssertionError(f"unbalanced braces from position {start}: {text[start:start + 60]!r}")


def parse_bibtex(text):
    """{key: (type, {field: value})} in order of appearance. Outside entries only '%' comment lines and
    blank lines are allowed (BibTeX starts an entry at any '@'); keys must be unique."""
    entries, pos = {}, 0
    while True:
        at = text.find("@", pos)
        for line in text[pos:at if at >= 0 else len(text)].splitlines():
            assert not line.strip() or line.startswith("%"), f"stray text outside entries: {line!r}"
        if at < 0:
            return entries
        head = ENTRY_START.match(text, at)
        assert head, f"not an entry start: {text[at:at + 60]!r}"
        kind, key = head.groups()
        body, pos = _braced(text, text.index("{", at))
        body, fields, inner = body[len(key) + 1:], {}, 0        # the content after "key,"
        while body[inner:].strip():
            field = FIELD_START.match(body, inner)
            assert field, f"{key}: not a field: {body[inner:inner + 60]!r}"
            value, inner = _braced(body, field.end() - 1)
            fields[field.group(1)] = value
            separator = SEPARATOR.match(body, inner)
            if separator is None:
                assert not body[inner:].strip(), f"{key}: fields must be separated by commas"
                break
            inner = separator.end()
        assert kind in REQUIRED, f"{key}: unknown entry type @{kind}"
        assert key not in entries, f"key {key} appears twice"
        assert REQUIRED[kind] <= set(fields), f"{key}: @{kind} lacks {REQUIRED[kind] - set(fields)}"
        entries[key] = (kind, fields)


def test_every_table_entry_parses_with_its_own_key_and_required_fields():
    for key, text in ENTRIES.items():
        parsed = parse_bibtex(text)
        assert list(parsed) == [key]


def test_the_checker_refuses_broken_bibtex():
    with pytest.raises(AssertionError, match="unbalanced"):
        parse_bibtex("@misc{a,\n  title = {one {two}\n}")
    with pytest.raises(AssertionError, match="appears twice"):
        parse_bibtex("@misc{a,\n  title = {x}\n}\n@misc{a,\n  title = {y}\n}")
    with pytest.raises(AssertionError, match="lacks"):
        parse_bibtex("@article{a,\n  title = {x},\n  year = {1}\n}")
    with pytest.raises(AssertionError, match="stray"):
        parse_bibtex("% fine\nnot fine\n")


@pytest.mark.parametrize("registry", [resamplers.REGISTRY, learners.REGISTRY, preprocessing.REGISTRY,
                                      metrics.REGISTRY, DATASETS], ids=lambda r: r.kind)
def test_every_citation_key_of_a_builtin_is_an_entry(registry):
    for name, entry in registry.builtins.items():
        assert set(entry.citations) <= set(ENTRIES), name


def test_every_builtin_resampler_and_learner_cites_its_papers():
    """Fails when a method is registered without its paper: give its Builtin record the citation keys."""
    for registry in (resamplers.REGISTRY, learners.REGISTRY):
        for name, entry in registry.builtins.items():
            assert entry.citations or name == "none", f"{name} cites nothing"   # the baseline defines no method
    assert set(LIBRARY) | set(STATISTICS) <= set(ENTRIES)


def test_every_dataset_scheme_and_named_set_has_a_citation():
    assert set(SCHEMES) == set(ADAPTERS)
    assert set(SKLEARN_SETS) == set(bundled.LOADERS)
    assert set(MEASURED_SETS) == set(measured.SETS)
    for keys in (*SKLEARN_SETS.values(), *MEASURED_SETS.values()):
        assert keys and set(keys) <= set(ENTRIES)


def _described(reference, name):
    """A dataset description with made-up numbers: citations read only the reference and the name."""
    return DatasetDescription(reference=reference, name=name, n=100, d=4, classes=2, minority="1", minority_count=10,
                              majority_count=90, imbalance_ratio=9.0, minority_share=0.1, groups=0, nominal=0,
                              missing=0, duplicates=0, family=None, source="test")


def _block(raw):
    suite = suite_from_dict(raw)
    summary = RunSummary(suite=suite.name, suite_fingerprint=suite.fingerprint, suite_file="", seed=suite.seed,
                         versions={"lopsided": lopsided.__version__}, methods=(), cells=CellTally(0, 0, 0, 0),
                         skipped=(), finished_at="2026-12-03T09:15:00+00:00",
                         datasets=tuple(_described(ref, "mammography" if ref.startswith("openml:") else ref)
                                        for ref in suite.datasets))
    return suite, citation_block(suite, summary)


MIXED = {
    "name": "serum films",
    "description": "Screening of dried serum films, with public sets for comparison.",
    "datasets": ["keel:ecoli1", "keel:glass1", "openml:310?target=class", "openml:310",
                 "sklearn:iris?positive=1", "measured:coffee?positive=Vietnam&keep=5",
                 "spectra:serum?ratio=6", "file:data/films@lab.csv?label=status",
                 "jcamp:particles?labels=labels.csv&label=polymer"],
    "resamplers": ["none", "smote", "borderline-smote-1", "plugins_for_tests:Recording"],
    "learners": ["random-forest", "linear-discriminant"],
}


def test_block_for_a_mixed_suite_lists_exactly_the_expected_keys():
    suite, block = _block(MIXED)
    text = block.text()
    keys = list(parse_bibtex(text))
    run_key = f"run-serum-films-{suite.fingerprint}"
    assert keys[:2] == [run_key, "lopsided"]
    assert list(parse_bibtex("\n\n".join(e for e in block.datasets if e.startswith("@")))) == [
        "alcalafdez2011", "fernandez2008", "vanschoren2013", "openml-310", "fisher1936", "cabaneroslopez2024",
        "lopsided-spectra"]
    # fisher1936 (linear discriminant analysis) is already listed with the iris data
    assert list(parse_bibtex("\n\n".join(e for e in block.methods if e.startswith("@")))) == [
        "chawla2002", "han2005", "breiman2001", "ledoit2004", "pedregosa2011"]
    assert tuple(parse_bibtex("\n\n".join(block.statistics))) == STATISTICS
    assert len(keys) == 2 + 7 + 5 + len(STATISTICS)
    assert "% plugin plugins_for_tests:Recording: cite its authors' paper" in block.methods
    assert "% file:data/films(at)lab.csv?label=status: your own data; cite its source" in block.datasets
    assert "% jcamp:particles?labels=labels.csv&label=polymer: your own data; cite its source" in block.datasets
    assert any("chemotools names no original source" in line for line in block.datasets)
    for header in ("This run", "Software", "Data sources", "Resamplers and learners", "Statistical tests"):
        assert f"% --- {header}" in text


def test_run_entry_carries_suite_fingerprint_version_and_date():
    suite, block = _block(MIXED)
    (kind, fields), = parse_bibtex(block.run).values()
    assert kind == "misc" and fields["year"] == "2026"
    assert fields["title"] == "Leaderboard of the suite ``serum films''"
    assert fields["howpublished"] == f"Benchmark run made with lopsided {lopsided.__version__}"
    assert fields["note"] == (f"Suite fingerprint {suite.fingerprint}; finished 2026-12-03. "
                              "Screening of dried serum films, with public sets for comparison.")


def test_suite_text_is_escaped_for_bibtex():
    raw = {**MIXED, "name": "films {draft} 50%_x}", "description": "a } b {\n c & d $ # ~ ^ \\"}
    suite, block = _block(raw)
    (key, (_, fields)), = parse_bibtex(block.run).items()
    assert key == f"run-films-draft-50-x-{suite.fingerprint}"
    assert fields["title"] == "Leaderboard of the suite ``films \\textbraceleft{}draft\\textbraceright{} " \
                              "50\\%\\_x\\textbraceright{}''"
    assert fields["note"].endswith("a \\textbraceright{} b \\textbraceleft{} c \\& d \\$ \\# "
                                   "\\textasciitilde{} \\textasciicircum{} \\textbackslash{}")
    parse_bibtex(block.text())


def test_bibliographic_details_agree_with_stated_references():
    """Volume and pages as stated in the task brief for this module (from memory there too)
    and in datasets/keel.toml's collection citation."""
    def field(key, name):
        return parse_bibtex(ENTRIES[key])[key][1][name]
    expected = {  # key: (volume, pages)
        "friedman1937": ("32", "675--701"),       # JASA 32:675-701
        "demsar2006": ("7", "1--30"),             # JMLR 7:1-30
        "pedregosa2011": ("12", "2825--2830"),    # JMLR 12:2825-2830
        "vanschoren2013": ("15", "49--60"),       # SIGKDD Explorations 15(2):49-60
        "alcalafdez2011": ("17", "255--287"),     # J. Multiple-Valued Logic and Soft Computing 17:255-287
        "fernandez2008": ("159", "2378--2398"),   # Fuzzy Sets and Systems 159:2378-2398 (datasets/keel.toml)
    }
    for key, (volume, pages) in expected.items():
        assert (field(key, "volume"), field(key, "pages")) == (volume, pages), key
    keel = manifest("keel")["collection"]["citation"]
    assert "17:255" in keel and "159:2378" in keel


def test_chemotools_entry_uses_the_doi_its_package_names():
    """The installed chemotools README (package metadata) shows its JOSS DOI."""
    readme = metadata.metadata("chemotools")["Description"]
    doi = parse_bibtex(ENTRIES["cabaneroslopez2024"])["cabaneroslopez2024"][1]["doi"]
    assert f"doi.org/{doi}" in readme


def test_citation_cff_matches_the_package_without_yaml():
    text = CFF.read_text(encoding="utf-8")
    assert re.search(r'^version: "?([^"\n]+)"?$', text, re.M).group(1) == lopsided.__version__
    assert re.search(r'^title: "([^"\n]+)"$', text, re.M).group(1) == SOFTWARE_TITLE
    software = parse_bibtex(ENTRIES["lopsided"])["lopsided"][1]
    assert software["title"] == SOFTWARE_TITLE and lopsided.__version__ in software["howpublished"]


def test_citation_cff_is_valid_yaml_with_the_package_version():
    yaml = pytest.importorskip("yaml", reason="PyYAML is not installed; CITATION.cff is checked as text only")
    data = yaml.safe_load(CFF.read_text(encoding="utf-8"))
    assert data["cff-version"] == "1.2.0"     # Citation File Format 1.2.0: required keys below
    assert {"cff-version", "message", "title", "authors"} <= set(data)
    assert data["version"] == lopsided.__version__
    assert data["license"] == "BSD-3-Clause"
    assert str(data["date-released"]) == "2026-12-04"
