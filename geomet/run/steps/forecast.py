"""Run step ``forecast``: calibrate process forecasts to testwork and apply them to composites,
blocks and domains."""

from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd
from pydantic import Field

from geomet.errors import InputDataError
from geomet.forecast.apply import (
    FORECAST_COLUMNS,
    PlantSettings,
    add_forecasts,
    domain_forecasts,
)
from geomet.forecast.calibration import RESPONSES, fit_all, model_to_json
from geomet.forecast.censored import background_ratio_frac, oxide_cu_below_detection
from geomet.forecast.inputs import REQUIRED_COLUMNS, resolve_inputs
from geomet.forecast.join import overlap_join
from geomet.forecast.testwork import reduce_flotation_tests
from geomet.forecast.throughput import DEFAULT_CLAY_PENALTY
from geomet.run.registry import StepContext, StepOptions, register_step


class ComminutionOptions(StepOptions):
    """Grinding circuit (recipe section ``[forecast.comminution]``)."""

    f80_um: float = Field(
        100_000.0,
        gt=0,
        description="Primary (SAG) mill feed 80 % passing "
        "size [µm] (typical after a primary gyratory; assumption).",
    )
    p80_um: float = Field(150.0, gt=0, description="Flotation feed 80 % passing size [µm].")
    mill_power_kw: float = Field(
        32_000.0, gt=0, description="Installed grinding power, SAG plus ball mills [kW]."
    )
    utilisation_frac: float = Field(
        0.92, gt=0, le=1, description="Share of installed power drawn on average [fraction]."
    )
    ball_mill_diameter_m: float | None = Field(
        7.3,
        gt=0,
        description="Ball mill diameter inside liners [m] for Rowland's EF3; empty for none.",
    )
    energy_method: Literal["smc_bond", "bond"] = Field(
        "smc_bond",
        description="'smc_bond': Morrell coarse stage on Mia (F80 to 750 µm) plus "
        "Bond ball mill (750 µm to P80); 'bond': Bond with Rowland's factors from F80 to P80.",
    )
    pebble_crusher: bool = Field(
        True, description="Recycle pebble crusher in circuit (Morrell's K = 0.95, else 1.0)."
    )


class ClayPenaltyOptions(StepOptions):
    """Throughput lost to clay handling (``[forecast.clay_penalty]``); stated assumptions."""

    max_loss_frac: float = Field(
        DEFAULT_CLAY_PENALTY["max_loss_frac"],
        ge=0,
        lt=1,
        description="Largest share of the power-limited rate lost.",
    )
    midpoint_idx: float = Field(
        DEFAULT_CLAY_PENALTY["midpoint_idx"],
        description="Clay load (severity index + weighted smectite) losing half the maximum.",
    )
    slope_per_idx: float = Field(
        DEFAULT_CLAY_PENALTY["slope_per_idx"],
        gt=0,
        description="Steepness of the logistic [1/index unit].",
    )
    swelling_weight: float = Field(
        DEFAULT_CLAY_PENALTY["swelling_weight"],
        ge=0,
        description="Extra index units per wt% smectite.",
    )


class FlotationOptions(StepOptions):
    """Flotation forecast (``[forecast.flotation]``)."""

    flotation_time_min: float = Field(
        10.0,
        gt=0,
        description="Laboratory-equivalent rougher "
        "time of the forecast [min] (plant residence time divided "
        "by the scale-up factor).",
    )
    testwork_time_min: float = Field(
        10.0, gt=0, description="Rougher flotation time of the testwork [min]."
    )
    kinetic_model: Literal["first_order", "klimpel", "n_cell"] = Field(
        "first_order",
        description="Kinetic form: first order (García-Zúñiga), Klimpel, or N "
        "perfectly mixed cells.",
    )
    n_cells: int = Field(6, ge=1, description="Cells for the 'n_cell' form.")


