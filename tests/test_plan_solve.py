"""Blend solutions against an independent scipy linprog model, a hand-worked case, finite
differences and a brute force of the MILP."""

from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_plan_helpers import geomet_vector, reference_lp, small_case, solve_reference

from geomet.errors import ModelInfeasible, SolverError
from geomet.plan import (
    Economics,
    MilpSpec,
    SolveOptions,
    blend_data,
    build_blend_model,
    compile_blend_model,
    route_graph,
    solve_blend,
    solve_compiled,
)

pytestmark = pytest.mark.solver
SIMPLEX = SolveOptions(algorithm="simplex")


def hand_case(clay_max=None, mill_max=120.0, extra_limits=None):
    """Two parcels, one period, a mill and a waste dump (worked by hand in the tests below).

    A: 100 t, 1.0 % Cu, 90 % recovery, clay 10; B: 100 t, 0.5 % Cu, 80 % recovery, clay 2.
    Copper 10 000 USD/t, fully payable, milling 10 USD/t, no mining cost, no discounting:
    A is worth 0.01*0.9*1e4 - 10 = 80 USD/t, B 0.005*0.8*1e4 - 10 = 30 USD/t.
    """
    limits = {"mill_max_t": np.array([mill_max]), "mill_energy_kwh": np.array([1e9])}
    if clay_max is not None:
        limits["mill_clay_severity_max_idx"] = np.array([clay_max])
    limits.update(extra_limits or {})
    common = {
        "kind": "source",
        "period": 1,
        "phase": "p",
        "au_gpt": 0.0,
        "au_recovery_frac": 0.0,
        "mill_energy_kwh_t": 10.0,
        "cu_asol_pct": 0.0,
        "acid_kg_t": 0.0,
    }
    nodes = [
        {
            "node": "A",
            "domain": "dA",
            "tonnes_t": 100.0,
            "cu_pct": 1.0,
            "cu_recovery_frac": 0.9,
            "clay_severity_idx": 10.0,
            **common,
        },
        {
            "node": "B",
            "domain": "dB",
            "tonnes_t": 100.0,
            "cu_pct": 0.5,
            "cu_recovery_frac": 0.8,
            "clay_severity_idx": 2.0,
            **common,
        },
        {"node": "mill", "kind": "processor", "limits": limits},
        {"node": "waste", "kind": "sink"},
        {"node": "products", "kind": "sink"},
    ]
    edges = [{"from": s, "to": d} for s in "AB" for d in ("mill", "waste")]
    edges.append({"from": "mill", "to": "products"})
    econ = Economics(
        cu_price_usd_t=10_000.0,
        cu_payable_frac=1.0,
        mining_cost_usd_t=0.0,
        mill_cost_usd_t=10.0,
        discount_rate_frac=0.0,
    )
    return blend_data(route_graph(nodes, edges), [1], [30.0], econ)


def _flows(result):
    s = result.schedule
    return s.set_index(["source", "destination"])["tonnes_t"]


def test_hand_case_capacity_only():
    # Mill 120 t: all of A (80 USD/t) and 20 t of B (30 USD/t): 100*80 + 20*30 = 8600 USD.
    res = solve_blend(hand_case(), SIMPLEX)
    assert res.value_pv_usd == pytest.approx(8600.0, abs=1e-6)
    f = _flows(res)
    assert f[("A", "mill")] == pytest.approx(100.0, abs=1e-6)
    assert f[("B", "mill")] == pytest.approx(20.0, abs=1e-6)
    cap = res.limits.set_index("limit").loc["mill_max_t"]
    # shadow price of capacity = value of the marginal tonne (B): 30 USD/t
    assert cap["shadow_price_usd"] == pytest.approx(30.0, abs=1e-6)
    assert bool(cap["binding"])


