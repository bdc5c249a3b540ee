"""Comminution: Bond's third law, Rowland's efficiency factors, Morrell's SMC method."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.errors import InputDataError
from geomet.forecast import comminution as comm


def test_bond_third_law_check_value():
    # Bond (1952) third law; check value from the project's science notes (recomputed
    # independently): Wi 14, F80 10 000 µm, P80 100 µm -> 12.600 kWh/t.
    assert comm.bond_specific_energy(14.0, 10_000.0, 100.0) == pytest.approx(12.6, abs=1e-9)


def test_bond_accepts_float_array_series():
    wi = [10.0, 14.0]
    expected = [10 * w * (1 / 10 - 1 / 100) for w in wi]  # hand arithmetic, √100 = 10, √10⁴ = 100
    assert isinstance(comm.bond_specific_energy(14.0, 10_000.0, 100.0), float | np.floating)
    np.testing.assert_allclose(comm.bond_specific_energy(np.array(wi), 10_000.0, 100.0), expected)
    s = pd.Series(wi, index=["a", "b"])
    out = comm.bond_specific_energy(s, 10_000.0, 100.0)
    assert isinstance(out, pd.Series)
    assert list(out.index) == ["a", "b"]
    np.testing.assert_allclose(out.to_numpy(), expected)


def test_bond_rejects_product_coarser_than_feed():
    with pytest.raises(InputDataError, match=r"f80_um > p80_um > 0"):
        comm.bond_specific_energy(14.0, 100.0, 200.0)


def test_rowland_ef3_diameter():
    # Rowland & Kjos (1980) EF3 = (2.44/D)^0.2 below 3.81 m, 0.914 above (formula from memory;
    # values by hand arithmetic).
    assert comm.rowland_ef3_diameter(2.44) == pytest.approx(1.0)
    assert comm.rowland_ef3_diameter(3.0) == pytest.approx((2.44 / 3.0) ** 0.2)
    assert comm.rowland_ef3_diameter(7.3) == pytest.approx(0.914)
    with pytest.raises(InputDataError, match="mill_diameter_m must be positive"):
        comm.rowland_ef3_diameter(0.0)


def test_rowland_ef4_oversize_feed():
    # EF4 = (Rr + (Wi − 7)(F − F0)/F0)/Rr with F0 = 4000 √(13/Wi) (Rowland & Kjos 1980, from
    # memory). Wi 14, F 10 000, P 100: F0 = 3854.3, Rr = 100 -> 1.11163 (hand arithmetic).
    f0 = 4000 * math.sqrt(13 / 14)
    assert comm.rowland_optimum_feed_um(14.0) == pytest.approx(f0)
    expected = (100 + 7 * (10_000 - f0) / f0) / 100
    assert float(comm.rowland_ef4_oversize(14.0, 10_000.0, 100.0)) == pytest.approx(expected)
    assert expected == pytest.approx(1.11161, abs=1e-5)
    # Feed finer than the optimum: no correction.
    assert float(comm.rowland_ef4_oversize(14.0, 2_000.0, 100.0)) == 1.0


def test_rowland_ef5_fineness():
    # EF5 = (P + 10.3)/(1.145 P) below 75 µm (Rowland & Kjos 1980, from memory).
    assert float(comm.rowland_ef5_fineness(40.0)) == pytest.approx(50.3 / 45.8)
    assert float(comm.rowland_ef5_fineness(106.0)) == 1.0
    with pytest.raises(InputDataError, match="p80_um must be positive"):
        comm.rowland_ef5_fineness(-1.0)


def test_bond_ball_mill_energy_applies_factors():
    base = comm.bond_specific_energy(15.0, 750.0, 50.0)
    ef = comm.rowland_ef5_fineness(50.0) * comm.rowland_ef3_diameter(5.0)
    out = comm.bond_ball_mill_energy(15.0, 750.0, 50.0, mill_diameter_m=5.0)
    assert float(out) == pytest.approx(float(base * ef))


def test_morrell_size_exponent():
    # f(x) = −(0.295 + x/10⁶) (Morrell 2004).
    assert float(comm.morrell_size_exponent(750.0)) == pytest.approx(-0.29575)


def test_morrell_stage_energy_hand_arithmetic():
    # W = K M 4 (x2^f(x2) − x1^f(x1)); Mia 20, x1 = 100 mm feed, x2 = 750 µm (hand arithmetic
    # with the published form of Morrell 2004 / 2009).
    f = comm.morrell_size_exponent
    expected = 20 * 4 * (750 ** float(f(750)) - 100_000 ** float(f(100_000)))
    assert float(comm.morrell_stage_energy(20.0, 100_000.0, 750.0)) == pytest.approx(expected)
    assert expected == pytest.approx(10.445, abs=1e-3)
    k = comm.MORRELL_K["pebble_crusher"]
    assert float(comm.morrell_stage_energy(20.0, 100_000.0, 750.0, k=k)) == pytest.approx(
        0.95 * expected
    )


def test_morrell_types():
    s = pd.Series([15.0, 20.0], index=["x", "y"])
    out = comm.morrell_specific_energy(s, s, 100_000.0, 150.0)
    assert list(out.index) == ["x", "y"]
    np.testing.assert_allclose(
        comm.morrell_specific_energy(s.to_numpy(), s.to_numpy(), 100_000.0, 150.0), out.to_numpy()
    )


def test_morrell_total_is_sum_of_stages():
    total = comm.morrell_specific_energy(20.0, 18.0, 100_000.0, 150.0)
    coarse = comm.morrell_stage_energy(20.0, 100_000.0, 750.0)
    fine = comm.morrell_stage_energy(18.0, 750.0, 150.0)
    assert float(total) == pytest.approx(float(coarse + fine))
    with pytest.raises(InputDataError, match="f80_um > 750 > p80_um"):
        comm.morrell_specific_energy(20.0, 18.0, 500.0, 150.0)


@settings(max_examples=60, deadline=None)
@given(
    wi=st.floats(5, 30),
    dwi=st.floats(0.01, 10),
    f80=st.floats(1_000, 200_000),
    p80=st.floats(20, 500),
    ball_f80=st.floats(600, 4_000),
)
def test_energy_rises_with_work_index_and_fineness(wi, dwi, f80, p80, ball_f80):
    w1 = float(comm.bond_specific_energy(wi, f80, p80))
    assert w1 > 0
    assert float(comm.bond_specific_energy(wi + dwi, f80, p80)) > w1
    assert float(comm.bond_specific_energy(wi, f80, p80 * 0.8)) > w1
    # With Rowland's factors, over ball-mill feed sizes (EF4's published range; for feeds of
    # tens of mm its 1/Rr term can make a finer grind look cheaper, outside its use).
    b1 = float(comm.bond_ball_mill_energy(wi, ball_f80, p80 * 0.5))
    assert float(comm.bond_ball_mill_energy(wi + dwi, ball_f80, p80 * 0.5)) > b1
    assert float(comm.bond_ball_mill_energy(wi, ball_f80, p80 * 0.4)) > b1


@settings(max_examples=60, deadline=None)
@given(mia=st.floats(5, 40), f80=st.floats(1_000, 200_000))
def test_morrell_energy_positive_and_rising_with_feed_size(mia, f80):
    w = float(comm.morrell_stage_energy(mia, f80, 750.0))
    assert w > 0
    assert float(comm.morrell_stage_energy(mia, f80 * 1.5, 750.0)) > w
