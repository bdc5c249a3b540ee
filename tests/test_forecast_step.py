"""The ``forecast`` run step on synthetic tables with the contract's names."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

import geomet.run.steps.forecast  # noqa: F401  (registers the step; other steps not imported)
from geomet.forecast import calibration as cal
from geomet.forecast.apply import FORECAST_COLUMNS
from geomet.forecast.inputs import resolve_inputs
from geomet.forecast.synthetic import synthetic_mineralogy
from geomet.run.registry import STEPS, StepContext


@pytest.fixture(scope="module")
def tables():
    domained = synthetic_mineralogy(1500, seed=31, n_holes=25)
    rng = np.random.default_rng(8)
    picked = domained.sample(90, random_state=2)
    X = pd.DataFrame(resolve_inputs(picked))
    testwork = picked[["hole_id", "from_m", "to_m"]].reset_index(drop=True)
    testwork.insert(0, "sample_id", [f"OVR-{i:03d}" for i in range(len(testwork))])
    for name, col, scale in (
        ("bond_bwi_kwh_t", "bond_bwi_kwh_t", 0.5),
        ("smc_axb", "smc_axb", 3.0),
        ("smc_mia_kwh_t", "smc_mia_kwh_t", 0.8),
        ("acid_kg_t", "leach_acid_kg_t", 1.5),
    ):
        testwork[col] = cal.make_model(name, "none").fit(None, None).predict(X) + rng.normal(
            0, scale, len(X)
        )
    rec = cal.make_model("cu_recovery_frac", "none").fit(None, None).predict(X)
    testwork["rougher_cu_recovery_pct"] = 100 * rec + rng.normal(0, 1.5, len(X))
    testwork["feed_cu_pct"] = X["cu_pct"].to_numpy()
    blocks = synthetic_mineralogy(800, seed=32).drop(
        columns=["hole_id", "from_m", "to_m", "length_m"]
    )
    blocks.insert(0, "block_id", np.arange(len(blocks)))
    blocks["tonnes_t"] = 30_000.0
    blocks["period"] = rng.integers(1, 6, len(blocks))
    return {"domained": domained, "testwork": testwork, "blocks_domained": blocks}


@pytest.mark.parametrize("method", ["parametric", "none"])
def test_forecast_step_outputs(tables, method, tmp_path):
    step = STEPS["forecast"]
    assert step.needs == ("domained", "testwork")
    assert step.optional_needs == ("blocks_domained", "assays")
    ctx = StepContext(tables=tables, plot_dir=tmp_path)
    out = step.func(ctx, step.options(calibration_method=method))
    assert set(out) == set(step.produces)
    report = out["calibration_report"].set_index("response")
    assert set(report.index) == {
        "bond_bwi_kwh_t",
        "smc_axb",
        "smc_mia_kwh_t",
        "cu_recovery_frac",
        "acid_kg_t",
    }
    assert (report["n"] == 90).all()
    assert (report["method"] == method).all()
    blocks = out["block_forecasts"]
    assert len(blocks) == len(tables["blocks_domained"])
    assert set(FORECAST_COLUMNS) <= set(blocks.columns)
    assert blocks["throughput_tph_p10"].notna().all()
    assert blocks["au_recovery_frac_p10"].isna().all()  # no Au tests: no Au interval
    assert len(out["composite_forecasts"]) == len(tables["domained"])
    dom = out["domain_forecasts"]
    assert set(dom["basis"]) == {"blocks"}
    assert dom["tonnes_t"].sum() == pytest.approx(blocks["tonnes_t"].sum())
    saved = ctx.extras["json_files"]["forecast_models"]
    back = {k: cal.model_from_json(v) for k, v in json.loads(json.dumps(saved))["models"].items()}
    assert set(back) == set(report.index)
    assert any("au_recovery_frac" in n for n in ctx.notes)
    assert (tmp_path / "forecast_calibration.png").exists()


def test_forecast_step_without_blocks_uses_composites(tables):
    step = STEPS["forecast"]
    ctx = StepContext(tables={k: v for k, v in tables.items() if k != "blocks_domained"})
    out = step.func(ctx, step.options())
    assert out["block_forecasts"].empty
    assert set(out["domain_forecasts"]["basis"]) == {"composites"}
    assert any("no blocks_domained" in n for n in ctx.notes)


def test_forecast_step_with_unmatched_testwork_uses_defaults(tables):
    step = STEPS["forecast"]
    testwork = tables["testwork"].assign(hole_id="ELSEWHERE-1")
    ctx = StepContext(tables={"domained": tables["domained"], "testwork": testwork})
    out = step.func(ctx, step.options())
    assert out["calibration_report"].empty
    assert out["composite_forecasts"]["cu_recovery_frac"].notna().all()
    assert any("outside the composites" in n for n in ctx.notes)
    assert ctx.extras["json_files"]["forecast_models"]["models"] == {}


def test_forecast_step_options_validated():
    from pydantic import ValidationError

    options = STEPS["forecast"].options
    with pytest.raises(ValidationError, match="calibration_method"):
        options(calibration_method="neural")
    with pytest.raises(ValidationError, match="Extra inputs are not permitted"):
        options(comminution={"mill_power": 1.0})
