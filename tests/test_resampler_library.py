"""Every built-in resampler against a brute-force computation of its published definition
(scipy.spatial distances and plain loops), plus determinism and degenerate inputs."""
import sys
import warnings

import numpy as np
import pytest
from scipy.spatial.distance import cdist

from lopsided.methods.resamplers import BUILTIN, make_resampler, resolve
from lopsided.methods.resamplers.base import ResamplingError, check_xy
from lopsided.methods.resamplers.cleaning import NeighbourEditing, OneSided, TomekCleaning, tomek_links
from lopsided.methods.resamplers.clusters import KMeansCentres
from lopsided.methods.resamplers.nearmiss import NearMissUnder
from lopsided.methods.resamplers.neighbours import apportion
from lopsided.methods.resamplers.smote import Adasyn, BorderlineSmote, Smote, SmoteNominal
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.specs import parse_method

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests

RAW = "as-given"   # brute-force checks on the columns as given; lopsided standardises by default


def two_classes(n_major=150, n_minor=30, d=3, seed=0, shift=1.2):
    rng = np.random.default_rng(seed)
    X = np.r_[rng.normal(size=(n_major, d)), rng.normal(shift, 1.0, size=(n_minor, d))]
    y = np.r_[np.zeros(n_major, int), np.ones(n_minor, int)]
    return X, y


def knn_brute(A, B, k, same=False):
    """k nearest rows of B for each row of A by full distance matrix (small sizes only)."""
    D = cdist(A, B)
    if same:
        np.fill_diagonal(D, np.inf)
    return np.argsort(D, axis=1, kind="stable")[:, :k]


def on_segment(p, a, b, tol=1e-9):
    """p = a + u (b - a) with 0 <= u <= 1 (and the gap u returned)."""
    direction = b - a
    length = direction @ direction
    if length == 0:
        return np.allclose(p, a, atol=tol), 0.0
    u = (p - a) @ direction / length
    return bool(np.linalg.norm(a + u * direction - p) < 1e-7 and -tol <= u <= 1 + tol), u


def test_smote_points_lie_on_neighbour_segments_and_count_is_exact():
    """Chawla et al. (2002), section 4.2: x_new = x + u * (x_nn - x), u ~ U(0, 1), x_nn among the k
    nearest minority neighbours of x."""
    X, y = two_classes()
    Xr, yr = Smote(distances=RAW, neighbours=5, random_state=3).rebalance(X, y)
    assert np.bincount(yr).tolist() == [150, 150]
    np.testing.assert_array_equal(Xr[:180], X)
    minority = X[y == 1]
    near = knn_brute(minority, minority, 5, same=True)
    for p in Xr[180:]:
        assert any(on_segment(p, minority[i], minority[j])[0] for i in range(30) for j in near[i])


def danger_brute(X, y, m):
    near = knn_brute(X[y == 1], X, m + 1)[:, 1:]      # first is the point itself (continuous data)
    others = (y[near] == 0).sum(axis=1)
    return (others >= m / 2) & (others < m)


@pytest.mark.parametrize("variant", [1, 2])
def test_borderline_smote_seeds_only_from_the_danger_set(variant):
    """Han et al. (2005), section 3.1: danger = m/2 <= m' < m majority among the m nearest neighbours."""
    X, y = two_classes(shift=0.8, seed=2)
    Xr, yr = BorderlineSmote(distances=RAW, variant=variant, neighbours=5, danger_neighbours=10, random_state=1).rebalance(X, y)
    assert np.bincount(yr).tolist() == [150, 150]
    minority = X[y == 1]
    danger = np.flatnonzero(danger_brute(X, y, 10))
    assert 0 < len(danger) < 30
    pool = knn_brute(minority[danger], minority, 6)[:, 1:] if variant == 1 else knn_brute(minority[danger], X, 6)[:, 1:]
    targets = minority if variant == 1 else X
    for p in Xr[180:]:
        hits = [(s, j, on_segment(p, minority[s], targets[j])) for r, s in enumerate(danger) for j in pool[r]]
        hit = [(s, j, u) for s, j, (ok, u) in hits if ok]
        assert hit, "a synthetic point does not come from a danger seed"
        if variant == 2:
            assert any(u <= 0.5 + 1e-9 or y[j] == 1 for _, j, u in hit)