class ForecastOptions(StepOptions):
    """Options of the ``forecast`` step (recipe section ``[forecast]``)."""

    comminution: ComminutionOptions = Field(
        default_factory=ComminutionOptions, description="Grinding circuit."
    )
    clay_penalty: ClayPenaltyOptions = Field(
        default_factory=ClayPenaltyOptions, description="Clay handling penalty."
    )
    flotation: FlotationOptions = Field(
        default_factory=FlotationOptions, description="Flotation forecast."
    )
    calibration_method: Literal["parametric", "monotone_gbm", "none"] = Field(
        "parametric",
        description="'parametric': fit the default model forms; 'monotone_gbm': "
        "gradient boosting of the default's residual, monotone where physics fixes the sign; "
        "'none': stated defaults only (intervals still from testwork residuals).",
    )
    interval_coverage: float = Field(
        0.8, gt=0, lt=1, description="Coverage of the _p10/_p90 interval (0.8 = P10 to P90)."
    )
    cv_folds: int = Field(5, ge=2, description="Cross-validation folds, split by drill hole.")
    min_overlap_frac: float = Field(
        0.5,
        ge=0,
        le=1,
        description="Least share of a testwork "
        "interval that composites must cover for it to be used.",
    )
    use_testwork_head_grade: bool = Field(
        True, description="Use the test's measured feed Cu and Au in place of the composite assays."
    )
    cu_asol_below_detection: Literal["background_ratio", "as_read"] = Field(
        "background_ratio",
        description="Acid-soluble Cu below detection in the oxide ratio of the forecasts: "
        "'background_ratio' re-reads each below-detection assay interval as the sulfide-ore "
        "acid-soluble share times its Cu, capped at the limit (half the Cu where Cu is below "
        "the limit), then re-averages testwork samples and composites from the assays; "
        "'as_read' keeps the value substituted when reading (e.g. half the limit). Needs the "
        "assays table with cu_asol_pct_censored and cu_asol_pct_detection_limit.",
    )
    cu_asol_background_ratio_frac: float | None = Field(
        None,
        ge=0,
        le=1,
        description="Acid-soluble share of sulfide-ore Cu [fraction] for 'background_ratio'; "
        "empty: the 10th percentile of the detected CuAS/Cu ratios.",
    )


_CENSOR_COLUMNS = ("cu_pct", "cu_asol_pct", "cu_asol_pct_censored", "cu_asol_pct_detection_limit")


def _oxide_intervals(assays: pd.DataFrame | None, options: ForecastOptions):
    """Assay intervals with CuAS re-read below detection, and the background ratio used.

    None when the option is 'as_read' or the assays lack the censoring columns.
    """
    if options.cu_asol_below_detection == "as_read" or assays is None:
        return None, None
    if not all(c in assays.columns for c in ("hole_id", "from_m", "to_m", *_CENSOR_COLUMNS)):
        return None, None
    a = assays[["hole_id", "from_m", "to_m", *_CENSOR_COLUMNS]].copy()
    censored = a["cu_asol_pct_censored"].fillna(False).to_numpy(dtype=bool)
    ratio = options.cu_asol_background_ratio_frac
    if ratio is None:
        ratio = background_ratio_frac(a["cu_asol_pct"], a["cu_pct"], censored)
    a["cu_asol_pct"] = oxide_cu_below_detection(
        a["cu_asol_pct"],
        a["cu_pct"],
        censored,
        a["cu_asol_pct_detection_limit"],
        background_ratio_frac=ratio,
    )
    return a[["hole_id", "from_m", "to_m", "cu_pct", "cu_asol_pct"]], float(ratio)


