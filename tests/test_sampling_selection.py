"""Selection within domains, demand aggregation, reasons in words and coverage."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.stats import wasserstein_distance

from geomet.errors import InputDataError
from geomet.sampling.coverage import coverage_table, weighted_quantile
from geomet.sampling.selection import (
    Standardiser,
    aggregate_demand,
    describe_periods,
    format_periods,
    format_tonnes,
    select_samples,
    weighted_mean_std,
)

ATTRS = ["cu_pct", "clay_swelling_pct"]


def _blocks():
    # Domain X: 1 Mt of low-clay ore (swelling clay 1 %) mined in periods 1-2 and 3 Mt of
    # high-clay ore (10 %) in periods 3-5; copper the same everywhere.
    rows = []
    for k in range(10):
        rows.append(
            {
                "domain": "X",
                "tonnes_t": 1e5,
                "period": 1 + k % 2,
                "cu_pct": 0.5,
                "clay_swelling_pct": 1.0 + 0.01 * k,
            }
        )
    for k in range(30):
        rows.append(
            {
                "domain": "X",
                "tonnes_t": 1e5,
                "period": 3 + k % 3,
                "cu_pct": 0.5,
                "clay_swelling_pct": 10.0 + 0.01 * k,
            }
        )
    return pd.DataFrame(rows)


def _candidates(clays, holes=None, domain="X"):
    n = len(clays)
    holes = holes or [f"VLT-{k:03d}" for k in range(n)]
    return pd.DataFrame(
        {
            "candidate_id": np.arange(n),
            "hole_id": holes,
            "from_m": np.arange(n) * 20.0,
            "to_m": np.arange(n) * 20.0 + 8.0,
            "length_m": 8.0,
            "domain": domain,
            "n_composites": 4,
            "density_t_m3": 2.6,
            "mass_kg": 33.0,
            "cu_pct": 0.5,
            "clay_swelling_pct": clays,
        }
    )


def test_weighted_mean_std_matches_numpy():
    rng = np.random.default_rng(0)
    x = rng.normal(size=(50, 2))
    w = rng.uniform(0.1, 2, 50)
    mean, std = weighted_mean_std(x, w)
    ref_mean = np.average(x, axis=0, weights=w)  # numpy's weighted average (reference)
    ref_std = np.sqrt(np.average((x - ref_mean) ** 2, axis=0, weights=w))
    np.testing.assert_allclose(mean, ref_mean, rtol=1e-12)
    np.testing.assert_allclose(std, ref_std, rtol=1e-12)


def test_weighted_quantile_on_equal_weights_matches_midpoint_rule():
    # Equal weights: the midpoint rule gives the Hazen plotting positions (k - 0.5) / n, so the
    # median of 1..4 is 2.5 and the 0.125 quantile is the first value (hand arithmetic).
    assert weighted_quantile([4, 1, 3, 2], [1, 1, 1, 1], 0.5) == pytest.approx(2.5)
    assert weighted_quantile([4, 1, 3, 2], [1, 1, 1, 1], 0.125) == pytest.approx(1.0)
    # Weights 1 and 3: midpoints at 0.5/4 = 0.125 and 2.5/4 = 0.625, so the median is
    # 1 + (0.5 - 0.125) / 0.5 * 9 = 7.75 and the 0.625 quantile is 10 (hand arithmetic).
    assert weighted_quantile([1, 10], [1, 3], 0.5) == pytest.approx(7.75)
    assert weighted_quantile([1, 10], [1, 3], 0.625) == pytest.approx(10.0)


@settings(max_examples=25, deadline=None)
@given(
    n=st.integers(30, 400),
    m=st.integers(2, 25),
    seed=st.integers(0, 1000),
    method=st.sampled_from(["kmeans", "grid"]),
)
def test_aggregate_demand_keeps_total_weight(n, m, seed, method):
    rng = np.random.default_rng(seed)
    pts = rng.normal(size=(n, 3))
    w = rng.uniform(0.5, 2, n)
    cen, cw, labels = aggregate_demand(pts, w, max_points=m, method=method, seed=seed)
    assert len(cen) <= m
    assert cw.sum() == pytest.approx(w.sum(), rel=1e-10)
    np.testing.assert_allclose(np.bincount(labels, weights=w, minlength=len(cw)), cw)
    # Each centre is the weighted centroid of its points.
    for k in range(len(cw)):
        np.testing.assert_allclose(
            cen[k], np.average(pts[labels == k], axis=0, weights=w[labels == k]), atol=1e-9
        )


def test_aggregate_demand_small_input_is_unchanged_and_bad_method():
    pts = np.arange(6.0).reshape(3, 2)
    cen, cw, labels = aggregate_demand(pts, np.ones(3), max_points=5)
    np.testing.assert_array_equal(cen, pts)
    assert labels.tolist() == [0, 1, 2]
    with pytest.raises(InputDataError, match=r"unknown aggregation method 'ward'"):
        aggregate_demand(np.zeros((10, 2)), np.ones(10), max_points=2, method="ward")


def test_standardiser_errors_and_constant_attribute():
    blocks = _blocks()
    std = Standardiser.from_blocks(blocks, ATTRS, blocks["tonnes_t"])
    assert std.scale[0] == 1.0  # copper is constant: scale 1 rather than 0
    with pytest.raises(InputDataError, match=r"attribute_weights names au_gpt, not among"):
        Standardiser.from_blocks(blocks, ATTRS, blocks["tonnes_t"], importance={"au_gpt": 2})
    with pytest.raises(InputDataError, match=r"attribute_weights must be non-negative"):
        Standardiser.from_blocks(blocks, ATTRS, blocks["tonnes_t"], importance={"cu_pct": -1})
    empty = blocks.assign(cu_pct=np.nan)
    with pytest.raises(InputDataError, match=r"has no value for attribute\(s\) cu_pct"):
        Standardiser.from_blocks(empty, ATTRS, empty["tonnes_t"])


@pytest.mark.solver
def test_select_samples_picks_one_per_cluster_and_explains():
    blocks = _blocks()
    cands = _candidates([1.0, 5.0, 10.1])
    res = select_samples(cands, blocks, {"X": 2}, ATTRS, min_separation_m=0.0, max_per_hole=1)
    sel = res.selection.sort_values("clay_swelling_pct")
    assert sel["clay_swelling_pct"].tolist() == [1.0, 10.1]
    assert sel["tonnes_represented_t"].tolist() == pytest.approx([1e6, 3e6])
    low, high = sel["reason"].tolist()
    assert low.startswith("stands for 1.0 Mt of domain X (25%), periods 1-2")
    assert "low swelling clay" in low
    assert high.startswith("stands for 3.0 Mt of domain X (75%), periods 3-5")
    assert res.solves[0].method == "milp"
    assert res.solves[0].status == "optimal"


@pytest.mark.solver
def test_existing_sample_sends_the_new_one_elsewhere():
    blocks = _blocks()
    cands = _candidates([1.0, 10.1])
    existing = pd.DataFrame(
        {"sample_id": ["VMT-001"], "domain": ["X"], "cu_pct": [0.5], "clay_swelling_pct": [10.0]}
    )
    res = select_samples(cands, blocks, {"X": 1}, ATTRS, existing=existing)
    assert res.selection["clay_swelling_pct"].tolist() == [1.0]
    served = res.block_sample["sample_key"].value_counts().to_dict()
    assert served == {"existing:VMT-001": 30, "new:0": 10}


@pytest.mark.solver
def test_selection_keeps_hole_limit():
    blocks = _blocks()
    cands = _candidates([1.0, 1.1, 10.0, 10.1], holes=["H1", "H1", "H1", "H2"])
    res = select_samples(cands, blocks, {"X": 2}, ATTRS, max_per_hole=1, min_separation_m=0.0)
    assert sorted(res.selection["hole_id"]) == ["H1", "H2"]


def test_format_helpers():
    assert format_periods([5, 1, 2, 3]) == "periods 1-3, 5"
    assert format_periods([2]) == "period 2"
    assert format_periods([]) == "no scheduled period"
    assert format_tonnes(1.23e6) == "1.2 Mt"
    assert format_tonnes(3.5e5) == "350 kt"
    assert format_tonnes(900) == "900 t"
    assert describe_periods([1, 2, 3, 4], [1, 1, 1, 1]) == "periods 1-4"
    assert describe_periods([1, 2, 3, 4], [10, 1, 1, 1]) == "periods 1-4, mostly 1"
    assert describe_periods([1, 2, 5, 6], [2, 10, 10, 2]) == "periods 1-6, mostly 2, 5"
    assert describe_periods([3, 3], [1, 1]) == "period 3"


def test_coverage_perfect_samples_and_wasserstein_reference():
    blocks = _blocks()
    std = Standardiser.from_blocks(blocks, ATTRS, blocks["tonnes_t"])
    samples = blocks.assign(source="new")  # every block sampled
    cov = coverage_table(blocks, samples, _candidates([1.0]), ATTRS, std)
    clay = cov[cov["attribute"] == "clay_swelling_pct"].iloc[0]
    assert clay["wasserstein"] == pytest.approx(0.0, abs=1e-12)
    assert clay["covered_tonnes_frac"] == 1.0
    assert clay["gap"] == ""
    two = pd.DataFrame(
        {
            "domain": ["X", "X"],
            "source": ["new", "existing"],
            "cu_pct": [0.5, 0.5],
            "clay_swelling_pct": [1.0, 10.0],
        }
    )
    cov2 = coverage_table(blocks, two, _candidates([1.0]), ATTRS, std)
    row = cov2[cov2["attribute"] == "clay_swelling_pct"].iloc[0]
    ref = wasserstein_distance(
        [1.0, 10.0], blocks["clay_swelling_pct"], v_weights=blocks["tonnes_t"]
    )  # scipy reference
    assert row["wasserstein"] == pytest.approx(ref, rel=1e-12)
    assert row["wasserstein_std"] == pytest.approx(ref / std.scale[1], rel=1e-12)
    assert (row["samples_new"], row["samples_existing"]) == (1, 1)
    assert list(cov2["attribute"]) == ["cu_pct", "clay_swelling_pct", "all attributes"]


def test_coverage_gap_words_tell_missing_core_from_missing_samples():
    blocks = _blocks()
    std = Standardiser.from_blocks(blocks, ATTRS, blocks["tonnes_t"])
    low_only = pd.DataFrame(
        {"domain": ["X"], "source": ["new"], "cu_pct": [0.5], "clay_swelling_pct": [1.0]}
    )
    # No candidate reaches the high-clay ore: new core is needed.
    cov = coverage_table(blocks, low_only, _candidates([1.0, 1.2]), ATTRS, std)
    gap = cov.loc[cov["attribute"] == "clay_swelling_pct", "gap"].iloc[0]
    assert gap.startswith("no candidate covers high swelling clay in domain X: 3.0 Mt (75%) above")
    assert "other core or new drilling is needed" in gap
    # A candidate does reach it: more samples would cover it.
    cov = coverage_table(blocks, low_only, _candidates([1.0, 10.0]), ATTRS, std)
    gap = cov.loc[cov["attribute"] == "clay_swelling_pct", "gap"].iloc[0]
    assert gap.startswith("high swelling clay in domain X is not sampled: 3.0 Mt (75%)")
    assert "candidates reach 10 %" in gap
    none = coverage_table(blocks, low_only.iloc[0:0], _candidates([1.0]), ATTRS, std)
    assert none.loc[none["attribute"] == "all attributes", "gap"].iloc[0] == (
        "no testwork sample in domain X (4.0 Mt scheduled)"
    )
    bare = coverage_table(blocks, low_only.iloc[0:0], _candidates([1.0], domain="Y"), ATTRS, std)
    assert bare.loc[bare["attribute"] == "all attributes", "gap"].iloc[0] == (
        "no candidate core in domain X (4.0 Mt scheduled): new drilling is needed to test it"
    )


@settings(max_examples=40, deadline=None)
@given(
    values=st.lists(st.floats(-5, 5), min_size=1, max_size=30),
    targets=st.lists(st.floats(-5, 5), min_size=1, max_size=10),
)
def test_nearest_1d_matches_broadcast(values, targets):
    from geomet.sampling.coverage import _nearest_1d

    v, t = np.array(values), np.array(targets)
    ref = np.abs(v[:, None] - t[None, :]).min(axis=1)
    np.testing.assert_allclose(_nearest_1d(v, t), ref)