def test_hand_case_with_clay_limit():
    # clay limit 8: 2 xA - 6 xB <= 0 with xA + xB = 120 -> xA = 90, xB = 30, V = 8100 USD.
    # V(L) = 3600 + 750 (L - 2) -> dV/dL = 750 USD per index point; capacity dual solves
    # 80 = lam + 2 mu, 30 = lam - 6 mu -> mu = 6.25, lam = 67.5 USD/t (worked by hand).
    res = solve_blend(hand_case(clay_max=8.0), SIMPLEX)
    assert res.value_pv_usd == pytest.approx(8100.0, abs=1e-6)
    f = _flows(res)
    assert f[("A", "mill")] == pytest.approx(90.0, abs=1e-6)
    assert f[("B", "mill")] == pytest.approx(30.0, abs=1e-6)
    lim = res.limits.set_index("limit")
    assert lim.loc["mill_clay_severity_max_idx", "shadow_price_usd"] == pytest.approx(
        750.0, rel=1e-9
    )
    assert lim.loc["mill_max_t", "shadow_price_usd"] == pytest.approx(67.5, rel=1e-9)
    assert lim.loc["mill_clay_severity_max_idx", "used_value"] == pytest.approx(8.0, abs=1e-9)
    plant = res.plant.iloc[0]
    assert plant["clay_severity_idx"] == pytest.approx(8.0, abs=1e-9)
    # metal: 90 t * 1 % * 0.9 + 30 t * 0.5 % * 0.8 = 0.81 + 0.12 = 0.93 t Cu
    assert plant["cu_recovered_t"] == pytest.approx(0.93, abs=1e-9)
    # every route used at an optimum has a zero reduced cost (complementary slackness)
    sched = res.schedule.set_index(["source", "destination"])
    assert sched.loc[("A", "mill"), "reduced_cost_usd_t"] == pytest.approx(0.0, abs=1e-9)


def test_hand_case_finite_difference_of_clay_limit():
    # central difference of the optimal value in the limit, against the reported shadow price
    h = 1e-3
    up = solve_blend(hand_case(clay_max=8.0 + h), SIMPLEX).value_pv_usd
    down = solve_blend(hand_case(clay_max=8.0 - h), SIMPLEX).value_pv_usd
    price = (
        solve_blend(hand_case(clay_max=8.0), SIMPLEX)
        .limits.set_index("limit")
        .loc["mill_clay_severity_max_idx", "shadow_price_usd"]
    )
    assert (up - down) / (2 * h) == pytest.approx(price, rel=1e-6)


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_against_linprog(seed):
    data = small_case(3, 3, seed=seed)
    res = solve_blend(data, SIMPLEX)
    lp = reference_lp(data)
    ref_value, ref_x = solve_reference(lp)
    assert res.value_pv_usd == pytest.approx(ref_value, rel=1e-6, abs=1e-6)
    x = geomet_vector(res, data, lp)
    # geomet's plan is feasible in the reference model and worth the same there
    assert np.all(lp["A_ub"] @ x <= lp["b_ub"] + 1e-6 * np.maximum(1, np.abs(lp["b_ub"])))
    np.testing.assert_allclose(lp["A_eq"] @ x, lp["b_eq"], rtol=1e-7, atol=1e-5)
    assert lp["c"] @ x == pytest.approx(ref_value, rel=1e-6)


def test_ipm_and_simplex_agree():
    data = small_case(4, 3, seed=5)
    a = solve_blend(data, SolveOptions(algorithm="ipm")).value_pv_usd
    b = solve_blend(data, SIMPLEX).value_pv_usd
    assert a == pytest.approx(b, rel=1e-7)


def test_shadow_prices_against_finite_differences():
    data = small_case(3, 3, seed=0)
    res = solve_blend(data, SIMPLEX)
    lim = res.limits
    checked = 0
    for row in lim[lim["binding"] & (lim["shadow_price_usd"].abs() > 1e-3)].itertuples():
        if row.limit not in (
            "mill_max_t",
            "mill_energy_kwh",
            "mill_clay_severity_max_idx",
            "leach_max_t",
            "acid_supply_t",
        ):
            continue
        t = data.periods.index(row.period)
        h = 1e-4 * max(abs(row.limit_value), 1.0)
        values = []
        for sign in (1, -1):
            d2 = small_case(3, 3, seed=0)
            arr = d2.graph.nodes[row.node]["limits"][row.limit]
            arr[t] = row.limit_value + sign * h
            values.append(solve_blend(d2, SIMPLEX).value_pv_usd)
        fd = (values[0] - values[1]) / (2 * h)
        assert fd == pytest.approx(row.shadow_price_usd, rel=1e-3), row.limit
        checked += 1
    assert checked >= 2


