"""Calibration on the Vellantra demo recovers the generator's hidden truth.

The demo generator (``geomet.demo``) writes measured testwork with stated noise
(``truth/parameters.json``) and the noise-free responses (``truth/testwork_truth.csv``). Fitted on
the measured values, the calibrated models must predict the truth better than the measurements
themselves do. Skipped when the demo files are not there.
"""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from geomet.forecast import calibration as cal
from geomet.forecast.censored import background_ratio_frac, oxide_cu_below_detection
from geomet.forecast.inputs import resolve_inputs
from geomet.forecast.join import overlap_join
from geomet.forecast.testwork import reduce_flotation_tests

# Laboratory headers of the demo assays file (as mapped in recipes/demo.toml).
ASSAY_MAP = {
    "HoleID": "hole_id",
    "From": "from_m",
    "To": "to_m",
    "Cu_%": "cu_pct",
    "Au_ppb": "au_gpt",
    "CuAS_%": "cu_asol_pct",
}


@pytest.fixture(scope="module")
def demo(demo_dir):
    needed = [
        "testwork.csv",
        "scan.csv",
        "assays.csv",
        "truth/testwork_truth.csv",
        "truth/parameters.json",
    ]
    if not all((demo_dir / n).exists() for n in needed):
        pytest.skip("demo data not generated yet")
    from geomet.io.readers import read_table
    from geomet.minerals.groups import add_mineralogy_columns

    # testwork.csv and scan.csv carry canonical headers and units; assays need the reader.
    testwork = pd.read_csv(demo_dir / "testwork.csv")
    scan = pd.read_csv(demo_dir / "scan.csv")
    assays = read_table(
        demo_dir / "assays.csv", table="assays", column_map=ASSAY_MAP, units={"au_gpt": "ppb"}
    ).table
    # Acid-soluble Cu below detection re-read for the oxide ratio as the forecast step does
    # (option cu_asol_below_detection = "background_ratio").
    censored = assays["cu_asol_pct_censored"].to_numpy(dtype=bool)
    assays["cu_asol_pct"] = oxide_cu_below_detection(
        assays["cu_asol_pct"],
        assays["cu_pct"],
        censored,
        assays["cu_asol_pct_detection_limit"],
        background_ratio_frac=background_ratio_frac(
            assays["cu_asol_pct"], assays["cu_pct"], censored
        ),
    )
    truth = pd.read_csv(demo_dir / "truth" / "testwork_truth.csv").set_index("sample_id")
    params = json.loads((demo_dir / "truth" / "parameters.json").read_text())["testwork"]
    minerals = [
        c
        for c in scan.columns
        if c.endswith("_pct") and not c.endswith("_limit") and pd.api.types.is_float_dtype(scan[c])
    ]
    joined = overlap_join(testwork, scan, minerals)
    joined = overlap_join(joined, assays, ["cu_pct", "au_gpt", "cu_asol_pct"])
    joined = reduce_flotation_tests(add_mineralogy_columns(joined))
    X = pd.DataFrame(resolve_inputs(joined))
    truth = truth.loc[joined["sample_id"]]
    measured = {
        "bond_bwi_kwh_t": joined["bond_bwi_kwh_t"],
        "smc_axb": joined["smc_axb"],
        "smc_mia_kwh_t": joined["smc_mia_kwh_t"],
        "cu_recovery_frac": joined["cu_recovery_frac"],
        "au_recovery_frac": joined["au_recovery_frac"],
        "acid_kg_t": joined["leach_acid_kg_t"],
    }
    true = {
        "bond_bwi_kwh_t": truth["bond_bwi_kwh_t"],
        "smc_axb": truth["smc_axb"],
        "smc_mia_kwh_t": truth["smc_mia_kwh_t"],
        "cu_recovery_frac": truth["rougher_cu_recovery_pct"] / 100.0,
        "au_recovery_frac": truth["rougher_au_recovery_pct"] / 100.0,
        "acid_kg_t": truth["leach_acid_kg_t"],
    }
    time_min = params["rougher_cu"]["time_min"]
    kw = {"time_min": time_min}
    models, report = cal.fit_all(
        X,
        {k: np.asarray(v, float) for k, v in measured.items()},
        joined["hole_id"],
        model_kwargs={"cu_recovery_frac": kw, "au_recovery_frac": kw},
    )
    return X, measured, true, models, report, params


