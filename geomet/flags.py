"""Flags ahead of mining: blocks over process-risk thresholds and a look-ahead by period.

Each rule compares one block column with two thresholds, *watch* and *alert* (above or below).
The default thresholds are stated assumptions of common practice in porphyry concentrators, not
published limits: problem concentrations are site-specific (clay effects in particular) and
should be set from the site's own plant history or calibrated forecasts.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

LEVELS = ("watch", "alert")
DIRECTIONS = ("above", "below")


@dataclass(frozen=True)
class FlagRule:
    """One flag: a column compared with a watch and an alert threshold.

    Attributes
    ----------
    flag : str
        Flag name (``clay_total``, ``swelling_clay``, …).
    column : str
        Block column compared (unit from its suffix).
    watch, alert : float
        Thresholds in the column's unit; ``alert`` is the more severe.
    direction : {"above", "below"}
        ``above``: a value at or over the threshold flags; ``below``: at or under it flags.
    description : str
        Plain-words meaning, shown in the look-ahead table.
    scope_column, scope_max : str and float, optional
        Apply the rule only to blocks whose ``scope_column`` is at most ``scope_max`` (NaN counts
        as in scope; a table without the column is all in scope). The default low-recovery flag
        uses it to look at mill (sulfide) ore only, not at oxide ore bound for the leach pad.
    """

    flag: str
    column: str
    watch: float
    alert: float
    direction: str = "above"
    description: str = ""
    scope_column: str | None = None
    scope_max: float | None = None

    def __post_init__(self):
        if self.direction not in DIRECTIONS:
            msg = (
                f"flag {self.flag!r}: direction must be one of {list(DIRECTIONS)}; "
                f"got {self.direction!r}"
            )
            raise InputDataError(msg)
        severe_first = (
            self.alert >= self.watch if self.direction == "above" else (self.alert <= self.watch)
        )
        if not severe_first:
            rule = "alert >= watch" if self.direction == "above" else "alert <= watch"
            msg = (
                f"flag {self.flag!r} ({self.column}, {self.direction}): thresholds need "
                f"{rule}; got watch={self.watch}, alert={self.alert}"
            )
            raise InputDataError(msg)


#: Default rules (assumptions, common practice; set site values through the ``flags`` options).
DEFAULT_FLAG_RULES: tuple[FlagRule, ...] = (
    FlagRule(
        "clay_total",
        "clay_total_pct",
        15.0,
        25.0,
        "above",
        "Total clay (smectite + kaolin group + illite): sticky feed, viscous pulp.",
    ),
    FlagRule(
        "swelling_clay",
        "clay_swelling_pct",
        3.0,
        6.0,
        "above",
        "Swelling clay (smectite): slurry viscosity, lost recovery.",
    ),
    FlagRule(
        "sulfate",
        "sulfate_pct",
        2.0,
        5.0,
        "above",
        "Gypsum + anhydrite: scaling, water chemistry, softer rock handling.",
    ),
    FlagRule(
        "acid_consumers",
        "acid_kg_t",
        25.0,
        50.0,
        "above",
        "Leach acid consumption (gangue + oxide Cu).",
    ),
    FlagRule(
        "oxide_ratio",
        "oxide_ratio_frac",
        0.2,
        0.4,
        "above",
        "Acid-soluble to total Cu: copper lost to flotation tails.",
    ),
    FlagRule(
        "hardness",
        "bond_bwi_kwh_t",
        16.0,
        19.0,
        "above",
        "Bond ball-mill work index: throughput limited by grinding power.",
    ),
    FlagRule(
        "low_recovery",
        "cu_recovery_frac",
        0.85,
        0.75,
        "below",
        "Forecast rougher Cu recovery of mill (sulfide) ore: oxide ratio at most 0.5.",
        scope_column="oxide_ratio_frac",
        scope_max=0.5,
    ),
)


def flag_level_codes(values, rule: FlagRule) -> np.ndarray:
    """Level of each value under ``rule``: 0 none, 1 watch, 2 alert (NaN never flags).

    Examples
    --------
    >>> rule = FlagRule("clay_total", "clay_total_pct", 15.0, 25.0)
    >>> flag_level_codes([10.0, 15.0, 30.0, float("nan")], rule).tolist()
    [0, 1, 2, 0]
    """
    v = np.asarray(values, dtype=float)
    if rule.direction == "above":
        watch, alert = v >= rule.watch, v >= rule.alert
    else:
        watch, alert = v <= rule.watch, v <= rule.alert
    return watch.astype(np.int8) + alert.astype(np.int8)


def rule_codes(blocks: pd.DataFrame, rule: FlagRule, rows: np.ndarray | None = None) -> np.ndarray:
    """:func:`flag_level_codes` of ``rule`` on ``blocks`` (optionally only ``rows``), zero outside
    the rule's scope."""
    values = blocks[rule.column].to_numpy(dtype=float)
    if rows is not None:
        values = values[rows]
    codes = flag_level_codes(values, rule)
    if rule.scope_column is not None and rule.scope_max is not None:
        if rule.scope_column in blocks.columns:
            scope = blocks[rule.scope_column].to_numpy(dtype=float)
            if rows is not None:
                scope = scope[rows]
            codes[scope > rule.scope_max] = 0  # NaN compares False: stays in scope
    return codes


