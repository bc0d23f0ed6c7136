"""Every bad input gets one clear line: exit 2, `lopsided: error: FILE: FIELD: problem`, no traceback, and earlier
results left byte-for-byte as they were.

Each case builds its bad input in a temporary folder and runs the real command-line entry point next to a results
folder (with its store) from one earlier, successful run, which is hashed before and after. The expected fields
follow the house message style ("file: field: problem; did you mean ...", DEVELOPERS.md, Conventions).
"""
import argparse
import hashlib
import json
import shutil
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from lopsided import cli
from lopsided.cli import main
from lopsided.datasets import load_dataset

EARLIER = """
name = "earlier"
seed = 1
datasets = ["sklearn:iris?positive=1"]
resamplers = ["none"]
learners = ["logistic-regression"]
metrics = ["balanced_accuracy"]
[protocol]
repeats = 1
folds = 2
min_minority = 3
"""

# A small serum-film screening table: two film measurements per donor and a flag.
FILMS = "x1,x2,donor,label\n" + "".join(
    f"{0.1 * i:.1f},{1.0 + 0.05 * i:.2f},d{i // 2},{'flag' if i % 4 == 0 else 'ok'}\n" for i in range(24))


@pytest.fixture(scope="module")
def earlier(tmp_path_factory):
    """The results folder (with store.sqlite) of one real, successful run."""
    folder = tmp_path_factory.mktemp("earlier")
    (folder / "earlier.toml").write_text(EARLIER, encoding="utf-8")
    assert main(["run", str(folder / "earlier.toml"), "--out", str(folder / "results"), "--quiet"]) == 0
    return folder / "results"


@pytest.fixture
def results(earlier, tmp_path):
    copy = tmp_path / "results"
    shutil.copytree(earlier, copy)
    return copy


def fingerprint(*folders):
    """{path: sha256} of every file under ``folders`` (and the folders' own listings)."""
    found = {}
    for folder in folders:
        for path in sorted(Path(folder).rglob("*")) if Path(folder).is_dir() else [Path(folder)]:
            found[str(path)] = hashlib.sha256(path.read_bytes()).hexdigest() if path.is_file() else "folder"
    return found


def suite(folder, datasets=("sklearn:iris?positive=1",), extra="", protocol="", resamplers='["none"]',
          name="case.toml"):
    """Write a small suite file; ``extra`` lines go before [protocol], ``protocol`` lines into it."""
    text = textwrap.dedent(f"""\
        name = "case"
        seed = 1
        datasets = {json.dumps(list(datasets))}
        resamplers = {resamplers}
        learners = ["logistic-regression"]
        metrics = ["balanced_accuracy"]
        {extra}
        [protocol]
        repeats = 1
        folds = 2
        min_minority = 3
        {protocol}
        """)
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def run(path, results, *more):
    return ["run", str(path), "--out", str(results), "--quiet", *more]


def table_suite(folder, results, name, content, query="?label=label&group=donor"):
    """A suite over one table file (``content``: text or bytes) named ``name``; returns the run argv."""
    data = folder / name
    data.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    return run(suite(folder, [f"file:{data}{query}"]), results)


def plugin(folder, monkeypatch):
    """A module `sorting_only` whose class `Sorter` has no fit_resample (importable from ``folder``)."""
    (folder / "sorting_only.py").write_text("class Sorter:\n    def sort(self, X, y):\n        return X, y\n")
    monkeypatch.syspath_prepend(str(folder))
    monkeypatch.delitem(sys.modules, "sorting_only", raising=False)


CASES = {}


def case(*needles, xfail=None):
    """Register a case builder: (folder, results, monkeypatch) -> (argv, extra paths to keep untouched)."""
    def register(build):
        CASES[build.__name__] = (build, needles, xfail)
        return build
    return register


# --- tables (file: datasets) -------------------------------------------------------------------------------------

@case("films.csv", "line 3", "4 values", "3 columns")
def malformed_csv(folder, results, _):
    return table_suite(folder, results, "films.csv", "x1,x2,label\n1,2,ok\n3,4,5,flag\n1,2,ok\n"), ()


@case("films.csv", "empty")
def empty_csv(folder, results, _):
    return table_suite(folder, results, "films.csv", ""), ()


@case("films.csv", "no rows")
def header_only_csv(folder, results, _):
    return table_suite(folder, results, "films.csv", "x1,x2,label\n"), ()


@case("films.csv", "semicolon-separated")
def semicolon_csv(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS.replace(",", ";")), ()