def test_adasyn_counts_follow_the_normalised_majority_ratios():
    """He et al. (2008), steps (b)-(d): r_i = Delta_i / K, g_i = r_i / sum(r) * G."""
    X, y = two_classes(shift=1.0, seed=4)
    G = 150 - 30
    Xr, yr = Adasyn(distances=RAW, neighbours=5, random_state=2).rebalance(X, y)
    minority = X[y == 1]
    near = knn_brute(minority, X, 6)[:, 1:]
    ratio = (y[near] == 0).sum(axis=1) / 5
    counts = apportion(G, ratio)
    assert counts.sum() == G and (yr == 1).sum() == 150
    np.testing.assert_allclose(counts, ratio / ratio.sum() * G, atol=1.0)
    seeds = np.repeat(np.arange(30), counts)
    nearest_minority = knn_brute(minority, minority, 5, same=True)
    for p, s in zip(Xr[180:], seeds):
        assert any(on_segment(p, minority[s], minority[j])[0] for j in nearest_minority[s])


def test_smote_nc_distance_and_nominal_vote():
    """Chawla et al. (2002), section 6.1: continuous Euclidean distance plus Med^2 per nominal mismatch;
    nominal value of a new point = the most frequent value among the k nearest neighbours."""
    rng = np.random.default_rng(7)
    X, y = two_classes(seed=7)
    X[:, 2] = rng.integers(0, 3, len(X))
    Xr, yr = SmoteNominal(distances=RAW, nominal=[2], neighbours=4, random_state=5).rebalance(X, y)
    minority = X[y == 1]
    med = np.median(minority[:, :2].std(axis=0))
    D = cdist(minority[:, :2], minority[:, :2], "sqeuclidean") + med ** 2 * (minority[:, 2][:, None] != minority[:, 2][None, :])
    np.fill_diagonal(D, np.inf)
    near = np.argsort(D, axis=1, kind="stable")[:, :4]
    for p in Xr[180:]:
        found = False
        for i in range(30):
            for j in near[i]:
                if on_segment(p[:2], minority[i, :2], minority[j, :2])[0]:
                    values, counts = np.unique(minority[near[i], 2], return_counts=True)
                    found = found or p[2] == values[np.argmax(counts)]
        assert found
    assert set(np.unique(Xr[:, 2])) <= {0.0, 1.0, 2.0}


def test_tomek_links_are_exactly_the_mutual_nearest_opposite_pairs():
    """Tomek (1976): (a, b) of different classes with no sample closer to either than they are to each other."""
    X, y = two_classes(shift=0.6, seed=5)
    nearest = knn_brute(X, X, 1, same=True)[:, 0]
    brute = {(i, j) for i, j in enumerate(nearest) if nearest[j] == i and y[i] != y[j] and i < j}
    assert brute and {tuple(p) for p in tomek_links(X, y)} == brute
    Xr, yr = TomekCleaning(distances=RAW).rebalance(X, y)
    removed = {i for i, j in brute for k in (i, j) if y[k] == 0 and k == (i if y[i] == 0 else j)}
    assert len(Xr) == len(X) - len(removed) and (yr == 1).sum() == 30
    Xb, _ = TomekCleaning(distances=RAW, remove="both").rebalance(X, y)
    assert len(Xb) == len(X) - 2 * len(brute)


def test_enn_removes_exactly_the_majority_samples_its_neighbours_outvote():
    """Wilson (1972): a sample goes when most of its k = 3 nearest neighbours are of another class."""
    X, y = two_classes(shift=0.8, seed=6)
    near = knn_brute(X, X, 3, same=True)
    outvoted = ((y[near] != y[:, None]).sum(axis=1) > 1.5) & (y == 0)
    Xr, _ = NeighbourEditing(distances=RAW, neighbours=3).rebalance(X, y)
    np.testing.assert_array_equal(Xr, X[~outvoted])
    everyone = (y[near] != y[:, None]).sum(axis=1) > 1.5
    Xa, _ = NeighbourEditing(distances=RAW, neighbours=3, classes="all").rebalance(X, y)
    np.testing.assert_array_equal(Xa, X[~everyone])


def with_relabelled_copies(sizes, seed, copies=12):
    """Gaussian classes (class c ~ N(0.8 c, I), 3 features) plus exact copies of ``copies`` distinct rows
    under the next label: each copied row and its copy are at distance 0 with opposite labels. Returns
    X, y and the indices of both members of every such pair."""
    rng = np.random.default_rng(seed)
    X = np.concatenate([rng.normal(0.8 * c, 1.0, size=(n, 3)) for c, n in enumerate(sizes)])
    y = np.repeat(np.arange(len(sizes)), sizes)
    picked = rng.choice(len(X), copies, replace=False)
    paired = np.r_[picked, len(X) + np.arange(copies)]
    return np.r_[X, X[picked]], np.r_[y, (y[picked] + 1) % len(sizes)], paired


