"""Run steps of the drill-hole stage: ``check`` (validate inputs) and ``composite``."""

from __future__ import annotations

from collections import Counter
from typing import Literal

import numpy as np
import pandas as pd
from pydantic import Field, model_validator

from geomet import glossary
from geomet.drillholes.composite import composite_intervals
from geomet.drillholes.desurvey import desurvey_intervals
from geomet.drillholes.merge import merge_intervals
from geomet.drillholes.problems import ERROR, WARNING, problems_frame
from geomet.drillholes.validation import cap_problems, exclude_problem_rows, validate_tables
from geomet.errors import InputDataError, StepInputMissing
from geomet.run.registry import StepContext, StepOptions, register_step

COMPOSITE_SOURCES = ("assays", "scan", "lithology", "density", "site_domains")
_ERRORS_IN_MESSAGE = 20


class CheckOptions(StepOptions):
    """Options of the ``check`` step."""

    on_error: Literal["stop", "exclude", "warn"] = Field(
        "stop",
        description=(
            "What to do when input tables have errors: 'stop' the run listing them, 'exclude' "
            "the offending rows and carry on, or 'warn' and carry on with all rows."
        ),
    )
    max_problems: int = Field(
        200, ge=1, description="Most problems listed in the validation report (errors first)."
    )
    depth_tolerance_m: float = Field(
        0.01,
        ge=0.0,
        description="Depth differences below this [m] are rounding, not overlaps or gaps.",
    )
    scan_sum_tolerance_pct: float = Field(
        1.0,
        ge=0.0,
        description="How far a scan row's mineral abundances may exceed 100 wt% [wt%].",
    )


@register_step(
    "check",
    options=CheckOptions,
    needs=(),
    optional_needs=tuple(glossary.INPUT_TABLES),
    produces={
        "validation_report": "Problems found in the input tables: rule, file, line, hole, "
        "column, value and what to do.",
    },
    order=10,
)
def check_step(ctx: StepContext, options: CheckOptions) -> dict[str, pd.DataFrame]:
    """Validate the input tables and report every problem with file, line, hole and column."""
    tables = {name: ctx.tables[name] for name in glossary.INPUT_TABLES if name in ctx.tables}
    sources = ctx.extras.get("sources", {}) or {}
    problems = validate_tables(
        tables,
        sources=sources,
        max_problems=None,
        depth_tolerance_m=options.depth_tolerance_m,
        scan_sum_tolerance_pct=options.scan_sum_tolerance_pct,
    )
    report = problems_frame(cap_problems(problems, options.max_problems))
    errors = [p for p in problems if p.severity == ERROR]
    n_warn = sum(p.severity == WARNING for p in problems)
    ctx.note(f"check: {len(errors)} errors and {n_warn} warnings in {len(tables)} input tables")
    if errors and options.on_error == "stop":
        ctx.extras["validation_report"] = report
        counts = Counter(p.rule for p in errors)
        by_rule = ", ".join(f"{rule} {n}" for rule, n in counts.most_common())
        listed = "\n".join(f"  - {p.message}" for p in errors[:_ERRORS_IN_MESSAGE])
        more = len(errors) - _ERRORS_IN_MESSAGE
        tail = f"\n  ... and {more} more errors" if more > 0 else ""
        message = (
            f"input tables have {len(errors)} errors ({by_rule}) and {n_warn} warnings:\n"
            f"{listed}{tail}\nfix them, or set on_error = 'exclude' in [check] to drop the rows"
        )
        raise InputDataError(message)
    out = {"validation_report": report}
    if errors and options.on_error == "exclude":
        cleaned = exclude_problem_rows(tables, problems)
        for name, frame in cleaned.items():
            dropped = len(tables[name]) - len(frame)
            if dropped:
                rules = Counter(p.rule for p in errors if p.table == name and p.row is not None)
                why = ", ".join(f"{rule} {n}" for rule, n in rules.most_common())
                ctx.note(f"check: dropped {dropped} of {len(tables[name])} rows of {name} ({why})")
                out[name] = frame
    elif errors:
        ctx.note("check: errors left in the data (on_error = 'warn'); results may be wrong")
    return out


