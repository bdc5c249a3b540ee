"""Where ore can go: the route graph of the blend model (networkx ``DiGraph``).

Nodes have a ``kind``:

- ``source``: an ore parcel (mined in its period; attributes from :mod:`geomet.plan.parcels`);
- ``stockpile``: a segregated stockpile holding one domain (capacity, rehandle cost, opening
  inventory). One stockpile per domain keeps the model linear: reclaimed ore carries the domain's
  average attributes, so no grade × tonnage product of two variables appears;
- ``processor``: the concentrator (``mill``) or the heap leach pad (``leach``), each with limits;
- ``sink``: the waste dump and the products (concentrate, cathode).

Edges are allowed movements with an optional extra cost ``cost_usd_t`` [USD/t].
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from functools import partial
from itertools import repeat

import networkx as nx
import numpy as np
import pandas as pd
from pyomo.common.gc_manager import PauseGC

from geomet.errors import InputDataError
from geomet.plan.parcels import PARCEL_ATTRIBUTES, weighted_mean

NODE_KINDS = ("source", "stockpile", "processor", "sink")
PROCESSORS = ("mill", "leach")
WASTE = "waste"
PRODUCTS = "products"


def route_graph(nodes: Sequence[Mapping], edges: Sequence[Mapping]) -> nx.DiGraph:
    """Build and validate a route graph from plain records.

    Parameters
    ----------
    nodes : sequence of mapping
        Each with ``node`` (id) and ``kind`` (one of :data:`NODE_KINDS`) plus attributes:
        sources ``tonnes_t``, ``period`` and the parcel attributes; stockpiles ``capacity_t``,
        ``opening_t``, ``rehandle_usd_t``; processors ``limits`` (dict name -> per-period values).
    edges : sequence of mapping
        Each with ``from``, ``to`` and optional ``cost_usd_t``.

    Returns
    -------
    networkx.DiGraph

    Raises
    ------
    InputDataError
        On duplicate or unknown nodes, unknown kinds, or any rule of :func:`validate_route_graph`.
    """
    problems = []
    node_items = []
    seen: set = set()
    for record in nodes:
        attrs = dict(record)
        node = attrs.pop("node")
        if node in seen:
            problems.append(f"node {node!r} is defined twice")
            continue
        seen.add(node)
        if attrs.get("kind") not in NODE_KINDS:
            problems.append(
                f"node {node!r} has kind {attrs.get('kind')!r}; expected one of {NODE_KINDS}"
            )
        node_items.append((node, attrs))
    edge_items = []
    for record in edges:
        attrs = dict(record)
        u, v = attrs.pop("from"), attrs.pop("to")
        unknown = [n for n in (u, v) if n not in seen]
        if unknown:
            problems.append(f"edge {u!r} -> {v!r} names unknown node(s) {unknown}")
            continue
        attrs.setdefault("cost_usd_t", 0.0)
        edge_items.append((u, v, attrs))
    return _assemble(node_items, edge_items, problems)


def _assemble(node_items: list, edge_items: list, problems: list[str]) -> nx.DiGraph:
    """The graph of (node, attributes) and (from, to, attributes) items, validated."""
    graph = nx.DiGraph()
    # batch insertion of the names, then the attributes: (name, dict) items would cost networkx
    # a caught TypeError and a dict copy per node
    graph.add_nodes_from(node for node, _attrs in node_items)
    nx.set_node_attributes(graph, dict(node_items))
    graph.add_edges_from(edge_items)
    if problems:
        message = "route graph is not valid: " + "; ".join(problems[:20])
        raise InputDataError(message)
    validate_route_graph(graph)
    graph.graph["validated"] = True
    return graph


def validate_route_graph(graph: nx.DiGraph) -> None:
    """Check the rules of a route graph and raise one error listing every breach.

    Rules: every source and stockpile reaches a sink; edges never enter a source or leave a
    sink; processors send only to sinks; every processor has a ``<name>_max_t`` limit; capacities,
    opening inventories, tonnages and costs are not negative; an opening inventory fits its
    capacity.
    """
    problems = []
    sinks = {n for n, k in graph.nodes(data="kind") if k == "sink"}
    if not sinks:
        problems.append("the graph has no sink (waste dump or products)")
    reaches_sink = _reaching(graph, sinks)
    for node, attrs in graph.nodes(data=True):
        kind = attrs.get("kind")
        if kind == "source":
            if graph.in_degree(node):
                problems.append(f"source {node!r} has incoming edges")
            if not attrs.get("tonnes_t", 0) >= 0:
                problems.append(
                    f"source {node!r} has tonnes_t={attrs.get('tonnes_t')}; must be >= 0"
                )
        if kind in ("source", "stockpile") and sinks and node not in reaches_sink:
            problems.append(f"{kind} {node!r} reaches no sink")
        if kind == "sink" and graph.out_degree(node):
            problems.append(f"sink {node!r} has outgoing edges")
        if kind == "processor":
            bad = [v for v in graph.successors(node) if graph.nodes[v].get("kind") != "sink"]
            if bad:
                problems.append(f"processor {node!r} sends to non-sink node(s) {bad}")
            limits = attrs.get("limits") or {}
            cap = limits.get(f"{node}_max_t")
            if cap is None or np.isnan(np.asarray(cap, float)).any():
                problems.append(
                    f"processor {node!r} has no {node}_max_t limit in every period "
                    "(a processor without a tonnage limit is unbounded)"
                )
        if kind == "stockpile":
            cap = attrs.get("capacity_t", math.inf)
            opening = attrs.get("opening_t", 0.0)
            if not cap >= 0:
                problems.append(f"stockpile {node!r} has capacity_t={cap}; must be >= 0")
            if not opening >= 0:
                problems.append(f"stockpile {node!r} has opening_t={opening}; must be >= 0")
            elif opening > cap:
                problems.append(f"stockpile {node!r} opening_t={opening} exceeds capacity_t={cap}")
            if attrs.get("rehandle_usd_t", 0.0) < 0:
                problems.append(f"stockpile {node!r} has a negative rehandle_usd_t")
    for u, v, cost in (
        (u, v, d.get("cost_usd_t")) for u, nbrs in graph.adjacency() for v, d in nbrs.items()
    ):
        if cost is not None and cost < 0:
            problems.append(f"edge {u!r} -> {v!r} has cost_usd_t={cost}; must be >= 0")
    if problems:
        message = "route graph is not valid: " + "; ".join(problems[:20])
        if len(problems) > 20:
            message += f" (and {len(problems) - 20} more)"
        raise InputDataError(message)


def _reaching(graph: nx.DiGraph, targets) -> set:
    """Nodes with a path to any of ``targets`` (reverse search over the predecessor dicts)."""
    pred = graph._pred  # plain dict of dicts: much faster than the public views on large graphs
    seen = set(targets)
    stack = list(targets)
    while stack:
        for p in pred[stack.pop()]:
            if p not in seen:
                seen.add(p)
                stack.append(p)
    return seen


def blend_route_graph(
    parcels: pd.DataFrame,
    limits: Mapping[str, np.ndarray],
    *,
    mill: bool = True,
    leach: bool = True,
    stockpiles: bool = True,
    stockpile_capacity_t: float = math.inf,
    stockpile_opening_t: Mapping[str, float] | None = None,
    rehandle_usd_t: float = 1.2,
    stockpile_cost_usd_t: float = 0.3,
    stockpile_min_cu_pct: float = 0.0,
    stockpile_groups: Mapping[str, str] | None = None,
    leach_min_oxide_ratio_frac: float = 0.5,
    mill_max_oxide_ratio_frac: float | None = None,
    waste_max_cu_pct: float | None = None,
) -> nx.DiGraph:
    """Route graph of a concentrator, a leach pad, segregated stockpiles and a waste dump.

    Parameters
    ----------
    parcels : DataFrame
        From :func:`geomet.plan.parcels.parcels_from_blocks` (``parcel_id``, ``domain``,
        ``period``, ``tonnes_t`` and attributes).
    limits : mapping
        Limit name -> per-period values (from :func:`geomet.plan.limits.period_limits`);
        each processor node receives the limits whose name starts with its own name (acid supply
        goes to the leach pad).
    mill, leach, stockpiles : bool
        Which parts of the plant exist.
    stockpile_capacity_t : float
        Capacity of each domain stockpile [t].
    stockpile_opening_t : mapping, optional
        Domain -> opening inventory [t].
    rehandle_usd_t : float
        Cost of reclaiming a tonne from a stockpile [USD/t].
    stockpile_cost_usd_t : float
        Extra haul and placement cost of a tonne sent to a stockpile rather than straight to a
        processor or the dump [USD/t] (the cost on parcel -> stockpile edges). It also stops the
        optimiser from parking ore it will never reclaim, which would otherwise cost nothing.
    stockpile_min_cu_pct : float
        Parcels below this grade [% Cu] are not stockpiled.
    stockpile_groups : mapping, optional
        Domain -> stockpile name, to share one stockpile between several domains (default: one
        stockpile per domain). A shared stockpile carries the tonnage-weighted average of all the
        parcels that may enter it; ``stockpile_opening_t`` is then keyed by stockpile name.
    leach_min_oxide_ratio_frac : float
        Routing rule: only parcels (and stockpiles) with oxide ratio at or above this go to leach.
    mill_max_oxide_ratio_frac : float, optional
        Routing rule: parcels above this oxide ratio never go to the mill (None = any may).
    waste_max_cu_pct : float, optional
        Ore rule: parcels above this grade [% Cu] may not go to waste (None = any may).

    Returns
    -------
    networkx.DiGraph
        Validated with :func:`validate_route_graph`.
    """
    with PauseGC():  # many small dicts: collections would rescan every live object
        return _blend_route_graph(
            parcels,
            limits,
            mill=mill,
            leach=leach,
            stockpiles=stockpiles,
            stockpile_capacity_t=stockpile_capacity_t,
            stockpile_opening_t=stockpile_opening_t,
            rehandle_usd_t=rehandle_usd_t,
            stockpile_cost_usd_t=stockpile_cost_usd_t,
            stockpile_min_cu_pct=stockpile_min_cu_pct,
            stockpile_groups=stockpile_groups,
            leach_min_oxide_ratio_frac=leach_min_oxide_ratio_frac,
            mill_max_oxide_ratio_frac=mill_max_oxide_ratio_frac,
            waste_max_cu_pct=waste_max_cu_pct,
        )


def _blend_route_graph(
    parcels: pd.DataFrame,
    limits: Mapping[str, np.ndarray],
    *,
    mill: bool,
    leach: bool,
    stockpiles: bool,
    stockpile_capacity_t: float,
    stockpile_opening_t: Mapping[str, float] | None,
    rehandle_usd_t: float,
    stockpile_cost_usd_t: float,
    stockpile_min_cu_pct: float,
    stockpile_groups: Mapping[str, str] | None,
    leach_min_oxide_ratio_frac: float,
    mill_max_oxide_ratio_frac: float | None,
    waste_max_cu_pct: float | None,
) -> nx.DiGraph:
    attrs = [c for c in (*PARCEL_ATTRIBUTES, "oxide_ratio_frac") if c in parcels.columns]
    opening = dict(stockpile_opening_t or {})
    ids = parcels["parcel_id"].tolist()
    # nodes and edges as (name, attributes) / (from, to, attributes) items, in the order the
    # record form lists them (the order fixes the model's columns)
    nodes: list[tuple] = [(WASTE, {"kind": "sink"}), (PRODUCTS, {"kind": "sink"})]
    free = {"cost_usd_t": 0.0}  # networkx copies edge attributes: one dict serves every edge
    edges: list[tuple] = []
    procs = [p for p, on in (("mill", mill), ("leach", leach)) if on]
    for proc in procs:
        nodes.append((proc, {"kind": "processor", "limits": _own_limits(limits, proc)}))
        edges.append((proc, PRODUCTS, free))

    def allowed(proc: str, oxide_ratio):
        if proc == "leach":
            return oxide_ratio >= leach_min_oxide_ratio_frac
        if mill_max_oxide_ratio_frac is None:
            return np.ones(np.shape(oxide_ratio), dtype=bool)
        return oxide_ratio <= mill_max_oxide_ratio_frac

    keys = ["kind", *(c for c in parcels.columns if c != "parcel_id")]
    values = [parcels[c].tolist() for c in keys[1:]]
    nodes.extend(
        zip(ids, map(dict, map(partial(zip, keys), zip(repeat("source"), *values))), strict=True)
    )
    n = len(ids)
    ox = (
        parcels["oxide_ratio_frac"].to_numpy(dtype=float)
        if "oxide_ratio_frac" in parcels.columns
        else np.zeros(n)
    )
    cu = parcels["cu_pct"].to_numpy(dtype=float)
    to_proc = [allowed(p, ox).tolist() for p in procs]
    to_waste = [True] * n if waste_max_cu_pct is None else (cu <= waste_max_cu_pct).tolist()
    for i, node in enumerate(ids):
        for proc, ok in zip(procs, to_proc, strict=True):
            if ok[i]:
                edges.append((node, proc, free))
        if to_waste[i]:
            edges.append((node, WASTE, free))

    if stockpiles:
        groups = {str(k): str(v) for k, v in (stockpile_groups or {}).items()}
        unknown = sorted(set(groups) - {str(d) for d in parcels["domain"].unique()})
        if unknown:
            message = f"stockpile_groups names domain(s) {unknown} that no parcel has"
            raise InputDataError(message)
        group = _groups_of(parcels, groups)
        by_domain: dict[str, list[int]] = {}
        for i, g in enumerate(group):
            by_domain.setdefault(g, []).append(i)
        may_stock = (cu >= stockpile_min_cu_pct).tolist()
        stock_members: dict[str, list[int]] = {}
        for i, g in enumerate(group):
            if may_stock[i]:
                stock_members.setdefault(g, []).append(i)
        unknown = sorted(set(opening) - set(by_domain))
        if unknown:
            message = (
                f"stockpile opening inventory names stockpile(s) {unknown}; stockpiles are "
                f"named by domain or stockpile group: {sorted(by_domain)[:20]}"
            )
            raise InputDataError(message)
        arrays = {
            c: parcels[c].to_numpy(dtype=float)
            for c in {*attrs, "tonnes_t", "cu_pct"} - {"oxide_ratio_frac"}
        }
        cost = {"cost_usd_t": float(stockpile_cost_usd_t)}
        for domain in sorted(set(stock_members) | set(opening)):
            members = np.asarray(stock_members.get(domain) or by_domain[domain], dtype=np.int64)
            node = f"stockpile:{domain}"
            averages = _stockpile_attributes({c: a[members] for c, a in arrays.items()}, attrs)
            outs = [p for p in procs if allowed(p, averages.get("oxide_ratio_frac", 0.0))]
            if not outs:
                continue  # a stockpile no processor may reclaim from would only hold ore
            nodes.append(
                (
                    node,
                    {
                        "kind": "stockpile",
                        "domain": domain,
                        "capacity_t": float(stockpile_capacity_t),
                        "opening_t": float(opening.get(domain, 0.0)),
                        "rehandle_usd_t": float(rehandle_usd_t),
                        **averages,
                    },
                )
            )
            edges.extend((node, p, free) for p in outs)
            edges.extend((ids[i], node, cost) for i in stock_members.get(domain, []))
    seen: set = set()
    problems = []
    for node, _attrs in nodes:
        if node in seen:
            problems.append(f"node {node!r} is defined twice")
        seen.add(node)
    return _assemble(nodes, edges, problems)


def _own_limits(limits: Mapping[str, np.ndarray], proc: str) -> dict[str, np.ndarray]:
    """The limits of one processor (acid supply goes to the leach pad)."""
    own = {k: np.array(v, float) for k, v in limits.items() if k.startswith(proc + "_")}
    if proc == "leach" and "acid_supply_t" in limits:
        own["acid_supply_t"] = np.array(limits["acid_supply_t"], float)
    return own


def _groups_of(parcels: pd.DataFrame, groups: Mapping[str, str]) -> list[str]:
    """Stockpile of each parcel: its domain (or the domain's group), split by ore type.

    Oxide and sulfide ore of one domain go to separate stockpiles when parcels carry an ore
    type, so a stockpile never averages leach feed into mill feed.
    """
    domains = [str(d) for d in parcels["domain"].tolist()]
    names = [groups.get(d, d) for d in domains]
    if "ore_type" not in parcels.columns:
        return names
    return [
        f"{name} / {ore}" if isinstance(ore, str) and ore else name
        for name, ore in zip(names, parcels["ore_type"].tolist(), strict=True)
    ]


def _stockpile_attributes(columns: Mapping[str, np.ndarray], attrs: Sequence[str]) -> dict:
    """Tonnage-weighted attributes of a domain stockpile (recoveries weighted by metal).

    ``columns`` holds each attribute over the stockpile's member parcels, in parcel order.
    """
    tonnes = columns["tonnes_t"]
    weights = {"tonnes": tonnes, "cu": tonnes * columns["cu_pct"]}
    if "au_gpt" in attrs:
        weights["au"] = tonnes * columns["au_gpt"]
    out = {}
    for col in attrs:
        if col == "oxide_ratio_frac":
            continue
        w = weights.get(PARCEL_ATTRIBUTES.get(col, "tonnes"), tonnes)
        out[col] = weighted_mean(columns[col], w if w.sum() > 0 else tonnes)
    if "cu_asol_pct" in out:
        out["oxide_ratio_frac"] = out["cu_asol_pct"] / out["cu_pct"] if out["cu_pct"] > 0 else 0.0
    return out
