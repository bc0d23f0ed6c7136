"""Distances that mean something and donors that count: standardised neighbourhoods, resampling across and by
whole groups, sizes counted in groups, and threshold moving that never sees a test row."""
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from lopsided.datasets import load_dataset
from lopsided.jobs.run import load_all, run_suite
from lopsided.methods.resamplers import make_resampler
from lopsided.methods.resamplers.cleaning import TomekCleaning
from lopsided.methods.resamplers.groups import GroupOver, GroupSmote, GroupUnder, neighbours_across_groups
from lopsided.methods.resamplers.neighbours import Scaling, neighbours_within
from lopsided.methods.resamplers.smote import Smote
from lopsided.methods.resamplers.threshold import BY_COUNTS, best_threshold
from lopsided.options import ExecutionOptions, RunOptions
from lopsided.planning.plan import plan
from lopsided.planning.protocol import group_orders, point_counts, point_rows
from lopsided.planning.suite import load_suite
from lopsided.specs import MethodSpec

QUIET = ExecutionOptions(progress=False)   # no progress bar in tests


def two_units():
    """Two columns whose units differ 1,000-fold: grams and kilograms of the same kind of spread."""
    rng = np.random.default_rng(4)
    return np.c_[rng.normal(0, 1, 40), rng.normal(0, 1000, 40)]


def test_standardised_neighbours_agree_with_a_hand_computation_on_columns_in_different_units():
    X = two_units()
    z = (X - X.mean(axis=0)) / X.std(axis=0)                        # z-scores by hand, population sd
    by_hand = np.argsort(((z[:, None] - z[None]) ** 2).sum(axis=2) + np.diag(np.full(40, np.inf)), axis=1)[:, :3]
    found = neighbours_within(Scaling.of(X, "standardized").apply(X), 3)
    assert np.array_equal(np.sort(found, axis=1), np.sort(by_hand, axis=1))
    raw = neighbours_within(Scaling.of(X, "as-given").apply(X), 3)
    assert not np.array_equal(np.sort(raw, axis=1), np.sort(by_hand, axis=1))   # the large column decided alone


def test_tomek_links_are_found_in_standardised_space_and_rows_come_back_in_their_own_units():
    X = two_units()
    y = (np.arange(40) % 4 == 0).astype(int)
    z = (X - X.mean(axis=0)) / X.std(axis=0)
    d = ((z[:, None] - z[None]) ** 2).sum(axis=2) + np.diag(np.full(40, np.inf))
    nearest = d.argmin(axis=1)
    links = {(i, int(nearest[i])) for i in range(40) if nearest[nearest[i]] == i and y[i] != y[nearest[i]]}
    dropped = {j if y[j] == 0 else i for i, j in links}              # the larger class's member of each link
    X_out, _ = TomekCleaning().rebalance(X, y)
    kept = [i for i in range(40) if i not in dropped]
    assert np.array_equal(X_out, X[kept])


def test_smote_points_stay_on_segments_between_original_rows_with_standardised_neighbours():
    """Chawla et al. (2002), section 4.2: x_new = x + u (x_nn - x); standardising only changes who x_nn is."""
    X = two_units()
    y = (np.arange(40) < 8).astype(int)
    X_out, _ = Smote(neighbours=3, random_state=1).rebalance(X, y)
    minority = X[y == 1]
    for point in X_out[40:]:
        assert any(_on_segment(point, minority[i], minority[j]) for i in range(8) for j in range(8) if i != j)


def _on_segment(p, a, b, tolerance=1e-9):
    direction = b - a
    u = np.dot(p - a, direction) / np.dot(direction, direction)
    return -tolerance <= u <= 1 + tolerance and np.allclose(a + u * direction, p, rtol=0, atol=1e-6)


def test_spectra_keep_their_own_distances_and_tables_are_standardised():
    spec = MethodSpec("smote")
    assert make_resampler(spec, 1, one_unit=True).distances == "as-given"
    assert make_resampler(spec, 1, one_unit=False).distances == "standardized"
    assert make_resampler(MethodSpec("smote", {"distances": "standardized"}), 1, one_unit=True).distances == "standardized"


