"""Power-limited throughput and the clay handling penalty."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.errors import InputDataError
from geomet.forecast import throughput as thr


def test_power_limited_throughput_definition():
    # Q = P u / W, definition of specific energy: 20 MW × 0.9 / 15 kWh/t = 1200 t/h.
    assert float(thr.power_limited_throughput_tph(20_000.0, 0.9, 15.0)) == pytest.approx(1200.0)
    s = pd.Series([10.0, 20.0], index=[3, 4])
    out = thr.power_limited_throughput_tph(20_000.0, 1.0, s)
    assert list(out.index) == [3, 4]
    np.testing.assert_allclose(out, [2000.0, 1000.0])
    np.testing.assert_allclose(
        thr.power_limited_throughput_tph(1000.0, 1.0, np.array([1.0, 2.0])), [1000.0, 500.0]
    )


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"utilisation_frac": 1.5}, r"utilisation_frac must be in \(0, 1\]"),
        ({"mill_power_kw": -1.0}, "mill_power_kw must be positive"),
    ],
)
def test_power_limited_throughput_errors(kwargs, match):
    args = {"mill_power_kw": 1000.0, "utilisation_frac": 0.9, "specific_energy_kwh_t": 10.0}
    args.update(kwargs)
    with pytest.raises(InputDataError, match=match):
        thr.power_limited_throughput_tph(**args)


def test_clay_penalty_zero_without_clay_and_half_at_midpoint():
    assert float(thr.clay_penalty_frac(0.0, 0.0)) == pytest.approx(0.0, abs=1e-15)
    # With a steep logistic, the midpoint loses close to half the maximum (definition of z50).
    p = float(thr.clay_penalty_frac(25.0, 0.0, slope_per_idx=5.0))
    assert p == pytest.approx(0.5 * thr.DEFAULT_CLAY_PENALTY["max_loss_frac"], rel=1e-6)
    # Swelling clay weighs more: 1 % smectite = swelling_weight index units.
    assert float(thr.clay_penalty_frac(10.0, 1.0)) == pytest.approx(
        float(thr.clay_penalty_frac(12.0, 0.0))
    )


def test_clay_penalty_types():
    s = pd.Series([0.0, 30.0], index=["b1", "b2"])
    out = thr.clay_penalty_frac(s, pd.Series([0.0, 2.0], index=s.index))
    assert list(out.index) == ["b1", "b2"]
    arr = thr.clay_penalty_frac(np.array([0.0, 30.0]), np.array([0.0, 2.0]))
    np.testing.assert_allclose(arr, out.to_numpy())
    assert isinstance(thr.clay_penalty_frac(30.0, 2.0), float)


def test_clay_penalty_errors():
    with pytest.raises(InputDataError, match=r"max_loss_frac must be in \[0, 1\)"):
        thr.clay_penalty_frac(1.0, 1.0, max_loss_frac=1.0)
    with pytest.raises(InputDataError, match="slope_per_idx must be positive"):
        thr.clay_penalty_frac(1.0, 1.0, slope_per_idx=0.0)


@settings(max_examples=80, deadline=None)
@given(sev=st.floats(0, 200), sw=st.floats(0, 50), d=st.floats(0.01, 20))
def test_clay_penalty_bounded_and_monotone(sev, sw, d):
    p = float(thr.clay_penalty_frac(sev, sw))
    assert 0.0 <= p <= thr.DEFAULT_CLAY_PENALTY["max_loss_frac"]
    assert float(thr.clay_penalty_frac(sev + d, sw)) >= p
    assert float(thr.clay_penalty_frac(sev, sw + d)) >= p


@settings(max_examples=50, deadline=None)
@given(q=st.floats(1, 5000), p=st.floats(0, 0.9))
def test_clay_limited_throughput_conserves_rate(q, p):
    tph, loss, factor = thr.clay_limited_throughput(q, p)
    assert tph + loss == pytest.approx(q)
    assert tph * factor == pytest.approx(q)
