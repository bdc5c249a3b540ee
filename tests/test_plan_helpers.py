"""Helpers shared by the blend tests: small cases and an independent scipy ``linprog`` model.

The reference model is written from the route graph directly (dense matrices, plain loops),
without geomet's flow indexing or Pyomo, so that agreement to 1e-6 checks the Pyomo model.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy.optimize import linprog

from geomet.plan import Economics, blend_data, blend_route_graph, mill_value_usd_t, period_limits
from geomet.plan.synthetic import synthetic_parcels, synthetic_plant_limits

TROY_OZ_G = 31.1034768  # grams per troy ounce, by definition (international troy ounce, 1959)


def small_case(
    n_domains=3,
    n_periods=3,
    seed=0,
    *,
    homogeneous=False,
    economics=None,
    limit_overrides=None,
    mining="fixed",
    milp=None,
    **graph_kwargs,
):
    """A synthetic BlendData; ``homogeneous`` gives every parcel of a domain the same attributes."""
    parcels = synthetic_parcels(n_domains, n_periods, seed=seed)
    if homogeneous:
        cols = [
            c
            for c in parcels.columns
            if c not in ("parcel_id", "period", "phase", "domain", "tonnes_t", "blocks_n")
        ]
        first = parcels.groupby("domain")[cols].transform("first")
        parcels[cols] = first
    plant = synthetic_plant_limits(n_periods, parcels)
    periods = list(range(1, n_periods + 1))
    days, limits = period_limits(plant, periods, limit_overrides)
    graph_kwargs.setdefault("stockpile_capacity_t", 400_000.0)
    graph = blend_route_graph(parcels, limits, **graph_kwargs)
    from geomet.plan import MilpSpec

    return blend_data(
        graph, periods, days, economics or Economics(), mining=mining, milp=milp or MilpSpec()
    )


def reference_value_usd_t(node: dict, dest: str, e: Economics) -> float:
    """Net value of a tonne (written again from the economics, not imported)."""
    if dest == "mill":
        return (
            node["cu_pct"] / 100 * node["cu_recovery_frac"] * e.cu_payable_frac * e.cu_price_usd_t
            + node["au_gpt"]
            / TROY_OZ_G
            * node["au_recovery_frac"]
            * e.au_payable_frac
            * e.au_price_usd_oz
            - e.mill_cost_usd_t
        )
    if dest == "leach":
        return (
            node["cu_asol_pct"]
            / 100
            * e.leach_cu_asol_recovery_frac
            * e.cathode_payable_frac
            * e.cu_price_usd_t
            - node["acid_kg_t"] / 1000 * e.acid_cost_usd_t
            - e.leach_cost_usd_t
        )
    return 0.0


def reference_lp(data, *, fixed=None):
    """Build the blend LP (fixed mining) as dense matrices from the graph.

    Parameters
    ----------
    fixed : dict, optional
        (domain, period index) -> 'off' or minimum feed [t] at the mill (used by the MILP brute
        force): 'off' forbids the domain; a number adds feed >= number.

    Returns
    -------
    dict with c (maximise), A_ub, b_ub, A_eq, b_eq, keys (list of variable keys)
    """
    g, e = data.graph, data.economics
    T = len(data.periods)
    disc = (1 + e.discount_rate_frac) ** (-np.cumsum(data.days) / 365.25)
    keys = []
    for u, v in g.edges():
        ku = g.nodes[u]["kind"]
        if ku == "source":
            keys.append(("x", u, v, data.periods.index(g.nodes[u]["period"])))
        elif ku == "stockpile":
            keys.extend(("x", u, v, t) for t in range(T))
    stock = [n for n, a in g.nodes(data=True) if a["kind"] == "stockpile"]
    keys += [("s", k, None, t) for k in stock for t in range(T)]
    col = {k: i for i, k in enumerate(keys)}
    n = len(keys)
    c = np.zeros(n)
    for (kind, u, v, t), i in col.items():
        if kind != "x":
            continue
        a = g.nodes[u]
        val = -g.edges[u, v].get("cost_usd_t", 0.0)
        val -= e.mining_cost_usd_t if a["kind"] == "source" else a["rehandle_usd_t"]
        val += reference_value_usd_t(a, v, e)
        c[i] = val * disc[t]
    A_ub, b_ub, A_eq, b_eq = [], [], [], []

    def row():
        return np.zeros(n)

    for u, a in g.nodes(data=True):
        if a["kind"] == "source":
            r = row()
            for (kind, uu, _v, _t), i in col.items():
                if kind == "x" and uu == u:
                    r[i] = 1
            A_eq.append(r)
            b_eq.append(a["tonnes_t"])
    for k in stock:
        for t in range(T):
            r = row()
            r[col[("s", k, None, t)]] = 1
            if t:
                r[col[("s", k, None, t - 1)]] = -1
            for (kind, uu, vv, tt), i in col.items():
                if kind == "x" and tt == t and vv == k:
                    r[i] -= 1
                if kind == "x" and tt == t and uu == k:
                    r[i] += 1
            A_eq.append(r)
            b_eq.append(g.nodes[k]["opening_t"] if t == 0 else 0.0)
            cap = g.nodes[k]["capacity_t"]
            if np.isfinite(cap):
                r = row()
                r[col[("s", k, None, t)]] = 1
                A_ub.append(r)
                b_ub.append(cap)
    blend = {
        "mill_clay_severity_max_idx": ("clay_severity_idx", 1),
        "mill_swelling_clay_max_pct": ("clay_swelling_pct", 1),
        "mill_sulfate_max_pct": ("sulfate_pct", 1),
        "mill_oxide_ratio_max_frac": ("oxide_ratio_frac", 1),
        "mill_cu_head_max_pct": ("cu_pct", 1),
        "mill_cu_head_min_pct": ("cu_pct", -1),
    }
    for p in ("mill", "leach"):
        if p not in g:
            continue
        lim = g.nodes[p]["limits"]
        for t in range(T):
            feeders = [
                (i, g.nodes[u])
                for (kind, u, v, tt), i in col.items()
                if kind == "x" and v == p and tt == t
            ]

            def add(coef_fn, bound, sign=1, feeders=feeders):
                r = row()
                for i, a in feeders:
                    r[i] = sign * coef_fn(a)
                A_ub.append(r)
                b_ub.append(sign * bound)

            if np.isfinite(lim.get(f"{p}_max_t", [np.nan] * T)[t]):
                add(lambda a: 1.0, lim[f"{p}_max_t"][t])
            if np.isfinite(lim.get(f"{p}_min_t", [np.nan] * T)[t]):
                add(lambda a: 1.0, lim[f"{p}_min_t"][t], -1)
            if p == "mill":
                add(lambda a: a["mill_energy_kwh_t"], lim["mill_energy_kwh"][t])
                for name, (attr, sign) in blend.items():
                    L = lim.get(name, [np.nan] * T)[t]
                    if np.isfinite(L):
                        add(lambda a, attr=attr, L=L: a[attr] - L, 0.0, sign)
            if p == "leach" and np.isfinite(lim.get("acid_supply_t", [np.nan] * T)[t]):
                add(lambda a: a["acid_kg_t"] / 1000, lim["acid_supply_t"][t])
    for (dom, t), rule in (fixed or {}).items():
        r = row()
        for (kind, u, v, tt), i in col.items():
            if kind == "x" and v == "mill" and tt == t and g.nodes[u].get("domain") == dom:
                r[i] = 1
        if rule == "off":
            A_eq.append(r)
            b_eq.append(0.0)
        else:
            A_ub.append(-r)
            b_ub.append(-float(rule))
    return {
        "c": c,
        "A_ub": np.array(A_ub).reshape(-1, n),
        "b_ub": np.array(b_ub),
        "A_eq": np.array(A_eq).reshape(-1, n),
        "b_eq": np.array(b_eq),
        "keys": keys,
    }


def solve_reference(lp):
    """Maximise with scipy's linprog (HiGHS dual simplex); returns (value, x) or (None, None)."""
    res = linprog(
        -lp["c"],
        A_ub=lp["A_ub"] if len(lp["b_ub"]) else None,
        b_ub=lp["b_ub"] if len(lp["b_ub"]) else None,
        A_eq=lp["A_eq"],
        b_eq=lp["b_eq"],
        bounds=(0, None),
        method="highs-ds",
    )
    if res.status != 0:
        return None, None
    return -res.fun, res.x


