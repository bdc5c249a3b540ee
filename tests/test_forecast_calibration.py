"""Calibration estimators: recovery of known coefficients, CV by hole, intervals, JSON."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from sklearn.base import clone
from sklearn.model_selection import GroupKFold

from geomet.errors import InputDataError
from geomet.forecast import calibration as cal
from geomet.forecast.inputs import resolve_inputs
from geomet.forecast.synthetic import synthetic_mineralogy


@pytest.fixture(scope="module")
def samples():
    df = synthetic_mineralogy(240, seed=11, n_holes=24)
    return df, pd.DataFrame(resolve_inputs(df))


def test_conformal_quantile_rank():
    # Split conformal (Lei et al. 2018): the ceil((n+1)c)-th smallest |residual|.
    r = np.arange(1.0, 11.0)
    assert cal.conformal_quantile(r, 0.8) == 9.0  # ceil(11 × 0.8) = 9
    assert cal.conformal_quantile(r, 0.95) == 10.0  # capped at n
    assert np.isnan(cal.conformal_quantile([], 0.8))
    with pytest.raises(InputDataError, match="strictly between 0 and 1"):
        cal.conformal_quantile(r, 1.0)


def test_linear_model_recovers_known_coefficients(samples):
    df, X = samples
    truth = dict(cal.DEFAULT_HARDNESS_COEFFICIENTS["bond_bwi_kwh_t"])
    truth["intercept"] = 15.0
    truth["clay_total_pct"] = -0.2
    y = np.full(len(X), truth["intercept"])
    for k, v in truth.items():
        if k != "intercept":
            y = y + v * X[k].to_numpy()
    model = cal.LinearResponseModel(alpha=1e-6).fit(X, y)
    for k, v in truth.items():
        assert model.coefficients_[k] == pytest.approx(v, abs=1e-4)
    # sklearn API: params round-trip and clone.
    assert clone(model).get_params() == {
        "alpha": 1e-6,
        "calibrate": True,
        "response": "bond_bwi_kwh_t",
    }


def test_linear_model_shrinks_to_defaults_with_large_alpha(samples):
    _, X = samples
    y = np.full(len(X), 20.0)
    model = cal.LinearResponseModel(alpha=1e9).fit(X, y)
    for k, v in cal.DEFAULT_HARDNESS_COEFFICIENTS["bond_bwi_kwh_t"].items():
        if k != "intercept":
            assert model.coefficients_[k] == pytest.approx(v, abs=1e-3)


def test_kinetic_model_recovers_truth(samples):
    _, X = samples
    truth = cal.KineticRecoveryModel()
    truth.params_ = {"r_inf_scale": 0.96, "swelling_per_pct": 0.04, "oxide_recovery_frac": 0.3}
    rng = np.random.default_rng(0)
    y = truth.predict(X) + rng.normal(0, 0.01, len(X))
    model = cal.KineticRecoveryModel(
        fit_params=["r_inf_scale", "swelling_per_pct", "oxide_recovery_frac"]
    ).fit(X, y)
    assert model.params_["r_inf_scale"] == pytest.approx(0.96, abs=0.01)
    assert model.params_["swelling_per_pct"] == pytest.approx(0.04, abs=0.005)
    assert model.params_["oxide_recovery_frac"] == pytest.approx(0.3, abs=0.05)
    with pytest.raises(InputDataError, match="cannot fit \\['speed'\\]"):
        cal.KineticRecoveryModel(fit_params=["speed"]).fit(X, y)
    with pytest.raises(InputDataError, match="metal must be 'cu' or 'au'"):
        cal.KineticRecoveryModel(metal="ag").fit(X, y)


def test_acid_model_recovers_reactivity(samples):
    _, X = samples
    truth = cal.AcidReactivityModel(calibrate=False).fit(None, None)
    truth.reactivity_ = {**truth.reactivity_, "calcite": 0.7, "chlorite": 0.3}
    y = truth.predict(X)
    model = cal.AcidReactivityModel().fit(X, y)
    assert model.reactivity_["calcite"] == pytest.approx(0.7, abs=1e-3)
    assert model.reactivity_["chlorite"] == pytest.approx(0.3, abs=1e-3)
    assert all(0 <= v <= 1 for v in model.reactivity_.values())
    with pytest.raises(InputDataError, match="needs at least 3 leach tests"):
        cal.AcidReactivityModel().fit(X.iloc[:2], y[:2])


def test_calibrate_response_splits_by_hole_and_reports(samples):
    df, X = samples
    rng = np.random.default_rng(1)
    y = cal.LinearResponseModel(calibrate=False).fit(None, None).predict(X) * 1.15 + rng.normal(
        0, 0.3, len(X)
    )
    groups = df["hole_id"].to_numpy()
    model, report = cal.calibrate_response(cal.LinearResponseModel(), X, y, groups, n_splits=4)
    assert report["n"] == len(X)
    assert report["n_holes"] == 24
    assert report["rmse_cv"] < report["rmse_default"]
    assert 0.6 <= report["interval_coverage_frac"] <= 1.0
    # Folds never split a hole (scikit-learn GroupKFold, the reference splitter).
    for train, test in GroupKFold(n_splits=4).split(X, y, groups):
        assert not set(groups[train]) & set(groups[test])
    lo, hi = model.predict_interval(X, coverage=0.8)
    inside = np.mean((y >= lo) & (y <= hi))
    assert 0.7 <= inside <= 0.95


def test_monotone_boosting_respects_sign(samples):
    _, X = samples
    rng = np.random.default_rng(2)
    base = cal.KineticRecoveryModel(calibrate=False).fit(None, None)
    y = base.predict(X) - 0.01 * X["clay_swelling_pct"].to_numpy() + rng.normal(0, 0.01, len(X))
    model = cal.MonotoneBoostingModel(response="cu_recovery_frac", max_iter=50).fit(X, y)
    row = X.iloc[[0] * 30].reset_index(drop=True).copy()
    row["clay_swelling_pct"] = np.linspace(0, 15, 30)
    pred = model.predict(row)
    assert np.all(np.diff(pred) <= 1e-12)


@pytest.mark.parametrize("method", ["parametric", "monotone_gbm", "none"])
def test_json_round_trip(samples, method):
    df, X = samples
    rng = np.random.default_rng(3)
    targets = {
        "bond_bwi_kwh_t": cal.LinearResponseModel(calibrate=False).fit(None, None).predict(X)
        + rng.normal(0, 0.5, len(X)),
        "cu_recovery_frac": cal.KineticRecoveryModel(calibrate=False).fit(None, None).predict(X)
        + rng.normal(0, 0.02, len(X)),
        "acid_kg_t": cal.AcidReactivityModel(calibrate=False).fit(None, None).predict(X)
        + rng.normal(0, 1.0, len(X)),
    }
    models, report = cal.fit_all(X, targets, df["hole_id"], method=method, n_splits=3)
    assert set(report["method"]) == {method}
    for name, model in models.items():
        text = json.dumps(cal.model_to_json(model))
        back = cal.model_from_json(json.loads(text))
        np.testing.assert_allclose(back.predict(X), model.predict(X), rtol=1e-12)
        np.testing.assert_allclose(
            back.predict_interval(X)[1], model.predict_interval(X)[1], rtol=1e-12
        )
        assert name in cal.RESPONSES


def test_concentrate_model_recovers_power_law(samples):
    df, X = samples
    base = cal.ConcentrateModel(calibrate=False).fit(X, None)
    y = np.exp(1.2) * base.mechanistic(X) ** 0.4
    model = cal.ConcentrateModel().fit(X, y)
    assert model.log_scale_ == pytest.approx(1.2, abs=1e-6)
    assert model.exponent_ == pytest.approx(0.4, abs=1e-6)
    back = cal.model_from_json(json.loads(json.dumps(cal.model_to_json(model))))
    np.testing.assert_allclose(back.predict(X), model.predict(X))
    with pytest.raises(InputDataError, match="needs at least 3 concentrate grades, got 2"):
        cal.ConcentrateModel().fit(X.iloc[:2], y[:2])
    # fit_all fits the concentrate after Cu recovery, on the fitted Cu coefficients.
    rec = cal.KineticRecoveryModel(calibrate=False).fit(None, None).predict(X)
    models, _ = cal.fit_all(
        X, {"conc_cu_pct": y, "cu_recovery_frac": rec}, df["hole_id"], n_splits=3
    )
    assert models["conc_cu_pct"].cu_params == models["cu_recovery_frac"].full_params()


def test_model_from_json_rejects_unknown_class():
    with pytest.raises(InputDataError, match="unknown saved model class 'Pickled'"):
        cal.model_from_json({"class": "Pickled", "params": {}, "state": {}})


def test_make_model_errors():
    with pytest.raises(InputDataError, match="unknown calibration method 'magic'"):
        cal.make_model("smc_axb", "magic")
    with pytest.raises(InputDataError, match="unknown forecast response 'ag_recovery_frac'"):
        cal.make_model("ag_recovery_frac")


def test_too_few_tests_fall_back_to_defaults(samples):
    df, X = samples
    y = np.full(len(X), np.nan)
    y[:3] = 12.0
    models, report = cal.fit_all(X, {"bond_bwi_kwh_t": y}, df["hole_id"])
    assert report["method"].tolist() == ["none"]
    assert (
        models["bond_bwi_kwh_t"].coefficients_
        == cal.DEFAULT_HARDNESS_COEFFICIENTS["bond_bwi_kwh_t"]
    )


def test_kinetic_model_with_few_tests_leans_on_the_prior(samples):
    X = samples[1].iloc[:5].reset_index(drop=True)
    y = cal.make_model("cu_recovery_frac", "none").fit(None, None).predict(X)
    # Five tests, eleven coefficients: determined with the prior, refused without it.
    model = cal.KineticRecoveryModel(metal="cu").fit(X, y)
    assert np.isfinite(model.predict(X)).all()
    with pytest.raises(InputDataError, match=r"5 tests with a recovery cannot fit 11 coeff"):
        cal.KineticRecoveryModel(metal="cu", prior_strength=0.0).fit(X, y)
