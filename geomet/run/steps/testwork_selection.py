"""Run step ``testwork_selection``: which drill core to send for metallurgical testwork."""

from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd
from pydantic import BaseModel, ConfigDict, Field, model_validator

from geomet.run.registry import StepContext, StepOptions, register_step
from geomet.sampling.candidates import CORE_DIAMETERS_MM
from geomet.sampling.program import plan_testwork, selection_columns
from geomet.sampling.selection import DEFAULT_ATTRIBUTES


class ExcludedInterval(BaseModel):
    """An interval of core not to be used (lost, reserved, already sent elsewhere)."""

    model_config = ConfigDict(extra="forbid")

    hole_id: str = Field(..., description="Drill-hole identifier.")
    from_m: float = Field(..., description="Top of the excluded interval [m].")
    to_m: float = Field(..., description="Bottom of the excluded interval [m].")
    reason: str = Field("", description="Why the core is excluded (kept for the record).")

    @model_validator(mode="after")
    def _order(self):
        if not self.from_m < self.to_m:
            msg = (
                f"excluded interval needs from_m < to_m; got from_m={self.from_m}, "
                f"to_m={self.to_m} (hole {self.hole_id})"
            )
            raise ValueError(msg)
        return self


class TestworkSelectionOptions(StepOptions):
    """Options of the ``testwork_selection`` step (recipe section ``[testwork_selection]``)."""

    n_samples: int = Field(24, ge=0, description="New testwork samples to choose.")
    mass_kg: float = Field(
        25.0, gt=0, description="Core mass one sample needs [kg] (e.g. a variability test set)."
    )
    core_size: str = Field(
        "HQ", description="Wireline core size: one of " + ", ".join(CORE_DIAMETERS_MM) + "."
    )
    core_diameter_mm: float | None = Field(
        None, gt=0, description="Core diameter [mm]; overrides core_size when given."
    )
    core_fraction: float = Field(
        0.5,
        gt=0,
        le=1,
        description="Fraction of the core available (0.5 = half core, 1 = whole core).",
    )
    max_interval_m: float | None = Field(
        20.0, gt=0, description="Longest acceptable sample interval [m]."
    )
    attributes: list[str] = Field(
        list(DEFAULT_ATTRIBUTES),
        min_length=1,
        description=("Attributes the samples must represent (composite and block columns)."),
    )
    attribute_weights: dict[str, float] = Field(
        {}, description="Importance of an attribute in the distance (default 1 each)."
    )
    period_discount_frac: float = Field(
        0.0,
        ge=0,
        description="Weight of period p is 1/(1+r)^(p-1): favours ore mined early [fraction].",
    )
    period_weights: dict[int, float] = Field(
        {}, description="Explicit weight per schedule period (overrides the discount)."
    )
    variability_source: Literal["composites", "blocks"] = Field(
        "composites", description="Where each domain's spread is measured for Neyman allocation."
    )
    min_per_domain: int = Field(
        2, ge=0, description="Fewest samples (existing + new) for a domain that matters."
    )
    min_domain_share_frac: float = Field(
        0.05,
        ge=0,
        le=1,
        description="A domain matters from this share of the weighted scheduled tonnes.",
    )
    max_per_hole: int | None = Field(2, ge=1, description="Most new samples from one hole.")
    min_separation_m: float = Field(
        10.0, ge=0, description="Least gap between two chosen intervals of one hole [m]."
    )
    milp_max_pairs: int = Field(
        10_000,
        ge=0,
        description="Solve a domain exactly (MILP) when "
        "demand points x candidates is at most this; heuristic above.",
    )
    time_limit_s: float = Field(30.0, gt=0, description="MILP time limit per domain [s].")
    max_demand_points: int = Field(
        300,
        ge=1,
        description="Blocks of a domain are grouped into "
        "at most this many weighted representatives.",
    )
    heuristic_starts: int = Field(
        1, ge=1, description="Starts of the greedy + swap heuristic (more: slower, rarely worse)."
    )
    aggregation: Literal["kmeans", "grid"] = Field("kmeans", description="How blocks are grouped.")
    coverage_within_std: float = Field(
        0.5,
        gt=0,
        description="Ore within this standardised distance of a sample counts as covered.",
    )
    coverage_gap_share_frac: float = Field(
        0.10,
        ge=0,
        le=1,
        description="Uncovered high or "
        "low ore below this share of a domain's tonnes is "
        "not reported as a gap.",
    )
    exclusions: list[ExcludedInterval] = Field([], description="Core intervals not to be used.")

    __test__ = False  # not a pytest test class

    @model_validator(mode="after")
    def _core(self):
        if (
            self.core_diameter_mm is None
            and self.core_size.strip().upper() not in CORE_DIAMETERS_MM
        ):
            msg = (
                f"unknown core_size {self.core_size!r}; use one of "
                f"{', '.join(CORE_DIAMETERS_MM)} or give core_diameter_mm"
            )
            raise ValueError(msg)
        unknown = sorted(set(self.attribute_weights) - set(self.attributes))
        if unknown:
            msg = (
                f"attribute_weights names {', '.join(unknown)}, not among the attributes "
                f"{', '.join(self.attributes)}"
            )
            raise ValueError(msg)
        return self


