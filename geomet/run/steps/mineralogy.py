"""Run step ``mineralogy``: mineral groups, clay indices and normative minerals.

Adds them to the composites and, when a block model is given, to the blocks joined with the
schedule; also writes the mineral reference and the scan-assay reconciliation.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd
from pydantic import Field, field_validator

from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERAL_COLUMNS
from geomet.minerals.clay import validate_severity_weights
from geomet.minerals.groups import add_mineralogy_columns, validate_groups
from geomet.minerals.reconcile import (
    DEFAULT_ELEMENTS,
    reconcile_scan_assays,
    scan_element_grades,
)
from geomet.minerals.reference import mineral_reference_table
from geomet.minerals.speciation import (
    SHIFT_FLAG,
    flag_counts,
    normative_speciation,
    validate_cu_sulfide_proportions,
)
from geomet.run.registry import StepContext, StepOptions, register_step

SCHEDULE_COLUMNS = ("period", "phase")
PLOTTED_SULFIDES = ("pyrite", "chalcopyrite", "bornite", "chalcocite", "covellite", "molybdenite")


class MineralogyOptions(StepOptions):
    """Options of the ``mineralogy`` step (recipe section ``[mineralogy]``)."""

    groups: dict[str, list[str]] = Field(
        default_factory=dict,
        description=(
            "Mineral groups to add or redefine: group column -> member minerals, e.g. "
            "{clay_swelling_pct = ['smectite']}. Merged over the built-in groups."
        ),
    )
    severity_weights: dict[str, float] | None = Field(
        None,
        description=(
            "Clay severity weights per wt% of each clay mineral (default smectite 1.0, "
            "kaolinite/dickite/halloysite 0.3, illite 0.1). Calibrate to the site."
        ),
    )
    sulfate_source: Literal["scan", "ca", "auto", "none"] = Field(
        "scan",
        description=(
            "Where sulfate S comes from: scanned gypsum_anhydrite_pct ('scan'), assayed Ca as an "
            "upper bound after the Cu and Mo sulfides ('ca'), scan where present else Ca "
            "('auto'), or no sulfate ('none')."
        ),
    )
    sulfate_mineral: Literal["anhydrite", "gypsum"] = Field(
        "anhydrite",
        description=(
            "Mineral the scanned sulfate is expressed as: anhydrite (below the sulfate front) "
            "or gypsum (above it)."
        ),
    )
    ca_sulfate_frac: float = Field(
        1.0, ge=0.0, le=1.0, description="Share of assayed Ca the 'ca' sulfate rule may use."
    )
    sulfide_hint: Literal["scan", "fixed"] = Field(
        "scan",
        description=(
            "Cu-sulfide proportions from the scanned Cu sulfides of each row ('scan'; rows "
            "without them use the fixed proportions) or always fixed ('fixed')."
        ),
    )
    cu_sulfide_proportions: dict[str, float] = Field(
        default_factory=lambda: {"chalcopyrite": 1.0},
        description=(
            "Fixed Cu-sulfide mass proportions (chalcopyrite, bornite, chalcocite, covellite)."
        ),
    )
    cu_oxide_mineral: Literal["chrysocolla", "malachite", "cuprite", "tenorite"] = Field(
        "chrysocolla", description="Mineral that acid-soluble (oxide) Cu is expressed as."
    )
    scanned_sulfates: bool = Field(
        True,
        description="Also remove the S of scanned alunite and jarosite before the sulfides.",
    )
    arsenic_mineral: Literal["none", "enargite", "tennantite", "arsenopyrite"] = Field(
        "none",
        description=(
            "Put assayed As into this mineral before the Cu sulfides (adds norm_<mineral>_pct); "
            "'none' leaves As out of the balance."
        ),
    )
    hint_weight: float = Field(
        0.01,
        gt=0.0,
        description=(
            "Weight of the Cu-sulfide hint against the Cu and S balances (small = assays first)."
        ),
    )
    scan_elements: list[str] = Field(
        default_factory=lambda: list(DEFAULT_ELEMENTS),
        description=(
            "Elements whose scan-implied grade (scanned minerals x formula fractions) is added "
            "as scan_<assay column> and compared with the assays; [] to skip."
        ),
    )
    balance_abs_tol_pct: float = Field(
        0.005, ge=0.0, description="Absolute residual [%] above which a row fails to balance."
    )
    balance_rel_tol_frac: float = Field(
        0.02, ge=0.0, description="Residual as a fraction of the assay above which a row fails."
    )

    @field_validator("groups")
    @classmethod
    def _check_groups(cls, value):
        validate_groups(value)
        return value

    @field_validator("severity_weights")
    @classmethod
    def _check_weights(cls, value):
        if value is not None:
            validate_severity_weights(value)
        return value

    @field_validator("scan_elements")
    @classmethod
    def _check_elements(cls, value):
        scan_element_grades(pd.DataFrame(), value)
        return value

    @field_validator("cu_sulfide_proportions")
    @classmethod
    def _check_proportions(cls, value):
        validate_cu_sulfide_proportions(value)
        return value

    def speciation_kwargs(self) -> dict:
        """Keyword arguments of :func:`geomet.minerals.speciation.normative_speciation`."""
        return {
            "sulfate_source": self.sulfate_source,
            "sulfate_mineral": self.sulfate_mineral,
            "ca_sulfate_frac": self.ca_sulfate_frac,
            "sulfide_hint": self.sulfide_hint,
            "cu_sulfide_proportions": self.cu_sulfide_proportions,
            "cu_oxide_mineral": self.cu_oxide_mineral,
            "scanned_sulfates": self.scanned_sulfates,
            "arsenic_mineral": self.arsenic_mineral,
            "hint_weight": self.hint_weight,
            "abs_tol_pct": self.balance_abs_tol_pct,
            "rel_tol_frac": self.balance_rel_tol_frac,
        }


def _enrich(df: pd.DataFrame, options: MineralogyOptions) -> tuple[pd.DataFrame, bool]:
    out = add_mineralogy_columns(df, options.groups or None, options.severity_weights)
    if not {"cu_pct", "s_pct"} <= set(df.columns):
        return out, False
    norm = normative_speciation(df, **options.speciation_kwargs())
    out = pd.concat([out.drop(columns=[c for c in norm.columns if c in out.columns]), norm], axis=1)
    return out, True


def _balance_note(label: str, table: pd.DataFrame) -> str:
    failed = int((~table["balance_ok"]).sum())
    share = failed / len(table) if len(table) else 0.0
    text = f"mineralogy: {failed} of {len(table)} {label} ({share:.1%}) failed to balance"
    counts = flag_counts(table["balance_flag"], failures_only=True)
    if counts:
        top = sorted(counts.items(), key=lambda kv: -kv[1])[:3]
        text += "; most frequent reasons: " + "; ".join(f"{t} ({c})" for t, c in top)
    shifted = flag_counts(table["balance_flag"]).get(SHIFT_FLAG, 0)
    if shifted:
        text += f"; {shifted} with too little S for the hinted Cu sulfides (shifted, balanced)"
    return text


def speciation_check_figure(table: pd.DataFrame):
    """Plot scanned against normative sulfides, one panel per mineral, with the 1:1 line.

    Returns None when the table has no scanned/normative pair to compare.
    """
    pairs = [
        m for m in PLOTTED_SULFIDES if f"{m}_pct" in table.columns and f"norm_{m}_pct" in table
    ]
    if not pairs:
        return None
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    ncols = 3
    nrows = -(-len(pairs) // ncols)
    fig, axes = plt.subplots(nrows, ncols, figsize=(10, 3.3 * nrows), squeeze=False)
    for ax, mineral in zip(axes.flat, pairs, strict=False):
        scanned = table[f"{mineral}_pct"].to_numpy(dtype=float)
        normative = table[f"norm_{mineral}_pct"].to_numpy(dtype=float)
        ok = np.isfinite(scanned) & np.isfinite(normative)
        ax.scatter(scanned[ok], normative[ok], s=6, alpha=0.5, color="#2f6f8f", linewidths=0)
        top = float(max(scanned[ok].max(initial=0.0), normative[ok].max(initial=0.0))) or 1.0
        ax.plot([0, top], [0, top], color="#a33", lw=1)
        if ok.sum() > 2 and scanned[ok].std() > 0 and normative[ok].std() > 0:
            r = float(np.corrcoef(scanned[ok], normative[ok])[0, 1])
            ax.set_title(f"{mineral} (r = {r:.2f}, n = {int(ok.sum())})")
        else:
            ax.set_title(mineral)
        ax.set_xlabel("scanned [wt%]")
        ax.set_ylabel("normative [wt%]")
    for ax in list(axes.flat)[len(pairs) :]:
        ax.set_visible(False)
    fig.tight_layout()
    return fig


def join_schedule(blocks: pd.DataFrame, schedule: pd.DataFrame | None) -> pd.DataFrame:
    """Blocks with the schedule's ``period`` and ``phase`` joined on ``block_id``.

    Unscheduled blocks get NaN ``period`` and missing ``phase``. Raises
    :class:`geomet.errors.InputDataError` when either table lacks ``block_id`` or the schedule
    lists a block twice.
    """
    if "block_id" not in blocks.columns:
        msg = "blocks table needs a block_id column"
        raise InputDataError(msg)
    if schedule is None:
        out = blocks.copy()
        for col in SCHEDULE_COLUMNS:
            if col not in out.columns:
                out[col] = np.nan
        return out
    if "block_id" not in schedule.columns:
        msg = "schedule table needs a block_id column"
        raise InputDataError(msg)
    dupes = schedule["block_id"][schedule["block_id"].duplicated()].unique()
    if len(dupes):
        shown = ", ".join(map(str, dupes[:10]))
        msg = (
            f"schedule lists {len(dupes)} block(s) more than once (each block is mined in one "
            f"period): block_id {shown}{' ...' if len(dupes) > 10 else ''}"
        )
        raise InputDataError(msg)
    keep = ["block_id", *[c for c in SCHEDULE_COLUMNS if c in schedule.columns]]
    base = blocks.drop(columns=[c for c in keep[1:] if c in blocks.columns])
    out = base.merge(schedule[keep], on="block_id", how="left", validate="one_to_one")
    if "period" in out.columns:
        out["period"] = pd.to_numeric(out["period"], errors="coerce").astype(float)
    return out


@register_step(
    "mineralogy",
    options=MineralogyOptions,
    needs=("composites",),
    optional_needs=("blocks", "schedule"),
    produces={
        "mineralogy": "Composites with mineral groups, clay indices, normative minerals and "
        "balance residuals.",
        "mineral_reference": "Minerals geomet knows: formula, group and element mass fractions.",
        "scan_assay_reconciliation": "Element grades implied by the scanned minerals against "
        "the assays: bias, correlation and reduced-major-axis slope per element.",
        "blocks_mineralogy": "Blocks with their schedule period and phase, mineral groups, clay "
        "indices and normative minerals.",
    },
    order=30,
)
def mineralogy_step(ctx: StepContext, options: MineralogyOptions) -> dict[str, pd.DataFrame]:
    """Add mineral groups, clay indices and normative minerals to composites and blocks."""
    composites = ctx.tables["composites"]
    mineralogy, speciated = _enrich(composites, options)
    out = {"mineralogy": mineralogy, "mineral_reference": mineral_reference_table()}
    has_scan = any(c in composites.columns for c in SCANNED_MINERAL_COLUMNS)
    if options.scan_elements and has_scan:
        implied = scan_element_grades(composites, options.scan_elements)
        mineralogy = pd.concat(
            [mineralogy.drop(columns=[c for c in implied if c in mineralogy]), implied], axis=1
        )
        out["mineralogy"] = mineralogy
        check = reconcile_scan_assays(composites, options.scan_elements)
        out["scan_assay_reconciliation"] = check
        shown = check[check["element"].isin(["Cu", "S", "Fe"]) & (check["n_pairs"] > 0)]
        if len(shown):
            parts = [
                f"{r.element} bias {r.bias_frac:+.1%}, r {r.correlation_r:.2f}"
                for r in shown.itertuples()
            ]
            ctx.note("mineralogy: scan-implied against assayed grades: " + "; ".join(parts))
    if speciated:
        ctx.note(_balance_note("composites", mineralogy))
        if ctx.plot_dir is not None:
            fig = speciation_check_figure(mineralogy)
            if fig is not None:
                ctx.add_plot(
                    "mineralogy_speciation_check",
                    fig,
                    "Scanned against normative sulfides (from assays) for each composite; "
                    "points near the red 1:1 line mean scan and assays agree.",
                    table="mineralogy",
                )
    else:
        ctx.note("mineralogy: composites have no cu_pct/s_pct: normative minerals not computed")
    blocks = ctx.tables.get("blocks")
    if blocks is not None:
        joined = join_schedule(blocks, ctx.tables.get("schedule"))
        blocks_mineralogy, block_speciated = _enrich(joined, options)
        out["blocks_mineralogy"] = blocks_mineralogy
        if block_speciated:
            ctx.note(_balance_note("blocks", blocks_mineralogy))
        unscheduled = int(blocks_mineralogy["period"].isna().sum())
        if unscheduled:
            ctx.note(f"mineralogy: {unscheduled} of {len(blocks_mineralogy)} blocks unscheduled")
        schedule = ctx.tables.get("schedule")
        if schedule is not None and "block_id" in schedule.columns:
            unknown = int((~schedule["block_id"].isin(blocks["block_id"])).sum())
            if unknown:
                ctx.note(
                    f"mineralogy: {unknown} scheduled block_id(s) are not in the blocks table "
                    "and were left out"
                )
    return out
