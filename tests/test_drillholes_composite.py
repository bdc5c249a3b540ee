"""Tests of geomet.drillholes.composite (downhole compositing)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.drillholes.composite import (
    composite_breaks,
    composite_intervals,
    is_grade_column,
    metal_content,
)
from geomet.errors import InputDataError


def samples():
    return pd.DataFrame(
        {
            "hole_id": ["VL-001"] * 4,
            "from_m": [0.0, 1.0, 2.5, 4.0],
            "to_m": [1.0, 2.5, 4.0, 5.0],
            "cu_pct": [0.2, 0.5, 0.3, 0.1],
            "density_t_m3": [2.5, 2.6, 2.7, 2.8],
            "lith_code": ["QFP", "QFP", "AND", "AND"],
        }
    )


def test_hand_worked_composites_length_and_density_weighted():
    # Worked by hand (weighted mean definition, Sinclair & Blackwell 2002 ch. 5):
    # composite 0-2 m: 1.0 m at 0.2 % (2.5 t/m3) and 1.0 m at 0.5 % (2.6 t/m3)
    #   length-weighted Cu = (0.2 + 0.5) / 2 = 0.35; density-weighted = (0.5 + 1.3) / 5.1
    out = composite_intervals(samples(), length_m=2.0, remnant="keep", density_weighted=False)
    assert out["cu_pct"].iloc[0] == pytest.approx(0.35)
    dens = composite_intervals(samples(), length_m=2.0, remnant="keep")
    assert dens["cu_pct"].iloc[0] == pytest.approx((0.2 * 2.5 + 0.5 * 2.6) / (2.5 + 2.6))
    assert dens["density_t_m3"].iloc[0] == pytest.approx(2.55)  # density itself by length
    # composite 2-4 m: 0.5 m QFP + 1.5 m AND -> longest overlap AND
    assert dens["lith_code"].tolist() == ["QFP", "AND", "AND"]
    assert dens[["from_m", "to_m"]].to_numpy().tolist() == [[0, 2], [2, 4], [4, 5]]
    assert list(dens.columns) == [
        "hole_id",
        "from_m",
        "to_m",
        "length_m",
        "cu_pct",
        "density_t_m3",
        "lith_code",
        "coverage_frac",
    ]


def test_remnant_rules():
    # 5 m hole in 2 m composites leaves a 1 m remnant; with 0.75 threshold it is "short"
    kw = {"length_m": 2.0, "min_remnant_frac": 0.75}
    merged = composite_intervals(samples(), remnant="merge", **kw)
    assert merged[["from_m", "to_m"]].to_numpy().tolist() == [[0, 2], [2, 5]]
    kept = composite_intervals(samples(), remnant="keep", **kw)
    assert kept["to_m"].tolist() == [2, 4, 5]
    dropped = composite_intervals(samples(), remnant="drop", **kw)
    assert dropped["to_m"].tolist() == [2, 4]
    # at the default threshold (0.5 x 2 m = 1 m) a 1 m remnant is not short: kept
    assert composite_intervals(samples(), length_m=2.0)["to_m"].tolist() == [2, 4, 5]


def test_composite_breaks_runs():
    run, f, t = composite_breaks(
        np.array([0, 0]),
        np.array([0.0, 10.0]),
        np.array([5.0, 10.5]),
        length_m=2.0,
        remnant="merge",
    )
    # run 0: 0-2, 2-5 (1 m remnant merged); run 1 is shorter than a composite: kept whole
    assert run.tolist() == [0, 0, 0, 1]
    assert f.tolist() == [0, 2, 4, 10]
    assert t.tolist() == [2, 4, 5, 10.5]


def test_by_category_never_crosses_a_boundary():
    out = composite_intervals(
        samples(), method="by_category", category_column="lith_code", length_m=2.0, remnant="keep"
    )
    assert out[["from_m", "to_m"]].to_numpy().tolist() == [[0, 2], [2, 2.5], [2.5, 4.5], [4.5, 5]]
    assert out["lith_code"].tolist() == ["QFP", "QFP", "AND", "AND"]
    assert out["cu_pct"].iloc[1] == pytest.approx(0.5)


def test_infinite_length_gives_one_composite_per_run():
    out = composite_intervals(
        samples(), method="by_category", category_column="lith_code", length_m=float("inf")
    )
    assert out[["from_m", "to_m"]].to_numpy().tolist() == [[0, 2.5], [2.5, 5]]
    whole = composite_intervals(samples(), length_m=float("inf"), density_weighted=False)
    # length-weighted mean over the hole: (0.2*1 + 0.5*1.5 + 0.3*1.5 + 0.1*1) / 5
    assert whole["cu_pct"].tolist() == pytest.approx([1.5 / 5])


def test_min_coverage_drops_poorly_sampled_composites():
    frame = pd.DataFrame(
        {"hole_id": ["H"] * 2, "from_m": [0.0, 3.5], "to_m": [2.0, 4.0], "cu_pct": [0.3, 0.4]}
    )
    out = composite_intervals(frame, length_m=2.0, min_coverage_frac=0.5)
    assert out["from_m"].tolist() == [0.0]  # 2-4 m is only 25 % sampled
    assert out.attrs["dropped_low_coverage"] == 1
    out = composite_intervals(frame, length_m=2.0, min_coverage_frac=0.2)
    assert out["coverage_frac"].tolist() == pytest.approx([1.0, 0.25])
    assert out["cu_pct"].iloc[1] == pytest.approx(0.4)  # mean over the sampled part only


def test_missing_values_are_not_zero():
    frame = samples()
    frame.loc[1, "cu_pct"] = np.nan
    out = composite_intervals(frame, length_m=2.0, density_weighted=False)
    assert out["cu_pct"].iloc[0] == pytest.approx(0.2)


def test_missing_density_takes_hole_mean():
    frame = samples()
    frame.loc[1, "density_t_m3"] = np.nan
    out = composite_intervals(frame, length_m=2.0)
    # hole mean density by length: (2.5*1 + 2.7*1.5 + 2.8*1) / 3.5
    rho = (2.5 + 2.7 * 1.5 + 2.8) / 3.5
    assert out["cu_pct"].iloc[0] == pytest.approx((0.2 * 2.5 + 0.5 * rho) / (2.5 + rho))


def test_helper_columns_are_not_carried():
    frame = samples().assign(
        cu_pct_censored=False, cu_pct_detection_limit=np.nan, assays_coverage_frac=1.0
    )
    out = composite_intervals(frame, length_m=2.0)
    assert not {"cu_pct_censored", "cu_pct_detection_limit", "assays_coverage_frac"} & set(out)


def test_is_grade_column():
    assert is_grade_column("au_gpt")
    assert is_grade_column("mo_ppm")
    assert not is_grade_column("white_mica_aloh_nm")
    assert not is_grade_column("coverage_frac")


def test_option_errors():
    with pytest.raises(InputDataError, match=r"composite method must be one of fixed_length"):
        composite_intervals(samples(), method="bench")
    with pytest.raises(InputDataError, match=r"remnant rule must be one of merge, keep, drop"):
        composite_intervals(samples(), remnant="spread")
    with pytest.raises(InputDataError, match=r"composite length_m must be > 0; got 0"):
        composite_intervals(samples(), length_m=0)
    with pytest.raises(InputDataError, match=r"composite length_m must be > 0; got nan"):
        composite_intervals(samples(), length_m=float("nan"))
    with pytest.raises(InputDataError, match=r"min_coverage_frac must be in \[0, 1\]"):
        composite_intervals(samples(), min_coverage_frac=2)
    with pytest.raises(InputDataError, match=r"method 'by_category' needs category_column"):
        composite_intervals(samples(), method="by_category")
    with pytest.raises(InputDataError, match=r"category_column 'domain' is not a column"):
        composite_intervals(samples(), method="by_category", category_column="domain")


@st.composite
def sample_tables(draw):
    rows = []
    for hole in draw(
        st.lists(
            st.sampled_from(["VL-001", "VL-002", "VL-003"]), min_size=1, max_size=3, unique=True
        )
    ):
        cuts = sorted(draw(st.lists(st.integers(0, 60), min_size=2, max_size=12, unique=True)))
        for a, b in zip(cuts[:-1], cuts[1:], strict=False):
            if draw(st.integers(0, 4)) == 0 and rows:
                continue  # a gap
            rows.append(
                (
                    hole,
                    a * 0.25,
                    b * 0.25,
                    draw(st.floats(0.0, 5.0)),
                    draw(st.floats(1.8, 3.2)),
                    draw(st.sampled_from(["QFP", "AND", "DIO"])),
                )
            )
    return pd.DataFrame(
        rows, columns=["hole_id", "from_m", "to_m", "cu_pct", "density_t_m3", "lith_code"]
    )


@settings(max_examples=80, deadline=None)
@given(
    frame=sample_tables(),
    length=st.floats(0.3, 6.0),
    method=st.sampled_from(["fixed_length", "by_category"]),
    remnant=st.sampled_from(["merge", "keep"]),
    density=st.booleans(),
)
def test_length_and_metal_are_conserved(frame, length, method, remnant, density):
    out = composite_intervals(
        frame,
        length_m=length,
        method=method,
        category_column="lith_code",
        remnant=remnant,
        min_coverage_frac=0.0,
        density_weighted=density,
    )
    sampled = float((frame["to_m"] - frame["from_m"]).sum())
    assert float((out["length_m"] * out["coverage_frac"]).sum()) == pytest.approx(sampled)
    before = metal_content(frame, "cu_pct", density_weighted=density)
    after = metal_content(out, "cu_pct", density_weighted=density)
    assert after == pytest.approx(before, rel=1e-9, abs=1e-9)
    # composites of a hole do not overlap and lie within the sampled extent
    for hole, part in out.groupby("hole_id"):
        src = frame[frame.hole_id == hole]
        assert (part["from_m"].to_numpy()[1:] >= part["to_m"].to_numpy()[:-1] - 1e-9).all()
        assert part["from_m"].min() >= src["from_m"].min() - 1e-9
        assert part["to_m"].max() <= src["to_m"].max() + 1e-9
    if method == "by_category":
        # every sample inside a composite has the composite's category
        for _, c in out.iterrows():
            inside = frame[
                (frame.hole_id == c.hole_id)
                & (frame.to_m > c.from_m + 1e-9)
                & (frame.from_m < c.to_m - 1e-9)
            ]
            assert set(inside["lith_code"]) == {c.lith_code}


@settings(max_examples=40, deadline=None)
@given(frame=sample_tables(), length=st.floats(0.5, 4.0))
def test_fixed_lengths(frame, length):
    out = composite_intervals(frame, length_m=length, remnant="keep", min_coverage_frac=0.0)
    # all composites but the last of each hole are exactly length_m long
    for _, part in out.groupby("hole_id"):
        np.testing.assert_allclose(part["length_m"].to_numpy()[:-1], length, rtol=1e-9)
        assert part["length_m"].iloc[-1] <= length + 1e-9