def other_class_votes(X, y, k):
    """Fewest and most other-class rows among the k nearest other rows of each row (full distance matrix,
    the row itself left out by index), over every choice among rows equally far at the k-th place: a
    copied row and its copy are equally far from any third row, so that choice exists here."""
    D = cdist(X, X)
    np.fill_diagonal(D, np.inf)
    kth = np.sort(D, axis=1)[:, k - 1:k]
    other = y[None, :] != y[:, None]
    closer, tied = D < kth, D == kth
    slots = k - closer.sum(axis=1)
    sure = (closer & other).sum(axis=1)
    return (sure + np.maximum(0, slots - (tied & ~other).sum(axis=1)),
            sure + np.minimum(slots, (tied & other).sum(axis=1)))


@pytest.mark.parametrize("sizes", [(150, 40), (120, 60, 25)])
@pytest.mark.parametrize("k", [1, 3, 4])
@pytest.mark.parametrize("classes", ["majority", "all"])
def test_enn_counts_an_identical_row_of_another_class_as_a_neighbour(sizes, k, classes):
    """Wilson (1972) on rows with exact copies under another label: the copy is a neighbour at distance 0
    and only the row itself is left out (by index, not by 'the first row found is the row itself').
    Brute force: a candidate (the largest class, or every class) goes when other classes together hold
    more than k / 2 of its k nearest other rows. Rows whose vote depends on which of two equally far
    rows counts (a copy pair at the k-th place) may go either way; every other row is decided, and with
    k = 1 every candidate member of a copy pair must go."""
    X, y, paired = with_relabelled_copies(sizes, seed=len(sizes) + k)
    fewest, most = other_class_votes(X, y, k)
    candidates = np.ones(len(y), bool) if classes == "all" else y == 0
    surely, maybe = candidates & (fewest > k / 2), candidates & (most > k / 2)
    assert (surely != maybe).sum() <= len(y) // 20          # nearly every row is decided
    Xr, yr = NeighbourEditing(distances=RAW, neighbours=k, classes=classes).rebalance(X, y)
    gone = removed_rows(X, y, Xr, yr)
    assert set(np.flatnonzero(surely)) <= gone <= set(np.flatnonzero(maybe))
    if k == 1:
        assert candidates[paired].any() and surely[paired[candidates[paired]]].all()


def removed_rows(X, y, X_out, y_out):
    """Indices of the rows of (X, y) missing from the output, after checking that the output keeps the
    other rows unchanged and in order (a row and its label identify it: copies carry another label)."""
    where = {(tuple(row), label): i for i, (row, label) in enumerate(zip(X, y))}
    kept = [where[tuple(row), label] for row, label in zip(X_out, y_out)]
    assert kept == sorted(kept)
    return set(range(len(X))) - set(kept)


@pytest.mark.parametrize("sizes", [(150, 40), (120, 60, 25)])
def test_tomek_links_include_identical_rows_of_two_classes(sizes):
    """Tomek (1976) on the same data: (a, b) of different classes with no row strictly closer to either
    than they are to each other. Every copy pair is a link (distance 0), and the links found are exactly
    the brute-force ones, also those between two classes other than the largest."""
    X, y, paired = with_relabelled_copies(sizes, seed=7)
    D = cdist(X, X)
    np.fill_diagonal(D, np.inf)
    nearest = D.min(axis=1)
    brute = {(i, j) for i, j in zip(*np.nonzero(D == nearest[:, None]))
             if i < j and y[i] != y[j] and D[i, j] == nearest[j]}
    half = len(paired) // 2
    assert {(min(a, b), max(a, b)) for a, b in zip(paired[:half], paired[half:])} <= brute
    assert {tuple(p) for p in tomek_links(X, y).tolist()} == brute
    if len(sizes) == 3:
        assert any(0 not in (y[i], y[j]) for i, j in brute)


