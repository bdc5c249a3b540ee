"""Tests of mineral groups, the clay severity index and the oxide ratio."""

from __future__ import annotations

import hypothesis.strategies as st
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings

from geomet.errors import InputDataError, RecipeError
from geomet.glossary import SCANNED_MINERALS
from geomet.minerals.clay import (
    DEFAULT_SEVERITY_WEIGHTS,
    clay_severity_index,
    fit_severity_weights,
    validate_severity_weights,
)
from geomet.minerals.groups import (
    DEFAULT_GROUPS,
    add_mineralogy_columns,
    group_totals,
    oxide_ratio,
    validate_groups,
)
from geomet.minerals.reference import MINERALS

# Contract column names (docs/contracts.md), which other packages read.
CONTRACT_COLUMNS = (
    "clay_swelling_pct", "clay_kaolin_pct", "white_mica_illite_pct", "advanced_argillic_pct",
    "sulfate_pct", "carbonate_pct", "femg_silicate_pct", "iron_oxide_pct", "featureless_pct",
    "clay_total_pct",
)  # fmt: skip


def _row(**values) -> pd.DataFrame:
    return pd.DataFrame({f"{k}_pct": [v] for k, v in values.items()})


def test_default_groups_have_contract_names_and_known_members():
    assert set(CONTRACT_COLUMNS) <= set(DEFAULT_GROUPS)
    for members in DEFAULT_GROUPS.values():
        assert set(members) <= set(SCANNED_MINERALS)
    # contracts.md: dickite sits in both the kaolin and the advanced argillic group
    assert "dickite" in DEFAULT_GROUPS["clay_kaolin_pct"]
    assert "dickite" in DEFAULT_GROUPS["advanced_argillic_pct"]
    assert set(DEFAULT_GROUPS["clay_total_pct"]) == {
        "smectite",
        "kaolinite",
        "dickite",
        "halloysite",
        "illite",
    }


def test_group_sums_worked_example():
    # hand sums: kaolin 4+1+0.5 = 5.5; advanced argillic 2+1+0.5(diaspore)+1(dickite) = 4.5;
    # clay total 3 (smectite) + 5.5 + 2 (illite) = 10.5
    t = _row(smectite=3, kaolinite=4, dickite=1, halloysite=0.5, illite=2, white_mica=6,
             pyrophyllite=2, alunite=1, diaspore=0.5, gypsum_anhydrite=1.2)  # fmt: skip
    g = group_totals(t).iloc[0]
    assert g["clay_kaolin_pct"] == pytest.approx(5.5)
    assert g["advanced_argillic_pct"] == pytest.approx(4.5)
    assert g["clay_total_pct"] == pytest.approx(10.5)
    assert g["white_mica_illite_pct"] == pytest.approx(8.0)
    assert g["sulfate_pct"] == pytest.approx(1.2)
    assert np.isnan(g["carbonate_pct"])  # no carbonate column at all -> NaN, never zero


def test_missing_values_stay_nan_and_partial_rows_sum_present():
    t = pd.DataFrame({"kaolinite_pct": [np.nan, 2.0], "dickite_pct": [np.nan, np.nan]})
    g = group_totals(t)
    assert np.isnan(g["clay_kaolin_pct"].iloc[0])
    assert g["clay_kaolin_pct"].iloc[1] == 2.0


def test_user_groups_override_and_add():
    spec = validate_groups({"sulfate_pct": ["gypsum_anhydrite", "jarosite_pct"], "acid": "calcite"})
    assert spec["sulfate_pct"] == ("gypsum_anhydrite", "jarosite")
    assert spec["acid_pct"] == ("calcite",)
    assert spec["clay_kaolin_pct"] == DEFAULT_GROUPS["clay_kaolin_pct"]
    only = validate_groups({"x_pct": ["calcite"]}, merge_defaults=False)
    assert list(only) == ["x_pct"]