@settings(max_examples=60, deadline=None, derandomize=True)
@given(st.integers(2, 6), st.integers(1, 4), st.integers(1, 5), st.integers(0, 10_000))
def test_smote_across_groups_never_pairs_two_rows_of_one_donor(donors, replicates, k, seed):
    rng = np.random.default_rng(seed)
    codes = np.repeat(np.arange(donors), replicates)
    rng.shuffle(codes)
    Z = rng.normal(size=(len(codes), 3))
    near = neighbours_across_groups(Z, codes, k)
    assert (codes[near] != codes[:, None]).all()
    d = ((Z[:, None] - Z[None]) ** 2).sum(axis=2)
    for i in range(len(codes)):                                          # and they are the nearest such rows
        others = np.flatnonzero(codes != codes[i])
        expected = np.sort(d[i, others])[: near.shape[1]]
        assert np.allclose(np.sort(d[i, near[i]]), expected)


def test_smote_across_groups_makes_points_between_rows_of_different_donors_only():
    rng = np.random.default_rng(3)
    X = rng.normal(size=(60, 2))
    y = (np.arange(60) < 15).astype(int)
    groups = np.array([f"donor-{i // 3}" for i in range(60)])          # 3 replicates per donor
    X_out, y_out = GroupSmote(random_state=2).rebalance(X, y, groups=groups)
    minority = np.flatnonzero(y == 1)
    assert len(X_out) == 90 and (y_out[60:] == 1).all()
    for point in X_out[60:]:
        pairs = [(i, j) for i in minority for j in minority if i != j and _on_segment(point, X[i], X[j])]
        assert pairs and all(groups[i] != groups[j] for i, j in pairs)


def test_whole_groups_are_kept_dropped_or_copied_whole():
    rng = np.random.default_rng(5)
    X = rng.normal(size=(90, 2))
    y = np.r_[np.zeros(72, int), np.ones(18, int)]
    groups = np.array([f"g{i // 3}" for i in range(90)])
    index = {tuple(row): i for i, row in enumerate(X)}
    X_under, y_under = GroupUnder(random_state=1).rebalance(X, y, groups=groups)
    kept = groups[[index[tuple(row)] for row in X_under]]
    assert all(np.sum(kept == g) == 3 for g in np.unique(kept))          # no donor split
    assert np.sum(y_under == 0) == 18                                    # 6 whole donors = the 18 minority rows
    X_over, y_over = GroupOver(random_state=1).rebalance(X, y, groups=groups)
    added = groups[[index[tuple(row)] for row in X_over[90:]]]
    assert len(added) == 54 and all(np.sum(added == g) % 3 == 0 for g in np.unique(added))


def test_sizes_in_groups_give_nested_training_sets_of_whole_donors():
    data = load_dataset("spectra:serum?donors=60&ratio=4&region=fingerprint&step=16")
    train = np.arange(len(data.y))
    orders = group_orders(data.y, data.groups, train, seed=11)
    available = {c: len(order) for c, order in orders.items()}
    assert available == {0: 48, 1: 12}                                   # donors, not spectra
    previous = set()
    for size in (10, 20, 40, 60):
        wanted = point_counts(available, data.minority, "natural", size, 2, "groups")
        rows = point_rows(orders, wanted)
        donors = np.unique(data.groups[rows])
        assert len(donors) == size and len(rows) == 3 * size            # whole donors, 3 spectra each
        assert previous <= set(rows)                                     # nested
        previous = set(rows)


def test_a_suite_counting_groups_plans_whole_donors_and_keys_say_so(write_suite):
    path = write_suite(extra="", ratios='["natural"]')
    text = path.read_text().replace("min_minority = 3", "min_minority = 3\ncounting = \"groups\"")
    text = text.replace('sizes = ["all"]', "sizes = [12]")
    path.write_text(text)
    suite = load_suite(path)
    datasets = load_all(suite)
    units = [u for u in plan(suite, datasets).units if u.coords.dataset.startswith("spectra")]
    data = datasets[units[0].coords.dataset]
    assert units and all(len(np.unique(data.groups[u.train])) == 12 for u in units)
    assert all(u.coords.payload()["counting"] == "groups" for u in units)


def test_groups_reach_a_resampler_for_training_rows_only(tmp_path, write_suite):
    record = tmp_path / "seen"
    record.mkdir()
    path = write_suite()
    text = path.read_text().replace('resamplers = ["none", "random-under", "topup-over"]',
                                    f'resamplers = [{{ name = "plugins_for_tests:RecordingGroups", params = '
                                    f'{{ record = "{record}" }} }}]')
    path.write_text(text)
    run_suite(path, RunOptions(out=tmp_path / "o", execution=QUIET))
    suite = load_suite(path)
    datasets = load_all(suite)
    units = [u for u in plan(suite, datasets).units if datasets[u.coords.dataset].groups is not None]
    seen = sorted(tuple(sorted(np.load(f))) for f in record.glob("*.npy"))
    expected = sorted(tuple(sorted(np.asarray(datasets[u.coords.dataset].groups)[u.train].astype(str))) for u in units)
    assert seen == expected                                             # every training row's group, in every unit
    for u in units:                                                     # ... and grouped folds keep test donors out
        groups = np.asarray(datasets[u.coords.dataset].groups)
        assert not set(groups[u.train]) & set(groups[u.test])


