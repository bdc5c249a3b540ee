"""The testwork_selection run step on synthetic contract tables."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pydantic
import pytest

from geomet.errors import InputDataError
from geomet.run.registry import STEPS, StepContext
from geomet.run.steps import testwork_selection as tws
from geomet.sampling.candidates import core_mass_kg
from geomet.sampling.program import existing_samples, plan_testwork
from geomet.sampling.synthetic import synthetic_blocks, synthetic_composites, synthetic_testwork

pytestmark = pytest.mark.solver


@pytest.fixture(scope="module")
def tables():
    comp = synthetic_composites(14, 70, seed=3)
    blocks = synthetic_blocks(3000, seed=3)
    testwork = synthetic_testwork(comp, 4, seed=3)
    return {"composite_forecasts": comp, "block_forecasts": blocks, "testwork": testwork}


def _options(**kw):
    base = {"n_samples": 10, "max_demand_points": 40, "time_limit_s": 10.0}
    base.update(kw)
    return tws.TestworkSelectionOptions(**base)


@pytest.fixture(scope="module")
def run(tables, tmp_path_factory):
    ctx = StepContext(tables=dict(tables), plot_dir=tmp_path_factory.mktemp("plots"), seed=7)
    opts = _options(
        exclusions=[{"hole_id": "VLT-0002", "from_m": 0, "to_m": 60, "reason": "kept for QA/QC"}]
    )
    return ctx, opts, tws.testwork_selection(ctx, opts)


def test_step_is_registered():
    step = STEPS["testwork_selection"]  # registered when the step module is imported
    assert step.needs == ("composite_forecasts", "block_forecasts")
    assert step.optional_needs == ("testwork",)
    assert set(step.produces) == {"testwork_allocation", "testwork_selection", "testwork_coverage"}
    assert step.options is tws.TestworkSelectionOptions


def test_step_tables_and_totals(run):
    ctx, opts, out = run
    alloc, sel, cov = (
        out["testwork_allocation"],
        out["testwork_selection"],
        out["testwork_coverage"],
    )
    assert alloc["samples_allocated"].sum() == opts.n_samples
    assert len(sel) == opts.n_samples
    assert (alloc["samples_chosen"] == alloc["samples_allocated"]).all()
    for col in (
        "hole_id",
        "from_m",
        "to_m",
        "length_m",
        "mass_kg",
        "core_size",
        "domain",
        "tonnes_represented_t",
        "periods",
        "reason",
    ):
        assert col in sel.columns
    assert sel["reason"].str.startswith("stands for ").all()
    assert set(cov["domain"]) == set(alloc["domain"])
    assert {"wasserstein", "covered_tonnes_frac", "gap"} <= set(cov.columns)
    assert len(ctx.plots) == 2
    assert all(p.path.exists() for p in ctx.plots)
    json.dumps(ctx.extras["json_files"]["testwork_selection"])  # plain JSON


def test_selected_core_is_heavy_enough_and_available(run, tables):
    _, opts, out = run
    sel = out["testwork_selection"]
    assert (sel["mass_kg"] >= opts.mass_kg - 1e-9).all()
    # mass = length x half HQ cross-section x density (the interval's mean density).
    np.testing.assert_allclose(
        sel["mass_kg"], core_mass_kg(sel["length_m"], 63.5, sel["density_t_m3"], core_fraction=0.5)
    )
    used = pd.concat(
        [
            tables["testwork"][["hole_id", "from_m", "to_m"]],
            pd.DataFrame([{"hole_id": "VLT-0002", "from_m": 0.0, "to_m": 60.0}]),
        ]
    )
    for row in sel.itertuples():
        same = used[used["hole_id"] == row.hole_id]
        overlap = np.minimum(same["to_m"], row.to_m) - np.maximum(same["from_m"], row.from_m)
        assert (overlap <= 1e-9).all(), f"{row.hole_id} {row.from_m}-{row.to_m} uses consumed core"


def test_spread_rules_hold(run):
    _, opts, out = run
    sel = out["testwork_selection"]
    assert sel.groupby("hole_id").size().max() <= opts.max_per_hole
    for _, grp in sel.groupby("hole_id"):
        g = grp.sort_values("from_m")
        gaps = g["from_m"].to_numpy()[1:] - g["to_m"].to_numpy()[:-1]
        assert (gaps >= opts.min_separation_m - 1e-9).all()


def test_existing_tests_are_counted_by_domain(run, tables):
    _, _, out = run
    ex = existing_samples(tables["testwork"], tables["composite_forecasts"], ["cu_pct"])
    counts = ex["domain"].value_counts()
    alloc = out["testwork_allocation"].set_index("domain")
    for dom, n in counts.items():
        assert alloc.loc[dom, "existing_tests"] == n


def test_step_without_testwork_and_with_discount(tables):
    t = {k: v for k, v in tables.items() if k != "testwork"}
    ctx = StepContext(tables=t)
    out = tws.testwork_selection(
        ctx, _options(period_discount_frac=0.2, n_samples=6, core_diameter_mm=61.1)
    )
    alloc = out["testwork_allocation"]
    assert alloc["existing_tests"].sum() == 0
    assert (alloc["weighted_tonnes_t"] < alloc["scheduled_tonnes_t"]).all()
    assert (out["testwork_selection"]["core_size"] == "61.1 mm").all()
    assert out["testwork_selection"].shape[0] == 6


def test_missing_attribute_is_noted_and_no_attribute_is_an_error(tables):
    ctx = StepContext(tables=dict(tables))
    tws.testwork_selection(ctx, _options(attributes=["cu_pct", "acid_kg_t"], n_samples=4))
    assert any("acid_kg_t not in both" in n for n in ctx.notes)
    with pytest.raises(InputDataError, match=r"none of the attributes acid_kg_t is in both"):
        tws.testwork_selection(StepContext(tables=dict(tables)), _options(attributes=["acid_kg_t"]))


def test_missing_columns_error(tables):
    bad = dict(tables)
    bad["block_forecasts"] = tables["block_forecasts"].drop(columns="tonnes_t")
    with pytest.raises(InputDataError, match=r"block_forecasts lacks column\(s\) tonnes_t"):
        tws.testwork_selection(StepContext(tables=bad), _options())


def test_no_domain_to_sample_error(tables):
    blocks = tables["block_forecasts"].assign(domain=np.nan)
    with pytest.raises(InputDataError, match=r"no scheduled block with a domain"):
        plan_testwork(tables["composite_forecasts"], blocks, attributes=["cu_pct"])


def test_option_validation():
    with pytest.raises(pydantic.ValidationError, match=r"unknown core_size 'XQ'"):
        tws.TestworkSelectionOptions(core_size="XQ")
    with pytest.raises(pydantic.ValidationError, match=r"Extra inputs are not permitted"):
        tws.TestworkSelectionOptions(n_sample=3)
    with pytest.raises(pydantic.ValidationError, match=r"attribute_weights names au_gpt"):
        tws.TestworkSelectionOptions(attributes=["cu_pct"], attribute_weights={"au_gpt": 2.0})
    with pytest.raises(pydantic.ValidationError, match=r"excluded interval needs from_m < to_m"):
        tws.TestworkSelectionOptions(exclusions=[{"hole_id": "VLT-0001", "from_m": 5, "to_m": 5}])
    with pytest.raises(pydantic.ValidationError, match=r"greater than 0"):
        tws.TestworkSelectionOptions(mass_kg=0)
    ok = tws.TestworkSelectionOptions(core_size="pq", period_weights={"1": 2.0})
    assert ok.period_weights == {1: 2.0}


def test_too_few_candidates_is_noted(tables):
    ctx = StepContext(tables=dict(tables))
    out = tws.testwork_selection(ctx, _options(n_samples=400, max_per_hole=1))
    assert len(out["testwork_selection"]) <= 14  # one per hole at most
    assert any("could be placed" in n or "allocated samples chosen" in n for n in ctx.notes)


def test_grid_aggregation_and_block_variability(tables):
    plan = plan_testwork(
        tables["composite_forecasts"],
        tables["block_forecasts"],
        tables["testwork"],
        n_samples=6,
        attributes=["cu_pct", "clay_swelling_pct", "bond_bwi_kwh_t"],
        heuristic_starts=2,
        aggregation="grid",
        variability_source="blocks",
        max_demand_points=30,
        attribute_weights={"clay_swelling_pct": 2.0},
        milp_max_pairs=0,
        seed=1,
    )
    assert len(plan.selection) == 6
    assert all(s.n_demand <= 30 for s in plan.result.solves)
    assert plan.result.standardiser.importance.tolist() == [1.0, 2.0, 1.0]
    with pytest.raises(InputDataError, match=r"variability_source must be 'composites' or "):
        plan_testwork(
            tables["composite_forecasts"],
            tables["block_forecasts"],
            attributes=["cu_pct"],
            variability_source="core",
        )


def test_blocks_without_periods_are_all_scheduled(tables):
    blocks = tables["block_forecasts"].drop(columns="period")
    plan = plan_testwork(
        tables["composite_forecasts"],
        blocks,
        n_samples=4,
        attributes=["cu_pct", "au_gpt"],
        max_demand_points=30,
        milp_max_pairs=0,
    )
    assert "every block counts as scheduled" in plan.notes[0]
    assert plan.allocation["scheduled_tonnes_t"].sum() == pytest.approx(blocks["tonnes_t"].sum())
    assert (plan.selection["periods"] == "").all()
    assert not plan.selection["reason"].str.contains("period").any()


def test_composites_without_density_are_noted(tables):
    comp = tables["composite_forecasts"].copy()
    comp.loc[comp.index[:5], "density_t_m3"] = np.nan
    plan = plan_testwork(
        comp,
        tables["block_forecasts"],
        n_samples=3,
        attributes=["cu_pct"],
        max_demand_points=20,
        milp_max_pairs=0,
    )
    assert any("5 composite(s) have no density_t_m3" in n for n in plan.notes)
    assert not (
        (plan.candidates["hole_id"] == comp["hole_id"].iloc[0])
        & (plan.candidates["from_m"] < comp["to_m"].iloc[4])
    ).any()


def test_same_seed_same_selection(tables):
    kw = {
        "n_samples": 5,
        "attributes": ["cu_pct", "clay_swelling_pct"],
        "max_demand_points": 25,
        "milp_max_pairs": 0,
        "seed": 11,
    }
    a = plan_testwork(tables["composite_forecasts"], tables["block_forecasts"], **kw)
    b = plan_testwork(tables["composite_forecasts"], tables["block_forecasts"], **kw)
    pd.testing.assert_frame_equal(a.selection, b.selection)
