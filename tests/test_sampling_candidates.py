"""Candidate testwork intervals: core mass arithmetic, sliding windows, consumed core."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.errors import InputDataError
from geomet.sampling.candidates import (
    CORE_DIAMETERS_MM,
    build_candidates,
    core_diameter_mm,
    core_length_for_mass_m,
    core_mass_kg,
    exclusions_frame,
    overlap_length_m,
    unavailable_mask,
)

# --- core mass -----------------------------------------------------------------------------------


def test_core_mass_hq_half_core_hand_arithmetic():
    # Inputs: length 1.0 m, HQ core d = 63.5 mm, density 2.7 t/m3, half core (0.5).
    # Cross-section = pi * 0.0635^2 / 4 = pi * 0.00403225 / 4 = 0.0031669 m2
    # Volume = 1.0 m * 0.0031669 m2 = 0.0031669 m3; mass = 0.0031669 * 2.7 t/m3 * 1000 = 8.5507 kg
    # Half core: 8.5507 * 0.5 = 4.2753 kg (hand arithmetic).
    assert core_mass_kg(1.0, 63.5, 2.7, core_fraction=0.5) == pytest.approx(4.2753, rel=1e-4)


def test_core_mass_nq_whole_core_hand_arithmetic():
    # Inputs: length 2.0 m, NQ d = 47.6 mm, density 2.65 t/m3, whole core.
    # Cross-section = pi * 0.0476^2 / 4 = pi * 0.00226576 / 4 = 0.00177952 m2
    # Mass = 2.0 * 0.00177952 * 2.65 * 1000 = 9.4315 kg (hand arithmetic).
    assert core_mass_kg(2.0, 47.6, 2.65) == pytest.approx(9.4315, rel=1e-4)


def test_core_mass_pq_quarter_core_hand_arithmetic():
    # Inputs: 0.5 m of PQ d = 85.0 mm, density 2.5 t/m3, quarter core (0.25).
    # pi * 0.085^2 / 4 = 0.00567450 m2; 0.5 * 0.00567450 * 2.5 * 1000 * 0.25 = 1.77328 kg.
    assert core_mass_kg(0.5, 85.0, 2.5, core_fraction=0.25) == pytest.approx(1.77328, rel=1e-4)


def test_core_mass_accepts_float_array_series():
    lengths = [1.0, 2.0]
    as_float = core_mass_kg(1.0, 63.5, 2.7)
    assert isinstance(as_float, float)
    arr = core_mass_kg(np.array(lengths), 63.5, 2.7)
    assert isinstance(arr, np.ndarray)
    np.testing.assert_allclose(arr, [as_float, 2 * as_float])
    ser = core_mass_kg(
        pd.Series(lengths, index=["a", "b"]), 63.5, pd.Series([2.7, 2.7], index=["a", "b"])
    )
    assert isinstance(ser, pd.Series)
    assert list(ser.index) == ["a", "b"]
    np.testing.assert_allclose(ser.to_numpy(), arr)


@settings(deadline=None)
@given(
    mass=st.floats(0.1, 500),
    diameter=st.floats(20, 150),
    density=st.floats(1.5, 4.5),
    fraction=st.floats(0.1, 1.0),
)
def test_length_for_mass_inverts_mass(mass, diameter, density, fraction):
    length = core_length_for_mass_m(mass, diameter, density, core_fraction=fraction)
    back = core_mass_kg(length, diameter, density, core_fraction=fraction)
    assert back == pytest.approx(mass, rel=1e-10)


@settings(deadline=None)
@given(length=st.floats(0.1, 50), extra=st.floats(0.01, 10))
def test_mass_increases_with_length(length, extra):
    assert core_mass_kg(length + extra, 63.5, 2.6) > core_mass_kg(length, 63.5, 2.6)


def test_core_diameter_lookup_and_unknown_size():
    # Wireline core diameters (from memory): NQ 47.6 mm, HQ 63.5 mm, PQ 85.0 mm.
    assert core_diameter_mm("NQ") == 47.6
    assert core_diameter_mm(" hq ") == 63.5
    assert core_diameter_mm("PQ") == 85.0
    assert set(CORE_DIAMETERS_MM) >= {"NQ", "HQ", "PQ"}
    with pytest.raises(InputDataError, match=r"unknown core size 'ZQ'; valid sizes are BQ, NQ"):
        core_diameter_mm("ZQ")


# --- candidates ------------------------------------------------------------------------------


def _composites(rows):
    return pd.DataFrame(
        rows, columns=["hole_id", "from_m", "to_m", "density_t_m3", "domain", "cu_pct"]
    )


def _run(n, hole="H1", domain="A", density=2.6, start=0.0, step=2.0, cu=None):
    cu = cu if cu is not None else [0.1 * (k + 1) for k in range(n)]
    return [
        (hole, start + k * step, start + (k + 1) * step, density, domain, cu[k]) for k in range(n)
    ]


def test_candidate_needs_four_two_metre_composites_for_25_kg():
    # Half HQ at 2.6 t/m3: 0.0031669 m2 * 2.6 * 1000 * 0.5 = 4.1170 kg/m (hand arithmetic);
    # 3 composites (6 m) = 24.70 kg < 25 kg, 4 composites (8 m) = 32.94 kg >= 25 kg.
    comp = _composites(_run(4))
    cand = build_candidates(
        comp, mass_kg=25.0, core_diameter_mm=63.5, core_fraction=0.5, attributes=["cu_pct"]
    )
    assert len(cand) == 1
    row = cand.iloc[0]
    assert (row.from_m, row.to_m, row.length_m, row.n_composites) == (0.0, 8.0, 8.0, 4)
    assert row.mass_kg == pytest.approx(8 * 4.1170, rel=1e-4)
    # Equal masses: the mean is the plain mean of 0.1..0.4.
    assert row.cu_pct == pytest.approx(0.25)
    assert list(cand.columns[:9]) == [
        "candidate_id",
        "hole_id",
        "from_m",
        "to_m",
        "length_m",
        "domain",
        "n_composites",
        "density_t_m3",
        "mass_kg",
    ]


def test_candidate_windows_slide_one_composite_at_a_time():
    cand = build_candidates(_composites(_run(6)), mass_kg=25.0, core_diameter_mm=63.5)
    assert cand["from_m"].tolist() == [0.0, 2.0, 4.0]
    assert cand["to_m"].tolist() == [8.0, 10.0, 12.0]


def test_candidate_attributes_are_mass_weighted():
    # Two 2 m composites, densities 2.0 and 3.0, cu 1.0 and 2.0: mass weights 4 and 6 (t/m2 * m),
    # so cu = (4*1 + 6*2) / 10 = 1.6 and the interval density = (2*2 + 2*3) / 4 = 2.5 t/m3.
    comp = _composites([("H1", 0, 2, 2.0, "A", 1.0), ("H1", 2, 4, 3.0, "A", 2.0)])
    cand = build_candidates(comp, mass_kg=1.0, core_diameter_mm=63.5, attributes=["cu_pct"])
    two = cand[cand["n_composites"] == 1]
    assert len(two) == 2  # 1 kg is less than one composite: each composite alone is a window
    comp_mass = build_candidates(
        comp, mass_kg=20.0, core_diameter_mm=63.5, core_fraction=1.0, attributes=["cu_pct"]
    )
    # Whole HQ: 2 m at 2.0 = 12.67 kg < 20 kg, so the window needs both composites.
    row = comp_mass.iloc[0]
    assert row.cu_pct == pytest.approx(1.6)
    assert row.density_t_m3 == pytest.approx(2.5)


def test_candidate_runs_break_at_domain_gap_hole_and_unavailable_core():
    rows = _run(3, domain="A") + _run(3, domain="B", start=6.0)  # domain change at 6 m
    rows += _run(4, hole="H2", start=0.0)[:2] + _run(2, hole="H2", start=6.0)  # 4-6 m missing
    comp = _composites(rows)
    cand = build_candidates(comp, mass_kg=25.0, core_diameter_mm=63.5)
    assert len(cand) == 0
    comp4 = _composites(_run(5))
    blocked = np.array([False, False, True, False, False])
    assert (
        len(build_candidates(comp4, mass_kg=25.0, core_diameter_mm=63.5, unavailable=blocked)) == 0
    )


def test_candidate_max_length_drops_long_windows():
    # Half HQ at 1.2 t/m3: 1.900 kg/m, so 25 kg needs 14 m (7 composites); hand arithmetic.
    comp = _composites(_run(8, density=1.2))
    full = build_candidates(comp, mass_kg=25.0, core_diameter_mm=63.5)
    short = build_candidates(comp, mass_kg=25.0, core_diameter_mm=63.5, max_length_m=8.0)
    assert full["length_m"].tolist() == [14.0, 14.0]
    assert len(short) == 0


@settings(max_examples=40, deadline=None)
@given(
    lengths=st.lists(st.sampled_from([1.0, 1.5, 2.0, 3.0]), min_size=1, max_size=30),
    domains=st.lists(st.sampled_from(["A", "B"]), min_size=30, max_size=30),
    mass=st.floats(2.0, 60.0),
)
def test_candidates_are_shortest_single_domain_windows(lengths, domains, mass):
    frm = np.concatenate([[0.0], np.cumsum(lengths)[:-1]])
    comp = pd.DataFrame(
        {
            "hole_id": "H1",
            "from_m": frm,
            "to_m": frm + lengths,
            "density_t_m3": 2.6,
            "domain": domains[: len(lengths)],
            "cu_pct": 1.0,
        }
    )
    cand = build_candidates(comp, mass_kg=mass, core_diameter_mm=63.5)
    per_m = core_mass_kg(1.0, 63.5, 2.6, core_fraction=0.5)
    for row in cand.itertuples():
        inside = comp[(comp.from_m >= row.from_m - 1e-9) & (comp.to_m <= row.to_m + 1e-9)]
        assert (inside["domain"] == inside["domain"].iloc[0]).all()
        assert row.mass_kg >= mass * (1 - 1e-9)
        assert row.mass_kg == pytest.approx(row.length_m * per_m)
        # Shortest: without its last composite the window is too light.
        last = inside["to_m"].max() - inside["from_m"].max()
        assert (row.length_m - last) * per_m < mass


def test_candidate_input_errors():
    comp = _composites(_run(4))
    with pytest.raises(InputDataError, match=r"lacks column\(s\) au_gpt"):
        build_candidates(comp, mass_kg=25.0, core_diameter_mm=63.5, attributes=["au_gpt"])
    with pytest.raises(InputDataError, match=r"mass_kg must be positive; got 0"):
        build_candidates(comp, mass_kg=0, core_diameter_mm=63.5)
    with pytest.raises(InputDataError, match=r"core_fraction must be in \(0, 1\]; got 1.5"):
        build_candidates(comp, mass_kg=5, core_diameter_mm=63.5, core_fraction=1.5)
    with pytest.raises(InputDataError, match=r"core_diameter_mm must be positive; got -1"):
        build_candidates(comp, mass_kg=5, core_diameter_mm=-1)


# --- consumed and excluded core --------------------------------------------------------------


def test_overlap_and_unavailable_mask():
    comp = _composites(_run(5) + _run(2, hole="H2"))
    used = pd.DataFrame({"hole_id": ["H1", "H2"], "from_m": [3.0, 4.0], "to_m": [4.5, 6.0]})
    pairs = overlap_length_m(comp, used)
    # H1 3.0-4.5 overlaps 2-4 by 1.0 m and 4-6 by 0.5 m; H2 4-6 touches nothing (H2 ends at 4 m).
    assert sorted(zip(pairs.left, pairs.overlap_m, strict=True)) == [(1, 1.0), (2, 0.5)]
    mask = unavailable_mask(comp, used, None)
    assert mask.tolist() == [False, True, True, False, False, False, False]
    # Touching is not overlapping.
    touch = pd.DataFrame({"hole_id": ["H1"], "from_m": [10.0], "to_m": [12.0]})
    assert not unavailable_mask(comp, touch).any()


def test_exclusions_frame_from_records_and_errors():
    frame = exclusions_frame([{"hole_id": "VLT-0003", "from_m": 10, "to_m": 20}])
    assert frame.to_dict("records") == [{"hole_id": "VLT-0003", "from_m": 10.0, "to_m": 20.0}]
    assert len(exclusions_frame(None)) == 0
    assert len(exclusions_frame([])) == 0
    with pytest.raises(InputDataError, match=r"need from_m < to_m; got hole VLT-0003 from_m=20.0"):
        exclusions_frame([{"hole_id": "VLT-0003", "from_m": 20, "to_m": 10}])
    with pytest.raises(
        InputDataError,
        match=r"exclusions table needs columns hole_id, from_m, "
        r"to_m; missing to_m",
    ):
        exclusions_frame([{"hole_id": "VLT-0003", "from_m": 20}])


def test_mass_per_metre_matches_cylinder_formula():
    # Independent formula: volume of a cylinder V = pi r^2 h (r = 31.75 mm for HQ).
    r_m = 0.03175
    expected = math.pi * r_m**2 * 1.0 * 2.7 * 1000
    assert core_mass_kg(1.0, 63.5, 2.7) == pytest.approx(expected, rel=1e-12)
