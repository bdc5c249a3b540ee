"""Route graph: building from records, validation messages, routing rules, drawing."""

from __future__ import annotations

import math

import matplotlib
import numpy as np
import pytest

from geomet.errors import InputDataError
from geomet.plan import blend_route_graph, period_limits, route_graph
from geomet.plan.synthetic import synthetic_parcels, synthetic_plant_limits

matplotlib.use("Agg")


def _nodes(**changes):
    nodes = {
        "A": {
            "node": "A",
            "kind": "source",
            "period": 1,
            "domain": "d",
            "tonnes_t": 10.0,
            "cu_pct": 1.0,
        },
        "S": {
            "node": "S",
            "kind": "stockpile",
            "domain": "d",
            "capacity_t": 100.0,
            "opening_t": 0.0,
            "rehandle_usd_t": 1.0,
        },
        "mill": {"node": "mill", "kind": "processor", "limits": {"mill_max_t": np.array([5.0])}},
        "waste": {"node": "waste", "kind": "sink"},
        "products": {"node": "products", "kind": "sink"},
    }
    for key, value in changes.items():
        if value is None:
            nodes.pop(key)
        else:
            nodes[key] = {**nodes.get(key, {}), **value}
    return list(nodes.values())


EDGES = [("A", "mill"), ("A", "waste"), ("A", "S"), ("S", "mill"), ("mill", "products")]


def _edges(extra=(), drop=()):
    return [{"from": u, "to": v} for u, v in [*EDGES, *extra] if (u, v) not in drop]


def test_valid_graph_builds():
    g = route_graph(_nodes(), _edges())
    assert g.number_of_nodes() == 5
    assert g.edges["A", "mill"]["cost_usd_t"] == 0.0


@pytest.mark.parametrize(
    ("nodes", "edges", "match"),
    [
        (
            _nodes() + [{"node": "A", "kind": "source", "period": 1, "tonnes_t": 1.0}],
            _edges(),
            "node 'A' is defined twice",
        ),
        (_nodes(X={"node": "X", "kind": "crusher"}), _edges(), "node 'X' has kind 'crusher'"),
        (
            _nodes(),
            _edges(extra=[("A", "sag")]),
            "edge 'A' -> 'sag' names unknown node\\(s\\) \\['sag'\\]",
        ),
        (
            _nodes(B={"node": "B", "kind": "source", "period": 1, "tonnes_t": 1.0}),
            _edges(extra=[("B", "A")]),
            "source 'A' has incoming edges",
        ),
        (
            _nodes(B={"node": "B", "kind": "source", "period": 1, "tonnes_t": 1.0}),
            _edges(),
            "source 'B' reaches no sink",
        ),
        (_nodes(), _edges(extra=[("waste", "mill")]), "sink 'waste' has outgoing edges"),
        (
            _nodes(),
            _edges(extra=[("mill", "S")]),
            "processor 'mill' sends to non-sink node\\(s\\) \\['S'\\]",
        ),
        (_nodes(mill={"limits": {}}), _edges(), "processor 'mill' has no mill_max_t limit"),
        (
            _nodes(mill={"limits": {"mill_max_t": np.array([np.nan])}}),
            _edges(),
            "processor 'mill' has no mill_max_t limit in every period",
        ),
        (
            _nodes(S={"capacity_t": -1.0}),
            _edges(),
            "stockpile 'S' has capacity_t=-1.0; must be >= 0",
        ),
        (
            _nodes(S={"opening_t": 200.0}),
            _edges(),
            "stockpile 'S' opening_t=200.0 exceeds capacity_t=100.0",
        ),
        (_nodes(S={"opening_t": -5.0}), _edges(), "stockpile 'S' has opening_t=-5.0; must be >= 0"),
        (
            _nodes(S={"rehandle_usd_t": -1.0}),
            _edges(),
            "stockpile 'S' has a negative rehandle_usd_t",
        ),
        (_nodes(A={"tonnes_t": -3.0}), _edges(), "source 'A' has tonnes_t=-3.0; must be >= 0"),
        (
            _nodes(waste=None, products=None),
            _edges(drop=[("A", "waste"), ("mill", "products")]),
            "the graph has no sink",
        ),
        (
            _nodes(S=None),
            _edges(drop=[("A", "S"), ("S", "mill")])
            + [{"from": "A", "to": "mill", "cost_usd_t": -2.0}],
            "edge 'A' -> 'mill' has cost_usd_t=-2.0; must be >= 0",
        ),
    ],
)
def test_validation_messages(nodes, edges, match):
    with pytest.raises(InputDataError, match=match):
        route_graph(nodes, edges)