def _brute_force_milp(data, min_feed, k_max):
    """Enumerate every on/off pattern of (domain, period) at the mill; LP for each (linprog)."""
    g = data.graph
    T = len(data.periods)
    domains = sorted({a["domain"] for _n, a in g.nodes(data=True) if a["kind"] == "source"})
    slots = [(d, t) for t in range(T) for d in domains]
    best = -np.inf
    for pattern in itertools.product((0, 1), repeat=len(slots)):
        on = dict(zip(slots, pattern, strict=True))
        if any(sum(on[(d, t)] for d in domains) > k_max for t in range(T)):
            continue
        fixed = {s: (min_feed if on[s] else "off") for s in slots}
        value, _x = solve_reference(reference_lp(data, fixed=fixed))
        if value is not None:
            best = max(best, value)
    return best


def test_milp_against_brute_force():
    milp = MilpSpec(min_feed_t=150_000.0, max_domains_per_period=1)
    data = small_case(3, 2, seed=4, stockpiles=False, leach=False, milp=milp)
    res = solve_blend(data, SolveOptions(algorithm="simplex", mip_rel_gap=1e-9))
    assert res.status == "optimal"
    best = _brute_force_milp(data, 150_000.0, 1)
    assert res.value_pv_usd == pytest.approx(best, rel=1e-6)
    fed = res.schedule[(res.schedule["destination"] == "mill") & (res.schedule["tonnes_t"] > 1e-6)]
    per_period = fed.groupby("period")["domain"].nunique()
    assert (per_period <= 1).all()
    by_dom = fed.groupby(["period", "domain"])["tonnes_t"].sum()
    assert (by_dom >= 150_000.0 - 1e-4).all()


def test_infeasible_plan_is_diagnosed():
    # Mill must take 150 t but only 100 t of ore is clean enough: clay limit 3 admits B only
    # (clay 2); A (clay 10) can enter only at 1/8 of B's tonnes at limit 3: xA <= xB/7.
    data = hand_case(clay_max=3.0, extra_limits={"mill_min_t": np.array([150.0])})
    res = solve_blend(data, SIMPLEX)
    assert res.status == "infeasible"
    d = res.diagnosis
    elastic = d[d["method"] == "elastic"]
    assert set(elastic["limit"]) <= {"mill_min_t", "mill_clay_severity_max_idx"}
    assert len(elastic) >= 1
    iis = d[d["method"] == "iis"]
    assert {"mill_min_t", "mill_clay_severity_max_idx"} <= set(iis["limit"])
    # Lowering the minimum alone to the feasible maximum: xB = 100, xA = 100/7 -> 114.29 t.
    if set(elastic["limit"]) == {"mill_min_t"}:
        row = elastic.iloc[0]
        assert row["required_limit"] == pytest.approx(100 + 100 / 7, rel=1e-6)
    with pytest.raises(ModelInfeasible, match="blend plan is infeasible") as info:
        res.raise_if_infeasible()
    assert info.value.diagnosis is d


