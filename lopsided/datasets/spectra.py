"""``spectra:PRESET?...``: labelled synthetic mid-infrared absorbance spectra with donors / particles.

Each spectrum is a sum of pseudo-Voigt bands (Ida, Ando & Toraya 2000, J. Appl. Cryst. 33:1311:
eta * Lorentzian + (1 - eta) * Gaussian of equal FWHM) times a path-length factor, plus a
polynomial baseline, a scattering term that grows with wavenumber and white noise at a chosen
signal-to-noise ratio. Spectra belong to groups (donors, particles) whose random effects are
larger than the replicate-to-replicate ones, so a random split leaks and a grouped split does not.

Presets (scenarios of our own):
- ``serum``: dried serum films from a screening cohort, binary, the positive condition rare;
  class effect = a shift of ``effect`` donor standard deviations in the log intensity of a few
  carbohydrate, phosphate and lipid bands.
- ``polymers``: micro-particles of six common plastics with a long-tailed abundance; optional
  ``positive=NAME`` for a one-vs-rest task; each particle carries an admixture of another particle's
  spectrum (``purity``), oxidative weathering adds a carbonyl band and biofilm adds protein bands.

Common parameters: ``seed``, ``snr`` (peak signal over noise sd), ``region`` (full | fingerprint),
``step`` (cm-1), ``water`` (strength of water-vapour-like lines, 0 = none).

Same bytes on every machine (generator version ``GENERATOR_VERSION``): numpy's vectorised exp, log and
power take CPU-specific code paths (AVX-512 among them) whose last bits differ, and BLAS matrix products
sum in kernel-specific orders. So the generator uses only operations that IEEE 754 rounds correctly
(+, -, *, /, in a fixed order: ``portable.weighted_sum`` instead of a matrix product) and the C library's
scalar exp, log and pow, then rounds every value to a multiple of ``portable.QUANTUM`` (2^-24).
"""
from dataclasses import dataclass

import numpy as np

from ..errors import DatasetError, unknown
from .dataset import Dataset, Provenance
from .params import Param, read_params
from .portable import exp, log, power, quantised, weighted_sum

GENERATOR_VERSION = "2"   # 2: portable arithmetic and quantised values (1 used numpy's vectorised exp)


@dataclass(frozen=True)
class Band:
    centre: float      # cm-1
    fwhm: float        # cm-1
    height: float      # absorbance at the centre, before random effects
    eta: float         # Lorentzian fraction of the pseudo-Voigt
    assignment: str


# Positions from published band-assignment tables for biological material, from memory:
# Movasaghi, Rehman & Rehman (2008), Appl. Spectrosc. Rev. 43:134, Table 1, and
# Baker et al. (2014), Nat. Protoc. 9:1771, Table 2. Widths and heights are our choices.
SERUM_BANDS = (
    Band(3290, 140, 0.30, 0.6, "amide A, N-H stretch"),
    Band(2958, 22, 0.10, 0.5, "CH3 asymmetric stretch"),
    Band(2925, 22, 0.12, 0.5, "CH2 asymmetric stretch, lipids"),
    Band(2872, 18, 0.05, 0.5, "CH3 symmetric stretch"),
    Band(2852, 16, 0.07, 0.5, "CH2 symmetric stretch, lipids"),
    Band(1740, 18, 0.05, 0.4, "ester C=O stretch, lipids"),
    Band(1652, 34, 1.00, 0.5, "amide I, C=O stretch of proteins"),
    Band(1545, 34, 0.62, 0.5, "amide II, N-H bend and C-N stretch"),
    Band(1454, 24, 0.14, 0.4, "CH3/CH2 bending, proteins and lipids"),
    Band(1398, 26, 0.15, 0.4, "COO- symmetric stretch, amino-acid side chains"),
    Band(1310, 30, 0.07, 0.4, "amide III"),
    Band(1240, 36, 0.11, 0.4, "PO2- asymmetric stretch, nucleic acids and phospholipids"),
    Band(1155, 24, 0.05, 0.4, "C-O stretch, carbohydrates"),
    Band(1080, 30, 0.09, 0.4, "PO2- symmetric stretch, nucleic acids"),
    Band(1030, 28, 0.07, 0.4, "C-O stretch, glycogen and other carbohydrates"),
)
# (assignment index, direction) of the bands the positive condition shifts.
SERUM_EFFECT = ((5, +1.0), (11, +0.7), (12, +1.0), (13, +0.7), (14, +1.0), (7, -0.5))

