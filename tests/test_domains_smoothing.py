"""Downhole smoothing to a minimum run length."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.domains.smoothing import downhole_runs, smooth_downhole
from geomet.errors import InputDataError


def _intervals(lengths, hole="H1"):
    to = np.cumsum(lengths)
    return np.array([hole] * len(lengths)), to - np.asarray(lengths), to


def test_hand_example_short_run_merges_into_longer_neighbour():
    # 5 x 2 m of domain 1, 2 x 2 m of domain 2, 3 x 2 m of domain 3: the 4 m run is shorter
    # than 5 m and its longer neighbour (10 m of domain 1) absorbs it
    h, f, t = _intervals([2.0] * 10)
    labels = np.array([1, 1, 1, 1, 1, 2, 2, 3, 3, 3])
    out = smooth_downhole(h, f, t, labels, 5.0, merge_to="longer")
    assert out.tolist() == [1, 1, 1, 1, 1, 1, 1, 3, 3, 3]


def test_similar_neighbour_wins_over_longer():
    h, f, t = _intervals([2.0] * 10)
    labels = np.array([1, 1, 1, 1, 1, 2, 2, 3, 3, 3])
    feats = np.array([[0.0]] * 5 + [[9.0]] * 2 + [[10.0]] * 3)  # run 2 looks like run 3
    out = smooth_downhole(h, f, t, labels, 5.0, features=feats, merge_to="similar")
    assert out.tolist() == [1, 1, 1, 1, 1, 3, 3, 3, 3, 3]


def test_row_order_does_not_matter():
    h, f, t = _intervals([1.0] * 30)
    rng = np.random.default_rng(0)
    labels = rng.integers(0, 4, 30)
    ref = smooth_downhole(h, f, t, labels, 4.0, merge_to="longer")
    perm = rng.permutation(30)
    out = smooth_downhole(h[perm], f[perm], t[perm], labels[perm], 4.0, merge_to="longer")
    assert np.array_equal(out, ref[perm])


def test_short_hole_and_unclassified_barrier_stay():
    h1, f1, t1 = _intervals([2.0, 2.0], "A")  # a whole hole of 4 m < 10 m
    h2, f2, t2 = _intervals([2.0] * 8, "B")
    labels = np.array([1, 2] + [3, 3, 3, -1, 4, -1, 3, 3])
    h = np.r_[h1, h2]
    f = np.r_[f1, f2]
    t = np.r_[t1, t2]
    out = smooth_downhole(h, f, t, labels, 10.0, merge_to="longer")
    assert out[:2].tolist() in ([1, 1], [2, 2])  # hole A ends as one 4 m run
    assert out[5] == -1
    assert out[7] == -1
    assert out[6] == 4  # between two barriers: nothing to merge into


def test_gap_separates_neighbours():
    # 0-8 m domain 1, 8-10 m domain 2, then a 20 m gap and 30-40 m domain 3
    h = np.array(["G"] * 3)
    f = np.array([0.0, 8.0, 30.0])
    t = np.array([8.0, 10.0, 40.0])
    labels = np.array([1, 2, 3])
    joined = smooth_downhole(h, f, t, labels, 5.0, merge_to="longer")
    assert joined.tolist() == [1, 3, 3]  # the 10 m run below the gap is longer
    split = smooth_downhole(h, f, t, labels, 5.0, merge_to="longer", max_gap_m=5.0)
    assert split.tolist() == [1, 1, 3]
    with pytest.raises(InputDataError, match="max_gap_m must be a non-negative"):
        smooth_downhole(h, f, t, labels, 5.0, max_gap_m=-1.0)


def test_zero_minimum_is_identity():
    h, f, t = _intervals([1.0] * 5)
    labels = np.array([0, 1, 0, 1, 0])
    assert smooth_downhole(h, f, t, labels, 0.0).tolist() == labels.tolist()


def test_runs_table():
    h, f, t = _intervals([2.0, 2.0, 3.0])
    runs = downhole_runs(h, f, t, np.array([5, 5, 6]))
    assert runs[["from_m", "to_m", "length_m", "label", "intervals"]].values.tolist() == [
        [0.0, 4.0, 4.0, 5, 2], [4.0, 7.0, 3.0, 6, 1]]


@st.composite
def holes(draw):
    n_holes = draw(st.integers(1, 4))
    rows = []
    for k in range(n_holes):
        n = draw(st.integers(1, 25))
        lengths = draw(st.lists(st.floats(0.5, 6.0), min_size=n, max_size=n))
        labels = draw(st.lists(st.integers(0, 4), min_size=n, max_size=n))
        depth = 0.0
        for length, lab in zip(lengths, labels, strict=True):
            rows.append((f"H{k}", depth, depth + length, lab))
            depth += length
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", "label"])


@settings(max_examples=80, deadline=None)
@given(holes(), st.floats(1.0, 20.0), st.sampled_from(["similar", "longer"]))
def test_no_short_run_left_and_metres_conserved(df, min_run, merge_to):
    rng = np.random.default_rng(0)
    feats = rng.normal(size=(len(df), 2))
    out = smooth_downhole(df["hole_id"], df["from_m"], df["to_m"], df["label"].to_numpy(),
                          min_run, features=feats, merge_to=merge_to)
    assert len(out) == len(df)
    assert set(out) <= set(df["label"])  # only existing domains
    runs = downhole_runs(df["hole_id"], df["from_m"], df["to_m"], out)
    hole_m = df.assign(length=df["to_m"] - df["from_m"]).groupby("hole_id")["length"].sum()
    # metres conserved: every hole keeps its length, rows are only relabelled
    assert np.allclose(runs.groupby("hole_id")["length_m"].sum(), hole_m)
    short = runs[runs["length_m"] < min_run - 1e-9]
    for hole in short["hole_id"]:
        # only a whole hole shorter than the minimum may remain short
        assert (runs["hole_id"] == hole).sum() == 1
        assert hole_m[hole] < min_run


def test_errors():
    h, f, t = _intervals([1.0, 1.0])
    with pytest.raises(InputDataError, match="same length"):
        smooth_downhole(h, f, t, np.array([1]), 5)
    with pytest.raises(InputDataError, match="from_m must be less than to_m"):
        smooth_downhole(h, t, f, np.array([1, 2]), 5)
    with pytest.raises(InputDataError, match="labels must be integers"):
        smooth_downhole(h, f, t, np.array([1.5, 2.0]), 5)
    with pytest.raises(InputDataError, match="non-negative number of metres"):
        smooth_downhole(h, f, t, np.array([1, 2]), -1)
    with pytest.raises(InputDataError, match="'similar' or 'longer'"):
        smooth_downhole(h, f, t, np.array([1, 2]), 5, merge_to="random")
    h3, f3, t3 = _intervals([1.0] * 6)
    with pytest.raises(InputDataError, match="did not converge in 1 passes"):
        smooth_downhole(h3, f3, t3, np.array([0, 1, 0, 1, 0, 1]), 5, max_passes=1)
    with pytest.raises(InputDataError, match="one row per interval"):
        smooth_downhole(h, f, t, np.array([1, 2]), 5, features=np.ones((3, 2)))