@pytest.mark.parametrize(
    ("groups", "match"),
    [
        ({"clay_swelling_pct": ["smectit"]}, "did you mean 'smectite'"),
        ({"clay_swelling_pct": []}, "has no member minerals"),
        ({"Bad Name": ["calcite"]}, "must be lower-case"),
        ({"c_pct": ["calcite", "calcite"]}, r"lists \['calcite'\] more than once"),
        ({"c_pct": ["unobtainium"]}, "unknown mineral in group 'c_pct' 'unobtainium'"),
    ],
)
def test_group_validation_errors(groups, match):
    with pytest.raises(RecipeError, match=match):
        validate_groups(groups)


def test_clay_severity_worked_example():
    # 1.0*2 + 0.3*(10 + 1 + 1) + 0.1*5 = 6.1 (default weights, assumptions in clay.py)
    t = _row(smectite=2, kaolinite=10, dickite=1, halloysite=1, illite=5, white_mica=20)
    assert clay_severity_index(t).iloc[0] == pytest.approx(6.1)
    custom = clay_severity_index(t, {"smectite_pct": 2.0})
    assert custom.iloc[0] == pytest.approx(4.0)
    assert clay_severity_index(_row(calcite=3)).isna().all()


def test_default_weights_rank_smectite_kaolin_illite():
    # Zhang & Peng 2015; Ndlovu et al. 2013: smectite >> kaolinite > illite
    w = DEFAULT_SEVERITY_WEIGHTS
    assert w["smectite"] > w["kaolinite"] > w["illite"] > 0


@pytest.mark.parametrize(
    ("weights", "match"),
    [
        ({}, "at least one mineral"),
        ({"smectit": 1.0}, "did you mean 'smectite'"),
        ({"smectite": -1.0}, "finite and >= 0"),
        ({"smectite": float("nan")}, "finite and >= 0"),
        ({"smectite": "lots"}, "must be a number"),
    ],
)
def test_severity_weight_errors(weights, match):
    with pytest.raises(RecipeError, match=match):
        validate_severity_weights(weights)


def test_fit_severity_weights_recovers_known_weights():
    # synthetic response y = 2*smectite + 0.6*kaolinite + 0.2*illite: scaled weights 1, 0.3, 0.1
    rng = np.random.default_rng(7)
    clay = pd.DataFrame(rng.uniform(0, 10, size=(60, 3)),
                        columns=["smectite_pct", "kaolinite_pct", "illite_pct"])  # fmt: skip
    y = clay.to_numpy() @ np.array([2.0, 0.6, 0.2])
    w = fit_severity_weights(clay, y)
    assert w == pytest.approx({"smectite": 1.0, "kaolinite": 0.3, "illite": 0.1}, rel=1e-9)


def test_fit_severity_weights_errors():
    clay = pd.DataFrame({"smectite_pct": [1.0, 2.0], "kaolinite_pct": [1.0, 0.0]})
    with pytest.raises(InputDataError, match="one value per row"):
        fit_severity_weights(clay, [1.0])
    with pytest.raises(InputDataError, match="complete data"):
        fit_severity_weights(clay, [1.0, np.nan])
    with pytest.raises(InputDataError, match="reference mineral 'illite'"):
        fit_severity_weights(clay, [1.0, 2.0], reference="illite")
    with pytest.raises(InputDataError, match="cannot be told from this data"):
        fit_severity_weights(clay, [1.0, 0.0], reference="smectite")


def test_oxide_ratio_types_and_edges():
    # float, array and Series inputs; hand values 0.2/0.8 = 0.25
    assert oxide_ratio(0.2, 0.8) == pytest.approx(0.25)
    arr = oxide_ratio(np.array([0.2, 1.0, 0.1, np.nan, -0.1]), np.array([0.8, 0.5, 0.0, 1.0, 1.0]))
    assert arr[0] == pytest.approx(0.25)
    assert arr[1] == 1.0  # acid-soluble above total: clipped
    assert np.isnan(arr[2])  # no Cu
    assert np.isnan(arr[3])  # missing assay
    assert arr[4] == 0.0
    ser = oxide_ratio(pd.Series([0.1]), pd.Series([0.4], index=[5]))
    assert ser.name == "oxide_ratio_frac"
    assert ser.index.tolist() == [5]


