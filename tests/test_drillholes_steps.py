"""Tests of the run steps ``check`` and ``composite`` (geomet.run.steps.drillholes)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from pydantic import ValidationError

from geomet import glossary
from geomet.errors import InputDataError, StepInputMissing
from geomet.io.readers import read_table
from geomet.run.registry import StepContext
from geomet.run.steps.drillholes import (
    CheckOptions,
    CompositeOptions,
    check_step,
    composite_step,
)


def vellantra(seed=3):
    rng = np.random.default_rng(seed)
    collars = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-002"],
            "easting_m": [1000.0, 1100.0],
            "northing_m": [5000.0, 5050.0],
            "elevation_m": [3200.0, 3210.0],
            "total_depth_m": [40.0, 30.0],
        }
    )
    surveys = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-001", "VL-002"],
            "depth_m": [0.0, 40.0, 0.0],
            "azimuth_deg": [90.0, 95.0, 0.0],
            "dip_deg": [-60.0, -62.0, -90.0],
        }
    )
    f = np.arange(0.0, 40.0, 1.0)
    assays = pd.DataFrame(
        {
            "hole_id": "VL-001",
            "from_m": f,
            "to_m": f + 1,
            "cu_pct": rng.uniform(0.1, 1.0, 40),
            "au_gpt": rng.uniform(0, 1, 40),
        }
    )
    lithology = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-001", "VL-002"],
            "from_m": [0.0, 17.0, 0.0],
            "to_m": [17.0, 40.0, 30.0],
            "lith_code": ["QFP", "AND", "DIO"],
        }
    )
    density = pd.DataFrame(
        {
            "hole_id": "VL-001",
            "from_m": np.arange(0.0, 40.0, 5.0),
            "to_m": np.arange(5.0, 45.0, 5.0),
            "density_t_m3": 2.65,
        }
    )
    return {
        "collars": collars,
        "surveys": surveys,
        "assays": assays,
        "lithology": lithology,
        "density": density,
    }


def test_check_registration():
    from geomet.run.registry import STEPS

    step = STEPS["check"]
    assert step.needs == ()
    assert set(step.optional_needs) == set(glossary.INPUT_TABLES)
    assert set(step.produces) == {"validation_report"}
    step = STEPS["composite"]
    assert step.needs == ("collars", "surveys")
    assert set(step.produces) == {"composites"}


def test_check_clean_data():
    ctx = StepContext(tables=vellantra())
    out = check_step(ctx, CheckOptions())
    assert out["validation_report"].empty
    assert ctx.notes == ["check: 0 errors and 0 warnings in 5 input tables"]


def bad_tables():
    tables = vellantra()
    assays = tables["assays"].copy()
    assays.loc[5, "to_m"] = 4.0  # from 5 >= to 4
    assays.loc[6, "hole_id"] = "VL-404"  # no collar
    tables["assays"] = assays
    return tables


def test_check_stop_raises_listing_errors():
    ctx = StepContext(tables=bad_tables())
    with pytest.raises(InputDataError, match=r"input tables have 2 errors \(") as info:
        check_step(ctx, CheckOptions())
    text = str(info.value)
    assert "from_m must be less than to_m; got from_m=5, to_m=4 at assays row 5" in text
    assert "hole VL-404 at assays row 6 (hole VL-404) has no collar" in text
    assert "set on_error = 'exclude' in [check]" in text
    assert len(ctx.extras["validation_report"]) >= 2


def test_check_exclude_returns_cleaned_tables_and_notes():
    tables = bad_tables()
    ctx = StepContext(tables=tables)
    out = check_step(ctx, CheckOptions(on_error="exclude"))
    assert set(out) == {"validation_report", "assays"}
    assert len(out["assays"]) == len(tables["assays"]) - 2
    assert any(n.startswith("check: dropped 2 of 40 rows of assays (") for n in ctx.notes)
    report = out["validation_report"]
    assert set(report["rule"]) >= {"from_not_less_than_to", "no_collar"}


def test_check_warn_keeps_rows():
    ctx = StepContext(tables=bad_tables())
    out = check_step(ctx, CheckOptions(on_error="warn", max_problems=1))
    assert set(out) == {"validation_report"}
    assert out["validation_report"]["rule"].tolist()[-1] == "more_problems"
    assert "errors left in the data" in ctx.notes[-1]


def test_check_uses_reader_sources(tmp_path):
    path = tmp_path / "vellantra_scan.csv"
    path.write_text("hole_id,from_m,to_m,smectite_pct\nVL-001,0,1,lots\n")
    src = read_table(path, table="scan")
    tables = {**vellantra(), "scan": src.table}
    ctx = StepContext(tables=tables, extras={"sources": {"scan": src}})
    with pytest.raises(
        InputDataError,
        match=r"smectite_pct must be a number; got 'lots' at "
        r"vellantra_scan.csv line 2 \(hole VL-001\)",
    ):
        check_step(ctx, CheckOptions())


def test_check_options_are_validated():
    with pytest.raises(ValidationError, match=r"on_error"):
        CheckOptions(on_error="ignore")
    with pytest.raises(ValidationError, match=r"Extra inputs are not permitted"):
        CheckOptions(max_errors=3)


def test_composite_step_output_contract():
    ctx = StepContext(tables=vellantra())
    out = composite_step(ctx, CompositeOptions(length_m=5.0))["composites"]
    assert list(out.columns[:7]) == ["hole_id", "from_m", "to_m", "length_m", "x_m", "y_m", "z_m"]
    assert out.columns[-1] == "coverage_frac"
    assert {"cu_pct", "au_gpt", "lith_code", "density_t_m3"} <= set(out.columns)
    assert not any(c.endswith(("_censored", "_detection_limit")) for c in out.columns)
    # VL-002 has a lithology log but no samples: its composites are not "sampled"
    assert "VL-002" not in set(out.hole_id)
    assert "composite: dropped 6 composites sampled over less than 0.5 of their length" in ctx.notes
    assert out["coverage_frac"].between(0.5, 1.0).all()
    assert "composite: " in ctx.notes[-1]
    out = composite_step(ctx, CompositeOptions(length_m=5.0, min_coverage_frac=0.0))["composites"]
    vl2 = out[out.hole_id == "VL-002"]
    # vertical hole: mid-point of 0-5 m is 2.5 m below the collar, under it
    assert vl2["x_m"].iloc[0] == 1100.0
    assert vl2["z_m"].iloc[0] == pytest.approx(3207.5)
    assert vl2["lith_code"].iloc[0] == "DIO"
    assert vl2["coverage_frac"].iloc[0] == 0.0


def test_composite_by_category():
    ctx = StepContext(tables=vellantra())
    opts = CompositeOptions(method="by_category", category_column="lith_code", length_m=5.0)
    out = composite_step(ctx, opts)["composites"]
    vl1 = out[out.hole_id == "VL-001"]
    assert 17.0 in vl1["to_m"].tolist()
    assert 17.0 in vl1["from_m"].tolist()


def test_composite_with_censored_input_from_reader(tmp_path):
    path = tmp_path / "assays.csv"
    path.write_text("hole_id,from_m,to_m,cu_pct\nVL-002,0,2,<0.02\nVL-002,2,4,0.5\n")
    src = read_table(path, table="assays")
    tables = {**vellantra(), "assays": src.table}
    out = composite_step(StepContext(tables=tables), CompositeOptions(length_m=4.0))
    comp = out["composites"]
    row = comp[(comp.hole_id == "VL-002") & (comp.from_m == 0.0)].iloc[0]
    assert row["cu_pct"] == pytest.approx((0.01 * 2 + 0.5 * 2) / 4)


def test_composite_can_carry_censored_fractions(tmp_path):
    path = tmp_path / "assays.csv"
    path.write_text("hole_id,from_m,to_m,cu_pct\nVL-002,0,1,<0.02\nVL-002,1,4,0.5\n")
    src = read_table(path, table="assays")
    tables = {**vellantra(), "assays": src.table}
    ctx = StepContext(tables=tables)
    comp = composite_step(ctx, CompositeOptions(length_m=4.0, censored_frac=True))["composites"]
    row = comp[(comp.hole_id == "VL-002") & (comp.from_m == 0.0)].iloc[0]
    assert row["cu_pct_censored_frac"] == pytest.approx(0.25)  # 1 m of 4 m below detection
    assert "cu_pct_censored" not in comp.columns
    assert "censored fractions carried as <column>_censored_frac" in ctx.notes[-1]


def test_composite_needs_an_interval_table():
    tables = {k: v for k, v in vellantra().items() if k in ("collars", "surveys")}
    with pytest.raises(StepInputMissing, match=r"step 'composite' needs at least one interval"):
        composite_step(StepContext(tables=tables), CompositeOptions())


def test_composite_drops_holes_without_collar_with_a_note():
    tables = vellantra()
    extra = pd.DataFrame(
        {"hole_id": ["VL-777"], "from_m": [0.0], "to_m": [2.0], "cu_pct": [0.3], "au_gpt": [0.1]}
    )
    tables["assays"] = pd.concat([tables["assays"], extra], ignore_index=True)
    ctx = StepContext(tables=tables)
    out = composite_step(ctx, CompositeOptions())["composites"]
    assert "VL-777" not in set(out.hole_id)
    assert any("holes with no collar (VL-777)" in n for n in ctx.notes)


def test_composite_options_validation():
    with pytest.raises(ValidationError, match=r"needs category_column"):
        CompositeOptions(method="by_category")
    with pytest.raises(ValidationError, match=r"greater than 0"):
        CompositeOptions(length_m=0)


def test_composite_tables_option():
    ctx = StepContext(tables=vellantra())
    out = composite_step(ctx, CompositeOptions(tables=["assays"]))["composites"]
    assert "lith_code" not in out.columns
    assert "cu_pct" in out.columns
    with pytest.raises(ValidationError, match=r"composite tables must be among assays"):
        CompositeOptions(tables=["testwork"])
