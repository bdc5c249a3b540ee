"""The validated data object the blend model is built from (plain lists and numpy arrays)."""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field

import networkx as nx
import numpy as np
from pyomo.common.gc_manager import PauseGC

from geomet.errors import InputDataError
from geomet.plan.economics import Economics, discount_factors, leach_value_usd_t, mill_value_usd_t
from geomet.plan.graph import validate_route_graph

MINING_MODES = ("fixed", "flexible")


@dataclass(frozen=True)
class MilpSpec:
    """Mixed-integer options of the blend.

    Attributes
    ----------
    min_feed_t : float or None
        Once a domain is fed to ``processor`` in a period, at least this many tonnes [t].
    max_domains_per_period : int or None
        At most this many domains fed to ``processor`` in one period.
    processor : str
        The processor the rules apply to.
    """

    min_feed_t: float | None = None
    max_domains_per_period: int | None = None
    processor: str = "mill"

    @property
    def active(self) -> bool:
        return bool(self.min_feed_t) or self.max_domains_per_period is not None


@dataclass
class BlendData:
    """Everything the model builder needs, checked once.

    Build with :func:`blend_data`. ``flows`` lists the tonnage variables as (from node, to node,
    period index); ``inventories`` the stockpile inventories as (stockpile, period index).
    """

    graph: nx.DiGraph
    periods: list[int]
    days: np.ndarray
    economics: Economics
    mining: str
    milp: MilpSpec
    discount: np.ndarray
    flows: list[tuple[str, str, int]]
    flow_value_usd_t: np.ndarray  # undiscounted net value per tonne on each flow
    inventories: list[tuple[str, int]]
    in_flows: dict[tuple[str, int], list[int]] = field(default_factory=dict)
    out_flows: dict[tuple[str, int], list[int]] = field(default_factory=dict)
    out_flows_all: dict[str, list[int]] = field(default_factory=dict)  # per source, all periods
    inventory_index: dict[tuple[str, int], int] = field(default_factory=dict)
    node_data: dict[str, dict] = field(default_factory=dict)  # plain node -> attributes
    _flow_attr: dict[str, np.ndarray] = field(default_factory=dict, repr=False)

    def nodes_of(self, kind: str) -> list[str]:
        """Nodes of one kind, in graph order."""
        return [n for n, a in self.node_data.items() if a.get("kind") == kind]

    def attr(self, node: str, name: str) -> float:
        """Attribute of a source or stockpile node (0 when absent)."""
        return float(self.node_data[node].get(name, 0.0))

    def flow_attr(self, name: str) -> np.ndarray:
        """Attribute of each flow's origin node, as an array over flows (0 when absent)."""
        if name not in self._flow_attr:
            if "__origin__" not in self._flow_attr:
                pos = {n: i for i, n in enumerate(self.node_data)}
                self._flow_attr["__origin__"] = np.fromiter(
                    (pos[u] for u, _v, _t in self.flows), dtype=np.int64, count=len(self.flows)
                )
            per_node = np.fromiter(
                (a.get(name, 0.0) for a in self.node_data.values()),
                dtype=float,
                count=len(self.node_data),
            )
            self._flow_attr[name] = per_node[self._flow_attr["__origin__"]]
        return self._flow_attr[name]

    def limit(self, processor: str, name: str) -> np.ndarray | None:
        """Per-period values of a processor's limit (None when the processor has none)."""
        if processor not in self.graph:
            return None
        values = (self.node_data[processor].get("limits") or {}).get(name)
        return None if values is None else np.asarray(values, float)

    def domain_of(self, node: str) -> str:
        """Domain of a source or stockpile node ('' when it has none)."""
        return str(self.node_data[node].get("domain", ""))


def blend_data(
    graph: nx.DiGraph,
    periods,
    days,
    economics: Economics | None = None,
    *,
    mining: str = "fixed",
    milp: MilpSpec | None = None,
) -> BlendData:
    """Check the route graph and periods and index the model's variables.

    Parameters
    ----------
    graph : networkx.DiGraph
        Route graph (see :mod:`geomet.plan.graph`).
    periods : sequence of int
        Schedule periods in order.
    days : array of float
        Length of each period [d] (discounting).
    economics : Economics, optional
        Prices and costs (defaults stated in :class:`~geomet.plan.economics.Economics`).
    mining : {"fixed", "flexible"}
        ``fixed``: every parcel is mined in its scheduled period. ``flexible``: a parcel may be
        mined in its period or later, and need not be mined at all, so that mined tonnes by any
        period never exceed what the plan exposed by then.
    milp : MilpSpec, optional
        Minimum-feed and at-most-K-domains rules (binary variables).

    Returns
    -------
    BlendData
    """
    with PauseGC():  # indexing makes many small tuples; collections would rescan every object
        return _index(graph, periods, days, economics, mining, milp)