# Characteristic bands of common polymers, from standard reference spectra as tabulated in
# Jung et al. (2018), Mar. Pollut. Bull. 127:704, Table 1; positions from memory.
POLYMER_BANDS = {
    "polyethylene": ((2915, 0.9), (2848, 0.7), (1472, 0.25), (1462, 0.22)),
    "polypropylene": ((2950, 0.8), (2917, 0.9), (2838, 0.4), (1455, 0.35), (1376, 0.4),
                      (1166, 0.15), (997, 0.15), (972, 0.2)),
    "polystyrene": ((3025, 0.25), (2920, 0.4), (1601, 0.2), (1492, 0.45), (1452, 0.45), (1028, 0.2)),
    "pet": ((1713, 1.0), (1410, 0.15), (1241, 0.9), (1094, 0.6), (1017, 0.4)),
    "polyamide": ((3298, 0.5), (2932, 0.45), (2858, 0.3), (1634, 1.0), (1538, 0.8), (1274, 0.2)),
    "pvc": ((2910, 0.2), (1427, 0.5), (1331, 0.35), (1255, 0.5), (1099, 0.3), (966, 0.45)),
}
POLYMER_ABUNDANCE_ORDER = ("polyethylene", "polypropylene", "polystyrene", "pet", "polyamide", "pvc")
CARBONYL_WEATHERING = Band(1715, 30, 1.0, 0.5, "C=O of oxidation products (weathering)")
# Biofilm on environmental particles: protein amide I and II (Baker et al. 2014, from memory).
BIOFILM_BANDS = (Band(1650, 34, 1.0, 0.5, "amide I (biofilm)"), Band(1545, 34, 0.6, 0.5, "amide II (biofilm)"))

REGIONS = {"full": (4000.0, 900.0), "fingerprint": (1800.0, 900.0)}
COMMON = {
    "seed": Param(int, 0, "random seed of the generator"),
    "region": Param(str, "full", "full (4000-900 cm-1) or fingerprint (1800-900 cm-1)"),
    "step": Param(float, 4.0, "axis step, cm-1"),
    "water": Param(float, 0.0, "strength of water-vapour-like lines, 0 = none"),
}
# Water-vapour-like interference: narrow lines across the H-O-H bending (about 1400-1900 cm-1) and
# O-H stretching (about 3500-3950 cm-1) regions, as uncompensated atmospheric water leaves them in
# open-beam FTIR spectra (positions drawn by our generator, not taken from a line list).
WATER_WINDOWS = ((1400.0, 1900.0, 60), (3500.0, 3950.0, 50))


def pseudo_voigt(axis, centre, fwhm, eta):
    """Unit-height pseudo-Voigt profile (Ida, Ando & Toraya 2000)."""
    half = fwhm / 2.0
    u = (axis - centre) / half
    squared = u * u
    lorentz = 1.0 / (1.0 + squared)
    gauss = exp(-log(2.0) * squared)
    return eta * lorentz + (1.0 - eta) * gauss


def wavenumbers(region="full", step=4.0):
    """Descending wavenumber axis (cm-1), as instruments report it."""
    if region not in REGIONS:
        raise DatasetError(unknown("spectral region", region, REGIONS))
    high, low = REGIONS[region]
    return np.arange(high, low - 1e-9, -float(step))


def _shapes(axis, bands):
    return np.stack([pseudo_voigt(axis, b.centre, b.fwhm, b.eta) for b in bands])