@pytest.mark.parametrize("metric", sorted(BY_COUNTS))
def test_the_threshold_maximises_its_metric_over_every_cut_by_brute_force(metric):
    from lopsided.methods.metrics import score_cell
    rng = np.random.default_rng(8)
    truth = rng.random(60) < 0.2
    scores = np.round(rng.normal(truth * 1.0, 1.0), 1)                  # rounded: ties between rows
    t = best_threshold(scores, truth, metric)
    def value(threshold):
        called = (scores >= threshold).astype(int)
        return score_cell(truth.astype(int), called, np.c_[-scores, scores], 1, ("rest", "rare"))[metric]
    candidates = [np.inf, *np.unique(scores)]
    assert value(t) == pytest.approx(max(value(c) for c in candidates))


def test_threshold_moving_fits_and_tunes_on_training_rows_only(tmp_path, write_suite, row_ids):
    csv, record = row_ids
    text = f"""
    name = "moved"
    datasets = ["file:{csv}?label=label"]
    resamplers = ["threshold-moving"]
    learners = [{{ name = "plugins_for_tests:RecordingLearner", params = {{ record = "{record}" }} }}]
    [protocol]
    repeats = 1
    folds = 3
    min_minority = 3
    """
    path = write_suite(text=text, name="moved.toml")
    result = run_suite(path, RunOptions(out=tmp_path / "o", execution=QUIET))
    assert (result.cells["status"] == "ok").all()
    suite = load_suite(path)
    units = plan(suite, {r: load_dataset(r) for r in suite.datasets}).units
    fits = [set(np.load(f)) for f in record.glob("fit-*.npy")]
    scored = [set(np.load(f)) for f in record.glob("score-*.npy")]
    assert len(fits) == len(units) * 4                                   # 3 inner fits and the final one per cell
    for unit in units:
        train = set(unit.train)
        mine = [f for f in fits if f <= train]
        assert len(mine) == 4 and max(map(len, mine)) == len(train)     # inner fits on parts of the training rows
    tests = {frozenset(u.test) for u in units}
    trains = [set(u.train) for u in units]
    assert all(s in tests or any(s <= t for t in trains) for s in scored)   # scored: inner parts or the test part


def test_threshold_moving_keeps_the_learners_threshold_when_the_minority_is_one_group():
    """One minority donor in the training part: no grouped inner cross-validation is possible, so the learner's
    own threshold is kept (the same predictions as the learner alone) and a warning says so."""
    from sklearn.linear_model import LogisticRegression

    from lopsided.methods.resamplers.threshold import MovedThreshold
    rng = np.random.default_rng(2)
    X = rng.normal(size=(40, 2))
    y = (np.arange(40) < 6).astype(int)
    groups = np.where(y == 1, "donor-rare", [f"donor-{i}" for i in range(40)])
    with pytest.warns(RuntimeWarning, match="1 minority group, too few"):
        moved = MovedThreshold(LogisticRegression(), groups=groups).fit(X, y)
    alone = LogisticRegression().fit(X, y)
    assert moved.threshold_ is None and np.array_equal(moved.predict(X), alone.predict(X))


def test_threshold_moving_scores_a_learner_with_one_decision_column_per_class():
    """PLS-DA predicts one indicator per class (argmax); its score for the minority class is the difference of
    the two indicators, so the threshold 0 reproduces the learner's own predictions."""
    from lopsided.methods.learners import PLSDA
    from lopsided.methods.resamplers.threshold import MovedThreshold
    rng = np.random.default_rng(4)
    X = rng.normal(size=(60, 5)) + (np.arange(60) < 12)[:, None]
    y = (np.arange(60) < 12).astype(int)
    moved = MovedThreshold(PLSDA(n_components=2)).fit(X, y)
    own = moved.model_.predict(X)
    scores = moved._score(moved.model_, X)
    assert np.array_equal(np.where(scores >= 0, 1, 0), own)
    assert moved.threshold_ is not None and moved.predict(X).shape == (60,)