def test_add_mineralogy_columns_keeps_other_columns():
    t = _row(smectite=1.0, kaolinite=2.0)
    t["white_mica_aloh_nm"] = 2205.0
    t["chlorite_feoh_nm"] = 2252.0
    t["cu_pct"] = 0.5
    t["cu_asol_pct"] = 0.05
    t["clay_total_pct"] = 99.0  # stale value is replaced
    out = add_mineralogy_columns(t)
    assert out["white_mica_aloh_nm"].iloc[0] == 2205.0
    assert out["chlorite_feoh_nm"].iloc[0] == 2252.0
    assert out["clay_total_pct"].iloc[0] == pytest.approx(3.0)
    assert out["oxide_ratio_frac"].iloc[0] == pytest.approx(0.1)
    assert out["clay_severity_idx"].iloc[0] == pytest.approx(1.6)
    assert set(CONTRACT_COLUMNS) <= set(out.columns)
    assert "oxide_ratio_frac" not in add_mineralogy_columns(_row(smectite=1.0)).columns


_pct = st.floats(0, 50, allow_nan=False)


@settings(max_examples=60, deadline=None)
@given(st.lists(st.tuples(*[_pct] * 5), min_size=1, max_size=20))
def test_property_groups_bounded_and_monotone(rows):
    cols = ["smectite_pct", "kaolinite_pct", "dickite_pct", "halloysite_pct", "illite_pct"]
    t = pd.DataFrame(rows, columns=cols)
    out = add_mineralogy_columns(t)
    total = t.sum(axis=1)
    np.testing.assert_allclose(out["clay_total_pct"], total, rtol=1e-12, atol=1e-12)
    assert (out["clay_severity_idx"] <= total + 1e-9).all()  # weights <= 1
    assert (out["clay_severity_idx"] >= 0).all()
    more = t.assign(smectite_pct=t["smectite_pct"] + 1.0)
    assert (clay_severity_index(more) > clay_severity_index(t)).all()


def test_every_group_member_is_in_the_reference():
    for members in DEFAULT_GROUPS.values():
        assert all(m in MINERALS for m in members)


def test_clay_severity_regressor_estimator_api_and_group_cv():
    from sklearn.base import clone
    from sklearn.exceptions import NotFittedError
    from sklearn.model_selection import GroupKFold, cross_val_score

    from geomet.minerals.clay import ClaySeverityRegressor

    # synthetic throughput loss 3*smectite + 0.9*kaolinite + noise, 12 holes of 10 samples
    rng = np.random.default_rng(42)
    x = pd.DataFrame(rng.uniform(0, 8, size=(120, 2)), columns=["smectite_pct", "kaolinite_pct"])
    y = x.to_numpy() @ np.array([3.0, 0.9]) + rng.normal(0, 0.2, 120)
    holes = np.repeat([f"VL-{i:03d}" for i in range(12)], 10)
    model = ClaySeverityRegressor()
    assert clone(model).get_params() == {"reference": "smectite"}
    with pytest.raises(NotFittedError):
        model.predict(x)
    scores = cross_val_score(model, x, y, groups=holes, cv=GroupKFold(n_splits=4))
    assert scores.min() > 0.95  # R^2 by held-out hole
    model.fit(x, y)
    assert model.weights_["kaolinite"] == pytest.approx(0.3, abs=0.02)
    np.testing.assert_allclose(model.predict(x), x.to_numpy() @ model.coef_)
    with pytest.raises(InputDataError, match="needs a DataFrame"):
        ClaySeverityRegressor().fit(x.to_numpy(), y)


def test_text_in_numeric_columns_is_reported():
    from geomet.minerals.speciation import normative_speciation

    t = pd.DataFrame({"smectite_pct": [1.0, "<0.01", "n.a."], "cu_pct": [0.1, 0.2, 0.3]})
    t["s_pct"] = ["1.0", "<0.05", 2.0]
    with pytest.raises(InputDataError, match=r"column 'smectite_pct' has 2 non-numeric .*row 1"):
        add_mineralogy_columns(t)
    with pytest.raises(InputDataError, match=r"column 's_pct' has 1 non-numeric.*'<0.05'"):
        normative_speciation(t)