def test_stockpile_reaching_no_sink():
    with pytest.raises(InputDataError, match="stockpile 'S' reaches no sink"):
        route_graph(_nodes(), _edges(drop=[("S", "mill")]))


def _case(**kwargs):
    parcels = synthetic_parcels(6, 2, seed=11)
    _days, limits = period_limits(synthetic_plant_limits(2, parcels), [1, 2])
    return parcels, blend_route_graph(parcels, limits, **kwargs)


def test_routing_rules():
    parcels, g = _case(
        leach_min_oxide_ratio_frac=0.5, waste_max_cu_pct=0.4, stockpile_min_cu_pct=0.3
    )
    for rec in parcels.itertuples():
        succ = set(g.successors(rec.parcel_id))
        assert ("leach" in succ) == (rec.oxide_ratio_frac >= 0.5)
        assert ("waste" in succ) == (rec.cu_pct <= 0.4)
        assert (f"stockpile:{rec.domain}" in succ) <= (rec.cu_pct >= 0.3)
    # a stockpile reclaims only to processors its average oxide ratio allows
    for node, a in g.nodes(data=True):
        if a["kind"] == "stockpile":
            assert ("leach" in set(g.successors(node))) == (a["oxide_ratio_frac"] >= 0.5)


def test_stockpile_takes_tonnage_weighted_domain_average():
    parcels, g = _case(stockpile_min_cu_pct=0.0)
    d = parcels[parcels["domain"] == "D000"]
    node = g.nodes["stockpile:D000"]
    assert node["cu_pct"] == pytest.approx(
        np.average(d["cu_pct"], weights=d["tonnes_t"]), rel=1e-12
    )
    w = d["tonnes_t"] * d["cu_pct"]
    assert node["cu_recovery_frac"] == pytest.approx(
        np.average(d["cu_recovery_frac"], weights=w), rel=1e-12
    )
    assert node["capacity_t"] == math.inf


def test_no_stockpiles_no_leach():
    _parcels, g = _case(stockpiles=False, leach=False)
    kinds = {k for _n, k in g.nodes(data="kind")}
    assert "stockpile" not in kinds
    assert "leach" not in g


def test_route_graph_figure_draws():
    from geomet.io.plots.blend import route_graph_figure

    _parcels, g = _case()
    fig = route_graph_figure(g, max_domains=3)
    labels = {t.get_text() for t in fig.axes[0].texts}
    assert "ore: other domains" in {t.replace("\n", " ") for t in labels}
    assert "mill" in labels


def test_shared_stockpile_for_a_group_of_domains():
    parcels, g = _case(stockpile_groups={"D000": "low grade", "D001": "low grade"})
    assert "stockpile:low grade" in g
    assert "stockpile:D000" not in g
    members = parcels[parcels["domain"].isin(["D000", "D001"])]
    node = g.nodes["stockpile:low grade"]
    expected = np.average(members["cu_pct"], weights=members["tonnes_t"])
    assert node["cu_pct"] == pytest.approx(expected, rel=1e-12)
    assert set(g.predecessors("stockpile:low grade")) == set(members["parcel_id"])


def test_stockpile_group_and_opening_errors():
    with pytest.raises(InputDataError, match="stockpile_groups names domain\\(s\\) \\['D999'\\]"):
        _case(stockpile_groups={"D999": "x"})
    with pytest.raises(
        InputDataError, match="opening inventory names stockpile\\(s\\) \\['nowhere'\\]"
    ):
        _case(stockpile_opening_t={"nowhere": 5.0})
