"""Flotation kinetics, mineralogy-driven recovery and concentrate grade."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from molmass import Formula

from geomet.errors import InputDataError
from geomet.forecast import flotation as flot

NO_CLAY = (0.0, 0.0, 0.0, 0.0)


def test_first_order_recovery():
    # García-Zúñiga (1935): R = R∞ (1 − e^(−kt)); hand arithmetic.
    assert flot.first_order_recovery(0.9, 0.5, 2.0) == pytest.approx(0.9 * (1 - math.exp(-1)))
    s = pd.Series([1.0, 2.0], index=["x", "y"])
    out = flot.first_order_recovery(0.9, 0.5, s)
    assert list(out.index) == ["x", "y"]
    np.testing.assert_allclose(
        flot.first_order_recovery(0.9, np.array([0.5]), 2.0), [0.9 * (1 - math.exp(-1))]
    )


def test_klimpel_recovery():
    # Klimpel (1980): R = R∞ [1 − (1 − e^(−kt))/(kt)]; kt = 1 -> R∞ e^(−1) (hand arithmetic).
    assert flot.klimpel_recovery(0.9, 0.5, 2.0) == pytest.approx(0.9 * math.exp(-1))
    assert flot.klimpel_recovery(0.9, 0.0, 2.0) == 0.0  # limit kt -> 0
    np.testing.assert_allclose(
        flot.klimpel_recovery(0.9, np.array([0.5, 5.0]), 2.0),
        [0.9 * math.exp(-1), 0.9 * (1 - (1 - math.exp(-10)) / 10)],
    )
    s = flot.klimpel_recovery(0.9, pd.Series([0.5], index=["q"]), 2.0)
    assert list(s.index) == ["q"]
    assert s["q"] == pytest.approx(0.9 * math.exp(-1))


def test_n_cell_recovery_limits():
    # N perfectly mixed cells: R∞ [1 − (1 + kτ)^−N]; one cell: R∞ kτ/(1 + kτ).
    assert flot.n_cell_recovery(0.9, 0.5, 2.0, n_cells=1) == pytest.approx(0.45)
    # Many cells tend to plug flow, the batch first-order result (Polat & Chander 2000).
    assert flot.n_cell_recovery(0.9, 0.5, 2.0, n_cells=10_000) == pytest.approx(
        flot.first_order_recovery(0.9, 0.5, 2.0), rel=1e-4
    )
    with pytest.raises(InputDataError, match="n_cells >= 1"):
        flot.n_cell_recovery(0.9, 0.5, 2.0, n_cells=0)
    with pytest.raises(InputDataError, match="unknown flotation kinetic model 'plug'"):
        flot.kinetic_recovery(0.9, 0.5, 2.0, model="plug")


def test_copper_fractions_match_molmass():
    # Reference library: molmass mass fractions (rtol 3e-4: atomic weight tables differ).
    for formula in (*flot.COPPER_MINERAL_FORMULAS.values(), flot.OXIDE_COPPER_FORMULA):
        ref = Formula(formula).composition()["Cu"].fraction
        assert flot.copper_fraction(formula) == pytest.approx(ref, rel=3e-4)
    # Science notes check value: chalcopyrite Cu 0.3463.
    assert flot.copper_fraction("CuFeS2") == pytest.approx(0.3463, abs=1e-4)


def test_concentrate_of_pure_recovered_chalcopyrite_has_its_cu_grade():
    # With no pyrite, no entrainment and no oxide Cu, the concentrate is chalcopyrite alone:
    # its grade is chalcopyrite's Cu content, 34.63 % (science notes check value).
    out = flot.rougher_copper(
        0.5,
        0.0,
        *NO_CLAY,
        pyrite_pct=0.0,
        concentrate={"gangue_entrainment_frac": 0.0, "pyrite_recovery_frac": 0.0},
    )
    assert float(out["conc_cu_pct"][0]) == pytest.approx(34.63, abs=0.01)
    # Chalcocite alone: Cu2S, 79.85 % Cu (molmass).
    out = flot.rougher_copper(
        0.5,
        0.0,
        *NO_CLAY,
        cu_mineral_pct={"chalcocite": 0.63},
        pyrite_pct=0.0,
        concentrate={"gangue_entrainment_frac": 0.0, "pyrite_recovery_frac": 0.0},
    )
    ref = 100 * Formula("Cu2S").composition()["Cu"].fraction
    assert float(out["conc_cu_pct"][0]) == pytest.approx(ref, rel=3e-4)


def test_rougher_copper_default_hand_arithmetic():
    # Default: R∞ 0.95 × g/(g + 0.01) at g = 0.5 % sulfide Cu, k = 0.8/min, t = 10 min.
    expected = 0.95 * 0.5 / 0.51 * (1 - math.exp(-8.0))
    out = flot.cu_recovery_frac(0.5, 0.0, *NO_CLAY)
    assert out == pytest.approx(expected)
    # Half oxide: oxide Cu recovers at 0.15; the head factor acts on the total Cu grade.
    h = 0.5 / 0.51
    r_s = 0.95 * h * (1 - math.exp(-8.0))
    assert flot.cu_recovery_frac(0.5, 0.25, *NO_CLAY) == pytest.approx(
        (0.25 * r_s + 0.25 * 0.15 * h) / 0.5
    )


def test_recovery_types():
    s = pd.Series([0.3, 0.6], index=[10, 11])
    out = flot.cu_recovery_frac(s, 0.0, *NO_CLAY)
    assert isinstance(out, pd.Series)
    assert list(out.index) == [10, 11]
    arr = flot.cu_recovery_frac(np.array([0.3, 0.6]), 0.0, *NO_CLAY)
    assert isinstance(arr, np.ndarray)
    np.testing.assert_allclose(arr, out.to_numpy())
    au = flot.au_recovery_frac(pd.Series([0.2, 1.0]), *NO_CLAY, 0.0)
    assert isinstance(au, pd.Series)


def test_unknown_copper_mineral():
    with pytest.raises(InputDataError, match="unknown copper mineral"):
        flot.rougher_copper(0.5, 0.0, *NO_CLAY, cu_mineral_pct={"tennantite": 1.0})


def test_zero_copper_gives_nan_recovery():
    out = flot.rougher_copper(np.array([0.0]), 0.0, *NO_CLAY)
    assert np.isnan(out["cu_recovery_frac"][0])


@settings(max_examples=60, deadline=None)
@given(
    cu=st.floats(0.01, 3),
    ox=st.floats(0, 1),
    sw=st.floats(0, 20),
    ka=st.floats(0, 30),
    il=st.floats(0, 40),
    d=st.floats(0.1, 10),
    model=st.sampled_from(flot.KINETIC_MODELS),
)
def test_recovery_bounded_and_falls_with_clay_and_oxide(cu, ox, sw, ka, il, d, model):
    sev = 3 * sw + ka + 0.3 * il
    base = flot.cu_recovery_frac(cu, cu * ox, sw, ka, il, sev, model=model)
    assert 0.0 <= base <= 1.0
    assert flot.cu_recovery_frac(cu, cu * ox, sw + d, ka, il, sev + 3 * d, model=model) <= base
    assert flot.cu_recovery_frac(cu, cu * min(ox + 0.1, 1), sw, ka, il, sev, model=model) <= (
        base + 1e-12
    )
    au = flot.au_recovery_frac(cu, sw, ka, il, sev, ox, model=model)
    assert 0.0 <= au <= 1.0
    assert flot.au_recovery_frac(cu, sw + d, ka, il, sev, ox, model=model) <= au


@settings(max_examples=40, deadline=None)
@given(r=st.floats(0, 1), k=st.floats(0.01, 5), t=st.floats(0.1, 30), dt=st.floats(0.1, 10))
def test_kinetic_recovery_rises_with_time_and_stays_below_r_inf(r, k, t, dt):
    for model in flot.KINETIC_MODELS:
        a = float(flot.kinetic_recovery(r, k, t, model=model))
        b = float(flot.kinetic_recovery(r, k, t + dt, model=model))
        assert 0.0 <= a <= b + 1e-12 <= r + 1e-12