def _distort(pure, axis, group_of, rng, scatter=0.05, baseline=0.03):
    """Path length, baseline and scattering: group-level effects plus smaller replicate ones."""
    n_groups = group_of.max() + 1
    x = (axis - axis.min()) / (axis.max() - axis.min())
    path = exp(rng.normal(0, 0.10, n_groups)[group_of] + rng.normal(0, 0.03, len(group_of)))
    coeffs = rng.normal(0, baseline, (n_groups, 3))[group_of] + rng.normal(0, baseline / 5, (len(group_of), 3))
    curve = coeffs[:, :1] + coeffs[:, 1:2] * x + coeffs[:, 2:3] * (x * x)
    strength = np.abs(rng.normal(scatter, scatter / 2, n_groups))[group_of] * exp(rng.normal(0, 0.1, len(group_of)))
    relative = axis / axis.max()
    scatter_term = strength[:, None] * (relative * relative)
    return pure * path[:, None] + curve + scatter_term


def _noise(spectra, snr, rng):
    sd = spectra.max(axis=1, keepdims=True) / float(snr)
    return spectra + rng.normal(0, 1, spectra.shape) * sd


def _water_lines(axis, n_spectra, strength, rng):
    """Sharp Lorentzian lines (FWHM 2 cm-1) at fixed random positions, amplitude varying per spectrum."""
    centres = np.concatenate([rng.uniform(lo, hi, n) for lo, hi, n in WATER_WINDOWS])
    heights = rng.exponential(1.0, len(centres))
    comb = weighted_sum(heights[None, :], np.stack([pseudo_voigt(axis, c, 2.0, 1.0) for c in centres]))[0]
    humidity = rng.exponential(strength, n_spectra)
    return humidity[:, None] * comb[None, :] / max(comb.max(), 1e-12)


def _groups_per_class(n_groups, shares):
    """Whole groups per class, each class at least one, totals as close to the shares as rounding allows."""
    counts = np.maximum(1, np.round(np.asarray(shares) / np.sum(shares) * n_groups)).astype(int)
    counts[np.argmax(counts)] += n_groups - counts.sum()
    if counts.min() < 1:
        raise DatasetError(f"{n_groups} groups are too few for {len(shares)} classes at these shares")
    return counts


SERUM_DONOR_SD, SERUM_REPLICATE_SD = 0.15, 0.04   # sd of log band intensity between donors / replicates


def serum_amplitudes(params, rng):
    """(log band intensities per spectrum, class per spectrum, donor per spectrum) before any distortion.

    The positive class shifts the log intensity of the SERUM_EFFECT bands by ``effect`` donor
    standard deviations (a Cohen's d of ``effect`` at donor level), times each band's direction.
    """
    ratio, donors, replicates, effect = params["ratio"], params["donors"], params["replicates"], params["effect"]
    if ratio < 1:
        raise DatasetError(f"spectra:serum: ratio={ratio} must be at least 1 (majority over minority)")
    if donors < 2 or replicates < 1:
        raise DatasetError("spectra:serum: needs donors >= 2 and replicates >= 1")
    donor_class = np.repeat([0, 1], _groups_per_class(donors, [ratio, 1.0]))
    shift = np.zeros(len(SERUM_BANDS))
    for index, direction in SERUM_EFFECT:
        shift[index] = effect * SERUM_DONOR_SD * direction
    group_of = np.repeat(np.arange(donors), replicates)
    log_amp = (log(np.array([b.height for b in SERUM_BANDS]))
               + donor_class[group_of][:, None] * shift
               + rng.normal(0, SERUM_DONOR_SD, (donors, len(SERUM_BANDS)))[group_of]
               + rng.normal(0, SERUM_REPLICATE_SD, (len(group_of), len(SERUM_BANDS))))
    return log_amp, donor_class[group_of], group_of