def _rmse(a, b):
    return float(np.sqrt(np.nanmean((np.asarray(a, float) - np.asarray(b, float)) ** 2)))


@pytest.mark.parametrize("response", ["bond_bwi_kwh_t", "smc_axb", "smc_mia_kwh_t", "acid_kg_t"])
def test_hardness_and_acid_recover_truth(demo, response):
    X, measured, true, models, report, _ = demo
    noise = _rmse(measured[response], true[response])  # the demo's stated noise, as realised
    error = _rmse(models[response].predict(X), true[response])
    # Tolerance: 0.6 × the measurement noise (80 tests, 7-9 coefficients: the fit averages
    # most of the noise away; the linear forms are exact or close to the generator's forms).
    assert error < 0.6 * noise, (response, error, noise)
    row = report.set_index("response").loc[response]
    assert row["rmse_cv"] < row["rmse_default"]


def test_bond_error_against_stated_noise(demo):
    X, _, true, models, _, params = demo
    error = _rmse(models["bond_bwi_kwh_t"].predict(X), true["bond_bwi_kwh_t"])
    assert error < 0.5 * params["noise"]["bond_bwi_kwh_t_sd"]


@pytest.mark.parametrize(
    "response",
    [
        "bond_bwi_kwh_t",
        "smc_axb",
        "smc_mia_kwh_t",
        "cu_recovery_frac",
        "au_recovery_frac",
        "acid_kg_t",
    ],
)
def test_calibration_removes_the_measurement_noise(demo, response):
    # The error against the truth has two parts: the model form and its inputs (what the same
    # model fitted to the noise-free truth still misses: the "floor") and what the measurement
    # noise leaves in the fit. The noise part must be well below the noise itself (tolerance
    # 0.5 × the realised noise; 80 tests, <= 11 coefficients).
    X, measured, true, models, _, params = demo
    kw = {"time_min": params["rougher_cu"]["time_min"]} if "recovery" in response else {}
    best = cal.make_model(response, "parametric", **kw).fit(X, np.asarray(true[response], float))
    floor = _rmse(best.predict(X), true[response])
    error = _rmse(models[response].predict(X), true[response])
    noise = _rmse(measured[response], true[response])
    excess = np.sqrt(max(error**2 - floor**2, 0.0))
    assert excess < 0.5 * noise, (response, error, floor, noise)
    default = _rmse(models[response].predict_default(X), true[response])
    assert error < 0.6 * default


def test_interval_coverage_near_target(demo):
    *_, report, _ = demo
    cover = report["interval_coverage_frac"]
    # 80 tests: the binomial standard error of an 80 % coverage is 4.5 points.
    assert ((cover > 0.65) & (cover < 0.95)).all()


def test_cu_recovery_error_against_truth(demo):
    # With below-detection CuAS re-read at the sulfide background ratio and per-clay rate
    # effects, calibrated Cu recovery is within 0.0125 (RMSE, fraction) of the noise-free truth
    # (achieved 0.011; half-limit CuAS and the severity-index rate gave 0.033). 0.0125 is below
    # the realised measurement noise (0.014): the fit now beats a single test. The remainder is
    # mostly one sample whose Cu head (0.003 %) is below the CuAS limit, so its oxide ratio is
    # undetermined (taken as 0.5; true 0.75).
    X, measured, true, models, report, _ = demo
    error = _rmse(models["cu_recovery_frac"].predict(X), true["cu_recovery_frac"])
    noise = _rmse(measured["cu_recovery_frac"], true["cu_recovery_frac"])
    assert error < 0.0125, error
    assert error < noise, (error, noise)
    row = report.set_index("response").loc["cu_recovery_frac"]
    # CV RMSE by hole against measured recovery: 0.026 achieved (0.039 before the change).
    assert row["rmse_cv"] < 0.03, row["rmse_cv"]


def test_au_recovery_error_against_truth(demo):
    # Same inputs and rate form for Au: 0.021 achieved against the truth (0.031 before), with
    # measurement noise 0.032; tolerance 0.025.
    X, measured, true, models, _, _ = demo
    error = _rmse(models["au_recovery_frac"].predict(X), true["au_recovery_frac"])
    assert error < 0.025, error
