"""Run step ``flags``: blocks over process-risk thresholds and the look-ahead by period."""

from __future__ import annotations

from typing import Literal

import pandas as pd
from pydantic import Field

from geomet.flags import DEFAULT_FLAG_RULES, FlagRule, flag_blocks, lookahead_table
from geomet.io.plots.forecast import flagged_tonnes_figure
from geomet.run.registry import StepContext, StepOptions, register_step

_DEFAULTS = {r.flag: r for r in DEFAULT_FLAG_RULES}


class ThresholdOptions(StepOptions):
    """One flag's thresholds (``[flags.thresholds.<flag>]``). Unset fields keep the default of
    a built-in flag; a new flag needs ``column``, ``watch`` and ``alert``."""

    column: str | None = Field(
        None,
        description="Block column compared (default flags: "
        + ", ".join(f"{r.flag}={r.column}" for r in DEFAULT_FLAG_RULES)
        + ").",
    )
    watch: float | None = Field(None, description="Watch threshold, in the column's unit.")
    alert: float | None = Field(None, description="Alert threshold (more severe).")
    direction: Literal["above", "below"] | None = Field(
        None, description="'above': values at or over the thresholds flag; 'below': at or under."
    )
    description: str | None = Field(None, description="Plain-words meaning.")
    scope_column: str | None = Field(
        None, description="Apply only to blocks whose scope_column is at most scope_max."
    )
    scope_max: float | None = Field(None, description="Upper end of the scope_column range.")


class FlagsOptions(StepOptions):
    """Options of the ``flags`` step (recipe section ``[flags]``)."""

    current_period: int = Field(
        1,
        ge=1,
        description="Schedule period being mined now; "
        "periods_ahead counts from it and earlier periods are left out.",
    )
    horizon_periods: int | None = Field(
        None, ge=0, description="Look this many periods ahead (empty: the whole schedule)."
    )
    thresholds: dict[str, ThresholdOptions] = Field(
        default_factory=dict,
        description="Per-flag overrides of the default thresholds (assumptions, common "
        "practice): "
        + "; ".join(
            f"{r.flag} {r.column} {r.direction} watch {r.watch:g} alert {r.alert:g}"
            for r in DEFAULT_FLAG_RULES
        ),
    )
    disabled: list[str] = Field(default_factory=list, description="Flags to leave out.")
    max_domains: int = Field(5, ge=1, description="Domains listed per look-ahead row.")


def build_rules(options: FlagsOptions) -> list[FlagRule]:
    """Default rules with the recipe's overrides and additions, less the disabled ones."""
    from geomet.errors import RecipeError

    unknown = sorted(set(options.disabled) - set(_DEFAULTS) - set(options.thresholds))
    if unknown:
        msg = (
            f"[flags] disabled names unknown flags {unknown}; known flags are "
            f"{sorted(set(_DEFAULTS) | set(options.thresholds))}"
        )
        raise RecipeError(msg)
    rules = []
    names = list(_DEFAULTS) + [n for n in options.thresholds if n not in _DEFAULTS]
    for name in names:
        if name in options.disabled:
            continue
        base = _DEFAULTS.get(name)
        over = options.thresholds.get(name, ThresholdOptions())
        values = {
            "column": over.column or (base.column if base else None),
            "watch": over.watch if over.watch is not None else (base.watch if base else None),
            "alert": over.alert if over.alert is not None else (base.alert if base else None),
            "direction": over.direction or (base.direction if base else "above"),
            "description": over.description or (base.description if base else ""),
            "scope_column": over.scope_column or (base.scope_column if base else None),
            "scope_max": over.scope_max
            if over.scope_max is not None
            else (base.scope_max if base else None),
        }
        lacking = [k for k in ("column", "watch", "alert") if values[k] is None]
        if lacking:
            msg = f"[flags.thresholds.{name}] is a new flag and needs {lacking}"
            raise RecipeError(msg)
        try:
            rules.append(FlagRule(name, **values))
        except ValueError as err:
            msg = f"[flags.thresholds.{name}]: {err}"
            raise RecipeError(msg) from err
    return rules


@register_step(
    "flags",
    options=FlagsOptions,
    needs=("block_forecasts",),
    produces={
        "lookahead": "By period, flag and level: flagged tonnes and share of the period's ore, "
        "domains and block counts, periods ahead of mining.",
        "flagged_blocks": "Every block over a watch or alert threshold: flag, level, value and "
        "threshold.",
    },
    summary="Warn ahead of mining of clay-rich, gypsum-rich, acid-consuming, oxidised, hard or "
    "low-recovery ore.",
    order=70,
)
def flags_step(ctx: StepContext, options: FlagsOptions) -> dict[str, pd.DataFrame]:
    """Flag blocks over the thresholds and tabulate flagged ore by period ahead of mining."""
    blocks = ctx.tables["block_forecasts"]
    rules = build_rules(options)
    have = [r for r in rules if r.column in blocks.columns]
    lack = [r for r in rules if r.column not in blocks.columns]
    if lack:
        ctx.note(
            "flags: block_forecasts lacks "
            + ", ".join(f"{r.column} (flag {r.flag})" for r in lack)
            + "; those flags are skipped."
        )
    flagged = flag_blocks(blocks, have)
    if "period" not in blocks.columns or "tonnes_t" not in blocks.columns:
        ctx.note("flags: blocks carry no schedule period or tonnes; no look-ahead table.")
        look = lookahead_table(
            pd.DataFrame({"period": [], "tonnes_t": []}), [], current_period=options.current_period
        )
    else:
        look = lookahead_table(
            blocks,
            have,
            current_period=options.current_period,
            horizon_periods=options.horizon_periods,
            max_domains=options.max_domains,
        )
    alerts = look[(look["level"] == "alert") & (look["flagged_t"] > 0)]
    if len(alerts):
        first = alerts.sort_values("period").groupby("flag").first()
        for flag, row in first.iterrows():
            ctx.note(
                f"flags: {flag} alert first in period {row['period']} "
                f"({row['periods_ahead']} periods ahead): {row['flagged_t']:,.0f} t, "
                f"{row['flagged_share_frac']:.0%} of that period's ore."
            )
    else:
        ctx.note("flags: no scheduled ore over an alert threshold.")
    ctx.add_plot(
        "flagged_tonnes_by_period",
        flagged_tonnes_figure(look, current_period=options.current_period),
        "Ore over flag thresholds by schedule period.",
        table="lookahead",
    )
    return {"lookahead": look, "flagged_blocks": flagged}
