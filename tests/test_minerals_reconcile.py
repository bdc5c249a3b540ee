"""Tests of scan-implied element grades and the scan-assay reconciliation."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from molmass import Formula
from scipy import stats

from geomet.errors import InputDataError
from geomet.minerals.reconcile import (
    reconcile_scan_assays,
    scan_column_name,
    scan_element_grades,
)

RTOL = 3e-4  # IUPAC 2021 abridged weights vs molmass's table


def _f(formula: str, element: str) -> float:
    return Formula(formula).composition()[element].fraction  # molmass reference


def test_implied_grades_worked_example():
    # 1 % chalcopyrite + 2 % pyrite + 0.1 % molybdenite:
    # Cu = 0.3463; S = 0.3494 + 2 * 0.5345 + 0.1 * 0.4006 = 1.4585; Fe = 0.3043 + 2 * 0.4655;
    # Mo = 0.1 * 0.5994 % = 599.4 ppm (molmass fractions)
    t = pd.DataFrame({"chalcopyrite_pct": [1.0], "pyrite_pct": [2.0], "molybdenite_pct": [0.1]})
    g = scan_element_grades(t).iloc[0]
    assert g["scan_cu_pct"] == pytest.approx(_f("CuFeS2", "Cu"), rel=RTOL)
    s = _f("CuFeS2", "S") + 2 * _f("FeS2", "S") + 0.1 * _f("MoS2", "S")
    assert g["scan_s_pct"] == pytest.approx(s, rel=RTOL)
    assert g["scan_fe_pct"] == pytest.approx(_f("CuFeS2", "Fe") + 2 * _f("FeS2", "Fe"), rel=RTOL)
    assert g["scan_mo_ppm"] == pytest.approx(0.1 * _f("MoS2", "Mo") * 1e4, rel=RTOL)
    assert g["scan_ca_pct"] == 0.0


def test_missing_rows_and_tables():
    t = pd.DataFrame({"pyrite_pct": [np.nan, 1.0], "calcite_pct": [np.nan, np.nan]})
    g = scan_element_grades(t, ["S"])
    assert np.isnan(g["scan_s_pct"].iloc[0])
    assert g["scan_s_pct"].iloc[1] == pytest.approx(_f("FeS2", "S"), rel=RTOL)
    empty = scan_element_grades(pd.DataFrame({"cu_pct": [1.0]}), ["Cu"])
    assert empty["scan_cu_pct"].isna().all()
    assert scan_column_name("Zn") == "scan_zn_ppm"
    assert scan_column_name("Ti") == "scan_ti_pct"


def test_unknown_element():
    with pytest.raises(InputDataError, match=r"unknown element symbol\(s\) \['CU'\]"):
        scan_element_grades(pd.DataFrame(), ["CU"])


def test_reconciliation_statistics_against_scipy():
    rng = np.random.default_rng(5)
    py = rng.uniform(0.5, 5, 50)
    t = pd.DataFrame({"pyrite_pct": py})
    t["s_pct"] = py * _f("FeS2", "S") * 1.1 + rng.normal(0, 0.05, 50)  # scan reads ~9 % low
    t["cu_pct"] = 0.1
    check = reconcile_scan_assays(t, ["S", "Cu", "K"]).set_index("element")
    assert "K" not in check.index  # no k_pct assay column
    implied = scan_element_grades(t, ["S"])["scan_s_pct"]
    r = stats.pearsonr(t["s_pct"], implied).statistic  # scipy reference
    assert check.loc["S", "correlation_r"] == pytest.approx(r, rel=1e-12)
    assert check.loc["S", "bias_frac"] == pytest.approx(implied.mean() / t["s_pct"].mean() - 1)
    assert check.loc["S", "rma_slope"] == pytest.approx(implied.std() / t["s_pct"].std())
    assert check.loc["S", "n_pairs"] == 50
    assert np.isnan(check.loc["Cu", "correlation_r"])  # constant scan Cu (0): undefined
