"""lopsided's resamplers against imbalanced-learn, used here as a test oracle only: the same data go
into both, and only their outputs (kept rows, synthetic points, per-seed counts) are compared.
Nothing in the ``lopsided`` package imports it.

Where the two agree by design the check is exact (same rows, same counts). Where lopsided differs on
purpose, a test shows the difference on data that provoke it and states the rule behind it; the
resampler's docstring and its line in ``lopsided list resamplers`` say the same.

Data: Gaussian blobs with continuous features (no exact distance ties unless a test builds them),
fixed seeds, 60-250 rows (17 for the built tie). Neighbour lists used to predict a result come from
a full scipy distance matrix, independent of both libraries.
"""
import warnings

import numpy as np
import pytest
from scipy.spatial.distance import cdist
from sklearn.neighbors import NearestNeighbors

pytest.importorskip("imblearn", reason="imbalanced-learn is the reference for these cross-checks "
                                       "(test extra: pip install -e '.[test]')")
from imblearn import over_sampling as ref_over  # noqa: E402
from imblearn import under_sampling as ref_under  # noqa: E402

from lopsided.methods.resamplers.cleaning import NeighbourEditing, TomekCleaning  # noqa: E402
from lopsided.methods.resamplers.nearmiss import NearMissUnder  # noqa: E402
from lopsided.methods.resamplers.random import RandomUnder  # noqa: E402
from lopsided.methods.resamplers.smote import Adasyn, BorderlineSmote, Smote, danger_set  # noqa: E402

RAW = "as-given"   # the reference searches neighbours on the columns as given; lopsided standardises by default

DATASETS = {              # name: (class sizes, seed, distance between neighbouring class means)
    "2 classes 150:30": ((150, 30), 0, 1.0),
    "2 classes 200:45": ((200, 45), 3, 1.0),
    "2 classes 90:60 overlapping": ((90, 60), 5, 0.6),
    "3 classes 120:60:25": ((120, 60, 25), 1, 0.8),
}
TWO_CLASSES = [name for name in DATASETS if name.startswith("2")]


def blobs(name):
    """Class c ~ N(c * shift, I) in 3 dimensions; class 0 is the largest."""
    sizes, seed, shift = DATASETS[name]
    rng = np.random.default_rng(seed)
    X = np.concatenate([rng.normal(c * shift, 1.0, size=(n, 3)) for c, n in enumerate(sizes)])
    return X, np.repeat(np.arange(len(sizes)), sizes)


def brute_neighbours(A, B, k, same=False):
    """k nearest rows of B for each row of A from the full distance matrix (row itself excluded if same)."""
    D = cdist(A, B)
    if same:
        np.fill_diagonal(D, np.inf)
    return np.argsort(D, axis=1, kind="stable")[:, :k]


def row_indices(X, rows):
    """Indices in X of the given rows (rows of X are unique in these data)."""
    where = {tuple(r): i for i, r in enumerate(X)}
    return np.array(sorted(where[tuple(r)] for r in rows), dtype=int)


def removed(X, X_out):
    return set(range(len(X))) - set(row_indices(X, X_out).tolist())