def _check_rules(rules: Sequence[FlagRule]) -> None:
    names = [r.flag for r in rules]
    dup = sorted({n for n in names if names.count(n) > 1})
    if dup:
        msg = f"flag names must be unique; repeated: {dup}"
        raise InputDataError(msg)


def applicable_rules(
    table: pd.DataFrame, rules: Sequence[FlagRule] = DEFAULT_FLAG_RULES
) -> tuple[list[FlagRule], list[FlagRule]]:
    """Split ``rules`` into those whose column ``table`` has and those it lacks."""
    _check_rules(rules)
    have = [r for r in rules if r.column in table.columns]
    lack = [r for r in rules if r.column not in table.columns]
    return have, lack


def flag_blocks(
    blocks: pd.DataFrame,
    rules: Sequence[FlagRule] = DEFAULT_FLAG_RULES,
    *,
    skip_missing: bool = False,
) -> pd.DataFrame:
    """Every block over a watch or alert threshold, one row per block and flag.

    Parameters
    ----------
    blocks : DataFrame
        ``block_forecasts`` (needs ``block_id`` and each rule's column; ``period``, ``phase``,
        ``domain`` and ``tonnes_t`` are carried when present).
    rules : sequence of FlagRule
        Rules to apply.
    skip_missing : bool, keyword-only
        Leave out rules whose column is missing instead of raising.

    Returns
    -------
    DataFrame
        ``block_id``, ``period``, ``phase``, ``domain``, ``tonnes_t`` (those present), ``flag``,
        ``level`` (the highest reached: ``watch`` or ``alert``), ``column``, ``value``,
        ``threshold`` (of that level), ``direction``; flag, level, column and direction are
        categorical.
    """
    if "block_id" not in blocks.columns:
        msg = "flag_blocks: the block table needs a block_id column"
        raise InputDataError(msg)
    have, lack = applicable_rules(blocks, rules)
    if lack and not skip_missing:
        msg = "flag_blocks: block table lacks columns for flags " + ", ".join(
            f"{r.flag} ({r.column})" for r in lack
        )
        raise InputDataError(msg)
    carry = [
        c for c in ("block_id", "period", "phase", "domain", "tonnes_t") if c in blocks.columns
    ]
    carried = {c: blocks[c].to_numpy() for c in carry}
    rows, rule_idx, codes_kept, values_kept = [], [], [], []
    for k, rule in enumerate(have):
        values = blocks[rule.column].to_numpy(dtype=float)
        codes = rule_codes(blocks, rule)
        idx = np.flatnonzero(codes)
        rows.append(idx)
        rule_idx.append(np.full(idx.size, k, dtype=np.int16))
        codes_kept.append(codes[idx])
        values_kept.append(values[idx])
    cols = [*carry, "flag", "level", "column", "value", "threshold", "direction"]
    if not have:
        return pd.DataFrame({c: pd.Series(dtype=object) for c in cols})
    idx = np.concatenate(rows)
    which = np.concatenate(rule_idx)
    code = np.concatenate(codes_kept)
    out = {c: v[idx] for c, v in carried.items()}
    out["flag"] = pd.Categorical.from_codes(which, [r.flag for r in have])
    out["level"] = pd.Categorical.from_codes(code - 1, list(LEVELS))
    columns = list(dict.fromkeys(r.column for r in have))
    col_code = np.array([columns.index(r.column) for r in have])
    out["column"] = pd.Categorical.from_codes(col_code[which], columns)
    out["value"] = np.concatenate(values_kept)
    watch = np.array([r.watch for r in have])
    alert = np.array([r.alert for r in have])
    out["threshold"] = np.where(code == 2, alert[which], watch[which])
    dir_code = np.array([DIRECTIONS.index(r.direction) for r in have])
    out["direction"] = pd.Categorical.from_codes(dir_code[which], list(DIRECTIONS))
    return pd.DataFrame(out, columns=cols)


