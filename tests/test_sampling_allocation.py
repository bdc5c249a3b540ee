"""Neyman allocation, bounds, existing tests, rounding and period weights."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.errors import InputDataError
from geomet.sampling.allocation import (
    allocate_samples,
    bounded_allocation,
    largest_remainder_round,
    neyman_allocation,
    period_weights,
)

# Stratified example: N_h (400, 300, 200, 100), S_h (10, 15, 20, 30), n = 100. Check values
# recomputed independently in the project's science notes (SCIENCE.md "check"); the same strata
# are a published worked example of Neyman allocation (metricgate.com, "Neyman optimal
# allocation"). By hand: sum N_h S_h = 4000 + 4500 + 4000 + 3000 = 15500, n_1 = 100*4000/15500.
N_H = [400, 300, 200, 100]
S_H = [10, 15, 20, 30]
NEYMAN_N100 = [25.806, 29.032, 25.806, 19.355]


def test_neyman_matches_worked_example():
    np.testing.assert_allclose(neyman_allocation(100, N_H, S_H), NEYMAN_N100, atol=5e-4)
    assert neyman_allocation(100, N_H, S_H)[0] == pytest.approx(100 * 4000 / 15500, rel=1e-12)


def test_neyman_accepts_lists_arrays_series():
    a = neyman_allocation(100, np.array(N_H), np.array(S_H))
    b = neyman_allocation(100.0, pd.Series(N_H), pd.Series(S_H))
    np.testing.assert_allclose(a, b)


def test_neyman_equal_spread_is_proportional():
    # Cochran (1977) ch. 5: with equal S_h Neyman allocation reduces to proportional allocation.
    np.testing.assert_allclose(neyman_allocation(50, N_H, [7, 7, 7, 7]), [20, 15, 10, 5])


def test_neyman_errors():
    with pytest.raises(InputDataError, match=r"must have the same length"):
        neyman_allocation(10, [1, 2], [1, 2, 3])
    with pytest.raises(InputDataError, match=r"finite and non-negative"):
        neyman_allocation(10, [1, -2], [1, 2])
    with pytest.raises(InputDataError, match=r"at least one stratum with positive size and spread"):
        neyman_allocation(10, [1, 2], [0, 0])


def test_bounded_allocation_without_bounds_is_neyman():
    w = np.array(N_H) * np.array(S_H)
    np.testing.assert_allclose(bounded_allocation(100, w), NEYMAN_N100, atol=5e-4)


def test_bounded_allocation_caps_and_reallocates_in_proportion():
    # Cochran (1977) §5.8: an over-allocated stratum is fixed at its bound and the rest shared in
    # proportion to N_h S_h. Cap stratum 4 at 10: 90 left, split 4000:4500:4000 of 12500
    # -> 28.8, 32.4, 28.8 (hand arithmetic).
    w = np.array(N_H) * np.array(S_H)
    got = bounded_allocation(100, w, upper=[np.inf, np.inf, np.inf, 10])
    np.testing.assert_allclose(got, [28.8, 32.4, 28.8, 10.0], atol=1e-9)


def test_bounded_allocation_tops_up_existing_samples():
    # 10 existing in stratum 1, 90 new: the total program of 100 follows Neyman, so stratum 1
    # gets 25.806 - 10 new and the others their Neyman share (hand arithmetic).
    w = np.array(N_H) * np.array(S_H)
    got = bounded_allocation(90, w, existing=[10, 0, 0, 0])
    np.testing.assert_allclose(got, np.array(NEYMAN_N100) - [10, 0, 0, 0], atol=5e-4)
    # A stratum already over its share gets nothing new.
    got = bounded_allocation(50, w, existing=[60, 0, 0, 0])
    assert got[0] == 0.0
    assert got.sum() == pytest.approx(50)
    np.testing.assert_allclose(got[1:] / got[1:].sum(), np.array([4500, 4000, 3000]) / 11500)


def test_bounded_allocation_when_bounds_bind():
    w = [1.0, 1.0]
    np.testing.assert_allclose(bounded_allocation(10, w, upper=[2, 3]), [2, 3])  # all it can take
    np.testing.assert_allclose(bounded_allocation(10, w, lower=[8, 0]), [8, 2])
    with pytest.raises(InputDataError, match=r"minimum samples per domain add up to 12"):
        bounded_allocation(10, w, lower=[6, 6])
    with pytest.raises(
        InputDataError, match=r"lower bound above upper bound for stratum positions \[1\]"
    ):
        bounded_allocation(10, w, lower=[0, 5], upper=[9, 4])


@settings(max_examples=60, deadline=None)
@given(
    data=st.lists(
        st.tuples(st.floats(1, 1e6), st.floats(0.01, 5), st.integers(0, 5), st.integers(0, 30)),
        min_size=1,
        max_size=8,
    ),
    n=st.integers(0, 60),
)
def test_bounded_allocation_invariants(data, n):
    sizes, std, existing, cap = (np.array(v, dtype=float) for v in zip(*data, strict=True))
    got = bounded_allocation(n, sizes * std, existing=existing, upper=cap)
    assert np.all(got >= -1e-9)
    assert np.all(got <= cap + 1e-9)
    assert got.sum() == pytest.approx(min(n, cap.sum()), abs=1e-6)


def test_largest_remainder_keeps_total():
    # Hamilton's method by hand on the worked example: floors 25, 29, 25, 19 (sum 98); the two
    # largest remainders are .806 and .806 -> 26, 29, 26, 19.
    assert largest_remainder_round(NEYMAN_N100, 100).tolist() == [26, 29, 26, 19]
    assert largest_remainder_round([0.5, 0.5, 0.5, 1.5], 3).tolist() == [1, 1, 0, 1]
    assert largest_remainder_round([2.7, 0.3], 3, upper=[2, 5]).tolist() == [2, 1]


@settings(max_examples=60, deadline=None)
@given(st.lists(st.floats(0, 50), min_size=1, max_size=10))
def test_largest_remainder_properties(values):
    v = np.array(values)
    total = int(round(v.sum()))
    got = largest_remainder_round(v, total)
    assert got.sum() == total
    assert np.all(got >= np.floor(v) - 1)
    assert np.all(got <= np.ceil(v) + 1)
    assert np.all(np.abs(got - v) < 1 + 1e-9)


def test_period_weights_discount_and_override():
    # 1/(1.1)^(p-1): 1, 0.909091, 0.826446 (hand arithmetic).
    np.testing.assert_allclose(
        period_weights([1, 2, 3], discount_rate=0.1), [1.0, 0.909091, 0.826446], atol=1e-6
    )
    got = period_weights(np.array([1, 2, 3, np.nan]), weights={2: 3.0})
    np.testing.assert_allclose(got, [1.0, 3.0, 1.0, 0.0])
    with pytest.raises(InputDataError, match=r"discount_rate must be greater than -1; got -1"):
        period_weights([1], discount_rate=-1)
    with pytest.raises(
        InputDataError, match=r"period weight must be non-negative; got -2.0 for period 3"
    ):
        period_weights([1], weights={3: -2.0})


def test_allocate_samples_table_minimum_and_cap():
    domains = ["VL-potassic", "VL-phyllic", "VL-argillic", "VL-breccia"]
    out = allocate_samples(
        20,
        domains,
        [400, 300, 200, 100],
        [10, 15, 20, 30],
        existing=[0, 0, 0, 0],
        available=[50, 50, 50, 50],
        min_per_domain=4,
        min_share_frac=0.05,
    )
    # Neyman on 20 -> 5.16, 5.81, 5.16, 3.87: the last domain is lifted to its minimum of 4 and
    # the other 16 shared 4000:4500:4000 -> 5.12, 5.76, 5.12; largest remainder -> 5, 6, 5, 4
    # (hand arithmetic).
    assert out["samples_allocated"].tolist() == [5, 6, 5, 4]
    short = allocate_samples(20, domains, [400, 300, 200, 100], [10, 15, 20, 30], min_per_domain=6)
    # 4 x 6 = 24 > 20: the biggest domains keep their minimum, the smallest gets what is left.
    assert short["samples_allocated"].tolist() == [6, 6, 6, 2]
    capped = allocate_samples(
        20, domains, [400, 300, 200, 100], [10, 15, 20, 30], available=[2, 50, 50, 50]
    )
    assert capped["samples_allocated"].iloc[0] == 2
    assert capped["samples_allocated"].sum() == 20
    small = allocate_samples(
        4, domains, [970, 10, 10, 10], [1, 1, 1, 1], min_per_domain=2, min_share_frac=0.05
    )
    # Only the first domain has >= 5 % of the tonnes: the tiny ones get no forced minimum.
    assert small["minimum_samples"].tolist() == [2, 0, 0, 0]
    assert small["samples_allocated"].tolist() == [4, 0, 0, 0]
    assert list(out.columns) == [
        "domain",
        "scheduled_tonnes_t",
        "weighted_tonnes_t",
        "tonnes_share_frac",
        "variability_idx",
        "neyman_weight_frac",
        "existing_tests",
        "minimum_samples",
        "target_total",
        "samples_allocated",
        "candidates_available",
    ]


def test_allocate_samples_existing_counts_reduce_need():
    out = allocate_samples(10, ["a", "b"], [500, 500], [1, 1], existing=[5, 0])
    # Program of 15 split 7.5 / 7.5: domain a has 5, needs 2.5 more; b needs 7.5 -> rounded 2/8
    # or 3/7 by largest remainder (ties to the earlier): 3, 7.
    assert out["samples_allocated"].tolist() == [3, 7]
    np.testing.assert_allclose(out["target_total"], [7.5, 7.5])


def test_allocate_samples_more_minimum_than_samples_keeps_biggest():
    out = allocate_samples(
        3, ["a", "b", "c"], [100, 300, 200], [1, 1, 1], min_per_domain=2, min_share_frac=0.0
    )
    assert out["samples_allocated"].sum() == 3
    assert out.set_index("domain")["samples_allocated"]["b"] >= 2


def test_allocate_samples_errors():
    with pytest.raises(InputDataError, match=r"must have the same length"):
        allocate_samples(5, ["a", "b"], [1, 2], [1])
    with pytest.raises(InputDataError, match=r"n_samples must be non-negative; got -1"):
        allocate_samples(-1, ["a"], [1], [1])


@settings(max_examples=50, deadline=None)
@given(
    data=st.lists(
        st.tuples(st.floats(1, 1e7), st.floats(0, 3), st.integers(0, 4), st.integers(0, 12)),
        min_size=1,
        max_size=6,
    ),
    n=st.integers(0, 40),
    minimum=st.integers(0, 3),
)
def test_allocate_samples_invariants(data, n, minimum):
    tonnes, std, existing, cap = (np.array(v, dtype=float) for v in zip(*data, strict=True))
    out = allocate_samples(
        n,
        [f"d{k}" for k in range(len(tonnes))],
        tonnes,
        std,
        existing=existing,
        available=cap,
        min_per_domain=minimum,
    )
    got = out["samples_allocated"].to_numpy()
    assert got.sum() == min(n, int(cap.sum()))
    assert np.all(got >= 0)
    assert np.all(got <= cap)
