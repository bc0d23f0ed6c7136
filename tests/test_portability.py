"""Same keys and same bytes on every machine: generated datasets are keyed by their recipe, and the generator
uses only arithmetic that does not depend on the CPU's vector units or the BLAS kernel."""
import json
import os
import subprocess
import sys
from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from numpy._core._multiarray_umath import __cpu_dispatch__

from lopsided.datasets import load_dataset
from lopsided.datasets.portable import QUANTUM, exp, log, power, quantised, weighted_sum
from lopsided.jobs.run import load_all, other_bytes
from lopsided.planning.plan import plan
from lopsided.planning.suite import load_suite

ROOT = Path(__file__).parents[1]
SMALL = {   # sha256 of X, y and groups (Dataset.checksum) for generator version 2, computed on an AMD EPYC (AVX2)
    "spectra:serum?donors=24&ratio=3&region=fingerprint&step=16&water=1": "698b6a0a66cf5fcb",
    "spectra:polymers?particles=30&region=fingerprint&step=16&seed=2": "1abb8838541cd915",
}
# Every code path numpy may dispatch to at run time switched off, and OpenBLAS told to use its oldest x86-64
# kernel: the generator must not notice. (Generator version 1 gave other bytes under OPENBLAS_CORETYPE=Prescott.)
PLAIN_CPU = {"NPY_DISABLE_CPU_FEATURES": " ".join(__cpu_dispatch__), "OPENBLAS_CORETYPE": "Prescott"}


@pytest.mark.parametrize("reference", sorted(SMALL))
def test_a_small_generated_set_has_the_same_bytes_as_on_the_machine_that_fixed_them(reference):
    assert load_dataset(reference).checksum[:16] == SMALL[reference]


def test_the_generator_gives_the_same_bytes_with_every_vector_path_and_blas_kernel_switched_off():
    script = "import json, sys\nfrom lopsided.datasets import load_dataset\n" \
             "print(json.dumps({r: load_dataset(r).checksum[:16] for r in sys.argv[1:]}))"
    done = subprocess.run([sys.executable, "-c", script, *SMALL], env={**os.environ, **PLAIN_CPU},
                          capture_output=True, text=True, check=True)
    assert json.loads(done.stdout.strip().splitlines()[-1]) == SMALL


def test_portable_functions_agree_with_numpy_to_the_last_bits():
    """Same values as numpy's own functions within two units in the last place (they differ only in how
    they round), and the weighted sum is a matrix product summed in order."""
    rng = np.random.default_rng(1)
    x = rng.normal(0, 3, 1000)
    np.testing.assert_array_max_ulp(exp(x), np.exp(x), maxulp=2)
    np.testing.assert_array_max_ulp(log(np.abs(x) + 0.1), np.log(np.abs(x) + 0.1), maxulp=2)
    np.testing.assert_array_max_ulp(power(np.abs(x) + 0.1, x / 3), (np.abs(x) + 0.1) ** (x / 3), maxulp=4)
    weights, shapes = rng.normal(size=(7, 5)), rng.normal(size=(5, 11))
    by_hand = np.array([[sum(weights[i, j] * shapes[j, c] for j in range(5)) for c in range(11)] for i in range(7)])
    assert np.array_equal(weighted_sum(weights, shapes), by_hand)       # Python's left-to-right sum, same order


def test_values_are_multiples_of_the_quantum_and_move_less_than_half_of_it():
    x = np.random.default_rng(2).normal(0, 1, 10_000)
    q = quantised(x)
    assert np.all(np.abs(q - x) <= QUANTUM / 2)
    assert np.array_equal(q / QUANTUM, np.rint(q / QUANTUM))
    data = load_dataset("spectra:serum?donors=24&ratio=3&region=fingerprint&step=16")
    assert np.array_equal(data.X / QUANTUM, np.rint(data.X / QUANTUM))


def test_a_generated_set_is_keyed_by_its_recipe_with_defaults_filled_in_and_a_file_by_its_bytes():
    short = load_dataset("spectra:serum?donors=24&ratio=3&region=fingerprint&step=16")
    spelled = load_dataset("spectra:serum?step=16.0&ratio=3.0&donors=24&region=fingerprint&seed=0&snr=300")
    assert short.identity == spelled.identity and short.identity.startswith("recipe ")
    assert load_dataset("spectra:serum?donors=24&ratio=3&region=fingerprint&step=16&seed=1").identity != short.identity
    wine = load_dataset("sklearn:wine?positive=2")
    assert wine.identity == f"data {wine.checksum}"


def test_the_committed_gate_keys_do_not_depend_on_the_generated_bytes():
    """A machine whose generator gave other bytes (simulated: every generated value moved by one quantum)
    plans the same keys as the committed results/gate, and the run page would name the datasets whose
    stored cells came from other bytes."""
    gate = load_suite(ROOT / "bench" / "gate.toml")
    datasets = load_all(gate)
    committed = pd.read_csv(ROOT / "results" / "gate" / "cells.csv")
    assert set(plan(gate, datasets).keys) == set(committed["key"])
    moved = {ref: replace(data, X=data.X + QUANTUM) if data.recipe else data for ref, data in datasets.items()}
    assert set(plan(gate, moved).keys) == set(committed["key"])
    named = {d["dataset"] for d in other_bytes(moved, committed)}
    assert named == {ref for ref, data in datasets.items() if data.recipe}