@pytest.mark.parametrize("version", [1, 2, 3])
def test_nearmiss_picks_per_its_distance_rule(version):
    """Mani & Zhang (2003): NM-1 nearest 3 minority, NM-2 farthest 3, NM-3 short list then farthest."""
    X, y = two_classes(seed=8)
    major, minor = np.flatnonzero(y == 0), np.flatnonzero(y == 1)
    D = cdist(X[major], X[minor])
    if version == 1:
        chosen = major[np.argsort(np.sort(D, axis=1)[:, :3].mean(axis=1), kind="stable")[:30]]
    elif version == 2:
        chosen = major[np.argsort(np.sort(D, axis=1)[:, -3:].mean(axis=1), kind="stable")[:30]]
    else:
        short = np.unique(np.argsort(D.T, axis=1, kind="stable")[:, :3])
        score = np.sort(D[short], axis=1)[:, :3].mean(axis=1)
        chosen = major[short[np.argsort(-score, kind="stable")[:30]]]
    Xr, yr = NearMissUnder(distances=RAW, rule=version).rebalance(X, y)
    assert {tuple(r) for r in Xr[yr == 0]} == {tuple(r) for r in X[np.sort(chosen)]}
    assert (yr == 1).sum() == 30


def test_one_sided_selection_follows_kubat_and_matwin():
    """Kubat & Matwin (1997), section 3: C = minority + 1 random majority; add majority misclassified by
    1-NN on C; remove majority members of Tomek links in C."""
    X, y = two_classes(shift=1.0, seed=9)
    major = np.flatnonzero(y == 0)
    first = np.random.default_rng(4).choice(major)
    C = np.r_[np.flatnonzero(y == 1), first]
    nearest_in_C = C[np.argmin(cdist(X[major], X[C]), axis=1)]
    C = np.unique(np.r_[C, major[y[nearest_in_C] != 0]])
    nearest = C[knn_brute(X[C], X[C], 1, same=True)[:, 0]]
    linked = {int(c) for c, n in zip(C, nearest) if y[c] == 0 and y[n] == 1
              and nearest[np.flatnonzero(C == n)[0]] == c}
    expected = np.setdiff1d(C, list(linked))
    Xr, yr = OneSided(distances=RAW, random_state=4).rebalance(X, y)
    np.testing.assert_array_equal(Xr, X[expected])


def test_cluster_centres_replace_the_majority():
    X, y = two_classes(seed=10)
    Xr, yr = KMeansCentres(distances=RAW, random_state=0).rebalance(X, y)
    assert np.bincount(yr).tolist() == [30, 30]
    np.testing.assert_array_equal(Xr[yr == 1], X[y == 1])
    centres = Xr[yr == 0]
    assigned = np.argmin(cdist(X[y == 0], centres), axis=1)
    for c in range(30):    # Lloyd's fixed point: each centre is the mean of the points nearest to it
        np.testing.assert_allclose(centres[c], X[y == 0][assigned == c].mean(axis=0), atol=1e-6)


NEEDS_PARAMS = {"smote-nc": "?nominal=2"}


@pytest.mark.parametrize("name", sorted(BUILTIN))
def test_every_builtin_is_deterministic_under_random_state(name):
    X, y = two_classes(seed=11)
    X[:, 2] = np.round(np.abs(X[:, 2]))
    spec = parse_method(name + NEEDS_PARAMS.get(name, ""))
    a = make_resampler(spec, 5).rebalance(X, y)
    b = make_resampler(spec, 5).rebalance(X, y)
    np.testing.assert_array_equal(a[0], b[0])
    np.testing.assert_array_equal(a[1], b[1])


@pytest.mark.parametrize("name", ["smote", "borderline-smote-1", "borderline-smote-2", "adasyn", "smote-tomek"])
def test_small_minority_falls_back_to_fewer_neighbours_and_single_sample_is_refused(name):
    X, y = two_classes(n_minor=4, seed=12, shift=0.3)
    Xr, yr = make_resampler(parse_method(name), 1).rebalance(X, y)      # 4 < k + 1 = 6: k becomes 3
    assert (yr == 1).sum() >= 4
    X1, y1 = two_classes(n_minor=1, seed=12)
    with pytest.raises(ResamplingError, match="at least 2 samples"):
        make_resampler(parse_method(name), 1).rebalance(X1, y1)


@pytest.mark.parametrize("name", sorted(BUILTIN))
def test_duplicates_and_one_class(name):
    X, y = two_classes(seed=13)
    X[:, 2] = 1.0
    X = np.r_[X, X[-5:]]       # duplicated minority rows
    y = np.r_[y, y[-5:]]
    spec = parse_method(name + NEEDS_PARAMS.get(name, ""))
    Xr, yr = make_resampler(spec, 0).rebalance(X, y)
    assert np.isfinite(Xr).all() and set(yr) == {0, 1}
    with pytest.raises(ResamplingError, match="one class"):
        make_resampler(spec, 0).rebalance(X[y == 0], y[y == 0])


