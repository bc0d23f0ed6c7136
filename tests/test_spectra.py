"""Synthetic spectra: band positions, effect size, imbalance, determinism, grouped structure, preprocessing."""
import numpy as np
import pytest
from scipy.signal import find_peaks, savgol_filter

from lopsided.datasets import load_dataset
from lopsided.datasets.spectra import (
    BIOFILM_BANDS,
    POLYMER_ABUNDANCE_ORDER,
    POLYMER_BANDS,
    SERUM_BANDS,
    SERUM_DONOR_SD,
    SERUM_EFFECT,
    serum_amplitudes,
)
from lopsided.methods.preprocessing import make_preprocessing
from lopsided.specs import parse_method

TOLERANCE = 8.0   # cm-1: band positions in the mean spectrum, at a 2 cm-1 grid (our stated tolerance)


def local_maxima(axis, mean):
    peaks, _ = find_peaks(mean, prominence=0.002 * mean.max())
    return axis[peaks]


@pytest.mark.parametrize("centre", [1740, 1652, 1545, 1454, 1398, 1240, 1080, 1030, 2925, 2852])
def test_serum_mean_spectrum_has_its_listed_bands(centre):
    """Each listed serum band (tables in lopsided/datasets/spectra.py) is a local maximum of the class mean."""
    data = load_dataset("spectra:serum?donors=40&step=2&snr=2000&seed=3")
    for code in (0, 1):
        maxima = local_maxima(data.axis, data.X[data.y == code].mean(axis=0))
        assert np.min(np.abs(maxima - centre)) <= TOLERANCE, (code, centre)


@pytest.mark.parametrize("polymer", POLYMER_ABUNDANCE_ORDER)
def test_polymer_mean_spectra_have_their_listed_bands(polymer):
    data = load_dataset("spectra:polymers?particles=240&ratio=4&step=2&snr=2000&purity=1&weathering=0.01&seed=1")
    code = POLYMER_ABUNDANCE_ORDER.index(polymer)
    maxima = local_maxima(data.axis, data.X[data.y == code].mean(axis=0))
    strong = [c for c, h in POLYMER_BANDS[polymer] if h >= 0.2]
    for centre in strong:
        assert np.min(np.abs(maxima - centre)) <= TOLERANCE, (polymer, centre)


def test_serum_effect_size_is_honoured():
    """Cohen's d of donor-mean log band intensity between classes = effect x direction (sampling error allowed)."""
    params = {"donors": 600, "ratio": 1, "replicates": 2, "effect": 1.5}
    log_amp, labels, groups = serum_amplitudes(params, np.random.default_rng(0))
    donor_mean = np.stack([log_amp[groups == g].mean(axis=0) for g in np.unique(groups)])
    donor_class = np.array([labels[groups == g][0] for g in np.unique(groups)])
    difference = donor_mean[donor_class == 1].mean(axis=0) - donor_mean[donor_class == 0].mean(axis=0)
    d = difference / SERUM_DONOR_SD
    shifted = dict(SERUM_EFFECT)
    for index in range(len(SERUM_BANDS)):
        assert d[index] == pytest.approx(1.5 * shifted.get(index, 0.0), abs=0.25), SERUM_BANDS[index].assignment


@pytest.mark.parametrize("ratio, donors", [(10, 66), (4, 50), (1, 20)])
def test_serum_imbalance_ratio_is_honoured_at_donor_level(ratio, donors):
    data = load_dataset(f"spectra:serum?donors={donors}&ratio={ratio}&region=fingerprint&step=16")
    counts = data.counts
    assert counts[0] / counts[1] == pytest.approx(ratio, rel=0.12)
    assert len(np.unique(data.groups)) == donors


def test_polymers_follow_a_long_tail():
    data = load_dataset("spectra:polymers?particles=600&ratio=20&region=fingerprint&step=16")
    counts = data.counts
    assert list(np.argsort(-counts)) == list(range(6))            # abundance order as listed
    assert counts.max() / counts.min() == pytest.approx(20, rel=0.15)


def test_group_effects_exceed_replicate_effects():
    """Random splitting leaks because spectra of one donor are more alike than spectra of different donors."""
    data = load_dataset("spectra:serum?donors=30&replicates=4&region=fingerprint&seed=2")
    within = np.mean([data.X[data.groups == g].std(axis=0).mean() for g in np.unique(data.groups)])
    between = np.stack([data.X[data.groups == g].mean(axis=0) for g in np.unique(data.groups)]).std(axis=0).mean()
    assert between > 2 * within


def test_water_lines_are_sharp_and_optional():
    dry = load_dataset("spectra:serum?donors=6&step=1&seed=4&snr=3000")
    wet = load_dataset("spectra:serum?donors=6&step=1&seed=4&snr=3000&water=1")
    window = (dry.axis > 1700) & (dry.axis < 1900)
    def roughness(X):
        return np.percentile(np.abs(np.diff(X[:, window], 2, axis=1)), 99.5)
    assert roughness(wet.X) > 5 * roughness(dry.X)