def _index(graph, periods, days, economics, mining, milp) -> BlendData:
    economics = economics or Economics()
    milp = milp or MilpSpec()
    if mining not in MINING_MODES:
        message = f"mining must be one of {MINING_MODES}; got {mining!r}"
        raise InputDataError(message)
    if not graph.graph.get("validated"):
        validate_route_graph(graph)
    periods = [int(p) for p in periods]
    if len(set(periods)) != len(periods) or periods != sorted(periods):
        message = f"periods must be increasing and unique; got {periods}"
        raise InputDataError(message)
    days = np.asarray(days, float)
    if days.shape != (len(periods),):
        message = f"days must have one value per period ({len(periods)}); got shape {days.shape}"
        raise InputDataError(message)
    if milp.active and milp.processor not in graph:
        message = f"MILP rules name processor {milp.processor!r}, which is not in the route graph"
        raise InputDataError(message)
    position = {p: i for i, p in enumerate(periods)}
    n_t = len(periods)
    node_data = dict(graph.nodes(data=True))
    kinds = {n: a.get("kind") for n, a in node_data.items()}

    bad = [
        (n, a.get("period"))
        for n, a in graph.nodes(data=True)
        if a.get("kind") == "source" and a.get("period") not in position
    ]
    if bad:
        message = f"source parcel(s) mined outside the schedule periods {periods}: {bad[:10]}"
        raise InputDataError(message)

    e = economics
    # net value per tonne at each processor, for every node that can feed one (vectorised)
    feeders = [n for n, k in kinds.items() if k in ("source", "stockpile")]

    def column(name):
        return np.fromiter(
            (node_data[n].get(name, 0.0) for n in feeders), dtype=float, count=len(feeders)
        )

    proc_value = {
        "mill": dict(
            zip(
                feeders,
                mill_value_usd_t(
                    column("cu_pct"),
                    column("au_gpt"),
                    column("cu_recovery_frac"),
                    column("au_recovery_frac"),
                    e,
                ).tolist(),
                strict=True,
            )
        ),
        "leach": dict(
            zip(
                feeders,
                leach_value_usd_t(column("cu_asol_pct"), column("acid_kg_t"), e).tolist(),
                strict=True,
            )
        ),
    }
    flows: list[tuple[str, str, int]] = []
    values: list[float] = []
    in_flows: dict[tuple[str, int], list[int]] = defaultdict(list)
    out_flows: dict[tuple[str, int], list[int]] = defaultdict(list)
    out_all: dict[str, list[int]] = {}
    fixed = mining == "fixed"
    every_period = list(range(n_t))
    for u, nbrs in graph.adjacency():
        kind = kinds[u]
        if kind != "source" and kind != "stockpile":
            continue  # processor -> product edges carry no decision
        node = node_data[u]
        if kind == "source":
            first = position[node["period"]]
            ts = [first] if fixed else list(range(first, n_t))
            own = out_all[u] = []
            handling = e.mining_cost_usd_t
        else:
            ts = every_period
            own = None
            handling = node.get("rehandle_usd_t", 0.0)
        outs = [out_flows[(u, t)] for t in ts]  # this node's lists, fetched once
        for v, d in nbrs.items():
            value = -(d.get("cost_usd_t") or 0.0)
            value -= handling
            if v in proc_value:
                value += proc_value[v][u]
            for t, out in zip(ts, outs, strict=True):
                i = len(flows)
                flows.append((u, v, t))
                values.append(value)
                in_flows[(v, t)].append(i)
                out.append(i)
                if own is not None:
                    own.append(i)
    out_all = {u: idx for u, idx in out_all.items() if idx}
    out_flows = {k: idx for k, idx in out_flows.items() if idx}
    stockpiles = [n for n, k in kinds.items() if k == "stockpile"]
    inventories = [(s, t) for s in stockpiles for t in range(n_t)]
    return BlendData(
        graph=graph,
        periods=periods,
        days=days,
        economics=e,
        mining=mining,
        milp=milp,
        discount=discount_factors(days, e.discount_rate_frac),
        flows=flows,
        flow_value_usd_t=np.asarray(values, float),
        inventories=inventories,
        in_flows=dict(in_flows),
        out_flows=dict(out_flows),
        out_flows_all=dict(out_all),
        inventory_index={k: i for i, k in enumerate(inventories)},
        node_data=node_data,
    )