def serum(params):
    """Binary serum-film screening set; see the module docstring."""
    rng = np.random.default_rng(params["seed"])
    axis = wavenumbers(params["region"], params["step"])
    log_amp, labels, group_of = serum_amplitudes(params, rng)
    pure = weighted_sum(exp(log_amp), _shapes(axis, SERUM_BANDS))
    X = _finish(pure, axis, group_of, params, rng, scatter=0.05, baseline=0.03)
    return X, labels, ("negative", "positive"), group_of, "donor"


def _finish(pure, axis, group_of, params, rng, scatter, baseline):
    """Distortions, optional water-vapour lines, then noise at the asked signal-to-noise ratio."""
    spectra = _distort(pure, axis, group_of, rng, scatter=scatter, baseline=baseline)
    if params["water"] > 0:
        spectra = spectra + _water_lines(axis, len(spectra), 0.05 * params["water"], rng)
    return quantised(_noise(spectra, params["snr"], rng))


def polymers(params):
    """Six-polymer micro-particle set with long-tailed abundance; see the module docstring."""
    ratio, particles, per_particle = params["ratio"], params["particles"], params["spectra"]
    weathering, rng = params["weathering"], np.random.default_rng(params["seed"])
    if ratio < 1:
        raise DatasetError(f"spectra:polymers: ratio={ratio} must be at least 1 (most over least abundant)")
    axis = wavenumbers(params["region"], params["step"])
    k = len(POLYMER_ABUNDANCE_ORDER)
    shares = power(ratio, -np.arange(k) / (k - 1))       # geometric long tail: most / least abundant = ratio
    if params["shares"] is not None:
        try:
            shares = np.array([float(v) for v in params["shares"].split(",")])
        except ValueError:
            shares = np.array([])
        if len(shares) != k or (shares <= 0).any():
            raise DatasetError(f"spectra:polymers: shares needs {k} positive numbers, one per polymer in the order "
                               f"{', '.join(POLYMER_ABUNDANCE_ORDER)}")
    particle_class = np.repeat(np.arange(k), _groups_per_class(particles, shares))
    group_of = np.repeat(np.arange(particles), per_particle)
    pure = np.zeros((len(group_of), len(axis)))
    particle_amp = exp(rng.normal(0, 0.2, (particles, 8)))
    for code, polymer in enumerate(POLYMER_ABUNDANCE_ORDER):
        rows = np.flatnonzero(particle_class[group_of] == code)
        bands = [Band(c, 16 if c > 2500 else 12, h, 0.5, polymer) for c, h in POLYMER_BANDS[polymer]]
        amps = np.array([b.height for b in bands]) * particle_amp[group_of[rows], : len(bands)]
        amps *= exp(rng.normal(0, 0.05, amps.shape))
        pure[rows] = weighted_sum(amps, _shapes(axis, bands))
    pure = _admix(pure, particle_class, group_of, params["purity"], rng)
    oxidation = rng.exponential(0.15 * weathering, particles)[group_of]
    biofilm = rng.exponential(0.1 * weathering, particles)[group_of]
    pure += oxidation[:, None] * _shapes(axis, [CARBONYL_WEATHERING])[0]
    biofilm_shape = weighted_sum(np.array([[b.height for b in BIOFILM_BANDS]]), _shapes(axis, BIOFILM_BANDS))[0]
    pure += biofilm[:, None] * biofilm_shape
    X = _finish(pure, axis, group_of, params, rng, scatter=0.15, baseline=0.06)
    return X, particle_class[group_of], POLYMER_ABUNDANCE_ORDER, group_of, "particle"


def _admix(pure, particle_class, group_of, purity, rng):
    """Each particle's spectrum mixed with a random other particle's at fraction U(0, 1 - purity):
    fragments of blends and co-deposited debris make the polymer classes overlap."""
    if not 0 < purity <= 1:
        raise DatasetError(f"spectra:polymers: purity={purity} must lie in (0, 1]")
    particles = particle_class.size
    partner = rng.integers(0, particles, particles)
    share = rng.uniform(0, 1 - purity, particles)
    first_row = np.searchsorted(group_of, np.arange(particles))
    mixed = pure * (1 - share[group_of])[:, None] + pure[first_row[partner]][group_of] * share[group_of][:, None]
    return mixed