class CompositeOptions(StepOptions):
    """Options of the ``composite`` step."""

    method: Literal["fixed_length", "by_category"] = Field(
        "fixed_length",
        description=(
            "'fixed_length' composites down each hole, or 'by_category': composites that stop "
            "at every change of category_column."
        ),
    )
    length_m: float = Field(
        2.0, gt=0.0, description="Composite length [m]; inf gives one composite per hole or run."
    )
    category_column: str | None = Field(
        None,
        description="Column whose changes end a composite for 'by_category' (e.g. lith_code).",
    )
    min_coverage_frac: float = Field(
        0.5,
        ge=0.0,
        le=1.0,
        description="Drop composites with a smaller sampled fraction of their length [-].",
    )
    remnant: Literal["merge", "keep", "drop"] = Field(
        "merge",
        description=(
            "A last composite shorter than min_remnant_frac x length_m is merged into the one "
            "above, kept, or dropped."
        ),
    )
    min_remnant_frac: float = Field(
        0.5, gt=0.0, le=1.0, description="Remnant threshold as a fraction of length_m [-]."
    )
    density_weighted: bool = Field(
        True, description="Weight grades by length x density where density_t_m3 is known."
    )
    censored_frac: bool = Field(
        False,
        description=(
            "Add <column>_censored_frac to composites: the fraction of each composite's length "
            "whose value was below detection or over range (substituted by the detection rule)."
        ),
    )
    tables: list[str] | None = Field(
        None,
        description=(
            "Interval tables to merge and composite, among assays, scan, lithology, density, "
            "site_domains (default: every one of them that the run has)."
        ),
    )

    @model_validator(mode="after")
    def _category_given(self):
        if self.method == "by_category" and not self.category_column:
            message = "composite method 'by_category' needs category_column (e.g. 'lith_code')"
            raise ValueError(message)
        unknown = [t for t in self.tables or () if t not in COMPOSITE_SOURCES]
        if unknown:
            message = (
                f"composite tables must be among {', '.join(COMPOSITE_SOURCES)}; got "
                f"{', '.join(unknown)}"
            )
            raise ValueError(message)
        return self


@register_step(
    "composite",
    options=CompositeOptions,
    needs=("collars", "surveys"),
    optional_needs=COMPOSITE_SOURCES,
    produces={
        "composites": "Downhole composites: interval, desurveyed mid-point, merged values "
        "and sampled fraction.",
    },
    order=20,
)
def composite_step(ctx: StepContext, options: CompositeOptions) -> dict[str, pd.DataFrame]:
    """Merge interval tables, composite them downhole and locate composite mid-points."""
    wanted = options.tables if options.tables is not None else COMPOSITE_SOURCES
    sources = {name: ctx.tables[name] for name in wanted if name in ctx.tables}
    sources = {name: t for name, t in sources.items() if t is not None and len(t)}
    if not sources:
        message = (
            "step 'composite' needs at least one interval table among "
            f"{', '.join(wanted)}; none was given"
        )
        raise StepInputMissing(message)
    collars = ctx.tables["collars"]
    surveys = ctx.tables["surveys"]
    collared = set(collars["hole_id"].dropna().astype(str))
    orphan_surveys = ~surveys["hole_id"].astype(str).isin(collared)
    if orphan_surveys.any():
        ctx.note(
            f"composite: ignored {int(orphan_surveys.sum())} survey rows of holes with no collar"
        )
        surveys = surveys.loc[~orphan_surveys]
    merged = merge_intervals(sources, censored_frac=options.censored_frac)
    composites = composite_intervals(
        merged,
        method=options.method,
        length_m=options.length_m,
        category_column=options.category_column,
        min_coverage_frac=options.min_coverage_frac,
        remnant=options.remnant,
        min_remnant_frac=options.min_remnant_frac,
        density_weighted=options.density_weighted,
    )
    dropped = composites.attrs.get("dropped_low_coverage", 0)
    if dropped:
        ctx.note(
            f"composite: dropped {dropped} composites sampled over less than "
            f"{options.min_coverage_frac:g} of their length"
        )
    no_collar = ~composites["hole_id"].astype(str).isin(collared)
    if no_collar.any():
        holes = sorted(set(composites.loc[no_collar, "hole_id"].astype(str)))
        ctx.note(
            f"composite: dropped {int(no_collar.sum())} composites of {len(holes)} holes with no "
            f"collar ({', '.join(holes[:5])}{'...' if len(holes) > 5 else ''})"
        )
        composites = composites.loc[~no_collar].reset_index(drop=True)
    located = desurvey_intervals(composites, collars, surveys, at="mid")
    front = ["hole_id", "from_m", "to_m", "length_m", "x_m", "y_m", "z_m"]
    middle = [c for c in located.columns if c not in front and c != "coverage_frac"]
    located = located[[*front, *middle, "coverage_frac"]]
    n_holes = located["hole_id"].nunique()
    mean_cov = float(np.nanmean(located["coverage_frac"])) if len(located) else float("nan")
    ctx.note(
        f"composite: {len(located)} composites ({options.method}, {options.length_m:g} m) in "
        f"{n_holes} holes from {', '.join(sources)}; mean sampled fraction {mean_cov:.2f}; "
        + (
            "censored fractions carried as <column>_censored_frac"
            if options.censored_frac
            else "censored-value flags are not carried into composites"
        )
    )
    return {"composites": located}
