"""Blend model structure, data checks, limits, economics and parcels (no solver needed)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_plan_helpers import small_case

from geomet.errors import InputDataError
from geomet.plan import (
    Economics,
    MilpSpec,
    blend_data,
    build_blend_model,
    compile_blend_model,
    discount_factors,
    leach_value_usd_t,
    mill_energy_available_kwh,
    parcels_from_blocks,
    period_limits,
    route_graph,
    weighted_mean,
)
from geomet.plan.economics import LB_PER_T
from geomet.plan.synthetic import synthetic_parcels, synthetic_plant_limits


# --- economics and limits ----------------------------------------------------------------------
def test_discount_factors_hand_values():
    # (1 + 0.1)^-1 = 0.909091, (1.1)^-2 = 0.826446 (hand calculation)
    np.testing.assert_allclose(
        discount_factors([365.25, 365.25], 0.1), [1 / 1.1, 1 / 1.21], rtol=1e-12
    )
    np.testing.assert_allclose(discount_factors(np.array([10.0]), 0.0), [1.0])


def test_pounds_per_tonne():
    # 1 lb = 0.45359237 kg exactly (international yard and pound agreement, 1959)
    assert LB_PER_T == pytest.approx(2204.62262185, rel=1e-11)


def test_leach_value_hand_figure():
    # 0.4 % soluble Cu at 75 % recovery, 9000 USD/t: 0.004*0.75*9000 = 27; acid 20 kg/t at
    # 150 USD/t = 3; leach 4 USD/t -> 20 USD/t (hand calculation)
    assert float(leach_value_usd_t(0.4, 20.0, Economics())) == pytest.approx(20.0, rel=1e-12)
    out = leach_value_usd_t(np.array([0.4, 0.0]), np.array([20.0, 0.0]), Economics())
    np.testing.assert_allclose(out, [20.0, -4.0])


def test_mill_energy_hand_figure():
    # 10 MW for 30 days at 90 % availability = 10 000 * 720 * 0.9 kWh (hand calculation)
    assert mill_energy_available_kwh(30.0, 10_000.0, 0.9) == pytest.approx(6.48e6)
    np.testing.assert_allclose(
        mill_energy_available_kwh(np.array([1.0, 2.0]), 100.0, 1.0), [2400, 4800]
    )


def _plant(n=2):
    return synthetic_plant_limits(n)


def test_period_limits_reads_and_overrides():
    plant = _plant(3)
    days, lim = period_limits(
        plant, [1, 2, 3], {"mill_clay_severity_max_idx": 9.0, "mill_max_t": None}
    )
    np.testing.assert_allclose(days, 91.0)
    np.testing.assert_allclose(lim["mill_clay_severity_max_idx"], 9.0)
    np.testing.assert_allclose(lim["mill_max_t"], plant["mill_max_t"])
    assert np.isnan(lim["mill_min_t"]).all()
    np.testing.assert_allclose(lim["mill_energy_kwh"], plant["mill_power_kw"] * 91 * 24 * 0.92)


@pytest.mark.parametrize(
    ("change", "match"),
    [
        (lambda p: p.drop(columns="period"), "plant_limits has no 'period' column"),
        (
            lambda p: pd.concat([p, p.iloc[:1]]),
            "plant_limits.period must be unique; repeated: \\[1\\]",
        ),
        (
            lambda p: p[p["period"] != 2],
            "plant_limits has no row for schedule period\\(s\\) \\[2\\]",
        ),
        (
            lambda p: p.assign(days=[91.0, 0.0]),
            "days must be > 0 for every period; got bad values in \\[2\\]",
        ),
        (lambda p: p.assign(leach_max_t=[-1.0, 5.0]), "plant limit leach_max_t must be >= 0"),
    ],
)
def test_period_limits_errors(change, match):
    with pytest.raises(InputDataError, match=match):
        period_limits(change(_plant(2)), [1, 2])


def test_period_limits_unknown_override():
    with pytest.raises(InputDataError, match="unknown plant limit\\(s\\) \\['mill_clay_max'\\]"):
        period_limits(_plant(2), [1, 2], {"mill_clay_max": 3.0})


# --- parcels ------------------------------------------------------------------------------------
def _blocks(seed=0, n=60):
    rng = np.random.default_rng(seed)
    return pd.DataFrame(
        {
            "block_id": np.arange(n),
            "period": rng.integers(1, 4, n).astype(float),
            "phase": rng.choice(["N", "S"], n),
            "domain": rng.choice(["oxide", "hypogene", "clay cap"], n),
            "tonnes_t": rng.uniform(1e3, 5e3, n),
            "cu_pct": rng.uniform(0.1, 1.0, n),
            "au_gpt": rng.uniform(0.0, 0.8, n),
            "cu_asol_pct": rng.uniform(0.0, 0.1, n),
            "clay_severity_idx": rng.uniform(0, 12, n),
            "cu_recovery_frac": rng.uniform(0.5, 0.95, n),
            "au_recovery_frac": rng.uniform(0.4, 0.8, n),
            "mill_energy_kwh_t": rng.uniform(10, 20, n),
        }
    )


def test_parcels_match_pandas_weighted_means():
    blocks = _blocks()
    blocks.loc[0, "period"] = np.nan  # unscheduled: left out
    parcels = parcels_from_blocks(blocks)
    sched = blocks[blocks["period"].notna()]
    ref = sched.assign(
        w_cu=sched.tonnes_t * sched.cu_pct,
        tcl=sched.tonnes_t * sched.clay_severity_idx,
        tcr=sched.tonnes_t * sched.cu_pct * sched.cu_recovery_frac,
    )
    g = ref.groupby(["period", "phase", "domain"]).sum(numeric_only=True)
    p = parcels.set_index(["period", "phase", "domain"])
    p.index = p.index.set_levels(p.index.levels[0].astype(float), level=0)
    np.testing.assert_allclose(p["tonnes_t"], g["tonnes_t"].loc[p.index])
    np.testing.assert_allclose(p["clay_severity_idx"], (g["tcl"] / g["tonnes_t"]).loc[p.index])
    np.testing.assert_allclose(p["cu_recovery_frac"], (g["tcr"] / g["w_cu"]).loc[p.index])
    assert parcels["blocks_n"].sum() == len(sched)
    assert parcels["parcel_id"].str.match(r"P0\d\|[NS]\|").all()


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 10_000), n=st.integers(1, 80))
def test_parcels_conserve_tonnes_and_recovered_metal(seed, n):
    blocks = _blocks(seed, n)
    parcels = parcels_from_blocks(blocks)
    assert parcels["tonnes_t"].sum() == pytest.approx(blocks["tonnes_t"].sum(), rel=1e-12)
    cu = (blocks.tonnes_t * blocks.cu_pct).sum()
    assert (parcels.tonnes_t * parcels.cu_pct).sum() == pytest.approx(cu, rel=1e-12)
    rec = (blocks.tonnes_t * blocks.cu_pct * blocks.cu_recovery_frac).sum()
    assert (parcels.tonnes_t * parcels.cu_pct * parcels.cu_recovery_frac).sum() == pytest.approx(
        rec, rel=1e-12
    )
    au = (blocks.tonnes_t * blocks.au_gpt * blocks.au_recovery_frac).sum()
    assert (parcels.tonnes_t * parcels.au_gpt * parcels.au_recovery_frac).sum() == pytest.approx(
        au, rel=1e-10
    )
    assert parcels["oxide_ratio_frac"].between(0, 1).all()


def test_weighted_mean_ignores_missing():
    assert weighted_mean(np.array([1.0, np.nan, 3.0]), np.array([1.0, 5.0, 1.0])) == 2.0
    assert math.isnan(weighted_mean(np.array([np.nan]), np.array([1.0])))


def test_parcel_errors():
    blocks = _blocks()
    with pytest.raises(InputDataError, match="missing column\\(s\\) \\['cu_pct'\\]"):
        parcels_from_blocks(blocks.drop(columns="cu_pct"))
    with pytest.raises(InputDataError, match="missing attribute column\\(s\\) \\['acid_kg_t'\\]"):
        parcels_from_blocks(blocks, attributes=["acid_kg_t"])
    with pytest.raises(InputDataError, match="no scheduled blocks"):
        parcels_from_blocks(blocks.assign(period=np.nan))
    bad = blocks.copy()
    bad["clay_severity_idx"] = np.where(bad["domain"] == "oxide", np.nan, bad["clay_severity_idx"])
    with pytest.raises(
        InputDataError, match="every block is missing \\['clay_severity_idx'\\] in parcel"
    ):
        parcels_from_blocks(bad)


# --- data object and model structure -----------------------------------------------------------
def _graph_expected_counts(data):
    """Variables and rows counted from the graph itself (independently of data.flows)."""
    g = data.graph
    T = len(data.periods)
    kinds = dict(g.nodes(data="kind"))
    flows = sum(1 if kinds[u] == "source" else T for u, v in g.edges() if kinds[u] != "processor")
    stock = [n for n, k in kinds.items() if k == "stockpile"]
    sources = [n for n, k in kinds.items() if k == "source"]
    limit_rows = 0
    for p in ("mill", "leach"):
        if p not in g:
            continue
        # a period with no route into the processor has no rows (nothing to limit)
        fed = np.array(
            [
                any(
                    kinds[u] == "stockpile" or g.nodes[u]["period"] == period
                    for u in g.predecessors(p)
                )
                for period in data.periods
            ]
        )
        for name, values in g.nodes[p]["limits"].items():
            if name.endswith("_h"):
                continue
            limit_rows += int((np.isfinite(values) & fed).sum())
    return flows + len(stock) * T, len(sources) + 2 * len(stock) * T + limit_rows


def test_model_counts_against_graph():
    data = small_case(4, 3, seed=1)
    counts = build_blend_model(data).counts()
    n_var, n_con = _graph_expected_counts(data)
    assert counts == {"variables": n_var, "constraints": n_con, "binaries": 0}


def test_milp_counts():
    data = small_case(
        3,
        2,
        seed=4,
        stockpiles=False,
        leach=False,
        milp=MilpSpec(min_feed_t=1e5, max_domains_per_period=2),
    )
    counts = build_blend_model(data).counts()
    n_var, n_con = _graph_expected_counts(data)
    mill_domains = {data.graph.nodes[u]["domain"] for u in data.graph.predecessors("mill")}
    n_bin = len(mill_domains) * 2
    # binaries; two rows per binary (on/off and minimum) and one K row per period
    assert counts == {
        "variables": n_var + n_bin,
        "constraints": n_con + 2 * n_bin + 2,
        "binaries": n_bin,
    }


def test_elastic_model_adds_one_slack_per_soft_row():
    data = small_case(3, 2, seed=2)
    plain = build_blend_model(data).counts()
    elastic = build_blend_model(data, elastic=True)
    soft = sum(len(v) for v in elastic.rows.values())
    assert elastic.counts()["variables"] == plain["variables"] + soft
    assert elastic.counts()["constraints"] == plain["constraints"]


def test_building_and_compiling_never_call_the_solver(monkeypatch):
    import highspy

    def refuse(*_a, **_k):
        raise AssertionError("solver called while building")

    monkeypatch.setattr(highspy, "Highs", refuse)
    data = small_case(3, 3, seed=0)
    cm = compile_blend_model(build_blend_model(data))
    assert cm.A.shape[0] == len(cm.row_lower) == len(cm.row_family)
    assert cm.A.shape[1] == len(cm.cost)
    assert cm.n_integer == 0


def _tiny_graph():
    nodes = [
        {
            "node": "A",
            "kind": "source",
            "period": 2,
            "domain": "d",
            "tonnes_t": 10.0,
            "cu_pct": 1.0,
        },
        {"node": "mill", "kind": "processor", "limits": {"mill_max_t": np.array([5.0])}},
        {"node": "waste", "kind": "sink"},
        {"node": "products", "kind": "sink"},
    ]
    edges = [
        {"from": "A", "to": "mill"},
        {"from": "A", "to": "waste"},
        {"from": "mill", "to": "products"},
    ]
    return route_graph(nodes, edges)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"periods": [2], "days": [30.0], "mining": "later"}, "mining must be one of"),
        ({"periods": [2, 1], "days": [30.0, 30.0]}, "periods must be increasing and unique"),
        ({"periods": [2], "days": [30.0, 30.0]}, "days must have one value per period \\(1\\)"),
        (
            {"periods": [1], "days": [30.0]},
            "source parcel\\(s\\) mined outside the schedule periods \\[1\\]",
        ),
        (
            {"periods": [2], "days": [30.0], "milp": MilpSpec(min_feed_t=1.0, processor="sag")},
            "MILP rules name processor 'sag'",
        ),
    ],
)
def test_blend_data_errors(kwargs, match):
    with pytest.raises(InputDataError, match=match):
        blend_data(_tiny_graph(), **kwargs)


def test_synthetic_case_is_seeded():
    a = synthetic_parcels(3, 2, seed=7)
    b = synthetic_parcels(3, 2, seed=7)
    pd.testing.assert_frame_equal(a, b)


def test_blocks_without_domain_are_grouped_not_lost():
    blocks = _blocks()
    blocks["domain"] = blocks["domain"].astype(object)
    blocks.loc[:4, "domain"] = None
    parcels = parcels_from_blocks(blocks)
    assert parcels["tonnes_t"].sum() == pytest.approx(blocks["tonnes_t"].sum(), rel=1e-12)
    assert "none" in set(parcels["domain"])
