"""Tests of geomet.drillholes.desurvey (minimum curvature)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from geomet.drillholes.desurvey import (
    desurvey_holes,
    desurvey_intervals,
    direction_vectors,
    dogleg_angle,
    inclination_from_dip,
    minimum_curvature,
    positions_at,
    ratio_factor,
)
from geomet.errors import InputDataError


def test_published_worked_example():
    # Worked example of the minimum curvature method in Lapeyrouse, N. J. (2002) "Formulas and
    # Calculations for Drilling, Production and Workover", 2nd ed., Gulf Professional Publishing,
    # as reproduced at drillingformulas.com/minimum-curvature-method: stations at 3500 and
    # 3600 ft, I 15 -> 25 deg, A 20 -> 45 deg; dogleg 0.22605 rad; North 27.22, East 19.45,
    # TVD 94.01 ft (lengths are unit-free, given to 2 decimals: atol 0.005).
    dn, de, dv = minimum_curvature(3600.0 - 3500.0, 15.0, 20.0, 25.0, 45.0)
    assert float(dn) == pytest.approx(27.22, abs=0.005)
    assert float(de) == pytest.approx(19.45, abs=0.005)
    assert float(dv) == pytest.approx(94.01, abs=0.005)
    beta = dogleg_angle(direction_vectors(15.0, 20.0), direction_vectors(25.0, 45.0))
    assert float(beta) == pytest.approx(0.22605, abs=5e-6)


def test_dogleg_matches_published_cosine_formula():
    # cos b = cos(I2 - I1) - sin I1 sin I2 (1 - cos(A2 - A1))  (Sawaryn & Thorogood 2005)
    i1, a1, i2, a2 = np.radians([15.0, 20.0, 25.0, 45.0])
    expected = np.arccos(np.cos(i2 - i1) - np.sin(i1) * np.sin(i2) * (1 - np.cos(a2 - a1)))
    got = dogleg_angle(direction_vectors(15.0, 20.0), direction_vectors(25.0, 45.0))
    assert float(got) == pytest.approx(expected, rel=1e-12)


def test_ratio_factor_formula_and_small_angle_limit():
    # RF = (2/b) tan(b/2); at b = 0.22605 that is 1.00428. (The worked example page above prints
    # RF = 1.00408, a misprint: its N/E/TVD answers need 1.00428.)
    assert ratio_factor(0.22605) == pytest.approx(2 / 0.22605 * np.tan(0.22605 / 2), rel=1e-14)
    assert ratio_factor(0.22605) == pytest.approx(1.00428, abs=5e-6)
    # series 1 + b^2/12 for small b; continuous across the switch at 1e-4
    assert ratio_factor(0.0) == 1.0
    assert ratio_factor(np.array([0.99e-4, 1.01e-4])) == pytest.approx(
        [1 + 0.99e-4**2 / 12, 1 + 1.01e-4**2 / 12], rel=1e-15
    )


def test_constant_build_follows_the_circular_arc():
    # A hole building from vertical to inclination t over length L is a circular arc of radius
    # R = L/t: TVD = R sin t, horizontal departure = R (1 - cos t) (plane geometry).
    length, theta = 150.0, np.radians(40.0)
    dn, de, dv = minimum_curvature(length, 0.0, 0.0, 40.0, 0.0)
    radius = length / theta
    assert float(dv) == pytest.approx(radius * np.sin(theta), rel=1e-12)
    assert float(dn) == pytest.approx(radius * (1 - np.cos(theta)), rel=1e-12)
    assert float(de) == pytest.approx(0.0, abs=1e-12)


def test_inclination_from_dip():
    assert inclination_from_dip(-90.0) == 0.0
    assert inclination_from_dip(np.array([-60.0, 0.0])).tolist() == [30.0, 90.0]


def vellantra_holes():
    collars = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-002", "VL-003"],
            "easting_m": [1000.0, 1200.0, 900.0],
            "northing_m": [5000.0, 5100.0, 4900.0],
            "elevation_m": [3200.0, 3150.0, 3180.0],
            "total_depth_m": [300.0, 200.0, 100.0],
        }
    )
    surveys = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-001", "VL-001", "VL-002", "VL-002"],
            "depth_m": [0.0, 150.0, 300.0, 20.0, 200.0],
            "azimuth_deg": [350.0, 5.0, 20.0, 135.0, 135.0],
            "dip_deg": [-60.0, -62.0, -66.0, -55.0, -55.0],
        }
    )
    return collars, surveys


def test_stations_and_collar_station():
    collars, surveys = vellantra_holes()
    st_ = desurvey_holes(collars, surveys)
    # VL-002 gets a collar station at 0 with its first orientation; VL-003 has no survey: vertical
    assert st_.groupby("hole_id").size().to_dict() == {"VL-001": 3, "VL-002": 3, "VL-003": 1}
    first = st_.drop_duplicates("hole_id").set_index("hole_id")
    assert first.loc["VL-002", "dip_deg"] == -55.0
    assert first.loc["VL-002", "depth_m"] == 0.0
    assert first.loc["VL-001", "x_m"] == 1000.0
    assert first.loc["VL-001", "z_m"] == 3200.0
    # VL-001 station 2 equals the pairwise formula across the 350 -> 5 deg azimuth wrap
    dn, de, dv = minimum_curvature(150.0, 30.0, 350.0, 28.0, 5.0)
    row = st_[(st_.hole_id == "VL-001") & (st_.depth_m == 150.0)].iloc[0]
    assert row["x_m"] == pytest.approx(1000.0 + float(de))
    assert row["y_m"] == pytest.approx(5000.0 + float(dn))
    assert row["z_m"] == pytest.approx(3200.0 - float(dv))


def test_positions_at_stations_equal_stations_and_vertical_hole():
    collars, surveys = vellantra_holes()
    st_ = desurvey_holes(collars, surveys)
    xyz = positions_at(st_, st_["hole_id"], st_["depth_m"])
    np.testing.assert_allclose(xyz.to_numpy(), st_[["x_m", "y_m", "z_m"]].to_numpy(), atol=1e-9)
    v = positions_at(st_, ["VL-003", "VL-003"], [10.0, 95.5])
    assert v["x_m"].tolist() == [900.0, 900.0]
    assert v["y_m"].tolist() == [4900.0, 4900.0]
    assert v["z_m"].tolist() == pytest.approx([3170.0, 3084.5])


def test_positions_unknown_hole_is_nan_and_beyond_last_station_is_straight():
    collars, surveys = vellantra_holes()
    st_ = desurvey_holes(collars, surveys)
    out = positions_at(st_, ["VL-404"], [10.0])
    assert out.isna().all(axis=None)
    last = st_[st_.hole_id == "VL-001"].iloc[-1]
    far = positions_at(st_, ["VL-001"], [last.depth_m + 10.0]).iloc[0]
    t = direction_vectors(last.inclination_deg, last.azimuth_deg)
    assert far["x_m"] == pytest.approx(last.x_m + 10 * t[1])
    assert far["z_m"] == pytest.approx(last.z_m - 10 * t[2])


def test_desurvey_intervals_mid_from_to():
    collars, surveys = vellantra_holes()
    iv = pd.DataFrame({"hole_id": ["VL-003"], "from_m": [10.0], "to_m": [20.0]})
    assert desurvey_intervals(iv, collars, surveys)["z_m"].iloc[0] == pytest.approx(3165.0)
    assert desurvey_intervals(iv, collars, surveys, at="to")["z_m"].iloc[0] == 3160.0
    with pytest.raises(InputDataError, match=r"desurvey point must be one of mid, from, to"):
        desurvey_intervals(iv, collars, surveys, at="top")


def test_errors_name_the_problem():
    collars, surveys = vellantra_holes()
    with pytest.raises(InputDataError, match=r"table 'collars' lacks column\(s\) elevation_m"):
        desurvey_holes(collars.drop(columns="elevation_m"), surveys)
    bad = pd.concat(
        [
            surveys,
            pd.DataFrame(
                {"hole_id": ["VL-999"], "depth_m": [0.0], "azimuth_deg": [0.0], "dip_deg": [-90.0]}
            ),
        ]
    )
    with pytest.raises(InputDataError, match=r"surveys name 1 hole\(s\) with no collar: VL-999"):
        desurvey_holes(collars, bad)


angles = st.floats(-89.0, -1.0)
azimuths = st.floats(0.0, 359.9)


@settings(max_examples=60, deadline=None)
@given(dip=angles, azi=azimuths, depths=st.lists(st.floats(0.0, 500.0), min_size=1, max_size=10))
def test_straight_hole_is_a_line(dip, azi, depths):
    collars = pd.DataFrame(
        {"hole_id": ["H"], "easting_m": [10.0], "northing_m": [20.0], "elevation_m": [100.0]}
    )
    surveys = pd.DataFrame(
        {
            "hole_id": ["H"] * 3,
            "depth_m": [0.0, 100.0, 250.0],
            "azimuth_deg": [azi] * 3,
            "dip_deg": [dip] * 3,
        }
    )
    st_ = desurvey_holes(collars, surveys)
    got = positions_at(st_, ["H"] * len(depths), depths).to_numpy()
    t = direction_vectors(90.0 + dip, azi)
    d = np.asarray(depths)
    expected = np.column_stack([10.0 + d * t[1], 20.0 + d * t[0], 100.0 - d * t[2]])
    np.testing.assert_allclose(got, expected, atol=1e-7)


@settings(max_examples=60, deadline=None)
@given(
    dips=st.lists(angles, min_size=2, max_size=6),
    azis=st.lists(azimuths, min_size=6, max_size=6),
    step=st.floats(5.0, 100.0),
    frac=st.floats(0.0, 1.0),
)
def test_interpolated_points_lie_on_the_arc(dips, azis, step, frac):
    n = len(dips)
    collars = pd.DataFrame(
        {"hole_id": ["H"], "easting_m": [0.0], "northing_m": [0.0], "elevation_m": [0.0]}
    )
    surveys = pd.DataFrame(
        {
            "hole_id": ["H"] * n,
            "depth_m": np.arange(n) * step,
            "azimuth_deg": azis[:n],
            "dip_deg": dips,
        }
    )
    st_ = desurvey_holes(collars, surveys)
    tv = direction_vectors(st_["inclination_deg"], st_["azimuth_deg"])
    beta = dogleg_angle(tv[:-1], tv[1:])
    assume(np.all(beta < 3.0))  # near-reversals are not drill holes
    depth = frac * step  # a point in the first segment
    p = positions_at(st_, ["H"], [depth]).to_numpy()[0]
    p1 = st_[["x_m", "y_m", "z_m"]].to_numpy()[0]
    # on a circular arc of length s and radius R = step / beta the chord is 2 R sin(s / 2R)
    b = float(beta[0])
    chord = depth if b < 1e-9 else 2 * (step / b) * np.sin(frac * b / 2)
    assert np.linalg.norm(p - p1) == pytest.approx(chord, rel=1e-9, abs=1e-9)
    # depth along the path is preserved: chords never exceed the along-hole length
    assert np.linalg.norm(p - p1) <= depth + 1e-9


@settings(max_examples=30, deadline=None)
@given(st.lists(st.tuples(angles, azimuths), min_size=2, max_size=5), st.integers(2, 4))
def test_all_holes_at_once_equals_one_at_a_time(orient, n_holes):
    rows = []
    for h in range(n_holes):
        for k, (dip, azi) in enumerate(orient):
            rows.append((f"H{h}", k * 30.0, (azi + 40 * h) % 360, dip))
    surveys = pd.DataFrame(rows, columns=["hole_id", "depth_m", "azimuth_deg", "dip_deg"])
    collars = pd.DataFrame(
        {
            "hole_id": [f"H{h}" for h in range(n_holes)],
            "easting_m": np.arange(n_holes) * 100.0,
            "northing_m": 0.0,
            "elevation_m": 1000.0,
        }
    )
    together = desurvey_holes(collars, surveys.sample(frac=1.0, random_state=1))
    for h in range(n_holes):
        one = desurvey_holes(collars.iloc[[h]], surveys[surveys.hole_id == f"H{h}"])
        part = together[together.hole_id == f"H{h}"]
        np.testing.assert_allclose(
            part[["x_m", "y_m", "z_m"]].to_numpy(), one[["x_m", "y_m", "z_m"]].to_numpy(), atol=1e-9
        )