def test_elastic_names_the_period_and_amount():
    # two periods; only period 2 has a minimum feed larger than what exists
    data = small_case(
        2, 2, seed=3, stockpiles=False, leach=False, limit_overrides={"mill_min_t": None}
    )
    cap = data.graph.nodes["mill"]["limits"]
    cap["mill_min_t"] = np.array([0.0, 5.0e6])
    cap["mill_max_t"] = np.array([1e7, 1e7])
    cap["mill_energy_kwh"] = np.array([1e12, 1e12])
    for name in (
        "mill_clay_severity_max_idx",
        "mill_swelling_clay_max_pct",
        "mill_sulfate_max_pct",
        "mill_cu_head_min_pct",
        "mill_cu_head_max_pct",
    ):
        cap[name] = np.array([np.nan, np.nan])
    res = solve_blend(data, SIMPLEX)
    assert res.status == "infeasible"
    el = res.diagnosis[res.diagnosis["method"] == "elastic"]
    assert el["period"].tolist() == [2]
    mined_p2 = sum(
        a["tonnes_t"]
        for _n, a in data.graph.nodes(data=True)
        if a["kind"] == "source" and a["period"] == 2
    )
    assert el["required_limit"].iloc[0] == pytest.approx(mined_p2, rel=1e-9)
    assert "period 2" in el["message"].iloc[0]


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    n_domains=st.integers(1, 4),
    n_periods=st.integers(1, 4),
    seed=st.integers(0, 10_000),
    opening=st.floats(0.0, 200_000.0),
)
def test_conservation_of_tonnes_and_metal(n_domains, n_periods, seed, opening):
    data = small_case(
        n_domains, n_periods, seed=seed, homogeneous=True, stockpile_opening_t={"D000": opening}
    )
    res = solve_blend(data, SIMPLEX)
    assert res.feasible
    sources = [a for _n, a in data.graph.nodes(data=True) if a["kind"] == "source"]
    mined_t = sum(a["tonnes_t"] for a in sources)
    cu_mined_t = sum(a["tonnes_t"] * a["cu_pct"] / 100 for a in sources)
    sched, stock = res.schedule, res.stockpiles
    to_plant = sched[sched["destination_kind"].isin(["processor", "sink"])]
    first, last = min(data.periods), max(data.periods)
    open_t = stock.loc[stock["period"] == first, "opening_t"].sum() if len(stock) else 0.0
    close = stock[stock["period"] == last] if len(stock) else stock
    close_t = close["closing_t"].sum() if len(stock) else 0.0
    assert to_plant["tonnes_t"].sum() + close_t == pytest.approx(
        mined_t + open_t, rel=1e-7, abs=1e-3
    )
    cu_out = (to_plant["tonnes_t"] * to_plant["cu_pct"] / 100).sum()
    cu_close = (close["closing_t"] * close["cu_pct"] / 100).sum() if len(stock) else 0.0
    cu_open = (
        (
            stock.loc[stock["period"] == first, "opening_t"]
            * stock.loc[stock["period"] == first, "cu_pct"]
            / 100
        ).sum()
        if len(stock)
        else 0.0
    )
    assert cu_out + cu_close == pytest.approx(cu_mined_t + cu_open, rel=1e-7, abs=1e-5)
    plant = res.plant
    fed = plant["feed_t"] > 1e-6
    assert (
        plant.loc[fed, "cu_recovered_t"]
        <= plant.loc[fed, "feed_t"] * plant.loc[fed, "cu_pct"] / 100 + 1e-9
    ).all()
    lim = res.limits
    blend = lim[lim["limit"].str.contains("max_idx|max_pct")]
    assert (
        blend["used_value"].dropna() <= blend.loc[blend["used_value"].notna(), "limit_value"] + 1e-6
    ).all()
    # the closing inventory never exceeds the capacity
    if len(stock):
        assert (stock["closing_t"] <= stock["capacity_t"] + 1e-6).all()


def test_flexible_mining_never_worse_and_respects_exposure():
    fixed = solve_blend(small_case(3, 3, seed=2), SIMPLEX)
    data = small_case(3, 3, seed=2, mining="flexible")
    flex = solve_blend(data, SIMPLEX)
    assert flex.value_pv_usd >= fixed.value_pv_usd - 1e-6
    s = flex.schedule[(flex.schedule["source_kind"] == "source") & (flex.schedule["tonnes_t"] > 0)]
    planned = {n: a["period"] for n, a in data.graph.nodes(data=True) if a["kind"] == "source"}
    assert (s["period"] >= s["source"].map(planned)).all()
    mined = s.groupby("source")["tonnes_t"].sum()
    tonnes = pd.Series(
        {n: a["tonnes_t"] for n, a in data.graph.nodes(data=True) if a["kind"] == "source"}
    )
    assert (mined <= tonnes[mined.index] + 1e-6).all()