def quiet(resampler, X, y):
    """The reference's fit_resample with its 'fewer samples than asked' warnings silenced."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return resampler.fit_resample(X, y)


def segment_gaps(P, starts, ends, tol=1e-9):
    """(len(P), len(starts)) gaps u with P = start + u (end - start), NaN where P is off that segment."""
    direction = ends - starts
    u = np.einsum("psd,sd->ps", P[:, None, :] - starts[None], direction) / (direction ** 2).sum(axis=1)
    off = np.linalg.norm(starts[None] + u[..., None] * direction[None] - P[:, None, :], axis=-1)
    return np.where((off < 1e-7) & (u >= -tol) & (u <= 1 + tol), u, np.nan)


def on_smote_segments(P, X_class, k):
    """True for each point of P on a segment from a class row to one of its k nearest class rows."""
    near = brute_neighbours(X_class, X_class, k, same=True)
    starts = np.repeat(X_class, k, axis=0)
    return ~np.isnan(segment_gaps(P, starts, X_class[near.ravel()])).all(axis=1)


class ItselfAsNeighbour(NearestNeighbors):
    """Neighbour search that, asked about exactly the rows it was fitted on, names each row itself as
    every neighbour (any other query is answered normally). Handed to the reference as its neighbour
    object, the SMOTE step x + u (x_nn - x) then returns the seed x itself, so the synthetic points show
    which seeds were used and how often."""

    def fit(self, X, y=None):
        self.fitted_rows_ = np.asarray(X)
        return super().fit(X, y)

    def kneighbors(self, X=None, n_neighbors=None, return_distance=True):
        if X is None or np.shape(X) != self.fitted_rows_.shape or not np.array_equal(X, self.fitted_rows_):
            return super().kneighbors(X, n_neighbors, return_distance)
        found = np.repeat(np.arange(len(X))[:, None], n_neighbors or self.n_neighbors, axis=1)
        return (np.zeros(found.shape), found) if return_distance else found


def seed_counts(X, y, X_out, y_out, label):
    """How many synthetic points of class ``label`` sit exactly on each class row (seeds echoed)."""
    members = X[y == label]
    new = X_out[len(X):][y_out[len(X):] == label]
    where = {tuple(r): i for i, r in enumerate(members)}
    return np.bincount([where[tuple(r)] for r in new], minlength=len(members))


@pytest.fixture
def echo_seeds(monkeypatch):
    """lopsided with its interpolation step replaced by 'return the seed', the counterpart of ItselfAsNeighbour."""
    monkeypatch.setattr("lopsided.methods.resamplers.smote.interpolate", lambda base, towards, gaps: base.copy())


# ---- Tomek links --------------------------------------------------------------------------------

@pytest.mark.parametrize("name", DATASETS)
def test_tomek_links_remove_the_same_rows(name):
    """Tomek (1976): opposite-class mutual nearest neighbours. Removing both members matches the
    reference with sampling_strategy='all' for any number of classes; with two classes, removing the
    larger-class member matches its default (every class but the smallest is cleaned)."""
    X, y = blobs(name)
    reference = ref_under.TomekLinks(sampling_strategy="all")
    reference.fit_resample(X, y)
    both = removed(X, TomekCleaning(distances=RAW, remove="both").rebalance(X, y)[0])
    assert both and both == set(range(len(X))) - set(reference.sample_indices_)
    if len(DATASETS[name][0]) == 2:
        reference = ref_under.TomekLinks()
        reference.fit_resample(X, y)
        larger = removed(X, TomekCleaning(distances=RAW).rebalance(X, y)[0])
        assert larger == set(range(len(X))) - set(reference.sample_indices_)
        assert (y[list(larger)] == 0).all()


@pytest.mark.parametrize("name", TWO_CLASSES)
def test_standardised_tomek_links_and_enn_equal_the_reference_on_columns_standardised_by_hand(name):
    """lopsided's default searches z-scored columns: the same rows go as when the reference is given the
    columns standardised by hand, after one column is put into units 1,000 times larger."""
    X, y = blobs(name)
    X = X * np.array([1.0, 1000.0, 1.0])
    z = (X - X.mean(axis=0)) / X.std(axis=0)
    for ours, theirs in ((TomekCleaning(), ref_under.TomekLinks()),
                         (NeighbourEditing(neighbours=3), ref_under.EditedNearestNeighbours(n_neighbors=3, kind_sel="mode",
                                                                                            sampling_strategy=[0]))):
        theirs.fit_resample(z, y)
        assert removed(X, ours.rebalance(X, y)[0]) == set(range(len(X))) - set(theirs.sample_indices_)


def test_tomek_links_with_three_classes_drop_only_the_larger_member():
    """Deliberate difference: lopsided removes the larger-class member of every link; the reference's
    default cleans every class except the smallest, so a link between two larger classes loses both
    members there. Predicted from brute-force links (Tomek 1976 definition)."""
    X, y = blobs("3 classes 120:60:25")
    nearest = brute_neighbours(X, X, 1, same=True)[:, 0]
    links = [(i, j) for i, j in enumerate(nearest) if nearest[j] == i and y[i] != y[j] and i < j]
    counts = np.bincount(y)
    smaller_member_between_larger_classes = {
        min((i, j), key=lambda r: counts[y[r]]) for i, j in links if 2 not in (y[i], y[j])}
    reference = ref_under.TomekLinks()
    reference.fit_resample(X, y)
    ours = removed(X, TomekCleaning(distances=RAW).rebalance(X, y)[0])
    theirs = set(range(len(X))) - set(reference.sample_indices_)
    assert smaller_member_between_larger_classes
    assert theirs - ours == smaller_member_between_larger_classes and ours <= theirs


def test_duplicate_rows_with_opposite_labels_are_tomek_links_only_in_lopsided():
    """Deliberate difference: two identical rows with different labels are at distance 0 with nothing
    closer, a Tomek link by definition (Tomek 1976); lopsided excludes each row itself explicitly and
    finds them. The reference takes the second neighbour returned as 'the nearest other row', which for
    a duplicate pair is the same row for both members, so it never sees the link."""
    X, y = blobs("2 classes 150:30")
    copies = [151, 160, 172]                                   # minority rows repeated with label 0
    X, y = np.r_[X, X[copies]], np.r_[y, np.zeros(3, int)]
    duplicates = set(copies) | {180, 181, 182}
    ours = removed(X, TomekCleaning(distances=RAW, remove="both").rebalance(X, y)[0])
    reference = ref_under.TomekLinks(sampling_strategy="all")
    reference.fit_resample(X, y)
    theirs = set(range(len(X))) - set(reference.sample_indices_)
    assert duplicates <= ours and not duplicates & theirs
    assert ours - duplicates == theirs


# ---- edited nearest neighbours -----------------------------------------------------------------

@pytest.mark.parametrize("name", TWO_CLASSES)
def test_enn_keeps_the_same_rows_with_two_classes(name):
    """Wilson (1972) majority vote, k = 3. lopsided removes a row when more than k / 2 of its
    neighbours are of other classes: the reference's kind_sel='mode' (not its default 'all', which
    removes a row on any disagreeing neighbour). Edited classes: the largest (lopsided's default,
    passed to the reference as a list) or all."""
    X, y = blobs(name)
    for ours, classes in ((NeighbourEditing(distances=RAW, neighbours=3), [0]),
                          (NeighbourEditing(distances=RAW, neighbours=3, classes="all"), "all")):
        reference = ref_under.EditedNearestNeighbours(n_neighbors=3, kind_sel="mode", sampling_strategy=classes)
        reference.fit_resample(X, y)
        gone = removed(X, ours.rebalance(X, y)[0])
        assert gone and gone == set(range(len(X))) - set(reference.sample_indices_)
    strict = ref_under.EditedNearestNeighbours(n_neighbors=3, kind_sel="all", sampling_strategy=[0])
    strict.fit_resample(X, y)
    assert len(X) - len(strict.sample_indices_) > len(removed(X, NeighbourEditing(distances=RAW).rebalance(X, y)[0]))


@pytest.mark.parametrize("name, k, lopsided_removes", [("3 classes 120:60:25", 3, True),
                                                      ("2 classes 90:60 overlapping", 4, False)])
def test_enn_vote_differs_with_three_classes_and_even_ties(name, k, lopsided_removes):
    """Deliberate difference in the vote. lopsided removes a row when other classes together hold more
    than k / 2 of its neighbours (exactly half keeps it). The reference's 'mode' rule keeps a row whose
    label is the most frequent among its neighbours, ties going to the smallest label (scipy.stats.mode).
    So with three classes a row with neighbours of labels (own, a, b) goes in lopsided but stays there
    when its label is the smallest; with k = 4 and two classes a 2:2 row stays in lopsided but goes there
    when its label is the larger. The differing rows are predicted from brute-force neighbour labels."""
    X, y = blobs(name)
    labels = y[brute_neighbours(X, X, k, same=True)]
    votes = np.stack([(labels == c).sum(axis=1) for c in np.unique(y)], axis=1)
    lopsided_keeps = (labels != y[:, None]).sum(axis=1) <= k / 2
    mode_keeps = votes.argmax(axis=1) == y                      # argmax: first (smallest) label on ties
    predicted = set(np.flatnonzero(lopsided_keeps != mode_keeps).tolist())
    reference = ref_under.EditedNearestNeighbours(n_neighbors=k, kind_sel="mode", sampling_strategy="all")
    reference.fit_resample(X, y)
    ours = removed(X, NeighbourEditing(distances=RAW, neighbours=k, classes="all").rebalance(X, y)[0])
    theirs = set(range(len(X))) - set(reference.sample_indices_)
    assert predicted and ours ^ theirs == predicted
    assert (predicted <= ours) if lopsided_removes else (predicted <= theirs)


# ---- NearMiss -----------------------------------------------------------------------------------

@pytest.mark.parametrize("version", [1, 2, 3])
@pytest.mark.parametrize("name", DATASETS)
def test_nearmiss_keeps_the_same_rows(name, version):
    """Mani & Zhang (2003), k = 3 (and 3 for version 3's short list) in both; every larger class is cut
    to the smallest class's size. Kept rows compared as sets."""
    X, y = blobs(name)
    reference = ref_under.NearMiss(version=version, n_neighbors=3, n_neighbors_ver3=3)
    quiet(reference, X, y)
    ours = row_indices(X, NearMissUnder(distances=RAW, rule=version, neighbours=3, keep_neighbours=3).rebalance(X, y)[0])
    assert set(ours.tolist()) == set(reference.sample_indices_.tolist())


def mirrored_pairs():
    """Majority rows in pairs (x, h, 0) and (x, -h, 0) around minority rows on the first axis: both rows
    of a pair are at exactly the same distances from every minority row."""
    rng = np.random.default_rng(1)
    minority = np.c_[[0.0, 1.3, 2.9, 4.1, 5.7], np.zeros(5), np.zeros(5)]
    majority = np.concatenate([[[x, h, 0.0], [x, -h, 0.0]]
                               for x, h in zip(rng.uniform(-1, 7, 6), rng.uniform(0.5, 3, 6))])
    return np.r_[majority, minority], np.r_[np.zeros(12, int), np.ones(5, int)]


@pytest.mark.parametrize("version", [1, 2, 3])
def test_nearmiss_breaks_exact_ties_by_row_order_like_the_reference(version):
    """Exact score ties (mirrored rows): both keep the earlier row of a tied pair (stable sorts).
    The check requires at least one pair the cut splits, so a tie is really decided."""
    X, y = mirrored_pairs()
    reference = ref_under.NearMiss(version=version)
    quiet(reference, X, y)
    ours = set(row_indices(X, NearMissUnder(distances=RAW, rule=version).rebalance(X, y)[0]).tolist())
    assert ours == set(reference.sample_indices_.tolist())
    assert any((2 * p in ours) != (2 * p + 1 in ours) for p in range(6))


# ---- SMOTE --------------------------------------------------------------------------------------

@pytest.mark.parametrize("name", DATASETS)
def test_smote_points_lie_on_neighbour_segments_with_the_same_counts(name):
    """Chawla et al. (2002), section 4.2: x_new = x + u (x_nn - x), x_nn among the k = 5 nearest
    same-class rows. Both raise every class to the largest class's size."""
    X, y = blobs(name)
    for X_out, y_out in (Smote(distances=RAW, neighbours=5, random_state=0).rebalance(X, y),
                         ref_over.SMOTE(k_neighbors=5, random_state=0).fit_resample(X, y)):
        assert np.bincount(y_out).tolist() == [len(X[y == 0])] * len(np.unique(y))
        np.testing.assert_array_equal(X_out[:len(X)], X)
        for label in np.unique(y)[1:]:
            new = X_out[len(X):][y_out[len(X):] == label]
            assert on_smote_segments(new, X[y == label], 5).all()


def test_smote_spreads_seeds_evenly_where_the_reference_draws_them(echo_seeds):
    """Deliberate difference: lopsided gives each minority row G // n or G // n + 1 new points
    (Chawla et al. 2002, section 4.2, N% per sample); the reference draws each new point's seed at
    random, so its per-seed counts vary. Seeds made visible in both (ItselfAsNeighbour, echo_seeds)."""
    X, y = blobs("2 classes 150:30")
    ours = seed_counts(X, y, *Smote(distances=RAW, random_state=0).rebalance(X, y), 1)
    theirs = seed_counts(X, y, *ref_over.SMOTE(k_neighbors=ItselfAsNeighbour(n_neighbors=6),
                                               random_state=0).fit_resample(X, y), 1)
    assert ours.sum() == theirs.sum() == 120
    assert ours.max() - ours.min() <= 1 and theirs.max() - theirs.min() > 1


# ---- Borderline-SMOTE ---------------------------------------------------------------------------

@pytest.mark.parametrize("name", DATASETS)
def test_borderline_smote_danger_sets_agree(name):
    """Han et al. (2005), section 3.1: danger = m / 2 <= m' < m other-class rows among the m = 10
    nearest. lopsided's set comes from its danger_set(); the reference's from in_danger_indices, the
    attribute it documents as 'the samples considered in danger that are used to generate new synthetic
    samples'. As a second, output-only check, every point it generates lies on a segment from one of
    lopsided's danger rows to one of that row's k = 5 nearest minority rows (variant 1)."""
    X, y = blobs(name)
    reference = ref_over.BorderlineSMOTE(k_neighbors=5, m_neighbors=10, random_state=0)
    X_out, y_out = reference.fit_resample(X, y)
    for label in np.unique(y)[1:]:
        members = np.flatnonzero(y == label)
        ours = members[danger_set(X, y, members, 10)]
        assert 0 < len(ours) < len(members)
        np.testing.assert_array_equal(np.sort(reference.in_danger_indices[label]), ours)
        near = brute_neighbours(X[ours], X[members], 6)[:, 1:]          # first: the row itself
        new = X_out[len(X):][y_out[len(X):] == label]
        assert len(new) == len(X[y == 0]) - len(members)
        gaps = segment_gaps(new, np.repeat(X[ours], 5, axis=0), X[members][near.ravel()])
        assert (~np.isnan(gaps)).any(axis=1).all()


def cross_class_gaps(X, y, X_out, y_out, k=5):
    """Gaps u of the Borderline-SMOTE 2 points made towards a neighbour of another class."""
    members = np.flatnonzero(y == 1)
    seeds = members[danger_set(X, y, members, 10)]
    near = brute_neighbours(X[seeds], X, k + 1)[:, 1:].ravel()
    gaps = segment_gaps(X_out[len(X):], np.repeat(X[seeds], k, axis=0), X[near])
    other = gaps[:, y[near] != 1]
    return other[~np.isnan(other)]


def test_borderline_smote_2_gap_towards_other_classes():
    """Han et al. (2005), section 3.2 (section number from memory): towards a neighbour of another class
    the difference is multiplied by a random number in (0, 0.5). Both stay within half the segment.
    Deliberate difference: lopsided draws that gap from U(0, 0.5) (mean 0.25); the reference multiplies
    a U(0, 0.5) factor by its usual U(0, 1) step, a product with mean 0.125 (common practice: compare
    the sample means; about 20 points each here)."""
    X, y = blobs("2 classes 90:60 overlapping")
    ours = cross_class_gaps(X, y, *BorderlineSmote(distances=RAW, variant=2, random_state=0).rebalance(X, y))
    reference = ref_over.BorderlineSMOTE(kind="borderline-2", random_state=0)
    theirs = cross_class_gaps(X, y, *reference.fit_resample(X, y))
    assert len(ours) > 10 and len(theirs) > 10
    assert ours.max() <= 0.5 + 1e-9 and theirs.max() <= 0.5 + 1e-9
    assert 0.2 < ours.mean() < 0.3 and theirs.mean() < 0.18


def test_borderline_smote_with_no_danger_rows_generates_nothing_in_both():
    """Han et al. (2005): only danger rows seed new points; far-apart classes have none."""
    rng = np.random.default_rng(7)
    X = np.r_[rng.normal(size=(80, 3)), rng.normal(20.0, 1.0, size=(20, 3))]
    y = np.r_[np.zeros(80, int), np.ones(20, int)]
    for X_out, _ in (BorderlineSmote(distances=RAW, random_state=0).rebalance(X, y),
                     ref_over.BorderlineSMOTE(random_state=0).fit_resample(X, y)):
        np.testing.assert_array_equal(X_out, X)


# ---- ADASYN -------------------------------------------------------------------------------------

@pytest.mark.parametrize("name", DATASETS)
def test_adasyn_per_sample_counts_differ_only_by_rounding(name, echo_seeds):
    """He et al. (2008), steps (b)-(d): g_i = G r_i / sum(r), r_i the other-class share among the K = 5
    nearest rows. Counts read from each library's output with the seeds echoed. Both round the same
    shares: every count of both is floor or ceil of G r_i / sum(r). Deliberate difference: lopsided uses
    the largest-remainder rule so the total is exactly G; the reference rounds each share to the
    nearest whole number, so its total can miss G. Where its total does equal G, both roundings pick
    the same rows and the counts agree exactly."""
    X, y = blobs(name)
    ours_out = Adasyn(distances=RAW, neighbours=5, random_state=0).rebalance(X, y)
    reference = ref_over.ADASYN(n_neighbors=ItselfAsNeighbour(n_neighbors=6), random_state=0)
    theirs_out = reference.fit_resample(X, y)
    for label in np.unique(y)[1:]:
        members = X[y == label]
        G = len(X[y == 0]) - len(members)
        near = brute_neighbours(members, X, 6)[:, 1:]
        share = (y[near] != label).mean(axis=1)
        share = G * share / share.sum()
        ours, theirs = seed_counts(X, y, *ours_out, label), seed_counts(X, y, *theirs_out, label)
        for counts in (ours, theirs):
            assert ((counts == np.floor(share)) | (counts == np.ceil(share))).all()
        assert ours.sum() == G
        if theirs.sum() == G:
            np.testing.assert_array_equal(ours, theirs)
        else:
            assert 0 < (ours != theirs).sum() and np.abs(ours - theirs).max() == 1


def test_adasyn_counts_agree_exactly_on_a_set_whose_rounding_adds_up():
    """Keeps the exact-agreement branch above in use: on this set the reference's total is exactly G
    (the other sets take the by-rounding branch)."""
    X, y = blobs("2 classes 150:30")
    assert np.bincount(ref_over.ADASYN(random_state=0).fit_resample(X, y)[1]).tolist() == [150, 150]


# ---- small classes, balance ---------------------------------------------------------------------

@pytest.mark.parametrize("ours, theirs", [
    (Smote, ref_over.SMOTE),
    (Adasyn, ref_over.ADASYN),
    (BorderlineSmote, ref_over.BorderlineSMOTE),
])
def test_four_minority_rows_fall_back_to_three_neighbours_where_the_reference_refuses(ours, theirs):
    """Deliberate difference: with fewer than k + 1 = 6 minority rows lopsided uses k = rows - 1
    (documented fallback); the reference raises ValueError (n_neighbors > n_samples_fit)."""
    rng = np.random.default_rng(0)
    X = np.r_[rng.normal(size=(60, 3)), rng.normal(0.5, 1.0, size=(4, 3))]
    y = np.r_[np.zeros(60, int), np.ones(4, int)]
    assert np.bincount(ours(random_state=0, distances=RAW).rebalance(X, y)[1]).tolist() == [60, 60]
    with pytest.raises(ValueError, match="n_neighbors"):
        theirs(random_state=0).fit_resample(X, y)


def test_nearmiss_with_two_minority_rows_and_adasyn_without_other_classes_nearby():
    """Deliberate differences: NearMiss with fewer minority rows than k = 3 averages over those it has
    (the reference raises ValueError); ADASYN with no other class among any minority row's neighbours
    spreads the new points evenly (the reference raises RuntimeError, r_i all 0)."""
    rng = np.random.default_rng(0)
    X = np.r_[rng.normal(size=(60, 3)), rng.normal(0.5, 1.0, size=(2, 3))]
    y = np.r_[np.zeros(60, int), np.ones(2, int)]
    assert np.bincount(NearMissUnder(distances=RAW, rule=1).rebalance(X, y)[1]).tolist() == [2, 2]
    with pytest.raises(ValueError, match="n_neighbors"):
        ref_under.NearMiss(version=1).fit_resample(X, y)
    X = np.r_[rng.normal(size=(60, 3)), rng.normal(20.0, 1.0, size=(20, 3))]
    y = np.r_[np.zeros(60, int), np.ones(20, int)]
    assert np.bincount(Adasyn(distances=RAW, random_state=0).rebalance(X, y)[1]).tolist() == [60, 60]
    with pytest.raises(RuntimeError):
        ref_over.ADASYN().fit_resample(X, y)


def test_balance_rounds_to_the_nearest_count_and_covers_more_classes():
    """Deliberate difference in the balance parameter (minority:majority after resampling, the same
    meaning as the reference's float sampling_strategy): lopsided rounds the target count to the
    nearest whole number, the reference truncates; lopsided also applies it to any number of classes
    (relative to the largest or smallest class), where the reference accepts a float for two only."""
    X, y = blobs("2 classes 150:30")
    assert np.bincount(Smote(distances=RAW, balance=0.713, random_state=0).rebalance(X, y)[1]).tolist() == [150, 107]
    reference = ref_over.SMOTE(sampling_strategy=0.713, random_state=0)        # 0.713 * 150 = 106.95
    assert np.bincount(reference.fit_resample(X, y)[1]).tolist() == [150, 106]
    for ours, theirs in ((NearMissUnder(distances=RAW, balance=0.7), ref_under.NearMiss(sampling_strategy=0.7)),
                         (RandomUnder(balance=0.7, random_state=0),
                          ref_under.RandomUnderSampler(sampling_strategy=0.7, random_state=0))):
        assert np.bincount(ours.rebalance(X, y)[1]).tolist() == [43, 30]      # 30 / 0.7 = 42.86
        assert np.bincount(theirs.fit_resample(X, y)[1]).tolist() == [42, 30]
    X, y = blobs("3 classes 120:60:25")
    assert np.bincount(Smote(distances=RAW, balance=0.5, random_state=0).rebalance(X, y)[1]).tolist() == [120, 60, 60]
    with pytest.raises(ValueError, match="binary"):
        ref_over.SMOTE(sampling_strategy=0.5).fit_resample(X, y)
