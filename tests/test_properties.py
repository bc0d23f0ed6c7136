"""Property-based checks (hypothesis) of the invariants every protocol point and resampler must keep."""
import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from lopsided.methods.resamplers import make_resampler
from lopsided.planning.protocol import Infeasible, point_counts
from lopsided.specs import parse_method

counts_strategy = st.lists(st.integers(min_value=1, max_value=400), min_size=2, max_size=5)
ratio_strategy = st.one_of(st.sampled_from(["natural", "balanced"]), st.floats(min_value=1, max_value=50))
size_strategy = st.one_of(st.just("all"), st.integers(min_value=4, max_value=600))


@settings(max_examples=300, deadline=None)
@given(counts_strategy, ratio_strategy, size_strategy)
def test_a_point_never_asks_for_rows_it_does_not_have(raw, ratio, size):
    counts = dict(enumerate(raw))
    minority = int(np.argmin(raw))
    wanted = point_counts(counts, minority, ratio, size, 2)
    if isinstance(wanted, Infeasible):
        return
    assert all(0 < wanted[c] <= counts[c] for c in counts)
    assert wanted[minority] >= 2
    if size != "all" and ratio != "balanced":
        assert sum(wanted.values()) == size
    if isinstance(ratio, float) and len(raw) == 2:
        largest = max(wanted.values())
        assert abs(largest / wanted[minority] - ratio) <= ratio / wanted[minority] + 1.0 / wanted[minority] + 1e-9


@settings(max_examples=60, deadline=None)
@given(st.integers(min_value=3, max_value=60), st.integers(min_value=61, max_value=200),
       st.sampled_from(["random-under", "repeat-over", "bootstrap-over", "topup-over", "smote", "adasyn",
                        "borderline-smote-1", "tomek-links", "enn", "nearmiss-1"]),
       st.integers(min_value=0, max_value=2 ** 31))
def test_resampled_sets_keep_features_labels_and_every_class(n_minor, n_major, name, seed):
    rng = np.random.default_rng(seed)
    X = rng.normal(size=(n_minor + n_major, 3))
    y = np.r_[np.ones(n_minor, int), np.zeros(n_major, int)]
    X[y == 1] += 1.0
    Xr, yr = make_resampler(parse_method(name), seed).rebalance(X, y)
    assert Xr.shape[1] == 3 and len(Xr) == len(yr) and np.isfinite(Xr).all()
    assert set(yr) == {0, 1}
    if name in ("repeat-over", "bootstrap-over", "topup-over", "smote", "adasyn"):
        assert (yr == 1).sum() == n_major and (yr == 0).sum() == n_major
    if name == "random-under":
        assert (yr == 0).sum() == n_minor
