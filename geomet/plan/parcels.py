"""Ore parcels: blocks of the mine schedule grouped into the sources of the blend model.

A parcel is every scheduled block sharing a period, a phase and a domain (by default). Its
attributes are the weighted averages that keep the blend model's totals exact: a quantity that
adds per tonne (grade, energy, acid, clay) is tonnage-weighted; a recovery is weighted by the metal
it recovers, so that ``tonnes × grade × recovery`` of the parcel equals the sum over its blocks.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

#: Attributes the blend model reads from each parcel, with the weight used to average them.
#: "tonnes" = tonnage-weighted; "cu" = copper-metal weighted (tonnes × cu_pct); "au" likewise.
PARCEL_ATTRIBUTES: dict[str, str] = {
    "cu_pct": "tonnes",
    "au_gpt": "tonnes",
    "cu_asol_pct": "tonnes",
    "clay_severity_idx": "tonnes",
    "clay_swelling_pct": "tonnes",
    "sulfate_pct": "tonnes",
    "mill_energy_kwh_t": "tonnes",
    "acid_kg_t": "tonnes",
    "cu_recovery_frac": "cu",
    "au_recovery_frac": "au",
}

DEFAULT_GROUP_BY = ("period", "phase", "domain")


def ore_type_from_oxide_ratio(oxide_ratio_frac, *, oxide_min_frac: float = 0.5):
    """Classify ore as ``"oxide"`` or ``"sulfide"`` by its oxide ratio.

    Parameters
    ----------
    oxide_ratio_frac : array_like or Series
        Acid-soluble Cu / total Cu [fraction]; NaN counts as sulfide.
    oxide_min_frac : float
        Oxide ratio at or above which ore is oxide [fraction] (the leach routing rule).

    Returns
    -------
    ndarray or Series of str
        Same shape (and index, for a Series) as the input.

    Notes
    -----
    Grouping parcels by ore type as well as domain keeps oxide ore, which a domain built from
    silicate and clay mineralogy may mix with sulfide ore, eligible for the leach pad
    (common practice: oxide / sulfide ore types by acid-soluble to total copper).

    Examples
    --------
    >>> ore_type_from_oxide_ratio([0.1, 0.5, 0.9, float("nan")]).tolist()
    ['sulfide', 'oxide', 'oxide', 'sulfide']
    """
    values = np.asarray(oxide_ratio_frac, dtype=float)
    kinds = np.where(values >= oxide_min_frac, "oxide", "sulfide")
    if isinstance(oxide_ratio_frac, pd.Series):
        return pd.Series(kinds, index=oxide_ratio_frac.index, name="ore_type")
    return kinds


def weighted_mean(values: np.ndarray, weights: np.ndarray) -> float:
    """Return Σ w v / Σ w over the entries where v is known (NaN when no weight remains).

    Parameters
    ----------
    values : array of float
        Values to average (NaN = missing).
    weights : array of float
        Non-negative weights, same length.

    Returns
    -------
    float
        The weighted mean; NaN when every value is missing or the weights sum to zero.

    Examples
    --------
    >>> weighted_mean(np.array([1.0, 3.0]), np.array([1.0, 3.0]))
    2.5
    """
    values = np.asarray(values, dtype=float)
    weights = np.asarray(weights, dtype=float)
    known = ~np.isnan(values)
    total = weights[known].sum()
    if total <= 0:
        return float("nan")
    return float((values[known] * weights[known]).sum() / total)


def parcels_from_blocks(
    blocks: pd.DataFrame,
    *,
    group_by: Sequence[str] = DEFAULT_GROUP_BY,
    attributes: Sequence[str] | None = None,
) -> pd.DataFrame:
    """Group scheduled blocks into parcels with weighted-average attributes.

    Parameters
    ----------
    blocks : DataFrame
        One row per block with ``tonnes_t`` [t], ``period`` (int, NaN = unscheduled) and the
        attribute columns (``cu_pct`` [%], ``au_gpt`` [g/t], ``mill_energy_kwh_t`` [kWh/t], ...).
    group_by : sequence of str
        Columns that define a parcel; must include ``period``. Columns absent from ``blocks``
        (e.g. ``phase`` when the schedule has none) are skipped, except ``period``.
    attributes : sequence of str, optional
        Attribute columns to average (default: the keys of :data:`PARCEL_ATTRIBUTES` present in
        ``blocks``; ``cu_pct`` and ``tonnes_t`` are required).

    Returns
    -------
    DataFrame
        One row per parcel: ``parcel_id``, the group columns, ``tonnes_t``, ``blocks_n``, the
        averaged attributes and ``oxide_ratio_frac`` (= cu_asol_pct / cu_pct of the parcel).

    Notes
    -------
    For attribute :math:`a` with weight :math:`w_b` per block :math:`b` of parcel :math:`P`,
    :math:`\\bar a_P = \\sum_{b\\in P} w_b a_b / \\sum_{b\\in P} w_b`, with :math:`w_b = T_b` for
    additive quantities and :math:`w_b = T_b\\,g_b` (metal) for recoveries, so recovered metal
    :math:`T_P \\bar g_P \\bar R_P = \\sum_b T_b g_b R_b` exactly.
    """
    group_by = [c for c in group_by if c in blocks.columns or c == "period"]
    required = ["tonnes_t", "cu_pct", *group_by]
    missing = [c for c in required if c not in blocks.columns]
    if missing:
        message = f"block_forecasts is missing column(s) {missing} needed to form blend parcels"
        raise InputDataError(message)
    if attributes is None:
        attributes = [c for c in PARCEL_ATTRIBUTES if c in blocks.columns]
    absent = [c for c in attributes if c not in blocks.columns]
    if absent:
        message = f"block_forecasts is missing attribute column(s) {absent} for the blend"
        raise InputDataError(message)

    scheduled = blocks[blocks["period"].notna() & (blocks["tonnes_t"] > 0)]
    # a block without a domain or phase still has to go somewhere: group it under "none"
    labels = {
        c: scheduled[c].astype(object).where(scheduled[c].notna(), "none")
        for c in group_by
        if c != "period"
    }
    scheduled = scheduled.assign(**labels)
    bad = scheduled[scheduled["tonnes_t"].isna() | (scheduled["tonnes_t"] < 0)]
    if len(bad):
        message = f"block_forecasts.tonnes_t must be >= 0; got {len(bad)} bad row(s)"
        raise InputDataError(message)

    tonnes = scheduled["tonnes_t"].to_numpy(float)
    cu = scheduled["cu_pct"].to_numpy(float)
    weights = {"tonnes": tonnes, "cu": tonnes * np.nan_to_num(cu)}
    if "au_gpt" in scheduled.columns:
        weights["au"] = tonnes * np.nan_to_num(scheduled["au_gpt"].to_numpy(float))

    records = []
    for key, index in scheduled.groupby(group_by, sort=True).indices.items():
        key = key if isinstance(key, tuple) else (key,)
        row = dict(zip(group_by, key, strict=True))
        row["tonnes_t"] = float(tonnes[index].sum())
        row["blocks_n"] = len(index)
        for col in attributes:
            weight_kind = PARCEL_ATTRIBUTES.get(col, "tonnes")
            w = weights.get(weight_kind, tonnes)[index]
            if w.sum() <= 0:  # no metal: a recovery is then irrelevant, average by tonnes
                w = tonnes[index]
            row[col] = weighted_mean(scheduled[col].to_numpy(float)[index], w)
        records.append(row)
    parcels = pd.DataFrame.from_records(records)
    if parcels.empty:
        message = "block_forecasts has no scheduled blocks with tonnes_t > 0 (period is empty)"
        raise InputDataError(message)
    parcels["period"] = parcels["period"].astype(int)
    if "cu_asol_pct" in parcels.columns:
        cu_p = parcels["cu_pct"].to_numpy(float)
        with np.errstate(divide="ignore", invalid="ignore"):
            ratio = np.where(cu_p > 0, parcels["cu_asol_pct"].to_numpy(float) / cu_p, 0.0)
        parcels["oxide_ratio_frac"] = np.clip(ratio, 0.0, 1.0)
    unknown = parcels[list(attributes)].isna()
    if unknown.to_numpy().any():
        rows = parcels.loc[unknown.any(axis=1), group_by].astype(str).agg("/".join, axis=1)
        cols = sorted(unknown.columns[unknown.any(axis=0)])
        message = (
            f"blend parcels need known values; every block is missing {cols} in parcel(s) "
            f"{', '.join(rows.head(10))}" + (" ..." if len(rows) > 10 else "")
        )
        raise InputDataError(message)
    parcels.insert(0, "parcel_id", [_parcel_id(r, group_by) for r in records])
    return parcels


def _parcel_id(row: dict, group_by: Sequence[str]) -> str:
    parts = []
    for col in group_by:
        value = row[col]
        if col == "period":
            parts.append(f"P{int(value):02d}")
        else:
            parts.append(str(value))
    return "|".join(parts)
