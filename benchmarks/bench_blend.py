"""Benchmark: geomet's blend (Pyomo build -> standard-form compile -> highspy) against the same LP
built directly as scipy sparse matrices and passed to highspy.

Run ``python benchmarks/bench_blend.py`` (20 × 12, 100 × 40 and 500 × 60 domains ×
periods, with segregated stockpiles, a mill and a leach pad) or ``--quick`` (20 × 12 only).
Both sides start from the same parcels and plant-limit tables, use the same HiGHS algorithm
(interior point with crossover by default) and must reach the same objective. Printed: geomet's
data preparation (route graph and indexing), Pyomo build, hand-over (compile + passModel) and
HiGHS times, the direct build and solve times, and the ratio of totals.

geomet's build, hand-over and solve run with the garbage collector paused, as
``geomet.plan.solve_blend`` runs them. Each run of either side starts after a full collection
(outside the timings), so that a collection of the previous run's garbage never lands inside the
other side's timings; both sides are timed alternately and medians are reported.
"""

from __future__ import annotations

import argparse
import gc
import time

import highspy
import numpy as np
import pandas as pd
import scipy.sparse as sp
from pyomo.common.gc_manager import PauseGC

from geomet.plan import Economics, SolveOptions, blend_data, blend_route_graph, period_limits
from geomet.plan.economics import discount_factors, leach_value_usd_t, mill_value_usd_t
from geomet.plan.model import build_blend_model
from geomet.plan.solve import compile_blend_model, solve_compiled
from geomet.plan.synthetic import synthetic_parcels, synthetic_plant_limits

CAPACITY_T = 2.0e6
STOCK_COST = 0.3  # USD/t placement on a stockpile (geomet's default edge cost)
LEACH_MIN_OX = 0.5
BLEND = (
    ("mill_clay_severity_max_idx", "clay_severity_idx", 1.0),
    ("mill_swelling_clay_max_pct", "clay_swelling_pct", 1.0),
    ("mill_sulfate_max_pct", "sulfate_pct", 1.0),
    ("mill_cu_head_max_pct", "cu_pct", 1.0),
    ("mill_cu_head_min_pct", "cu_pct", -1.0),
)


def geomet_run(parcels, plant, periods, algorithm):
    times = {}
    t0 = time.perf_counter()
    days, limits = period_limits(plant, periods)
    graph = blend_route_graph(
        parcels,
        limits,
        stockpile_capacity_t=CAPACITY_T,
        stockpile_cost_usd_t=STOCK_COST,
        leach_min_oxide_ratio_frac=LEACH_MIN_OX,
    )
    data = blend_data(graph, periods, days, Economics())
    times["data"] = time.perf_counter() - t0
    # build, hand-over and solve with the collector paused, as geomet.plan.solve_blend runs them
    with PauseGC():
        t0 = time.perf_counter()
        bm = build_blend_model(data)
        times["build"] = time.perf_counter() - t0
        cm = compile_blend_model(bm)
        # no ranging: the direct baseline does not compute it either (like for like)
        out = solve_compiled(cm, SolveOptions(algorithm=algorithm, ranging=False))
    times["handover"] = cm.compile_s + out.handover_s
    times["solve"] = out.solve_s
    return out.objective, times, cm.A.shape, cm.A.nnz


