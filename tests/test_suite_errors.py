"""A broken suite file gets one clear error naming the file, the field and what is allowed; exit 2."""
import pytest

from lopsided.cli import main
from lopsided.errors import SuiteError
from lopsided.planning.suite import load_suite


def error_of(path):
    with pytest.raises(SuiteError) as caught:
        load_suite(path)
    return str(caught.value)


def test_unknown_top_level_key_suggests_the_nearest(write_suite):
    message = error_of(write_suite(extra='resampler = ["none"]'))
    assert "tiny.toml: resampler: unknown field (did you mean 'resamplers'?)" in message


def test_unknown_resampler_suggests_the_nearest(write_suite):
    path = write_suite()
    path.write_text(path.read_text().replace('"random-under"', '"random-undr"'))
    message = error_of(path)
    assert "resamplers[1]" in message and "did you mean 'random-under'?" in message and "known:" in message


def test_unknown_learner_and_parameter(write_suite):
    path = write_suite()
    path.write_text(path.read_text().replace('"logistic-regression"', '"logistic-regresion"'))
    assert "did you mean 'logistic-regression'?" in error_of(path)
    path = write_suite()
    path.write_text(path.read_text().replace("n_estimators = 10", "n_estimator = 10"))
    message = error_of(path)
    assert "learners[1].params" in message and "did you mean 'n_estimators'?" in message


@pytest.mark.parametrize("ratios", ['[-2]', '[0.5]', '["even"]', '[]', '[2, 2]'])
def test_bad_ratio_is_named(write_suite, ratios):
    message = error_of(write_suite(ratios=ratios))
    assert "tiny.toml: protocol.ratios:" in message


def test_bad_size_metric_and_dataset_scheme(write_suite):
    path = write_suite()
    path.write_text(path.read_text().replace('sizes = ["all"]', 'sizes = [3]'))
    assert "protocol.sizes" in error_of(path)
    path = write_suite()
    path.write_text(path.read_text().replace('"mcc"]', '"mc"]'))
    assert "metrics[1]" in error_of(path) and "did you mean 'mcc'?" in error_of(path)
    path = write_suite()
    path.write_text(path.read_text().replace('"sklearn:wine', '"sklern:wine'))
    assert "datasets[0]" in error_of(path) and "did you mean 'sklearn'?" in error_of(path)


def test_invalid_toml_and_missing_file(tmp_path, write_suite):
    path = write_suite(text="name = 'x'\ndatasets = [")
    assert "not valid TOML" in error_of(path)
    assert "no such suite file" in error_of(tmp_path / "absent.toml")


def test_cli_exits_2_with_one_line_and_writes_nothing(write_suite, tmp_path, capsys):
    out = tmp_path / "never"
    code = main(["run", str(write_suite(ratios="[-2]")), "--out", str(out), "--quiet"])
    err = capsys.readouterr().err
    assert code == 2 and err.startswith("lopsided: error:") and "protocol.ratios" in err
    assert "Traceback" not in err and not out.exists()


def test_bad_plugin_path_on_the_command_line(write_suite, tmp_path, capsys):
    code = main(["run", str(write_suite()), "--out", str(tmp_path / "o"), "--quiet",
                 "--add-resampler", "no_such_module:Thing"])
    err = capsys.readouterr().err
    assert code == 2 and "no_such_module" in err and "cannot import" in err