def test_entry_point_plugins_are_discovered(tmp_path, monkeypatch):
    """A throw-away installed distribution advertising lopsided.resamplers."""
    info = tmp_path / "halves_demo-0.1.dist-info"
    info.mkdir()
    (info / "METADATA").write_text("Metadata-Version: 2.1\nName: halves-demo\nVersion: 0.1\n")
    (info / "entry_points.txt").write_text("[lopsided.resamplers]\nhalves = plugins_for_tests:Halves\n")
    monkeypatch.syspath_prepend(str(tmp_path))
    from lopsided.methods.resamplers import REGISTRY
    row = next(r for r in REGISTRY.describe() if r.name == "halves")
    assert (row.text, row.origin) == ("from plugins_for_tests:Halves", "plugin halves-demo 0.1")
    assert resolve("halves").__name__ == "Halves"
    assert "plugins_for_tests" in sys.modules


def test_class_weights_reach_the_learner_or_fail_clearly(write_suite, tmp_path):
    from lopsided.jobs.run import run_suite
    path = write_suite()
    text = path.read_text().replace('resamplers = ["none", "random-under", "topup-over"]', 'resamplers = ["class-weights"]')
    path.write_text(text.replace('learners = ["logistic-regression"', 'learners = ["knn", "logistic-regression"'))
    cells = run_suite(path, RunOptions(out=tmp_path / "o", execution=QUIET)).cells
    assert (cells.loc[cells.learner == "logistic-regression", "status"] == "ok").all()
    knn = cells[cells.learner == "knn"]
    assert (knn.status == "failed").all() and knn.error.str.contains("takes no sample weights").all()


def test_the_example_plugin_joins_a_suite(tiny_board, tmp_path, monkeypatch, capsys):
    """The README's plugin walk-through, with the demo on the path instead of installed, on a copy of the
    conftest suite's run (conftest.tiny_board)."""
    import shutil
    from pathlib import Path

    from lopsided.cli import main
    monkeypatch.syspath_prepend(str(Path(__file__).parents[1] / "examples" / "jitter_plugin"))
    path, board, _ = tiny_board
    shutil.copytree(board, tmp_path / "o")
    assert main(["run", str(path), "--out", str(tmp_path / "o"), "--quiet",
                 "--add-resampler", "lopsided_jitter_demo:JitterOver?spread=0.2"]) == 0
    printed = capsys.readouterr().out
    assert "144 reused" in printed and "48 computed (0 failed)" in printed
    assert "lopsided_jitter_demo:JitterOver?spread=0.2" in (tmp_path / "o" / "leaderboard.md").read_text()


@pytest.mark.parametrize("bad", [np.nan, np.inf, -np.inf, None])
def test_check_xy_finds_every_non_finite_value_and_accepts_huge_finite_ones(bad):
    """The fast path (a finite sum) must not hide a NaN among values whose sum overflows, nor refuse them."""
    X, y = np.full((6, 3), 1e308), np.array([0, 0, 0, 1, 1, 1])
    X[0, 0] = -1e308
    if bad is None:
        with warnings.catch_warnings():
            warnings.simplefilter("error")          # no overflow warning leaks out of the check
            assert check_xy(X, y)[0] is not None
    else:
        X[4, 2] = bad
        with pytest.raises(ResamplingError, match="NaN or infinite"):
            check_xy(X, y)


def test_random_under_checks_the_rows_it_returns_for_non_finite_values():
    """Random under-sampling reads only y to choose rows, so it scans only the rows it keeps: a NaN in a
    minority row (always kept) is refused, the same draw as without NaN is returned otherwise."""
    rng = np.random.default_rng(3)
    X, y = rng.normal(size=(60, 4)), np.r_[np.zeros(50, int), np.ones(10, int)]
    clean_X, clean_y = make_resampler(parse_method("random-under"), 1).rebalance(X, y)
    bad = X.copy()
    bad[55, 2] = np.nan                                  # a minority row: kept whatever the draw
    with pytest.raises(ResamplingError, match="NaN or infinite"):
        make_resampler(parse_method("random-under"), 1).rebalance(bad, y)
    dropped = next(i for i in range(50) if not (clean_X == X[i]).all(axis=1).any())
    bad = X.copy()
    bad[dropped, 0] = np.inf                             # a majority row the draw leaves out
    again_X, again_y = make_resampler(parse_method("random-under"), 1).rebalance(bad, y)
    assert np.array_equal(again_X, clean_X) and np.array_equal(again_y, clean_y)