def lookahead_table(
    blocks: pd.DataFrame,
    rules: Sequence[FlagRule] = DEFAULT_FLAG_RULES,
    *,
    current_period: int = 1,
    horizon_periods: int | None = None,
    max_domains: int = 5,
) -> pd.DataFrame:
    """Tonnes and share of each schedule period's ore over each threshold, ahead of mining.

    Parameters
    ----------
    blocks : DataFrame
        ``block_forecasts`` with ``period``, ``tonnes_t`` and each rule's column (``domain``
        when present); unscheduled blocks, without a period, are left out.
    rules : sequence of FlagRule
        Rules to tabulate (rules whose column is missing are an error: filter them with
        :func:`applicable_rules`).
    current_period : int, keyword-only
        The period being mined now; earlier periods are left out and ``periods_ahead`` counts
        from it (0 = now).
    horizon_periods : int, keyword-only
        Only periods up to ``current_period + horizon_periods`` (None: all).
    max_domains : int, keyword-only
        Domains listed per row (largest flagged tonnage first).

    Returns
    -------
    DataFrame
        One row per period, flag and level: ``period``, ``periods_ahead``, ``flag``, ``level``,
        ``column``, ``threshold``, ``direction``, ``flagged_t``, ``period_ore_t``,
        ``flagged_share_frac``, ``n_blocks``, ``domains`` (e.g. ``"argillic 40 blocks;
        phyllic 3 blocks"``), ``description``. The ``watch`` level counts every block at or
        beyond the watch threshold (alert blocks included); ``alert`` only those beyond alert.
        Periods with no flagged tonnes appear with zero tonnes so that the table shows the
        all-clear too.
    """
    for col in ("period", "tonnes_t"):
        if col not in blocks.columns:
            msg = f"lookahead_table: the block table needs a {col} column"
            raise InputDataError(msg)
    if horizon_periods is not None and horizon_periods < 0:
        msg = f"lookahead_table: horizon_periods must be >= 0; got {horizon_periods}"
        raise InputDataError(msg)
    have, lack = applicable_rules(blocks, rules)
    if lack:
        msg = "lookahead_table: block table lacks columns " + ", ".join(
            f"{r.column} (flag {r.flag})" for r in lack
        )
        raise InputDataError(msg)
    period = pd.to_numeric(blocks["period"], errors="coerce").to_numpy(dtype=float)
    keep = ~np.isnan(period) & (period >= current_period)
    if horizon_periods is not None:
        keep &= period <= current_period + horizon_periods
    sel = np.flatnonzero(keep)
    periods, pidx = np.unique(period[sel].astype(np.int64), return_inverse=True)
    n_p = len(periods)
    tonnes = np.nan_to_num(blocks["tonnes_t"].to_numpy(dtype=float)[sel])
    ore = np.bincount(pidx, weights=tonnes, minlength=n_p)
    if "domain" in blocks.columns:
        dom_codes, dom_names = pd.factorize(blocks["domain"].to_numpy()[sel], use_na_sentinel=False)
    else:
        dom_codes, dom_names = np.zeros(len(sel), dtype=np.int64), np.array([""])
    n_d = len(dom_names)
    rows = []
    cell_base = (pidx * n_d + dom_codes) * 3  # (period, domain, level code) cells
    for rule in have:
        codes = rule_codes(blocks, rule, sel)
        # One pass per rule: tonnes and counts by period, domain and level code (0, 1, 2).
        cell = cell_base + codes
        size = n_p * n_d * 3
        t_cell = np.bincount(cell, weights=tonnes, minlength=size).reshape(n_p, n_d, 3)
        n_cell = np.bincount(cell, minlength=size).reshape(n_p, n_d, 3)
        for level_no, level in enumerate(LEVELS, start=1):
            dom_t = t_cell[:, :, level_no:].sum(axis=2)  # at or beyond this level
            dom_n = n_cell[:, :, level_no:].sum(axis=2)
            flagged_t = dom_t.sum(axis=1)
            n_blocks = dom_n.sum(axis=1)
            threshold = rule.watch if level == "watch" else rule.alert
            for i, p in enumerate(periods):
                listed = ""
                if "domain" in blocks.columns and n_blocks[i]:
                    order = np.argsort(-dom_t[i], kind="stable")[:max_domains]
                    listed = "; ".join(
                        f"{dom_names[j]} {int(dom_n[i, j])} blocks" for j in order if dom_n[i, j]
                    )
                rows.append(
                    {
                        "period": int(p),
                        "periods_ahead": int(p - current_period),
                        "flag": rule.flag,
                        "level": level,
                        "column": rule.column,
                        "threshold": threshold,
                        "direction": rule.direction,
                        "flagged_t": float(flagged_t[i]),
                        "period_ore_t": float(ore[i]),
                        "flagged_share_frac": float(flagged_t[i] / ore[i])
                        if ore[i] > 0
                        else np.nan,
                        "n_blocks": int(n_blocks[i]),
                        "domains": listed,
                        "description": rule.description,
                    }
                )
    cols = [
        "period",
        "periods_ahead",
        "flag",
        "level",
        "column",
        "threshold",
        "direction",
        "flagged_t",
        "period_ore_t",
        "flagged_share_frac",
        "n_blocks",
        "domains",
        "description",
    ]
    return pd.DataFrame(rows, columns=cols)
