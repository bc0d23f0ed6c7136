"""Shared helpers: tiny suites written into a temporary folder."""
import textwrap

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


@pytest.fixture
def write_suite(tmp_path):
    """write_suite(extra='', ratios='["natural", 2]') -> path of a small, fast suite file."""
    def write(extra="", ratios='["natural", 2]', text=None, name="tiny.toml"):
        path = tmp_path / name
        body = text if text is not None else TINY.format(extra=extra, ratios=ratios)
        path.write_text(textwrap.dedent(body), encoding="utf-8")
        return path
    return write