@case("films.csv", "column 'label'", "two classes")
def one_class_label(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS.replace("flag", "ok")), ()


@case("films.csv", "column 'colour'", "?nominal=colour")
def text_feature_without_encoding(folder, results, _):
    lines = FILMS.splitlines()
    text = "\n".join([lines[0] + ",colour"] + [f"{row},{'amber' if i % 3 else 'clear'}"
                                                for i, row in enumerate(lines[1:])]) + "\n"
    return table_suite(folder, results, "films.csv", text), ()


@case("films.csv", "column 'x2'", "infinite")
def infinite_value(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS.replace("1.10,", "inf,", 1)), ()


@case("films.csv", "column 'x1'", "twice")
def duplicate_column_names(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS.replace("x1,x2", "x1,x1", 1)), ()


@case("films.csv", "not UTF-8", "byte 0xe9")
def latin1_csv(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS.replace("x2", "caf\u00e9").encode("latin-1")), ()


@case("films.csv", "no column 'klass'", "did you mean 'class'")
def absent_label_column(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS.replace("label", "class"), "?label=klass"), ()


@case("films.csv", "label", "?label=")
def label_not_named(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS, ""), ()


@case("films.csv", "positive", "'spoiled'")
def positive_class_not_in_labels(folder, results, _):
    return table_suite(folder, results, "films.csv", FILMS, "?label=label&group=donor&positive=spoiled"), ()


KEEL = """@relation polymers
@attribute band1 real [0.0, 1.0]
@attribute band2 real [0.0, 1.0]
@attribute class {PE, PET}
@inputs band1, band2
@outputs class
@data
""" + "".join(f"0.{i},0.{9 - i},{'PET' if i < 3 else 'PE'}\n" for i in range(10))


@case("polymers.dat", "line 9", "4 values", "declares 3")
def keel_row_longer_than_header(folder, results, _):
    return table_suite(folder, results, "polymers.dat", KEEL.replace("0.1,0.8,PET", "0.1,0.8,0.5,PET"),
                       "?label=class"), ()


@case("polymers.dat", "line 10", "2 values", "declares 3")
def keel_row_shorter_than_header(folder, results, _):
    return table_suite(folder, results, "polymers.dat", KEEL.replace("0.2,0.7,PET", "0.2,PET"), "?label=class"), ()


ARFF = KEEL.replace("@inputs band1, band2\n@outputs class\n", "").replace(" [0.0, 1.0]", "")


@case("polymers.arff", "line 7", "'band2'", "not a number")
def arff_type_lie(folder, results, _):
    return table_suite(folder, results, "polymers.arff", ARFF.replace("0.1,0.8,PET", "0.1,dark,PET"),
                       "?label=class"), ()


@case("polymers.arff", "line 9", "'PP'", "not a declared value")
def arff_undeclared_class(folder, results, _):
    return table_suite(folder, results, "polymers.arff", ARFF.replace("0.3,0.6,PE", "0.3,0.6,PP"),
                       "?label=class"), ()


@case("polymers.arff", "'band2'", "infinite")
def arff_infinite_value(folder, results, _):
    return table_suite(folder, results, "polymers.arff", ARFF.replace("0.1,0.8,PET", "0.1,-inf,PET"),
                       "?label=class"), ()


JCAMP = """##TITLE=film {n}
##JCAMP-DX=4.24
##DATA TYPE=INFRARED SPECTRUM
##XUNITS=1/CM
##YUNITS=ABSORBANCE
##FIRSTX=1000
##LASTX=1009
##NPOINTS=10
##XYDATA=(X++(Y..Y))
1000 {n} 2 3 4 5
1005 6 7 8 9 10
##END=
"""


@case("film3.jdx", "NPOINTS", "truncated")
def jcamp_truncated_data_block(folder, results, _):
    spectra = folder / "spectra"
    spectra.mkdir()
    for n in range(6):
        text = JCAMP.format(n=n)
        (spectra / f"film{n}.jdx").write_text(text if n != 3 else text.split("1005")[0])
    (spectra / "labels.csv").write_text("file,status\n" + "".join(f"film{n}.jdx,{'flag' if n < 2 else 'ok'}\n"
                                                                   for n in range(6)))
    return run(suite(folder, [f"jcamp:{spectra}?labels=labels.csv&label=status"]), results), ()


@case("no /polymers.dat")
def keel_name_with_a_leading_slash(folder, results, _):
    (folder / "polymers.dat").write_text(KEEL)
    return ["datasets", "show", f"keel:{folder}#/polymers"], ()