def geomet_vector(result, data, lp) -> np.ndarray:
    """geomet's solution laid out in the reference model's variable order."""
    sched = result.schedule
    flows = {
        (r.source, r.destination, data.periods.index(r.period)): r.tonnes_t
        for r in sched.itertuples()
    }
    stocks = {
        (r.stockpile, data.periods.index(r.period)): r.closing_t
        for r in result.stockpiles.itertuples()
    }
    out = []
    for kind, u, v, t in lp["keys"]:
        out.append(flows.get((u, v, t), 0.0) if kind == "x" else stocks.get((u, t), 0.0))
    return np.array(out)


def test_small_case_homogeneous_domains_share_attributes():
    data = small_case(2, 3, seed=1, homogeneous=True)
    grades = pd.Series(
        {n: a["cu_pct"] for n, a in data.graph.nodes(data=True) if a["kind"] == "source"}
    )
    by_domain = grades.groupby(grades.index.str.split("|").str[-1]).nunique()
    assert (by_domain == 1).all()


def test_reference_value_matches_hand_figure():
    # 1 % Cu, 90 % recovery, 100 % payable, 10 000 USD/t, 10 USD/t milling: 0.01*0.9*1e4-10 = 80
    e = Economics(cu_price_usd_t=10_000, cu_payable_frac=1.0, mill_cost_usd_t=10.0)
    node = {"cu_pct": 1.0, "cu_recovery_frac": 0.9, "au_gpt": 0.0, "au_recovery_frac": 0.0}
    assert reference_value_usd_t(node, "mill", e) == pytest.approx(80.0, rel=1e-12)
    assert float(mill_value_usd_t(1.0, 0.0, 0.9, 0.0, e)) == pytest.approx(80.0, rel=1e-12)


def test_ore_type_splits_at_the_leach_rule_for_arrays_and_series():
    import pandas as pd

    from geomet.plan.parcels import ore_type_from_oxide_ratio

    # The rule is inclusive at the threshold; NaN (no acid-soluble assay) counts as sulfide.
    arr = ore_type_from_oxide_ratio(np.array([0.2, 0.5, np.nan]), oxide_min_frac=0.5)
    assert arr.tolist() == ["sulfide", "oxide", "sulfide"]
    ser = ore_type_from_oxide_ratio(pd.Series([0.7, 0.1], index=[10, 11]), oxide_min_frac=0.6)
    assert ser.tolist() == ["oxide", "sulfide"]
    assert ser.index.tolist() == [10, 11]