def direct_run(parcels, plant, periods, algorithm):
    """The same LP assembled with numpy / scipy.sparse and passed straight to highspy."""
    t0 = time.perf_counter()
    e = Economics()
    days, limits = period_limits(plant, periods)
    n_t = len(periods)
    disc = discount_factors(days, e.discount_rate_frac)
    p = parcels.reset_index(drop=True)
    n_p = len(p)
    t_of = p["period"].to_numpy() - periods[0]
    domains, dom_idx = np.unique(p["domain"].to_numpy(), return_inverse=True)
    n_k = len(domains)
    ton = p["tonnes_t"].to_numpy()
    # stockpile attributes: tonnage weighted; recoveries weighted by metal
    w = np.bincount(dom_idx, ton, n_k)

    def dom_avg(col, weight):
        return np.bincount(dom_idx, weight * p[col].to_numpy(), n_k) / np.bincount(
            dom_idx, weight, n_k
        )

    attrs = [
        "cu_pct",
        "au_gpt",
        "cu_asol_pct",
        "clay_severity_idx",
        "clay_swelling_pct",
        "sulfate_pct",
        "mill_energy_kwh_t",
        "acid_kg_t",
    ]
    stock = {a: dom_avg(a, ton) for a in attrs}
    stock["cu_recovery_frac"] = dom_avg("cu_recovery_frac", ton * p["cu_pct"].to_numpy())
    stock["au_recovery_frac"] = dom_avg("au_recovery_frac", ton * p["au_gpt"].to_numpy())
    stock["oxide_ratio_frac"] = stock["cu_asol_pct"] / stock["cu_pct"]
    del w
    src = {
        a: p[a].to_numpy()
        for a in [*attrs, "cu_recovery_frac", "au_recovery_frac", "oxide_ratio_frac"]
    }

    # columns: [parcel->mill | parcel->leach (oxide) | parcel->waste | parcel->stock |
    #           stock->mill (k,t) | stock->leach (k,t, oxide stockpiles) | inventory (k,t)]
    leach_p = np.flatnonzero(src["oxide_ratio_frac"] >= LEACH_MIN_OX)
    leach_k = np.flatnonzero(stock["oxide_ratio_frac"] >= LEACH_MIN_OX)
    all_p = np.arange(n_p)
    blocks = [("pm", all_p), ("pl", leach_p), ("pw", all_p), ("ps", all_p)]
    off, cols = 0, {}
    for name, idx in blocks:
        cols[name] = off + np.arange(len(idx))
        off += len(idx)
    kt = np.arange(n_k * n_t)
    cols["sm"] = off + kt
    off += len(kt)
    lk = (leach_k[:, None] * n_t + np.arange(n_t)[None, :]).ravel()
    cols["sl"] = off + np.arange(len(lk))
    off += len(lk)
    cols["inv"] = off + kt
    n_col = off + len(kt)

    mill_v = mill_value_usd_t(
        src["cu_pct"], src["au_gpt"], src["cu_recovery_frac"], src["au_recovery_frac"], e
    )
    leach_v = leach_value_usd_t(src["cu_asol_pct"], src["acid_kg_t"], e)
    smill_v = mill_value_usd_t(
        stock["cu_pct"], stock["au_gpt"], stock["cu_recovery_frac"], stock["au_recovery_frac"], e
    )
    sleach_v = leach_value_usd_t(stock["cu_asol_pct"], stock["acid_kg_t"], e)
    c = np.zeros(n_col)
    m = e.mining_cost_usd_t
    c[cols["pm"]] = (mill_v - m) * disc[t_of]
    c[cols["pl"]] = (leach_v[leach_p] - m) * disc[t_of[leach_p]]
    c[cols["pw"]] = -m * disc[t_of]
    c[cols["ps"]] = (-m - STOCK_COST) * disc[t_of]
    k_of, tt = np.divmod(kt, n_t)
    c[cols["sm"]] = (smill_v[k_of] - e.rehandle_cost_usd_t) * disc[tt]
    lk_k, lk_t = np.divmod(lk, n_t)
    c[cols["sl"]] = (sleach_v[lk_k] - e.rehandle_cost_usd_t) * disc[lk_t]

    rows, colsi, vals, lo, hi = [], [], [], [], []
    r = 0

    def add(row_idx, col_idx, v):
        rows.append(np.asarray(row_idx))
        colsi.append(np.asarray(col_idx))
        vals.append(np.broadcast_to(np.asarray(v, float), np.shape(col_idx)))

    # source balance
    for name, idx in blocks:
        add(r + idx, cols[name], 1.0)
    lo.append(ton)
    hi.append(ton)
    r += n_p
    # stockpile balance: inv(k,t) - inv(k,t-1) - in + out = 0
    add(r + kt, cols["inv"], 1.0)
    has_prev = tt > 0
    add(r + kt[has_prev], cols["inv"][kt[has_prev] - 1], -1.0)
    add(r + dom_idx * n_t + t_of, cols["ps"], -1.0)
    add(r + kt, cols["sm"], 1.0)
    add(r + lk, cols["sl"], 1.0)
    lo.append(np.zeros(n_k * n_t))
    hi.append(np.zeros(n_k * n_t))
    r += n_k * n_t
    # capacity
    add(r + kt, cols["inv"], 1.0)
    lo.append(np.full(n_k * n_t, -np.inf))
    hi.append(np.full(n_k * n_t, CAPACITY_T))
    r += n_k * n_t

    def plant_row(values, coef_p, coef_k, proc, sense=1.0, blend_limit=None):
        nonlocal r
        if proc == "mill":
            pc, pidx, kc, kidx, kperiod = cols["pm"], all_p, cols["sm"], k_of, tt
        else:
            pc, pidx, kc, kidx, kperiod = cols["pl"], leach_p, cols["sl"], lk_k, lk_t
        pt = t_of[pidx]
        cp = coef_p[pidx] - (blend_limit[pt] if blend_limit is not None else 0.0)
        ck = coef_k[kidx] - (blend_limit[kperiod] if blend_limit is not None else 0.0)
        add(r + pt, pc, cp)
        add(r + kperiod, kc, ck)
        bound = np.zeros(n_t) if blend_limit is not None else values
        if sense > 0:
            lo.append(np.full(n_t, -np.inf))
            hi.append(bound)
        else:
            lo.append(bound)
            hi.append(np.full(n_t, np.inf))
        r += n_t

    ones_p, ones_k = np.ones(n_p), np.ones(n_k)
    plant_row(limits["mill_max_t"], ones_p, ones_k, "mill")
    plant_row(
        limits["mill_energy_kwh"], src["mill_energy_kwh_t"], stock["mill_energy_kwh_t"], "mill"
    )
    for name, attr, sense in BLEND:
        plant_row(None, src[attr], stock[attr], "mill", sense, blend_limit=limits[name])
    plant_row(limits["leach_max_t"], ones_p, ones_k, "leach")
    plant_row(limits["acid_supply_t"], src["acid_kg_t"] / 1000, stock["acid_kg_t"] / 1000, "leach")

    A = sp.csc_array(
        (np.concatenate(vals), (np.concatenate(rows), np.concatenate(colsi))), shape=(r, n_col)
    )
    lo, hi = np.concatenate(lo), np.concatenate(hi)
    build_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    h = highspy.Highs()
    h.setOptionValue("output_flag", False)
    h.passModel(
        n_col,
        r,
        A.nnz,
        1,
        1,
        0.0,
        -c,
        np.zeros(n_col),
        np.full(n_col, np.inf),
        lo,
        hi,
        A.indptr.astype(np.int32),
        A.indices.astype(np.int32),
        A.data,
        np.zeros(n_col, np.int32),
    )
    h.setOptionValue("solver", algorithm)
    h.setOptionValue("run_crossover", "on")
    pass_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    h.run()
    solve_s = time.perf_counter() - t0
    return (
        -h.getInfo().objective_function_value,
        {"build": build_s, "handover": pass_s, "solve": solve_s},
        A.shape,
        A.nnz,
    )