@register_step(
    "testwork_selection",
    options=TestworkSelectionOptions,
    needs=("composite_forecasts", "block_forecasts"),
    optional_needs=("testwork",),
    produces={
        "testwork_allocation": "Samples per domain: scheduled tonnes, spread, existing tests, "
        "Neyman allocation and candidates available.",
        "testwork_selection": "Core intervals to send for testwork, with mass, attributes and "
        "why each was chosen.",
        "testwork_coverage": "How well the samples span each domain's scheduled ore, with gaps "
        "in words.",
    },
    order=80,
)
def testwork_selection(ctx: StepContext, options: TestworkSelectionOptions):
    """Choose drill-core intervals for metallurgical testwork (Neyman allocation, p-median)."""
    composites = ctx.tables["composite_forecasts"]
    blocks = ctx.tables["block_forecasts"]
    testwork = ctx.tables.get("testwork")
    if options.core_diameter_mm is not None:
        diameter = options.core_diameter_mm
        label = f"{diameter:g} mm"
    else:
        label = options.core_size.strip().upper()
        diameter = CORE_DIAMETERS_MM[label]
    plan = plan_testwork(
        composites,
        blocks,
        testwork,
        n_samples=options.n_samples,
        mass_kg=options.mass_kg,
        core_diameter_mm=diameter,
        core_size_label=label,
        core_fraction=options.core_fraction,
        max_interval_m=options.max_interval_m,
        attributes=options.attributes,
        attribute_weights=options.attribute_weights or None,
        period_discount_frac=options.period_discount_frac,
        period_weight_map=options.period_weights or None,
        variability_source=options.variability_source,
        min_per_domain=options.min_per_domain,
        min_domain_share_frac=options.min_domain_share_frac,
        max_per_hole=options.max_per_hole,
        min_separation_m=options.min_separation_m,
        milp_max_pairs=options.milp_max_pairs,
        time_limit_s=options.time_limit_s,
        max_demand_points=options.max_demand_points,
        aggregation=options.aggregation,
        heuristic_starts=options.heuristic_starts,
        coverage_within_std=options.coverage_within_std,
        coverage_gap_share_frac=options.coverage_gap_share_frac,
        exclusions=[e.model_dump() for e in options.exclusions],
        seed=ctx.seed,
    )
    for line in plan.notes:
        ctx.note(line)
    sel, alloc = plan.selection, plan.allocation
    total_mass = float(sel["mass_kg"].sum()) if len(sel) else 0.0
    ctx.note(
        f"testwork selection: {len(sel)} new sample(s) from {len(plan.candidates)} candidate "
        f"intervals ({total_mass:.0f} kg of {label} core at {options.core_fraction:g} of the "
        f"cross-section); {int(alloc['existing_tests'].sum())} existing sample(s) counted"
    )
    exact = [s.domain for s in plan.result.solves if s.method == "milp"]
    if exact:
        ctx.note(f"testwork selection: exact MILP for {', '.join(exact)}; heuristic elsewhere")
    gaps = [g for g in plan.coverage["gap"] if isinstance(g, str) and g.startswith("no candidate")]
    for g in gaps[:10]:
        ctx.note(f"testwork coverage: {g}")
    ctx.extras.setdefault("json_files", {})["testwork_selection"] = {
        "standardisation": {
            a: {"centre": float(c), "scale": float(s), "importance": float(i)}
            for a, c, s, i in zip(
                plan.result.standardiser.attributes,
                plan.result.standardiser.centre,
                plan.result.standardiser.scale,
                plan.result.standardiser.importance,
                strict=True,
            )
        },
        "solves": [
            {
                "domain": s.domain,
                "requested": s.requested,
                "chosen": s.chosen,
                "method": s.method,
                "status": s.status,
                "objective": _finite(s.objective),
                "gap_frac": s.gap_frac,
                "demand_points": s.n_demand,
                "blocks": s.n_blocks,
                "candidates": s.n_candidates,
            }
            for s in plan.result.solves
        ],
        "timings_s": plan.timings_s,
    }
    if ctx.plot_dir is not None:
        from geomet.io.plots.sampling import allocation_figure, coverage_figure

        sched = blocks[blocks["period"].notna()] if "period" in blocks else blocks
        attrs = [a for a in plan.result.standardiser.attributes]
        fig = coverage_figure(sched, sel, attrs, existing=plan.existing)
        ctx.add_plot(
            "testwork_coverage",
            fig,
            "Chosen (red) and existing (green) testwork "
            "samples against each domain's scheduled ore, P10-P90 of tonnes.",
            table="testwork_coverage",
        )
        ctx.add_plot(
            "testwork_allocation",
            allocation_figure(alloc),
            "Samples per domain against its share of tonnes and Neyman weight.",
            table="testwork_allocation",
        )
    return {
        "testwork_allocation": alloc,
        "testwork_selection": sel if len(sel) else _empty_selection(plan),
        "testwork_coverage": plan.coverage,
    }


def _finite(x):
    return float(x) if x is not None and np.isfinite(x) else None


def _empty_selection(plan) -> pd.DataFrame:
    return pd.DataFrame(columns=selection_columns(plan.result.standardiser.attributes))