def test_generator_is_deterministic_per_seed():
    a = load_dataset("spectra:polymers?particles=60&seed=9&region=fingerprint")
    b = load_dataset("spectra:polymers?particles=60&region=fingerprint&seed=9")
    np.testing.assert_array_equal(a.X, b.X)
    assert not np.array_equal(a.X, load_dataset("spectra:polymers?particles=60&seed=8&region=fingerprint").X)


def build(text, axis=None):
    return make_preprocessing([parse_method(text)], axis)


def test_snv_msc_unit_norm_by_hand():
    rng = np.random.default_rng(0)
    X = rng.random((6, 40)) + np.linspace(0, 1, 40)
    snv = (X - X.mean(axis=1, keepdims=True)) / X.std(axis=1, keepdims=True)       # Barnes et al. (1989)
    np.testing.assert_allclose(build("snv").fit_transform(X), snv, atol=1e-10)
    reference = X.mean(axis=0)                                                     # Geladi et al. (1985)
    slope, intercept = np.polyfit(reference, X.T, 1)
    msc = (X - intercept[:, None]) / slope[:, None]
    np.testing.assert_allclose(build("msc").fit_transform(X), msc, atol=1e-8)
    np.testing.assert_allclose(build("unit-norm").fit_transform(X), X / np.linalg.norm(X, axis=1, keepdims=True))


def test_msc_reference_comes_from_the_training_part_only():
    rng = np.random.default_rng(1)
    train, test = rng.random((5, 30)), rng.random((3, 30)) * 5
    step = build("msc").fit(train)
    slope, intercept = np.polyfit(train.mean(axis=0), test.T, 1)
    np.testing.assert_allclose(step.transform(test), (test - intercept[:, None]) / slope[:, None], atol=1e-8)


def test_savitzky_golay_and_range_by_hand():
    X = np.sin(np.linspace(0, 6, 80))[None, :] + np.linspace(0, 1, 80)[None, :]
    expected = savgol_filter(X, 11, 2, deriv=1, axis=1, mode="nearest")       # Savitzky & Golay (1964), scipy
    np.testing.assert_allclose(build("savgol?window=11&order=2&derivative=1").fit_transform(X), expected, atol=1e-10)
    axis = np.linspace(4000, 900, 80)
    kept = build("range?low=1800&high=900", axis).fit_transform(X)
    np.testing.assert_array_equal(kept, X[:, (axis <= 1800) & (axis >= 900)])


def test_als_baseline_removes_a_smooth_baseline():
    """Eilers & Boelens (2005): a sharp band on a smooth curved baseline keeps its height once the baseline goes."""
    x = np.linspace(0, 1, 400)
    band = np.exp(-((x - 0.5) / 0.01) ** 2)
    baseline = 0.5 + 0.8 * x - 0.6 * x ** 2
    corrected = build("als-baseline?lam=100000&asymmetry=0.001").fit_transform((band + baseline)[None, :])[0]
    assert corrected[200] == pytest.approx(1.0, abs=0.05)
    assert np.abs(corrected[:120]).max() < 0.05 and np.abs(corrected[-120:]).max() < 0.05


def test_biofilm_bands_are_protein_bands():
    assert [b.centre for b in BIOFILM_BANDS] == [1650, 1545]


def test_polymer_class_shares_can_be_given():
    data = load_dataset("spectra:polymers?particles=200&shares=50,20,10,10,5,5&region=fingerprint&step=16")
    assert (data.counts / 2).tolist() == [100, 40, 20, 20, 10, 10]
    with pytest.raises(Exception, match="shares needs 6 positive numbers"):
        load_dataset("spectra:polymers?shares=1,2")


def test_als_baseline_matches_a_hand_computation():
    """Eilers & Boelens (2005): minimise sum w (y - z)^2 + lam sum (second difference of z)^2, with
    w = p where y >= z and 1 - p elsewhere, iterated to a fixed point; corrected spectrum = y - z."""
    from scipy import sparse
    from scipy.sparse.linalg import spsolve
    x = np.linspace(0, 1, 300)
    y = np.exp(-((x - 0.5) / 0.02) ** 2) + 0.5 + 0.8 * x - 0.6 * x ** 2
    lam, p = 1e5, 0.001
    D = sparse.diags([1.0, -2.0, 1.0], [0, 1, 2], shape=(len(y) - 2, len(y)), dtype=float)
    w = np.ones(len(y))
    for _ in range(100):
        z = spsolve(sparse.csc_matrix(sparse.diags(w) + lam * (D.T @ D)), w * y)
        new = np.where(y - z >= 0, p, 1 - p)
        if np.array_equal(new, w):
            break
        w = new
    ours = build("als-baseline?lam=100000&asymmetry=0.001").fit_transform(y[None, :])[0]
    np.testing.assert_allclose(ours, y - z, atol=1e-7)
