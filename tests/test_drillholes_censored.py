"""Tests of geomet.drillholes.censored (substitution of censored lab values)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from geomet.drillholes.censored import (
    DEFAULT_TEXT_CODES,
    DetectionRule,
    censored_columns,
    parse_censored,
)
from geomet.errors import InputDataError


@pytest.mark.parametrize(
    ("rule", "expected"),
    [
        # half the limit: the usual default (common practice; Reimann et al. 2008 §2.2)
        (DetectionRule(), 0.005),
        (DetectionRule(rule="limit"), 0.01),
        (DetectionRule(rule="fraction", fraction=0.1), 0.001),
        (DetectionRule(rule="zero"), 0.0),
    ],
)
def test_substitution_rules(rule, expected):
    out = parse_censored(["<0.01"], column="cu_pct", rule=rule)
    assert out.values.iloc[0] == pytest.approx(expected)
    assert out.censored.iloc[0]
    assert out.detection_limit.iloc[0] == pytest.approx(0.01)


def test_missing_rule_gives_nan_but_keeps_flag():
    out = parse_censored(["<0.01", "0.2"], rule=DetectionRule(rule="missing"))
    assert np.isnan(out.values.iloc[0])
    assert out.censored.iloc[0]
    assert out.values.iloc[1] == 0.2


def test_negative_number_means_below_that_limit():
    out = parse_censored(pd.Series([-0.02, 0.5, np.nan]), column="au_gpt")
    assert out.values.tolist()[:2] == pytest.approx([0.01, 0.5])
    assert np.isnan(out.values.iloc[2])  # missing stays missing, never zero
    assert out.censored.tolist() == [True, False, False]


def test_missing_value_codes_are_not_below_detection():
    out = parse_censored(["-99", "-999", "-9999"])
    assert out.values.isna().all()
    assert not out.censored.any()
    assert out.counts["missing_value"] == 3


def test_negative_reading_can_be_switched_off():
    out = parse_censored(["-0.5"], rule=DetectionRule(negative_is_below_detection=False))
    assert out.values.iloc[0] == -0.5
    assert not out.censored.iloc[0]


def test_over_range_keeps_the_limit_with_a_flag():
    out = parse_censored([">10", ">=5"], column="cu_pct")
    assert out.values.tolist() == [10.0, 5.0]
    assert out.over_range.all()
    assert out.censored.all()
    assert out.counts["over_range"] == 2
    assert out.counts["below_detection"] == 0


def test_text_codes_default_and_custom():
    out = parse_censored(["BDL", "nd", "IS", "NS", "LNR", "<0.1", "zzz"], column="mo_ppm")
    # BDL/ND take the smallest limit seen in the column (0.1), halved
    assert out.values.tolist()[:2] == pytest.approx([0.05, 0.05])
    assert out.values.iloc[2:5].isna().all()
    assert not out.censored.iloc[2:5].any()
    assert out.non_numeric.tolist() == [False] * 6 + [True]
    custom = DetectionRule(
        text_codes={**DEFAULT_TEXT_CODES, "ZZZ": "missing"}, default_limits={"mo_ppm": 2.0}
    )
    out = parse_censored(["BDL", "zzz"], column="mo_ppm", rule=custom)
    assert out.values.iloc[0] == pytest.approx(1.0)
    assert not out.non_numeric.any()


def test_below_detection_code_without_any_limit_is_missing_but_flagged():
    out = parse_censored(["BDL", "0.3"], column="zn_ppm")
    assert np.isnan(out.values.iloc[0])
    assert out.censored.iloc[0]
    assert np.isnan(out.detection_limit.iloc[0])


def test_decimal_comma_and_spaces():
    out = parse_censored([" < 0,05 ", "1,25"])
    assert out.values.tolist() == pytest.approx([0.025, 1.25])


def test_numeric_input_types():
    # list, numpy array and Series all accepted (style guide: every input type once)
    for values in ([0.1, -0.2], np.array([0.1, -0.2]), pd.Series([0.1, -0.2])):
        out = parse_censored(values)
        assert out.values.tolist() == pytest.approx([0.1, 0.1])


def test_index_is_kept():
    series = pd.Series(["0.1", "<0.2"], index=[10, 20])
    assert parse_censored(series).values.index.tolist() == [10, 20]


def test_rule_validation_messages():
    with pytest.raises(InputDataError, match=r"detection rule must be one of half_limit"):
        DetectionRule(rule="half")
    with pytest.raises(InputDataError, match=r"detection fraction must be in \(0, 1\]; got 1.5"):
        DetectionRule(rule="fraction", fraction=1.5)
    with pytest.raises(InputDataError, match=r"text code 'BDL' has meaning 'low'"):
        DetectionRule(text_codes={"BDL": "low"})
    with pytest.raises(InputDataError, match=r"default detection limit for cu_pct must be > 0"):
        DetectionRule(default_limits={"cu_pct": 0.0})


def test_censored_columns_helper():
    cols = ["cu_pct", "cu_pct_censored", "cu_pct_detection_limit", "au_gpt_over_range"]
    assert censored_columns(cols) == cols[1:]


@given(
    limits=st.lists(st.floats(1e-6, 1e4, allow_nan=False), min_size=1, max_size=20),
    fraction=st.floats(0.01, 1.0),
)
def test_substitute_is_within_zero_and_the_limit(limits, fraction):
    rule = DetectionRule(rule="fraction", fraction=fraction)
    out = parse_censored([f"<{v!r}" for v in limits], rule=rule)
    values = out.values.to_numpy()
    assert np.all(values >= 0)
    assert np.all(values <= np.asarray(limits) * (1 + 1e-12))
    assert out.censored.all()


@given(st.lists(st.floats(0.0, 1e6, allow_nan=False), max_size=30))
def test_uncensored_numbers_pass_through(values):
    out = parse_censored([repr(v) for v in values])
    assert out.values.tolist() == pytest.approx(values)
    assert not out.censored.any()