@case("no *.dat")
def keel_name_with_a_wildcard(folder, results, _):
    (folder / "polymers.dat").write_text(KEEL)
    return ["datasets", "show", f"keel:{folder}#*"], ()


# --- suite files ---------------------------------------------------------------------------------------------------

@case("case.toml", "datasets[0]", "did you mean 'sklearn'")
def unknown_dataset_scheme(folder, results, _):
    return run(suite(folder, ["sklern:iris?positive=1"]), results), ()


@case("sklearn:iris?postive=1", "unknown parameter 'postive'", "did you mean 'positive'")
def unknown_dataset_parameter(folder, results, _):
    return run(suite(folder, ["sklearn:iris?postive=1"]), results), ()


@case("case.toml", "datasets[0]", "file:?label=label", "names no dataset")
def dataset_reference_with_empty_body(folder, results, _):
    return run(suite(folder, ["file:?label=label"]), results), ()


@case("file:?label=label", "no file named")
def empty_reference_body_on_the_command_line(folder, results, _):
    return ["datasets", "show", "file:?label=label"], ()


@case("case.toml", "datasets", "list at least one")
def suite_without_datasets(folder, results, _):
    return run(suite(folder, []), results), ()


@case("case.toml", "datasets", "listed twice")
def dataset_listed_twice(folder, results, _):
    return run(suite(folder, ["sklearn:iris?positive=1", "sklearn:iris?positive=1"]), results), ()


@case("case.toml", "resamplers[0]", "did you mean 'smote'")
def unknown_resampler(folder, results, _):
    return run(suite(folder, resamplers='["smotte"]'), results), ()


@case("case.toml", "resamplers[0].params", "did you mean 'balance'")
def unknown_resampler_parameter(folder, results, _):
    return run(suite(folder, resamplers='["random-under?balanse=0.5"]'), results), ()


@case("case.toml", "learners[0]", "did you mean 'logistic-regression'")
def unknown_learner(folder, results, _):
    path = suite(folder)
    path.write_text(path.read_text().replace('"logistic-regression"', '"logistic-regresion"'))
    return run(path, results), ()


@case("case.toml", "metrics[0]", "did you mean 'balanced_accuracy'")
def unknown_metric(folder, results, _):
    path = suite(folder)
    path.write_text(path.read_text().replace('"balanced_accuracy"', '"balanced_acuracy"'))
    return run(path, results), ()


@case("case.toml", "preprocessing[0]", "unknown preprocessing step")
def unknown_preprocessing(folder, results, _):
    return run(suite(folder, extra='preprocessing = ["smoothing-of-some-kind"]'), results), ()


@case("case.toml", "resamplr", "did you mean 'resamplers'")
def unknown_top_level_field(folder, results, _):
    return run(suite(folder, extra='resamplr = ["none"]'), results), ()


@case("case.toml", "line 4, column 1", "not valid TOML")
def toml_syntax_error(folder, results, _):
    path = folder / "case.toml"
    path.write_text('name = "case"\nseed = 1\ndatasets = ["sklearn:iris?positive=1"\nresamplers = ["none"]\n')
    return run(path, results), ()


@case("case.toml", "protocol.folds", "'five'")
def toml_value_of_the_wrong_type(folder, results, _):
    path = suite(folder)
    path.write_text(path.read_text().replace("folds = 2", 'folds = "five"'))
    return run(path, results), ()


@case("case.toml", "not UTF-8", "byte 0xe9")
def latin1_suite_file(folder, results, _):
    path = suite(folder, extra='description = "caf\u00e9 films"')
    path.write_bytes(path.read_text(encoding="utf-8").encode("latin-1"))
    return run(path, results), ()


@case("case.toml", "protocol.ratios", "-2")
def negative_ratio(folder, results, _):
    return run(suite(folder, protocol="ratios = [-2]"), results), ()


@case("case.toml", "protocol.ratios", "0")
def zero_ratio(folder, results, _):
    return run(suite(folder, protocol="ratios = [0]"), results), ()


@case("case.toml", "protocol", "sklearn:iris?positive=1", "min_minority")
def ratio_the_data_cannot_reach(folder, results, _):
    return run(suite(folder, protocol="ratios = [1000]"), results), ()


@case("case.toml", "protocol", "sklearn:iris?positive=1", "exceeds")
def size_larger_than_the_data(folder, results, _):
    return run(suite(folder, protocol="sizes = [100000]"), results), ()


