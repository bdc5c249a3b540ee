"""Tests of the ``mineralogy`` run step, called directly with a hand-built StepContext."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from pydantic import ValidationError

from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERALS
from geomet.minerals.speciation import NORM_COLUMNS
from geomet.run.registry import STEPS, StepContext
from geomet.run.steps.mineralogy import MineralogyOptions, join_schedule, mineralogy_step


def _scan_values(n: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    return {f"{m}_pct": rng.uniform(0, 3, n) for m in SCANNED_MINERALS}


@pytest.fixture
def tables() -> dict[str, pd.DataFrame]:
    rng = np.random.default_rng(11)
    n = 12
    composites = pd.DataFrame(
        {
            "hole_id": ["VL-001"] * 6 + ["VL-002"] * 6,
            "from_m": np.tile(np.arange(6) * 2.0, 2),
            "to_m": np.tile(np.arange(6) * 2.0 + 2.0, 2),
            "cu_pct": rng.uniform(0.1, 1.2, n),
            "cu_asol_pct": rng.uniform(0.0, 0.1, n),
            "s_pct": rng.uniform(1.0, 4.0, n),
            "fe_pct": rng.uniform(3.0, 8.0, n),
            "mo_ppm": rng.uniform(10, 300, n),
            "ca_pct": rng.uniform(1.0, 3.0, n),  # above the 0.88 % Ca of 3 % anhydrite
            **_scan_values(n, rng),
            "white_mica_aloh_nm": rng.uniform(2195, 2215, n),
            "chlorite_feoh_nm": rng.uniform(2245, 2260, n),
        }
    )
    composites.loc[3, "s_pct"] = np.nan  # one row without S: cannot balance
    blocks = pd.DataFrame(
        {
            "block_id": [101, 102, 103],
            "x_m": [0.0, 10.0, 20.0],
            "cu_pct": [0.4, 0.6, 0.2],
            "s_pct": [2.0, 1.5, 0.8],
            "smectite_pct": [1.0, 0.0, 4.0],
            "kaolinite_pct": [2.0, 1.0, 0.0],
        }
    )
    schedule = pd.DataFrame(
        {"block_id": [102, 101, 999], "period": [2, 1, 3], "phase": ["P2", "P1", "P3"]}
    )
    return {"composites": composites, "blocks": blocks, "schedule": schedule}


def test_step_is_registered():
    # importing the step module registers it (load_steps would import every stage: slow)
    step = STEPS["mineralogy"]
    assert step.needs == ("composites",)
    assert set(step.optional_needs) == {"blocks", "schedule"}
    assert set(step.produces) == {
        "mineralogy",
        "mineral_reference",
        "blocks_mineralogy",
        "scan_assay_reconciliation",
    }
    assert step.options is MineralogyOptions


def test_step_outputs(tables):
    ctx = StepContext(tables=tables)
    out = mineralogy_step(ctx, MineralogyOptions())
    mineralogy = out["mineralogy"]
    assert len(mineralogy) == len(tables["composites"])
    for col in (
        "clay_swelling_pct",
        "clay_total_pct",
        "clay_severity_idx",
        "oxide_ratio_frac",
        "resid_cu_pct",
        "resid_s_pct",
        "balance_flag",
        "balance_ok",
        *NORM_COLUMNS,
    ):
        assert col in mineralogy.columns, col
    # absorption features kept as attributes, unchanged
    pd.testing.assert_series_equal(
        mineralogy["white_mica_aloh_nm"], tables["composites"]["white_mica_aloh_nm"]
    )
    assert not mineralogy.loc[3, "balance_ok"]
    assert any("failed to balance" in note for note in ctx.notes)
    assert any("1 of 12 composites" in note for note in ctx.notes)
    assert "scan_cu_pct" in mineralogy.columns
    assert "scan_mo_ppm" in mineralogy.columns
    check = out["scan_assay_reconciliation"].set_index("element")
    assert check.loc["Cu", "n_pairs"] == 12
    assert any("scan-implied against assayed grades: Cu bias" in note for note in ctx.notes)
    assert len(out["mineral_reference"]) >= 37

    blocks = out["blocks_mineralogy"]
    assert blocks["block_id"].tolist() == [101, 102, 103]
    assert blocks["period"].tolist()[:2] == [1.0, 2.0]
    assert np.isnan(blocks["period"].iloc[2])  # unscheduled block
    assert blocks["phase"].tolist()[:2] == ["P1", "P2"]
    # 1.0*4 (smectite) for block 103; 1.0*1 + 0.3*2 = 1.6 for block 101
    assert blocks["clay_severity_idx"].tolist() == pytest.approx([1.6, 0.3, 4.0])
    assert "norm_chalcopyrite_pct" in blocks.columns
    assert any("1 of 3 blocks unscheduled" in note for note in ctx.notes)
    assert any("1 scheduled block_id(s) are not in the blocks table" in n for n in ctx.notes)


def test_step_without_blocks_and_with_options(tables):
    ctx = StepContext(tables={"composites": tables["composites"]})
    options = MineralogyOptions(
        groups={"sulfate_pct": ["gypsum_anhydrite", "jarosite"]},
        severity_weights={"smectite": 1.0},
        sulfate_source="auto",
        sulfide_hint="fixed",
        cu_sulfide_proportions={"chalcopyrite": 2, "bornite": 1},
    )
    out = mineralogy_step(ctx, options)
    assert "blocks_mineralogy" not in out
    m = out["mineralogy"]
    comp = tables["composites"]
    np.testing.assert_allclose(
        m["sulfate_pct"], comp["gypsum_anhydrite_pct"] + comp["jarosite_pct"]
    )
    np.testing.assert_allclose(m["clay_severity_idx"], comp["smectite_pct"])


def test_step_without_assays_skips_speciation():
    comp = pd.DataFrame(
        {"hole_id": ["VL-003"], "from_m": [0.0], "to_m": [2.0], "smectite_pct": [2.0]}
    )
    ctx = StepContext(tables={"composites": comp})
    out = mineralogy_step(ctx, MineralogyOptions())
    assert "norm_pyrite_pct" not in out["mineralogy"].columns
    assert "scan_assay_reconciliation" in out  # smectite is a scanned column
    assert "normative minerals not computed" in ctx.notes[0]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"groups": {"clay_swelling_pct": ["smectit"]}}, "did you mean 'smectite'"),
        ({"severity_weights": {"kaolinte": 0.3}}, "did you mean 'kaolinite'"),
        ({"cu_sulfide_proportions": {"pyrite": 1.0}}, "may name only"),
        ({"sulfate_source": "xrf"}, "sulfate_source"),
        ({"hint_weight": 0.0}, "greater than 0"),
        ({"unknown_option": 1}, "Extra inputs are not permitted"),
        ({"scan_elements": ["CU"]}, r"unknown element symbol\(s\) \['CU'\]"),
    ],
)
def test_option_errors(kwargs, match):
    with pytest.raises(ValidationError, match=match):
        MineralogyOptions(**kwargs)


def test_join_schedule_errors():
    blocks = pd.DataFrame({"block_id": [1, 2]})
    with pytest.raises(InputDataError, match="more than once.*block_id 1"):
        join_schedule(blocks, pd.DataFrame({"block_id": [1, 1], "period": [1, 2]}))
    with pytest.raises(InputDataError, match="blocks table needs a block_id"):
        join_schedule(pd.DataFrame({"x_m": [1.0]}), None)
    with pytest.raises(InputDataError, match="schedule table needs a block_id"):
        join_schedule(blocks, pd.DataFrame({"period": [1]}))
    alone = join_schedule(blocks, None)
    assert alone["period"].isna().all()


def test_step_saves_speciation_plot(tables, tmp_path):
    ctx = StepContext(tables={"composites": tables["composites"]}, plot_dir=tmp_path)
    mineralogy_step(ctx, MineralogyOptions())
    assert [p.name for p in ctx.plots] == ["mineralogy_speciation_check"]
    assert ctx.plots[0].path.exists()
    assert ctx.plots[0].table == "mineralogy"


def test_documented_recipe_section_is_valid(repo_root):
    # the [mineralogy] example in docs/minerals.md must stay a valid options section
    import re
    import tomllib

    text = (repo_root / "docs" / "minerals.md").read_text(encoding="utf-8")
    block = re.search(r"```toml\n(.*?)```", text, re.S).group(1)
    section = tomllib.loads(block)["mineralogy"]
    options = MineralogyOptions(**section)
    assert options.sulfate_mineral == "anhydrite"
    assert options.severity_weights["kaolinite"] == 0.25


def test_every_added_column_is_described(tables):
    from geomet.minerals.columns import COLUMN_DESCRIPTIONS

    out = mineralogy_step(StepContext(tables=tables), MineralogyOptions())["mineralogy"]
    added = set(out.columns) - set(tables["composites"].columns)
    assert added <= set(COLUMN_DESCRIPTIONS)
