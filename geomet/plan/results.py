"""Turn a solved blend model into the planner's tables (schedule, plant, stockpiles, limits)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.plan.data import BlendData
from geomet.plan.economics import GRAMS_PER_TROY_OZ
from geomet.plan.limits import LIMITS
from geomet.plan.model import BlendModel
from geomet.plan.solve import CompiledModel, HighsOutcome

#: Attributes reported as tonnage-weighted averages of a processor's feed.
FEED_ATTRIBUTES = (
    "cu_pct",
    "au_gpt",
    "cu_asol_pct",
    "oxide_ratio_frac",
    "clay_severity_idx",
    "clay_swelling_pct",
    "sulfate_pct",
    "mill_energy_kwh_t",
    "acid_kg_t",
)

SCHEDULE_COLUMNS = (
    "period",
    "source",
    "source_kind",
    "domain",
    "phase",
    "destination",
    "destination_kind",
    "tonnes_t",
    "cu_pct",
    "au_gpt",
    "clay_severity_idx",
    "value_usd_t",
    "reduced_cost_usd_t",
)
STOCKPILE_COLUMNS = (
    "stockpile",
    "domain",
    "period",
    "opening_t",
    "added_t",
    "reclaimed_t",
    "closing_t",
    "capacity_t",
    "cu_pct",
    "au_gpt",
)
PLANT_COLUMNS = (
    "processor",
    "period",
    "feed_t",
    *FEED_ATTRIBUTES,
    "energy_kwh",
    "energy_available_kwh",
    "hours_used_h",
    "hours_available_h",
    "cu_recovery_frac",
    "au_recovery_frac",
    "cu_recovered_t",
    "au_recovered_oz",
    "acid_t",
    "value_usd",
    "discount_factor",
    "value_pv_usd",
)
LIMIT_COLUMNS = (
    "limit",
    "description",
    "node",
    "period",
    "unit",
    "sense",
    "limit_value",
    "used_value",
    "slack",
    "binding",
    "shadow_price_usd",
    "shadow_price_unit",
    "price_valid_from",
    "price_valid_to",
)

_TOL = 1e-7


def values_of(cm: CompiledModel, out: HighsOutcome, var: str) -> np.ndarray:
    """Solution values of one variable component, in its index order (0 for dropped columns)."""
    cols = cm.col_of.get(var)
    if cols is None:
        return np.zeros(0)
    vals = np.where(cols >= 0, out.x[np.maximum(cols, 0)] if len(out.x) else 0.0, 0.0)
    vals = np.where(np.abs(vals) < _TOL, 0.0, vals)
    return vals


def _attr_matrix(data: BlendData, nodes: list[str], names) -> dict[str, np.ndarray]:
    nodes_attr = data.graph.nodes
    return {a: np.array([float(nodes_attr[n].get(a, 0.0)) for n in nodes]) for a in names}


def schedule_table(data: BlendData, cm: CompiledModel, out: HighsOutcome) -> pd.DataFrame:
    """Tonnes by period, source and destination; idle routes into processors keep their row.

    ``reduced_cost_usd_t`` is the change in present value [USD] per tonne forced onto a route:
    ~0 on used routes, negative on idle ones (how much better the route must pay to be used).
    """
    tonnes = values_of(cm, out, "flow")
    cols = cm.col_of["flow"]
    if out.has_duals and len(out.col_dual):
        rc = np.where(cols >= 0, -out.col_dual[np.maximum(cols, 0)], np.nan)
    else:
        rc = np.full(len(tonnes), np.nan)
    kinds = dict(data.graph.nodes(data="kind"))
    flows = data.flows
    keep = [j for j, (u, v, _t) in enumerate(flows) if tonnes[j] > 0 or kinds[v] == "processor"]
    nodes = data.graph.nodes
    records = []
    for j in keep:
        u, v, t = flows[j]
        a = nodes[u]
        records.append(
            (
                data.periods[t],
                u,
                kinds[u],
                str(a.get("domain", "")),
                str(a.get("phase", "")),
                v,
                kinds[v],
                tonnes[j],
                a.get("cu_pct", np.nan),
                a.get("au_gpt", np.nan),
                a.get("clay_severity_idx", np.nan),
                data.flow_value_usd_t[j],
                rc[j],
            )
        )
    return pd.DataFrame.from_records(records, columns=list(SCHEDULE_COLUMNS))


def stockpile_table(data: BlendData, cm: CompiledModel, out: HighsOutcome) -> pd.DataFrame:
    """Stockpile inventory by period: opening, added, reclaimed, closing [t]."""
    inv = values_of(cm, out, "inventory")
    tonnes = values_of(cm, out, "flow")
    records = []
    for k, (node, t) in enumerate(data.inventories):
        a = data.graph.nodes[node]
        opening = (
            float(a.get("opening_t", 0.0)) if t == 0 else inv[data.inventory_index[(node, t - 1)]]
        )
        added = sum(tonnes[j] for j in data.in_flows.get((node, t), []))
        reclaimed = sum(tonnes[j] for j in data.out_flows.get((node, t), []))
        records.append(
            (
                node,
                a.get("domain", ""),
                data.periods[t],
                opening,
                added,
                reclaimed,
                inv[k],
                _finite_or_nan(a.get("capacity_t", np.nan)),
                a.get("cu_pct", np.nan),
                a.get("au_gpt", np.nan),
            )
        )
    return pd.DataFrame.from_records(records, columns=list(STOCKPILE_COLUMNS))


def plant_table(data: BlendData, cm: CompiledModel, out: HighsOutcome) -> pd.DataFrame:
    """Plant figures by processor and period: feed, blend, energy, hours, metal, acid, value.

    Recovered metal: mill :math:`\\sum t\\,g\\,R` over the parcels fed (Cu [t], Au [oz]); leach
    :math:`\\sum t\\,g_{asol} R_{asol}`. Value is the undiscounted net value of the ore fed
    (revenue minus mining, rehandle, processing and acid costs) and its present value.
    """
    tonnes = values_of(cm, out, "flow")
    e = data.economics
    records = []
    for proc in data.nodes_of("processor"):
        for t, period in enumerate(data.periods):
            idx = data.in_flows.get((proc, t), [])
            src = [data.flows[j][0] for j in idx]
            x = tonnes[idx] if idx else np.zeros(0)
            attrs = _attr_matrix(
                data, src, (*FEED_ATTRIBUTES, "cu_recovery_frac", "au_recovery_frac")
            )
            feed = float(x.sum())

            def avg(a, x=x, feed=feed, attrs=attrs):
                return float((x * attrs[a]).sum() / feed) if feed > 0 else np.nan

            cu_fed = float((x * attrs["cu_pct"]).sum()) / 100.0
            au_fed_oz = float((x * attrs["au_gpt"]).sum()) / GRAMS_PER_TROY_OZ
            energy = float((x * attrs["mill_energy_kwh_t"]).sum()) if proc == "mill" else np.nan
            if proc == "mill":
                cu_rec = float((x * attrs["cu_pct"] * attrs["cu_recovery_frac"]).sum()) / 100.0
                au_rec = (
                    float((x * attrs["au_gpt"] * attrs["au_recovery_frac"]).sum())
                    / GRAMS_PER_TROY_OZ
                )
                acid = np.nan
            else:
                cu_rec = (
                    float((x * attrs["cu_asol_pct"]).sum()) / 100.0 * e.leach_cu_asol_recovery_frac
                )
                au_rec = 0.0
                acid = float((x * attrs["acid_kg_t"]).sum()) / 1000.0
            available = data.limit(proc, "mill_energy_kwh") if proc == "mill" else None
            hours = data.limit(proc, "mill_hours_available_h") if proc == "mill" else None
            e_av = float(available[t]) if available is not None else np.nan
            h_av = float(hours[t]) if hours is not None else np.nan
            hours_used = energy / e_av * h_av if proc == "mill" and e_av > 0 else np.nan
            value = float((x * data.flow_value_usd_t[idx]).sum()) if idx else 0.0
            records.append(
                (
                    proc,
                    period,
                    feed,
                    *(avg(a) for a in FEED_ATTRIBUTES),
                    energy,
                    e_av,
                    hours_used,
                    h_av,
                    cu_rec / cu_fed if cu_fed > 0 else np.nan,
                    au_rec / au_fed_oz if au_fed_oz > 0 else np.nan,
                    cu_rec,
                    au_rec,
                    acid,
                    value,
                    float(data.discount[t]),
                    value * float(data.discount[t]),
                )
            )
    return pd.DataFrame.from_records(records, columns=list(PLANT_COLUMNS))


def _rows_by_family(cm: CompiledModel, family: str) -> dict[int, int]:
    fam = np.asarray(cm.row_family)
    pos = np.flatnonzero(fam == family)
    return dict(zip(cm.row_index[pos].tolist(), pos.tolist(), strict=True))


def _feed(data: BlendData, tonnes: np.ndarray, proc: str, t: int) -> float:
    idx = data.in_flows.get((proc, t), [])
    return float(tonnes[idx].sum()) if idx else 0.0


def limits_table(bm: BlendModel, cm: CompiledModel, out: HighsOutcome) -> pd.DataFrame:
    """Every plant limit and stockpile capacity by period, with use, slack and shadow price.

    Notes
    -----
    ``shadow_price_usd`` is :math:`\\partial V / \\partial L`, the change in present value [USD]
    per unit of the limit L (per t, kWh, t acid, or per point of a blend average). For a sum row it
    is the row dual; for a blend row :math:`\\sum_j x_j (a_j - L) \\le 0` raising L by one relaxes
    the row by the feed :math:`F = \\sum_j x_j`, so the price is dual × F (envelope theorem).

    ``price_valid_from`` / ``price_valid_to`` give, for sum limits, the range of the limit value
    over which the shadow price holds (HiGHS ranging on the optimal basis; blank = unbounded or not
    available). Blend limits move matrix coefficients, not a right-hand side, so they get none.
    """
    data = bm.data
    tonnes = values_of(cm, out, "flow")
    records = []
    for family in ("plant_limit", "stock_capacity"):
        rowpos = _rows_by_family(cm, family)
        for i, info in enumerate(bm.rows.get(family, [])):
            r = rowpos.get(i)
            activity = float(out.row_value[r]) if r is not None and len(out.row_value) else 0.0
            dual = float(out.row_dual[r]) if (r is not None and out.has_duals) else np.nan
            if r is None:
                dual = 0.0
            valid = (np.nan, np.nan)
            if info.form == "blend":
                feed = _feed(data, tonnes, info.node, info.period_index)
                used = info.value + activity / feed if feed > 0 else np.nan
                price = -dual * feed
            else:
                used = activity
                price = -dual
                if out.row_range is not None and r is not None:
                    valid = (
                        _finite_or_nan(out.row_range[0][r]),
                        _finite_or_nan(out.row_range[1][r]),
                    )
            slack = (info.value - used) if info.sense == "max" else (used - info.value)
            scale = max(abs(info.value), 1.0)
            binding = (
                bool(np.isfinite(slack) and abs(slack) <= 1e-6 * scale) or abs(price) > 1e-9 * scale
            )
            desc = LIMITS[info.limit].description if info.limit in LIMITS else "stockpile capacity"
            unit = {"%": "percentage point", "index": "index point"}.get(info.unit, info.unit)
            records.append(
                (
                    info.limit,
                    desc,
                    info.node,
                    data.periods[info.period_index],
                    info.unit,
                    info.sense,
                    info.value,
                    used,
                    slack,
                    binding,
                    price if abs(price) > 1e-12 else 0.0,
                    f"USD per {unit}",
                    *valid,
                )
            )
    return pd.DataFrame.from_records(records, columns=list(LIMIT_COLUMNS))


def _finite_or_nan(value) -> float:
    """Unbounded capacities are reported as missing (NaN), not as infinity."""
    value = float(value)
    return value if np.isfinite(value) else np.nan