def test_unknown_algorithm_is_an_error():
    cm = compile_blend_model(build_blend_model(hand_case()))
    with pytest.raises(SolverError, match="solver algorithm must be one of"):
        solve_compiled(cm, SolveOptions(algorithm="barrier"))


def test_minimum_on_a_processor_no_route_reaches():
    # a leach pad with a minimum stacking but no parcel routed to it: the compiler meets a row
    # with no variables; the plan is reported infeasible with that limit named, not a crash
    data = hand_case()
    g = data.graph.copy()
    g.add_node(
        "leach",
        kind="processor",
        limits={"leach_max_t": np.array([50.0]), "leach_min_t": np.array([10.0])},
    )
    g.add_edge("leach", "products", cost_usd_t=0.0)
    data = blend_data(g, [1], [30.0], data.economics)
    res = solve_blend(data, SIMPLEX)
    assert res.status == "infeasible"
    d = res.diagnosis
    el = d[d["method"] == "elastic"]
    assert el["limit"].tolist() == ["leach_min_t"]
    assert el["required_limit"].iloc[0] == pytest.approx(0.0, abs=1e-9)
    iis = d[d["method"] == "iis"]
    assert iis["message"].str.contains("no route reaches leach").any()


def test_flexible_mining_diagnosis_never_invents_tonnes():
    # with flexible mining "at most the parcel" is physical: the elastic model must move the
    # minimum feed, not mine more than exists (100 + 100 t exist; minimum 500 t)
    base = hand_case(
        extra_limits={"mill_min_t": np.array([500.0]), "mill_max_t": np.array([600.0])}
    )
    data = blend_data(base.graph, [1], [30.0], base.economics, mining="flexible")
    res = solve_blend(data, SIMPLEX)
    assert res.status == "infeasible"
    el = res.diagnosis[res.diagnosis["method"] == "elastic"]
    assert el["limit"].tolist() == ["mill_min_t"]
    assert el["required_limit"].iloc[0] == pytest.approx(200.0, rel=1e-9)


def test_capacity_price_holds_over_its_range():
    # hand case without clay: mill 120 t, A (80 USD/t) then B (30 USD/t). Capacity's price of
    # 30 USD/t holds from 100 t (only A) to 200 t (both parcels fed): worked by hand.
    res = solve_blend(hand_case(), SIMPLEX)
    cap = res.limits.set_index("limit").loc["mill_max_t"]
    assert cap["price_valid_from"] == pytest.approx(100.0, abs=1e-6)
    assert cap["price_valid_to"] == pytest.approx(200.0, abs=1e-6)
    below = solve_blend(hand_case(mill_max=99.0), SIMPLEX).limits.set_index("limit")
    assert below.loc["mill_max_t", "shadow_price_usd"] == pytest.approx(80.0, abs=1e-6)


def test_warm_started_scenario_matches_a_cold_solve():
    # the same plan, clay limit moved: dual simplex from the base basis must reach the cold
    # optimum, in fewer simplex iterations than a cold simplex solve (iterations, not seconds)
    base = solve_blend(small_case(4, 3, seed=6), SIMPLEX)
    changed = small_case(4, 3, seed=6, limit_overrides={"mill_clay_severity_max_idx": 5.0})
    cold = solve_blend(changed, SIMPLEX)
    warm = solve_blend(changed, SIMPLEX, warm_start=base.warm_start)
    assert warm.value_pv_usd == pytest.approx(cold.value_pv_usd, rel=1e-9)
    assert warm.simplex_iterations < cold.simplex_iterations
    assert warm.timings["warm_started"] == 1.0
    assert cold.timings["warm_started"] == 0.0
    # a model of another shape ignores the basis and still solves correctly
    other = solve_blend(small_case(3, 3, seed=6), SIMPLEX, warm_start=base.warm_start)
    ref, _x = solve_reference(reference_lp(small_case(3, 3, seed=6)))
    assert other.value_pv_usd == pytest.approx(ref, rel=1e-6)