@case("case.toml", "resamplers[0]", "cannot import", "no_such_package_for_tests")
def plugin_that_does_not_import(folder, results, _):
    return run(suite(folder, resamplers='["no_such_package_for_tests.methods:Halves"]'), results), ()


@case("case.toml", "resamplers[0]", "sorting_only:Sorter", "fit_resample")
def plugin_without_fit_resample(folder, results, monkeypatch):
    plugin(folder, monkeypatch)
    return run(suite(folder, resamplers='["sorting_only:Sorter"]'), results), ()


@case("--add-resampler", "sorting_only:Sorter", "fit_resample")
def added_plugin_without_fit_resample(folder, results, monkeypatch):
    plugin(folder, monkeypatch)
    return run(suite(folder), results, "--add-resampler", "sorting_only:Sorter"), ()


@case("--jobs", "0", "whole number >= 1")
def zero_jobs(folder, results, _):
    return run(suite(folder), results, "--jobs", "0"), ()


# --- output folders and stores -------------------------------------------------------------------------------------

@case("--out", "blocker", "not a folder")
def output_under_a_file(folder, results, _):
    (folder / "blocker").write_text("a file, not a folder")
    return ["run", str(suite(folder)), "--out", str(folder / "blocker" / "sub"), "--quiet",
            "--store", str(results / "store.sqlite")], [folder / "blocker"]


@case("case.toml", "out", "blocker", "not a folder")
def suite_output_under_a_file(folder, results, _):
    (folder / "blocker").write_text("a file, not a folder")
    return ["run", str(suite(folder, extra=f'out = "{folder / "blocker" / "sub"}"')), "--quiet",
            "--store", str(results / "store.sqlite")], [folder / "blocker"]


@case("--out", "blocker", "not a folder")
def report_output_under_a_file(folder, results, _):
    (folder / "blocker").write_text("a file, not a folder")
    return ["report", str(results / "store.sqlite"), "--out", str(folder / "blocker" / "sub")], [folder / "blocker"]


@case("store.sqlite", "blocker", "not a folder")
def store_under_a_file(folder, results, _):
    (folder / "blocker").write_text("a file, not a folder")
    return run(suite(folder), results, "--store", str(folder / "blocker" / "store.sqlite")), [folder / "blocker"]


@case("broken.sqlite", "not a lopsided result store")
def corrupt_store_for_report(folder, results, _):
    (folder / "broken.sqlite").write_bytes(np.random.default_rng(5).bytes(8192))
    return ["report", str(folder / "broken.sqlite"), "--out", str(results)], [folder / "broken.sqlite"]


@case("broken.sqlite", "not a lopsided result store")
def corrupt_store_for_run(folder, results, _):
    (folder / "broken.sqlite").write_bytes(np.random.default_rng(6).bytes(8192))
    return run(suite(folder), results, "--store", str(folder / "broken.sqlite")), [folder / "broken.sqlite"]


@case("other.sqlite", "not a lopsided result store", "patients")
def foreign_sqlite_file(folder, results, _):
    with sqlite3.connect(folder / "other.sqlite") as db:
        db.execute("CREATE TABLE patients (id INTEGER, visit TEXT)")
        db.execute("INSERT INTO patients VALUES (1, '2024-01-01')")
    return run(suite(folder), results, "--store", str(folder / "other.sqlite")), [folder / "other.sqlite"]


@case("future.sqlite", "schema 99", "newer lopsided")
def store_from_a_future_version(folder, results, _):
    future = folder / "future.sqlite"
    shutil.copy(results / "store.sqlite", future)
    with sqlite3.connect(future) as db:
        db.execute("UPDATE meta SET value = '99' WHERE key = 'schema'")
    db.close()
    return ["report", str(future), "--out", str(results)], [future]


@case("absent.sqlite", "no such result store")
def report_from_a_missing_store(folder, results, _):
    return ["report", str(folder / "absent.sqlite"), "--out", str(results)], ()


# --- score tables (`lopsided rank`) -------------------------------------------------------------------------------

SCORES = "dataset,smote,none,random-under\nserum,0.81,0.74,0.78\npolymers,0.66,0.61,0.70\nfilms,0.90,0.85,0.88\n"


def scores(folder, results, content, *more):
    path = folder / "scores.csv"
    path.write_bytes(content if isinstance(content, bytes) else content.encode("utf-8"))
    return ["rank", str(path), "--out", str(results), *more], ()


