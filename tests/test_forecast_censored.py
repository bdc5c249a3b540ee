"""Acid-soluble Cu below detection for the oxide ratio (geomet.forecast.censored), the clay
rate factor of the flotation models, and the forecast step's use of the assays' censoring."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

import geomet.run.steps.forecast  # noqa: F401  (registers the step)
from geomet.errors import InputDataError
from geomet.forecast.censored import (
    DEFAULT_BACKGROUND_RATIO_FRAC,
    background_ratio_frac,
    oxide_cu_below_detection,
)
from geomet.forecast.flotation import clay_rate_factor
from geomet.forecast.synthetic import synthetic_mineralogy
from geomet.run.registry import STEPS, StepContext


def test_censored_values_by_hand():
    # Hand arithmetic: 0.01 × 0.05 % = 0.0005 % (below the 0.01 % limit); 0.01 × 2.0 % = 0.02 %
    # capped at the limit 0.01 %; Cu 0.004 % below the limit: half the Cu, 0.002 %.
    out = oxide_cu_below_detection(
        [0.005, 0.005, 0.005, 0.3],
        [0.05, 2.0, 0.004, 0.6],
        [True, True, True, False],
        0.01,
        background_ratio_frac=0.01,
    )
    np.testing.assert_allclose(out, [0.0005, 0.01, 0.002, 0.3])


@given(
    cu=st.floats(0.0, 5.0),
    limit=st.floats(1e-4, 0.1),
    ratio=st.floats(0.0, 1.0),
    censored=st.booleans(),
    read=st.floats(0.0, 1.0),
)
def test_censored_value_stays_within_what_the_assay_allows(cu, limit, ratio, censored, read):
    out = float(
        oxide_cu_below_detection([read], [cu], [censored], [limit], background_ratio_frac=ratio)[0]
    )
    if censored:
        assert 0.0 <= out <= limit  # below detection means below the limit
        assert out <= cu + 1e-15  # acid-soluble Cu is part of the total
    else:
        assert out == read


def test_background_ratio_is_the_low_quantile_of_detected_ratios():
    rng = np.random.default_rng(3)
    cu = rng.uniform(0.2, 2.0, 200)
    ratio = rng.uniform(0.01, 0.6, 200)
    censored = rng.random(200) < 0.3
    asol = np.where(censored, 0.005, ratio * cu)
    # Reference: numpy's quantile of the detected ratios.
    expected = np.quantile(ratio[~censored], 0.1)
    assert background_ratio_frac(asol, cu, censored) == pytest.approx(expected)
    # Too few detected intervals: the stated fallback.
    few = np.ones(200, bool)
    few[:5] = False
    assert background_ratio_frac(asol, cu, few) == DEFAULT_BACKGROUND_RATIO_FRAC


def test_censored_errors_name_the_rule():
    with pytest.raises(InputDataError, match="background acid-soluble ratio must be in"):
        oxide_cu_below_detection([0.005], [0.5], [True], 0.01, background_ratio_frac=1.5)
    with pytest.raises(InputDataError, match="background ratio quantile must be in"):
        background_ratio_frac([0.1], [0.5], [False], quantile=2.0)


def test_clay_rate_factor_reference_and_types():
    p = {"k_swelling_per_pct": 0.1, "k_kaolin_per_pct": 0.03, "k_illite_per_pct": 0.01}
    # Reference: math.exp of the hand-summed load 0.1·2 + 0.03·4 + 0.01·10 = 0.42.
    assert float(clay_rate_factor(2.0, 4.0, 10.0, 0.0, p)) == pytest.approx(math.exp(-0.42))
    assert float(clay_rate_factor(0.0, 0.0, 0.0, 5.0, p)) == 1.0  # index term off by default
    arr = clay_rate_factor(np.array([0.0, 2.0]), np.zeros(2), np.zeros(2), np.zeros(2), p)
    np.testing.assert_allclose(arr, [1.0, math.exp(-0.2)])
    ser = clay_rate_factor(pd.Series([2.0]), pd.Series([0.0]), pd.Series([0.0]), 0.0, p)
    assert float(ser.iloc[0]) == pytest.approx(math.exp(-0.2))


@given(s1=st.floats(0, 30), s2=st.floats(0, 30), k=st.floats(0, 30))
def test_clay_rate_factor_falls_with_smectite(s1, s2, k):
    p = {"k_swelling_per_pct": 0.02, "k_kaolin_per_pct": 0.006}
    lo, hi = sorted((s1, s2))
    f_lo = float(clay_rate_factor(lo, k, 0.0, 0.0, p))
    f_hi = float(clay_rate_factor(hi, k, 0.0, 0.0, p))
    assert 0.0 < f_hi <= f_lo <= 1.0


@pytest.fixture(scope="module")
def step_tables():
    domained = synthetic_mineralogy(600, seed=41, n_holes=12)
    rng = np.random.default_rng(5)
    testwork = domained.sample(40, random_state=1)[["hole_id", "from_m", "to_m"]]
    testwork = testwork.reset_index(drop=True)
    testwork.insert(0, "sample_id", [f"OVR-{i:03d}" for i in range(len(testwork))])
    testwork["rougher_cu_recovery_pct"] = rng.uniform(80.0, 92.0, len(testwork))
    limit = 0.01
    censored = domained["cu_asol_pct"] < limit
    assays = domained[["hole_id", "from_m", "to_m", "cu_pct"]].copy()
    assays["cu_asol_pct"] = np.where(censored, limit / 2, domained["cu_asol_pct"])
    assays["cu_asol_pct_censored"] = censored.to_numpy()
    assays["cu_asol_pct_detection_limit"] = limit
    domained = domained.assign(cu_asol_pct=assays["cu_asol_pct"].to_numpy())
    return {"domained": domained, "testwork": testwork, "assays": assays}, censored


def test_forecast_step_rereads_censored_oxide_cu(step_tables):
    tables, censored = step_tables
    step = STEPS["forecast"]
    ctx = StepContext(tables=tables)
    # Stated defaults (no calibration), so that only the model inputs differ between runs.
    opts = {"calibration_method": "none"}
    out = step.func(ctx, step.options(cu_asol_background_ratio_frac=0.02, **opts))
    assert any("below detection re-read" in n and "0.02 ×" in n for n in ctx.notes)
    comp = out["composite_forecasts"]
    # The composites keep their own assays; only the model inputs change.
    np.testing.assert_array_equal(comp["cu_asol_pct"], tables["domained"]["cu_asol_pct"])
    as_read = step.func(
        StepContext(tables=tables), step.options(cu_asol_below_detection="as_read", **opts)
    )["composite_forecasts"]
    # Only the censored composites get a different oxide Cu, hence a different recovery.
    differs = ~np.isclose(comp["cu_recovery_frac"], as_read["cu_recovery_frac"])
    assert not differs[~censored.to_numpy()].any()
    assert differs[censored.to_numpy()].any()


def test_forecast_step_without_censoring_columns_keeps_values(step_tables):
    tables, _ = step_tables
    plain = {**tables, "assays": tables["assays"].drop(columns=["cu_asol_pct_censored"])}
    step = STEPS["forecast"]
    ctx = StepContext(tables=plain)
    step.func(ctx, step.options())
    assert not any("below detection re-read" in n for n in ctx.notes)