def _with_oxide(table: pd.DataFrame, intervals: pd.DataFrame) -> pd.DataFrame:
    """``table`` with the oxide ratio re-averaged from assay ``intervals`` (CuAS / Cu of the
    covered intervals) and cu_asol_pct = ratio × the table's cu_pct.

    Rows the intervals do not cover keep their values.
    """
    if not len(table):
        return table
    joined = overlap_join(table, intervals, ["cu_pct", "cu_asol_pct"], min_overlap_frac=0.5)
    out = table.copy()
    asol = joined["cu_asol_pct"].to_numpy(dtype=float)
    cu_assay = joined["cu_pct"].to_numpy(dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        ratio = np.clip(np.where(cu_assay > 0, asol / cu_assay, np.nan), 0.0, 1.0)
    # The share of oxide Cu comes from the assays; the Cu it applies to is the table's own
    # (for testwork, the test's head assay when use_testwork_head_grade).
    cu = out["cu_pct"].to_numpy(dtype=float)
    have = ~np.isnan(ratio)
    if "cu_asol_pct" in out:
        out["cu_asol_pct"] = np.where(have, ratio * cu, out["cu_asol_pct"].to_numpy(dtype=float))
    else:
        out["cu_asol_pct"] = ratio * cu
    if "oxide_ratio_frac" in out:
        out["oxide_ratio_frac"] = np.where(have, ratio, out["oxide_ratio_frac"].to_numpy(float))
    else:
        out["oxide_ratio_frac"] = ratio
    return out


def _join_testwork(testwork: pd.DataFrame, domained: pd.DataFrame, options: ForecastOptions):
    wanted = [
        c
        for c in domained.columns
        if c not in ("hole_id", "from_m", "to_m")
        and (c in REQUIRED_COLUMNS or c.endswith(("_pct", "_idx", "_frac", "_gpt")))
    ]
    wanted = [c for c in wanted if pd.api.types.is_numeric_dtype(domained[c])]
    own = set(testwork.columns) - {"hole_id", "from_m", "to_m"}
    carry = [c for c in wanted if c not in own]
    joined = overlap_join(testwork, domained, carry, min_overlap_frac=options.min_overlap_frac)
    if options.use_testwork_head_grade:
        if {"feed_cu_pct", "cu_pct", "cu_asol_pct"} <= set(joined.columns):
            # Keep the composites' oxide ratio on the test's head grade: CuAS scales with Cu.
            with np.errstate(invalid="ignore", divide="ignore"):
                ratio = joined["cu_asol_pct"] / joined["cu_pct"].where(joined["cu_pct"] > 0)
            head = joined["feed_cu_pct"]
            scaled = (ratio.clip(0.0, 1.0) * head).where(head.notna() & ratio.notna())
            joined["cu_asol_pct"] = scaled.where(scaled.notna(), joined["cu_asol_pct"])
        for head, col in (("feed_cu_pct", "cu_pct"), ("feed_au_gpt", "au_gpt")):
            if head in joined.columns and col in joined.columns:
                joined[col] = joined[head].where(joined[head].notna(), joined[col])
    return joined


@register_step(
    "forecast",
    options=ForecastOptions,
    needs=("domained", "testwork"),
    optional_needs=("blocks_domained", "assays"),
    produces={
        "calibration_report": "Per response: tests used, cross-validated (by hole) error of the "
        "default and calibrated models, and interval coverage.",
        "composite_forecasts": "Composites with throughput, recovery, acid and P10/P90 intervals.",
        "block_forecasts": "Blocks with throughput, recovery, acid and P10/P90 intervals "
        "(mill_energy_kwh_t includes the clay penalty).",
        "domain_forecasts": "Forecasts by domain: throughput as tonnes over hours, recoveries "
        "metal-weighted.",
    },
    summary="Calibrate process forecasts to testwork; forecast composites, blocks and domains.",
    order=60,
)
def forecast_step(ctx: StepContext, options: ForecastOptions) -> dict[str, pd.DataFrame]:
    """Calibrate the process forecasts to testwork and apply them to composites and blocks."""
    domained = ctx.tables["domained"]
    testwork = ctx.tables["testwork"]
    blocks = ctx.tables.get("blocks_domained")
    c, f = options.comminution, options.flotation
    settings = PlantSettings(
        f80_um=c.f80_um,
        p80_um=c.p80_um,
        mill_power_kw=c.mill_power_kw,
        utilisation_frac=c.utilisation_frac,
        ball_mill_diameter_m=c.ball_mill_diameter_m,
        energy_method=c.energy_method,
        pebble_crusher=c.pebble_crusher,
        flotation_time_min=f.flotation_time_min,
        kinetic_model=f.kinetic_model,
        n_cells=f.n_cells,
        clay_penalty=options.clay_penalty.model_dump(),
        coverage=options.interval_coverage,
    )
    reduced = reduce_flotation_tests(testwork)
    for metal in ("cu", "au"):
        bad = int(reduced[f"{metal}_assays_invalid"].sum())
        if bad:
            ctx.note(
                f"forecast: {bad} testwork samples have {metal.upper()} assays breaking "
                "c > f > t; their two-product recovery is left empty."
            )
        mism = int(reduced[f"{metal}_recovery_mismatch"].sum())
        if mism:
            ctx.note(
                f"forecast: {mism} samples report a {metal.upper()} rougher recovery more "
                "than 5 points from the two-product recovery of their assays."
            )
    joined = _join_testwork(reduced, domained, options)
    oxide_intervals, bg_ratio = _oxide_intervals(ctx.tables.get("assays"), options)
    model_domained = domained
    if oxide_intervals is not None:
        joined = _with_oxide(joined, oxide_intervals)
        model_domained = _with_oxide(domained, oxide_intervals)
        ctx.note(
            "forecast: acid-soluble Cu below detection re-read for the oxide ratio as "
            f"{bg_ratio:.4g} × Cu (capped at the limit; half the Cu where Cu is below it)."
        )
    covered = joined["overlap_frac"] >= options.min_overlap_frac
    if not covered.all():
        ctx.note(
            f"forecast: {int((~covered).sum())} testwork samples lie outside the "
            "composites (or too little overlap) and are not used."
        )
    joined = joined[covered].reset_index(drop=True)
    try:
        X = pd.DataFrame(resolve_inputs(joined, where="testwork joined to domained"))
    except InputDataError:
        if len(joined):
            raise
        X = pd.DataFrame()
    targets = {}
    for response, (column, _kind, _bounds) in RESPONSES.items():
        if column in joined.columns and len(joined):
            targets[response] = joined[column].to_numpy(dtype=float)
    kinetic_kwargs = {
        "time_min": f.testwork_time_min,
        "kinetic": f.kinetic_model,
        "n_cells": f.n_cells,
    }
    models, report = (
        fit_all(
            X,
            targets,
            joined["hole_id"].to_numpy() if len(joined) else np.array([]),
            method=options.calibration_method,
            seed=ctx.seed,
            n_splits=options.cv_folds,
            coverage=options.interval_coverage,
            model_kwargs={"cu_recovery_frac": kinetic_kwargs, "au_recovery_frac": kinetic_kwargs},
        )
        if targets
        else ({}, pd.DataFrame())
    )
    if len(report):
        report["coverage_target_frac"] = options.interval_coverage
        report["testwork_column"] = [RESPONSES[r][0] for r in report["response"]]
        for row in report.itertuples():
            ctx.note(
                f"forecast: {row.response} from {row.n} tests in {row.n_holes} holes "
                f"({row.method}): CV RMSE {row.rmse_cv:.4g} against {row.rmse_default:.4g} "
                "for the default model."
            )
    missing = sorted(set(RESPONSES) - set(models))
    if missing:
        ctx.note(
            f"forecast: no testwork for {missing}; their stated defaults are used, "
            "without intervals."
        )
    composite_forecasts = add_forecasts(model_domained, models, settings, where="domained")
    for col in ("cu_asol_pct", "oxide_ratio_frac"):  # report the composites' own assays
        if col in domained.columns:
            composite_forecasts[col] = domained[col].to_numpy()
    if blocks is not None and len(blocks):
        block_forecasts = add_forecasts(blocks, models, settings, where="blocks_domained")
        by_domain = domain_forecasts(
            block_forecasts, weight="tonnes_t" if "tonnes_t" in block_forecasts.columns else None
        )
        by_domain.insert(1, "basis", "blocks")
    else:
        block_forecasts = pd.DataFrame(columns=["block_id", *FORECAST_COLUMNS])
        by_domain = domain_forecasts(composite_forecasts)
        by_domain.insert(1, "basis", "composites")
        ctx.note("forecast: no blocks_domained table; domain forecasts come from composites.")
    ctx.note(
        "forecast: mill_energy_kwh_t is the specific energy divided by (1 − clay penalty), "
        "the kWh per tonne equivalent of the throughput lost to clay handling."
    )
    ctx.extras.setdefault("json_files", {})["forecast_models"] = {
        "calibration_method": options.calibration_method,
        "interval_coverage": options.interval_coverage,
        "settings": options.model_dump(),
        "models": {name: model_to_json(m) for name, m in models.items()},
        "saved_form": "parametric models: fitted coefficients; monotone_gbm: training data, "
        "parameters and seed, refitted on load",
    }
    if models:
        from geomet.io.plots.forecast import calibration_figure

        pairs = {
            name: (m.cv_measured_, m.cv_default_, m.cv_predicted_)
            for name, m in models.items()
            if hasattr(m, "cv_measured_")
        }
        if pairs:
            ctx.add_plot(
                "forecast_calibration",
                calibration_figure(pairs),
                "Testwork measured against default and cross-validated calibrated predictions.",
                table="calibration_report",
            )
    return {
        "calibration_report": report,
        "composite_forecasts": composite_forecasts,
        "block_forecasts": block_forecasts,
        "domain_forecasts": by_domain,
    }