@case("scores.csv", "semicolon-separated")
def semicolon_scores(folder, results, _):
    return scores(folder, results, SCORES.replace(",", ";"))


@case("scores.csv", "'smote'", "'serum'", "not a number")
def scores_with_a_text_method_column(folder, results, _):
    return scores(folder, results, SCORES.replace("0.81", "high"))


@case("scores.csv", "not UTF-8")
def latin1_scores(folder, results, _):
    return scores(folder, results, SCORES.replace("serum", "s\u00e9rum").encode("latin-1"))


@case("scores.csv", "empty")
def empty_scores(folder, results, _):
    return scores(folder, results, "")


@case("scores.csv", "two method columns")
def scores_with_one_method(folder, results, _):
    return scores(folder, results, "dataset,smote\nserum,0.8\nfilms,0.7\n")


@case("scores.csv", "--control", "did you mean 'smote'", "known: none, random-under, smote")
def rank_with_an_unknown_control(folder, results, _):
    return scores(folder, results, SCORES, "--control", "smot")


@case("--out", "blocker", "not a folder")
def rank_output_under_a_file(folder, results, _):
    (folder / "blocker").write_text("a file, not a folder")
    argv, _ = scores(folder, results, SCORES)
    return [*argv[:2], "--out", str(folder / "blocker" / "sub")], [folder / "blocker"]


# --- other commands that read user input (`lopsided compare`, `try`, `datasets list`) -----------------------------

@case("not-a-board", "manifest.json", "leaderboard folder")
def compare_with_a_plain_folder(folder, results, _):
    (folder / "not-a-board").mkdir()
    return ["compare", str(folder / "not-a-board"), str(results)], ()


@case("absent.csv", "no such file")
def try_a_missing_table(folder, results, _):
    return ["try", f"file:{folder / 'absent.csv'}?label=label", "--suite", str(suite(folder)),
            "--board", str(results), "--with", "none + logistic-regression"], ()


@case("case.toml", "datasets[0]", "did you mean 'sklearn'")
def dataset_list_of_a_suite_with_an_unknown_scheme(folder, results, _):
    return ["datasets", "list", "--suite", str(suite(folder, ["sklern:iris?positive=1"]))], ()


def params():
    for name, (_, _, xfail) in CASES.items():
        marks = [pytest.mark.xfail(strict=True, reason=xfail)] if xfail else []
        yield pytest.param(name, marks=marks, id=name)

# --- cell bundles (`lopsided export`, `import`, `verify`) ----------------------------------------------------------

def bundle_of(folder, results, header=None, alter=False):
    """The earlier run's cells exported to folder/cells.parquet, then rewritten with ``header`` changes and, with
    ``alter``, one cell's score changed while the header keeps the original checksum."""
    import pyarrow.parquet as pq

    from lopsided.jobs.bundles import HEADER_KEY, export
    path = folder / "cells.parquet"
    export(results, path)
    if header or alter:
        table = pq.read_table(path)
        meta = json.loads(table.schema.metadata[HEADER_KEY])
        meta.update(header or {})
        if alter:
            metrics = table.column("metrics").to_pylist()
            metrics[0] = json.dumps({**json.loads(metrics[0]), "balanced_accuracy": 0.0})
            table = table.set_column(table.schema.get_field_index("metrics"), "metrics", [metrics])
        table = table.replace_schema_metadata({HEADER_KEY: json.dumps(meta).encode()})
        pq.write_table(table, path)
    return path


def importing(path, results, *more):
    return ["import", str(path), "--store", str(results / "store.sqlite"), *more], [path]