# Parameter ranges the generator can honour: (lowest, highest, whether the lowest is allowed).
RANGES = {"step": (0.1, 100.0, True), "snr": (0.0, float("inf"), False), "water": (0.0, float("inf"), True),
          "weathering": (0.0, float("inf"), True), "ratio": (1.0, float("inf"), True),
          "donors": (2, 100_000, True), "particles": (6, 100_000, True), "replicates": (1, 100, True),
          "spectra": (1, 100, True), "effect": (-50.0, 50.0, True)}


def _check_ranges(ref, params):
    """One DatasetError naming the parameter when a value is outside what the generator can honour."""
    if params["region"] not in REGIONS:
        raise DatasetError(f"{ref.text}: region: {unknown('spectral region', params['region'], REGIONS)}")
    for name, (low, high, low_ok) in RANGES.items():
        value = params.get(name)
        if value is None:
            continue
        if not ((value >= low if low_ok else value > low) and value <= high):
            sign = ">=" if low_ok else ">"
            raise DatasetError(f"{ref.text}: {name}: {value!r} is out of range; allowed: {sign} {low:g} and <= {high:g}")


PRESETS = {
    "serum": (serum, {
        "ratio": Param(float, 10.0, "negative : positive donors"),
        "donors": Param(int, 60, "number of donors"),
        "replicates": Param(int, 3, "spectra per donor"),
        "effect": Param(float, 1.0, "Cohen's d of the shifted band intensities between donors"),
        "snr": Param(float, 300.0, "peak signal over noise sd"),
    }, "dried serum films, binary screening, rare positive donors (3 replicates each)"),
    "polymers": (polymers, {
        "ratio": Param(float, 20.0, "most : least abundant polymer"),
        "shares": Param(str, None, "six comma-separated class shares instead of ratio"),
        "particles": Param(int, 200, "number of particles"),
        "spectra": Param(int, 2, "spectra per particle"),
        "weathering": Param(float, 1.0, "strength of oxidation and biofilm bands"),
        "purity": Param(float, 0.7, "least share of a particle's own polymer"),
        "positive": Param(str, None, "one polymer against the rest"),
        "snr": Param(float, 80.0, "peak signal over noise sd"),
    }, "micro-plastic particles, 6 polymers, long-tailed abundance"),
}


def load(ref):
    if ref.body not in PRESETS:
        raise DatasetError(f"{ref.text}: {unknown('spectra preset', ref.body, PRESETS)}")
    make, declared, summary = PRESETS[ref.body]
    params = read_params(ref, {**COMMON, **declared})
    _check_ranges(ref, params)
    X, y, classes, groups, group_word = make(params)
    axis = wavenumbers(params["region"], params["step"])
    positive = params.get("positive")
    if positive is not None:
        if positive not in classes:
            raise DatasetError(f"{ref.text}: {unknown('class', positive, classes)}")
        y, classes = (y == classes.index(positive)).astype(np.int64), (f"not {positive}", positive)
    query = ",".join(f"{k}={v}" for k, v in sorted(ref.params.items()))
    recipe = f"spectra:{ref.body} generator {GENERATOR_VERSION}?" + "&".join(f"{k}={v!r}" for k, v in sorted(params.items()))
    return Dataset(
        name=f"{ref.body}[{query}]" if query else ref.body,
        X=X,
        y=np.asarray(y, dtype=np.int64),
        classes=tuple(classes),
        groups=np.array([f"{group_word}-{g}" for g in groups], dtype=object),
        axis=axis,
        provenance=Provenance(
            source=f"lopsided synthetic spectra, preset {ref.body!r}",
            version=GENERATOR_VERSION,
            citation="synthetic; band positions from the tables named in lopsided/datasets/spectra.py",
            licence="generated data, no restriction",
            family=f"spectra-{ref.body}",
            note=summary,
        ),
        feature_names=tuple(f"{w:g}" for w in axis),
        recipe=recipe,
    )