def main():
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--quick", action="store_true", help="only the 20 x 12 case")
    ap.add_argument(
        "--repeat", type=int, default=1, help="runs of each side (alternating); medians reported"
    )
    ap.add_argument(
        "--algorithm", default="ipm", help="HiGHS algorithm for both sides (default ipm)"
    )
    ap.add_argument(
        "--size",
        action="append",
        default=None,
        metavar="DxT",
        help="run only this size, e.g. 100x40 (may repeat)",
    )
    args = ap.parse_args()
    sizes = [(20, 12)] if args.quick else [(20, 12), (100, 40), (500, 60)]
    if args.size:
        sizes = [tuple(int(v) for v in s.lower().split("x")) for s in args.size]
    print(
        f"{'size':>9} {'rows x cols (nnz)':>26} | geomet data/build/hand-over/solve = total | "
        f"direct build/hand-over/solve = total | ratio (ratio w/o data) | objective rel diff"
    )
    for n_d, n_t in sizes:
        parcels = synthetic_parcels(n_d, n_t, seed=42)
        plant = synthetic_plant_limits(n_t, parcels)
        periods = list(range(1, n_t + 1))
        d_runs, g_runs = [], []
        for _ in range(max(args.repeat, 1)):
            gc.collect()  # each run starts from a clean heap (outside the timings)
            d_runs.append(direct_run(parcels, plant, periods, args.algorithm))
            gc.collect()
            g_runs.append(geomet_run(parcels, plant, periods, args.algorithm))
        d_obj, _d, d_shape, d_nnz = d_runs[0]
        g_obj, _g, g_shape, g_nnz = g_runs[0]
        d_t = {k: float(np.median([r[1][k] for r in d_runs])) for k in d_runs[0][1]}
        g_t = {k: float(np.median([r[1][k] for r in g_runs])) for k in g_runs[0][1]}
        g_total, d_total = sum(g_t.values()), sum(d_t.values())
        g_model = g_total - g_t["data"]
        rel = abs(g_obj - d_obj) / max(abs(d_obj), 1.0)
        print(
            f"{n_d:>4} x {n_t:<3} {d_shape[0]:>7} x {d_shape[1]:<7} ({d_nnz:>7}) | "
            f"{g_t['data']:.2f}/{g_t['build']:.2f}/{g_t['handover']:.2f}/{g_t['solve']:.2f}"
            f" = {g_total:6.2f} s | "
            f"{d_t['build']:.2f}/{d_t['handover']:.2f}/{d_t['solve']:.2f} = {d_total:6.2f} s | "
            f"{g_total / d_total:5.2f}x ({g_model / d_total:5.2f}x) | {rel:.1e}"
        )
        if g_shape != d_shape or g_nnz != d_nnz:
            print(
                f"          note: geomet compiled {g_shape[0]} x {g_shape[1]} ({g_nnz} nnz); "
                "empty rows/columns are dropped by the compiler"
            )
        if rel > 1e-6:
            print("          WARNING: objectives differ by more than 1e-6")


if __name__ == "__main__":
    pd.set_option("display.width", 200)
    main()