@case("cells.parquet", "not a lopsided bundle", "not a readable Parquet file")
def truncated_bundle(folder, results, _):
    path = bundle_of(folder, results)
    path.write_bytes(path.read_bytes()[: path.stat().st_size // 2])
    return importing(path, results)


@case("cells.parquet", "sha256", "altered")
def altered_bundle(folder, results, _):
    return importing(bundle_of(folder, results, alter=True), results)


@case("cells.parquet", "lopsided", "newer than this one", "upgrade lopsided")
def bundle_from_a_newer_lopsided(folder, results, _):
    return importing(bundle_of(folder, results, header={"lopsided": "99.0.0"}), results)


@case("cells.parquet", "versions", "scikit-learn 0.0.1", "--verify", "--unverified")
def bundle_from_other_package_versions(folder, results, _):
    return importing(bundle_of(folder, results, header={"versions": {"scikit-learn": "0.0.1"}}), results)


@case("cells.parquet", "not a lopsided bundle", "not a readable Parquet file")
def a_csv_named_as_a_bundle(folder, results, _):
    path = folder / "cells.parquet"
    path.write_text(SCORES)
    return importing(path, results)


@case("cells.parquet", "no lopsided header")
def parquet_without_a_header(folder, results, _):
    import pandas as pd
    path = folder / "cells.parquet"
    pd.DataFrame({"key": ["a"], "score": [0.5]}).to_parquet(path)
    return importing(path, results)


@case("--sample", "whole number >= 1")
def verify_with_no_sample(folder, results, _):
    return ["verify", str(bundle_of(folder, results)), "--sample", "0"], [folder / "cells.parquet"]


@case("not-a-board", "folder", "not a leaderboard folder")
def export_from_a_plain_folder(folder, results, _):
    (folder / "not-a-board").mkdir()
    return ["export", str(folder / "not-a-board"), "--out", str(folder / "out.parquet")], ()



@pytest.mark.parametrize("name", list(params()))
def test_bad_input_gets_one_clear_line(name, tmp_path, results, capsys, monkeypatch):
    build, needles, _ = CASES[name]
    inputs = tmp_path / "inputs"
    inputs.mkdir()
    argv, kept = build(inputs, results, monkeypatch)
    before = fingerprint(results, *kept)
    code = main(argv)
    err = capsys.readouterr().err
    lines = err.splitlines()
    assert code == 2, err
    assert len(lines) == 1 and lines[0].startswith("lopsided: error: "), err
    assert "Traceback" not in err
    for needle in needles:
        assert needle in lines[0], (needle, lines[0])
    assert fingerprint(results, *kept) == before


# Commands of the parser that read nothing a user writes (fixed choices only): no bad-input case applies.
FIXED_CHOICES_ONLY = {"list", "datasets fetch", "datasets check"}


def subcommands(parser):
    """{name: parser} of a parser's sub-commands ({} when it has none)."""
    found = [a.choices for a in parser._actions if isinstance(a, argparse._SubParsersAction)]
    return found[0] if found else {}


def commands_of_the_parser():
    """Every command of `lopsided`, a command with actions of its own as 'command action' ('datasets show')."""
    names = set()
    for name, command in subcommands(cli.parser()).items():
        names |= {f"{name} {action}" for action in subcommands(command)} or {name}
    return names


def test_the_corpus_covers_every_command_that_reads_user_input(tmp_path, results, monkeypatch):
    """Issue 11 asks for a corpus of at least 30 bad inputs, and DEVELOPERS.md for a case whenever a way to read
    user input is added: at least 30 cases are expected to pass (not marked xfail), and every command of the
    parser that reads user input is run by at least one of them."""
    assert sum(1 for _, _, xfail in CASES.values() if not xfail) >= 30
    covered = set()
    for name, (build, _, _) in CASES.items():
        inputs = tmp_path / name
        inputs.mkdir()
        argv, _ = build(inputs, results, monkeypatch)
        covered.add(" ".join(argv[:2]) if argv[0] == "datasets" else argv[0])
    reading = commands_of_the_parser() - FIXED_CHOICES_ONLY
    assert reading >= {"run", "report", "rank", "compare", "export", "import", "verify", "try", "datasets show"}
    assert reading - covered == set(), "commands without a bad-input case"


def test_the_installed_command_exits_2_with_one_line(tmp_path):
    """The console script, not only `main`: exit status 2 and one stderr line, nothing else."""
    path = suite(tmp_path, protocol="ratios = [-2]")
    command = Path(sys.executable).with_name("lopsided")
    done = subprocess.run([str(command), "run", str(path), "--out", str(tmp_path / "never"), "--quiet"],
                          capture_output=True, text=True)
    assert done.returncode == 2 and done.stdout == ""
    assert done.stderr.splitlines() == [done.stderr.strip()] and "case.toml: protocol.ratios" in done.stderr
    assert not (tmp_path / "never").exists()


def test_missing_values_stay_missing(tmp_path):
    """Decision (issue 11): an empty cell is a missing value (NaN, for preprocessing to handle); only infinity
    is refused, since no imputer or scaler can treat it."""
    path = tmp_path / "films.csv"
    path.write_text(FILMS.replace("1.10,", ",", 1))
    data = load_dataset(f"file:{path}?label=label&group=donor")
    assert int(np.isnan(data.X).sum()) == 1 and np.isnan(data.X[2, 1])
