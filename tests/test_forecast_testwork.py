"""Testwork reduction: the two-product formula and sample checks."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.errors import InputDataError
from geomet.forecast import testwork as tw


def test_two_product_worked_example():
    # Worked example, processconvert.com "Two Product Formula Calculator": feed 1.0 % Cu,
    # concentrate 10.0 %, tailings 0.2 % -> yield 8.163 %, recovery 81.63 %, ratio of
    # concentration 12.25. Also the science notes check value R = 0.816327 (Wills & Finch 2016).
    y = tw.two_product_yield_frac(1.0, 10.0, 0.2)
    r = tw.two_product_recovery_frac(1.0, 10.0, 0.2)
    assert y == pytest.approx(0.08163, abs=1e-5)
    assert 1 / y == pytest.approx(12.25, abs=1e-9)
    assert r == pytest.approx(0.816327, abs=1e-6)


def test_two_product_undefined_outside_c_f_t():
    # nickzom.org's example (c 12, f 14, t 20) reports 64.28 % although t > f; the formula is
    # undefined there (Wills & Finch 2016: it needs c > f > t).
    assert np.isnan(tw.two_product_recovery_frac(14.0, 12.0, 20.0))
    out = tw.two_product_recovery_frac(
        np.array([1.0, 14.0]), np.array([10.0, 12.0]), np.array([0.2, 20.0])
    )
    assert out[0] == pytest.approx(0.816327, abs=1e-6)
    assert np.isnan(out[1])
    with pytest.raises(InputDataError, match=r"needs c > f > t >= 0; got row 1: f=14, c=12, t=20"):
        tw.two_product_recovery_frac(
            np.array([1.0, 14.0]), np.array([10.0, 12.0]), np.array([0.2, 20.0]), on_invalid="raise"
        )
    with pytest.raises(InputDataError, match="on_invalid must be one of"):
        tw.two_product_yield_frac(1.0, 10.0, 0.2, on_invalid="ignore")


def test_two_product_series():
    f = pd.Series([1.0, 0.5], index=["S1", "S2"])
    out = tw.two_product_recovery_frac(
        f, pd.Series([10.0, 20.0], index=f.index), pd.Series([0.2, 0.05], index=f.index)
    )
    assert list(out.index) == ["S1", "S2"]
    assert out["S2"] == pytest.approx(20 * 0.45 / (0.5 * 19.95))


def test_reduce_flotation_tests_flags():
    table = pd.DataFrame(
        {
            "sample_id": ["A", "B", "C"],
            "feed_cu_pct": [1.0, 14.0, 0.5],
            "conc_cu_pct": [10.0, 12.0, 20.0],
            "tail_cu_pct": [0.2, 20.0, 0.05],
            "rougher_cu_recovery_pct": [81.6, np.nan, 70.0],
        }
    )
    out = tw.reduce_flotation_tests(table)
    assert out["cu_assays_invalid"].tolist() == [False, True, False]
    assert out["cu_recovery_frac"].iloc[0] == pytest.approx(0.816)
    assert np.isnan(out["cu_recovery_frac"].iloc[1])
    assert out["cu_recovery_mismatch"].tolist() == [False, False, True]
    assert out["au_recovery_frac"].isna().all()
    with pytest.raises(InputDataError, match=r"CU assays break c > f > t >= 0 .* samples \['B'\]"):
        tw.reduce_flotation_tests(table, on_invalid="raise")


@settings(max_examples=80, deadline=None)
@given(t=st.floats(0, 1), df=st.floats(0.01, 2), dc=st.floats(0.01, 30))
def test_two_product_metal_balance(t, df, dc):
    f, c = t + df, t + df + dc
    y = tw.two_product_yield_frac(f, c, t)
    r = tw.two_product_recovery_frac(f, c, t)
    assert 0.0 <= y <= 1.0
    assert 0.0 <= r <= 1.0
    # Mass and metal balance: f = Y c + (1 − Y) t, and R = Y c / f.
    assert y * c + (1 - y) * t == pytest.approx(f, rel=1e-9)
    assert r == pytest.approx(y * c / f, rel=1e-9)
