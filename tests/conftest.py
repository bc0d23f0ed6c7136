"""Shared helpers: tiny suites written into a temporary folder, one run of the tiny suite for the session, a
table whose first column names its rows."""
import contextlib
import io
import textwrap

import numpy as np
import pandas as pd
import pytest

TINY = """
name = "tiny"
seed = 7
datasets = ["sklearn:wine?positive=2", "sklearn:iris?positive=1", "spectra:serum?donors=24&ratio=3&region=fingerprint&step=16"]
resamplers = ["none", "random-under", "topup-over"]
learners = ["logistic-regression", {{ name = "random-forest", params = {{ n_estimators = 10 }} }}]
metrics = ["balanced_accuracy", "mcc"]
{extra}
[protocol]
repeats = 2
folds = 2
ratios = {ratios}
sizes = ["all"]
min_minority = 3
"""


def suite_writer(folder):
    """write(extra='', ratios='["natural", 2]', text=None, name='tiny.toml') -> path of a small, fast suite file
    in ``folder`` (``text`` replaces the whole suite)."""
    def write(extra="", ratios='["natural", 2]', text=None, name="tiny.toml"):
        path = folder / name
        body = text if text is not None else TINY.format(extra=extra, ratios=ratios)
        path.write_text(textwrap.dedent(body), encoding="utf-8")
        return path
    return write


@pytest.fixture
def write_suite(tmp_path):
    """A suite_writer into the test's own temporary folder."""
    return suite_writer(tmp_path)


@pytest.fixture(scope="module")
def write_module_suite(tmp_path_factory):
    """A suite_writer into a temporary folder shared by the module (for runs built once per module)."""
    return suite_writer(tmp_path_factory.mktemp("suites"))


@pytest.fixture(scope="session")
def tiny_board(tmp_path_factory):
    """The suite above (ratios natural and 2) run once for the whole session with `lopsided run`: (suite file,
    leaderboard folder with its store.sqlite, what the command printed). Read it; copy it to change it."""
    from lopsided.cli import main
    suite = suite_writer(tmp_path_factory.mktemp("tiny"))()
    out = suite.parent / "board"
    printed = io.StringIO()
    with contextlib.redirect_stdout(printed):
        assert main(["run", str(suite), "--out", str(out), "--quiet"]) == 0
    return suite, out, printed.getvalue()


@pytest.fixture
def row_ids(tmp_path):
    """(CSV of 120 rows whose first feature is the row number, 1 in 6 'rare'; an empty folder for records):
    a sentinel for what a method was shown."""
    rng = np.random.default_rng(0)
    n = 120
    table = pd.DataFrame({"row": np.arange(n), "a": rng.normal(size=n), "b": rng.normal(size=n),
                          "label": np.where(np.arange(n) % 6 == 0, "rare", "common")})
    csv = tmp_path / "ids.csv"
    table.to_csv(csv, index=False)
    record = tmp_path / "seen"
    record.mkdir()
    return csv, record
