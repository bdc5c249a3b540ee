"""The ``blend`` run step, driven through a StepContext with synthetic tables."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from pydantic import ValidationError

from geomet.errors import InputDataError, RecipeError
from geomet.plan.synthetic import synthetic_parcels, synthetic_plant_limits
from geomet.run.registry import STEPS, StepContext, load_steps
from geomet.run.steps.blend import BlendOptions, EconomicsOptions, apply_changes

pytestmark = pytest.mark.solver


def _tables(n_domains=5, n_periods=3, seed=2):
    parcels = synthetic_parcels(n_domains, n_periods, seed=seed)
    blocks = parcels.drop(columns=["parcel_id", "blocks_n", "oxide_ratio_frac"])
    blocks = pd.concat([blocks.assign(tonnes_t=blocks["tonnes_t"] / 3)] * 3, ignore_index=True)
    blocks.insert(0, "block_id", [f"B{i:05d}" for i in range(len(blocks))])
    return {"block_forecasts": blocks, "plant_limits": synthetic_plant_limits(n_periods, parcels)}


def _run(options=None, plot_dir=None, tables=None):
    load_steps()
    ctx = StepContext(tables=tables or _tables(), plot_dir=plot_dir)
    out = STEPS["blend"].func(ctx, options or BlendOptions())
    return ctx, out


def test_step_is_registered_with_its_tables():
    step = load_steps()["blend"]
    assert step.needs == ("block_forecasts", "plant_limits")
    assert set(step.produces) == {
        "blend_schedule",
        "blend_plant",
        "blend_stockpiles",
        "blend_limits",
        "blend_scenarios",
        "blend_diagnosis",
    }


def test_step_produces_a_plan(tmp_path):
    ctx, out = _run(plot_dir=tmp_path)
    assert set(out) == set(STEPS["blend"].produces)
    sched, plant = out["blend_schedule"], out["blend_plant"]
    tables = _tables()
    # every scheduled tonne leaves its parcel (fixed mining): schedule totals = block totals
    from_sources = sched.loc[sched["source_kind"] == "source", "tonnes_t"].sum()
    assert from_sources == pytest.approx(tables["block_forecasts"]["tonnes_t"].sum(), rel=1e-9)
    assert set(plant["processor"]) == {"mill", "leach"}
    assert out["blend_scenarios"]["scenario"].tolist() == ["base"]
    assert out["blend_scenarios"]["status"].iloc[0] == "optimal"
    assert out["blend_diagnosis"].empty
    assert {p.name for p in ctx.plots} >= {"blend_routes", "blend_mill_feed", "blend_plant_limits"}
    assert all(p.path.exists() for p in ctx.plots)
    assert any(n.startswith("blend base: optimal") for n in ctx.notes)


def test_options_override_plant_limits():
    opts = BlendOptions(mill={"max_t": 400_000.0, "clay_severity_max_idx": 6.0})
    _ctx, out = _run(opts)
    lim = out["blend_limits"]
    assert (lim.loc[lim["limit"] == "mill_max_t", "limit_value"] == 400_000.0).all()
    assert (lim.loc[lim["limit"] == "mill_clay_severity_max_idx", "limit_value"] == 6.0).all()
    mill = out["blend_plant"].query("processor == 'mill'")
    assert (mill["feed_t"] <= 400_000.0 + 1e-6).all()
    assert (mill["clay_severity_idx"].dropna() <= 6.0 + 1e-7).all()


def test_scenarios_side_by_side_and_infeasible_one_reports(tmp_path):
    opts = BlendOptions(
        scenarios=[
            {"name": "clay 5", "changes": {"mill.clay_severity_max_idx": 5.0}},
            {"name": "clay 9", "changes": {"mill.clay_severity_max_idx": 9.0}},
            {"name": "must feed", "changes": {"mill.min_t": 5.0e6}},
        ]
    )
    ctx, out = _run(opts, plot_dir=tmp_path)
    sc = out["blend_scenarios"].set_index("scenario")
    assert sc.index.tolist() == ["base", "clay 5", "clay 9", "must feed"]
    # a looser limit can never lower the optimum (the feasible set only grows)
    assert sc.loc["clay 9", "value_pv_usd"] >= sc.loc["clay 5", "value_pv_usd"] - 1e-6
    assert sc.loc["clay 5", "mill_clay_severity_idx"] <= 5.0 + 1e-7
    assert sc.loc["must feed", "status"] == "infeasible"
    diag = out["blend_diagnosis"]
    assert set(diag["scenario"]) == {"must feed"}
    assert "mill_min_t" in set(diag["limit"])
    assert any("must feed is infeasible" in n for n in ctx.notes)
    assert "blend_scenarios" in {p.name for p in ctx.plots}


def test_infeasible_base_plan_does_not_crash():
    _ctx, out = _run(BlendOptions(mill={"min_t": 9.0e6}))
    assert out["blend_scenarios"]["status"].iloc[0] == "infeasible"
    assert out["blend_schedule"].empty
    assert len(out["blend_diagnosis"]) > 0


def test_milp_options_run():
    opts = BlendOptions(
        milp={"min_feed_t": 50_000.0, "max_domains_per_period": 2},
        solver={"algorithm": "simplex", "time_limit_s": 30},
    )
    _ctx, out = _run(opts, tables=_tables(4, 2))
    sched = out["blend_schedule"]
    fed = sched[(sched["destination"] == "mill") & (sched["tonnes_t"] > 1e-6)]
    assert (fed.groupby("period")["domain"].nunique() <= 2).all()


def test_flexible_mining_runs():
    _ctx, out = _run(BlendOptions(mining="flexible"))
    assert out["blend_scenarios"]["status"].iloc[0] == "optimal"


def test_copper_price_per_pound():
    # 4.0 USD/lb * 2204.62262 lb/t = 8818.49 USD/t (1 lb = 0.45359237 kg exactly)
    econ = EconomicsOptions(cu_price_usd_lb=4.0).to_economics()
    assert econ.cu_price_usd_t == pytest.approx(4.0 / 0.45359237 * 1000, rel=1e-12)


def test_bad_scenario_change_names_the_option():
    with pytest.raises(
        RecipeError, match="blend scenario change 'mill.clay_limit' names no option"
    ):
        apply_changes(BlendOptions(), {"mill.clay_limit": 3})
    with pytest.raises(RecipeError, match="blend scenario change 'mill.max_t' = -5 is not valid"):
        apply_changes(BlendOptions(), {"mill.max_t": -5})


def test_duplicate_scenario_names():
    opts = BlendOptions(scenarios=[{"name": "base", "changes": {}}])
    with pytest.raises(RecipeError, match="blend scenario names must be unique"):
        _run(opts)


def test_unknown_option_is_rejected():
    with pytest.raises(ValidationError, match="clay_limit"):
        BlendOptions(mill={"clay_limit": 3})


def test_missing_forecast_columns():
    tables = _tables()
    tables["block_forecasts"] = tables["block_forecasts"].drop(columns=["mill_energy_kwh_t"])
    with pytest.raises(
        InputDataError, match="block_forecasts lacks column\\(s\\) \\['mill_energy_kwh_t'\\]"
    ):
        _run(tables=tables)


def test_unscheduled_blocks_are_ignored():
    tables = _tables()
    bf = tables["block_forecasts"].copy()
    extra = bf.iloc[:5].assign(period=np.nan, block_id=[f"U{i}" for i in range(5)])
    tables["block_forecasts"] = pd.concat([bf, extra], ignore_index=True)
    _ctx, out = _run(tables=tables)
    sched = out["blend_schedule"]
    assert sched.loc[sched["source_kind"] == "source", "tonnes_t"].sum() == pytest.approx(
        bf["tonnes_t"].sum(), rel=1e-9
    )


def test_sweep_makes_one_scenario_per_value():
    opts = BlendOptions(sweep={"mill.clay_severity_max_idx": [5.0, 7.0, 9.0]})
    _ctx, out = _run(opts)
    sc = out["blend_scenarios"]
    names = [
        "base",
        "clay_severity_max_idx=5.0",
        "clay_severity_max_idx=7.0",
        "clay_severity_max_idx=9.0",
    ]
    assert sc["scenario"].tolist() == names
    values = sc.set_index("scenario")["value_pv_usd"]
    # loosening the limit never lowers the optimum (feasible sets are nested)
    assert values[names[1]] <= values[names[2]] + 1e-6 <= values[names[3]] + 2e-6


def test_sweep_cannot_nest():
    with pytest.raises(RecipeError, match="names no option"):
        apply_changes(BlendOptions(), {"sweep": {}})


@pytest.mark.parametrize("off", ["mill", "leach"])
def test_one_processor_switched_off(off):
    _ctx, out = _run(BlendOptions(**{off: {"enabled": False}}))
    plant = out["blend_plant"]
    assert off not in set(plant["processor"])
    assert out["blend_scenarios"]["status"].iloc[0] == "optimal"
    assert off not in set(out["blend_schedule"]["destination"])


def test_stockpile_groups_option():
    opts = BlendOptions(stockpiles={"groups": {"D000": "low grade", "D001": "low grade"}})
    _ctx, out = _run(opts)
    assert "stockpile:D000" not in set(out["blend_stockpiles"]["stockpile"])
    assert "stockpile:low grade" in set(out["blend_stockpiles"]["stockpile"])


def test_warm_started_scenarios_give_the_same_plans():
    sweep = {"mill.clay_severity_max_idx": [5.0, 9.0]}
    _c, cold = _run(BlendOptions(sweep=sweep, solver={"warm_start_scenarios": False}))
    _w, warm = _run(BlendOptions(sweep=sweep, solver={"warm_start_scenarios": True}))
    np.testing.assert_allclose(
        warm["blend_scenarios"]["value_pv_usd"], cold["blend_scenarios"]["value_pv_usd"], rtol=1e-9
    )
