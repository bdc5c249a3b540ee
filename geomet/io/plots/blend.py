"""Blend plots: the route graph, mill feed by domain, the blend against its limits, scenarios.

Functions take tables (or the route graph) and return matplotlib figures (Agg backend); saving is
the caller's job (``StepContext.add_plot``).
"""

from __future__ import annotations

import textwrap

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import networkx as nx  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

__all__ = ["feed_by_domain_figure", "plant_limits_figure", "route_graph_figure", "scenarios_figure"]

# geomet's own colours for node kinds of the route graph
KIND_COLOURS = {
    "source": "#8c6a3f",
    "stockpile": "#d4892a",
    "processor": "#2f6c8f",
    "sink": "#7d7d7d",
}
_LIMIT_PANELS = (
    ("feed_t", "mill_max_t", "Feed [t]"),
    ("clay_severity_idx", "mill_clay_severity_max_idx", "Clay severity [index]"),
    ("clay_swelling_pct", "mill_swelling_clay_max_pct", "Swelling clay [%]"),
    ("sulfate_pct", "mill_sulfate_max_pct", "Sulfate [%]"),
    ("cu_pct", "mill_cu_head_max_pct", "Head grade [% Cu]"),
    ("hours_used_h", None, "Grinding hours used [h]"),
)


def route_graph_figure(graph: nx.DiGraph, *, max_domains: int = 30):
    """Draw the route graph with parcels collapsed to one node per domain.

    Parameters
    ----------
    graph : networkx.DiGraph
        Route graph from :func:`geomet.plan.graph.blend_route_graph`.
    max_domains : int
        Domains drawn individually; the rest are merged into one "other domains" node.
    """
    domains = sorted(
        {str(a.get("domain")) for _n, a in graph.nodes(data=True) if a.get("kind") == "source"}
    )
    keep = set(domains[:max_domains])

    def label(node):
        a = graph.nodes[node]
        if a.get("kind") == "source":
            d = str(a.get("domain"))
            return f"ore {d}" if d in keep else "ore: other domains"
        return node

    small = nx.DiGraph()
    for u, v in graph.edges():
        lu, lv = label(u), label(v)
        for node, orig in ((lu, u), (lv, v)):
            if node not in small:
                small.add_node(node, kind=graph.nodes[orig].get("kind"))
        small.add_edge(lu, lv)
    layers = {"source": 0, "stockpile": 1, "processor": 2, "sink": 3}
    for n, k in small.nodes(data="kind"):
        small.nodes[n]["layer"] = layers.get(k, 0)
    pos = nx.multipartite_layout(small, subset_key="layer")
    n_src = sum(1 for _n, k in small.nodes(data="kind") if k == "source")
    fig, ax = plt.subplots(figsize=(13, max(4.0, 0.45 * n_src + 2)))
    colours = [KIND_COLOURS.get(k, "#999999") for _n, k in small.nodes(data="kind")]
    nx.draw_networkx_edges(
        small, pos, ax=ax, edge_color="#b8b8b8", arrows=True, arrowsize=8, width=0.8
    )
    nx.draw_networkx_nodes(small, pos, ax=ax, node_color=colours, node_size=220)
    for node, (x, y) in pos.items():
        kind = small.nodes[node]["kind"]
        text = textwrap.fill(node.replace("stockpile:", "stockpile "), 26)
        if kind == "source":
            ax.text(x - 0.03, y, text, ha="right", va="center", fontsize=7)
        else:
            ax.text(x, y - 0.05, text, ha="center", va="top", fontsize=7)
    ax.margins(x=0.25, y=0.08)
    ax.set_axis_off()
    ax.set_title("Routes: ore parcels → stockpiles → processors → sinks")
    return fig


def feed_by_domain_figure(schedule: pd.DataFrame, processor: str = "mill"):
    """Stacked bars of a processor's feed by domain and period [t]."""
    fig, ax = plt.subplots(figsize=(10, 4.5))
    feed = schedule[(schedule["destination"] == processor) & (schedule["tonnes_t"] > 0)]
    if feed.empty:
        ax.text(0.5, 0.5, f"nothing fed to {processor}", ha="center", transform=ax.transAxes)
        return fig
    table = feed.pivot_table(
        index="period", columns="domain", values="tonnes_t", aggfunc="sum"
    ).fillna(0.0)
    bottom = np.zeros(len(table))
    cmap = plt.get_cmap("tab20")
    for i, col in enumerate(table.columns):
        ax.bar(
            table.index, table[col] / 1e3, bottom=bottom / 1e3, label=str(col), color=cmap(i % 20)
        )
        bottom += table[col].to_numpy()
    ax.set_xlabel("Period")
    ax.set_ylabel(f"{processor} feed [kt]")
    if len(table.columns) <= 20:
        ax.legend(fontsize=7, ncol=2, bbox_to_anchor=(1.01, 1), loc="upper left")
    ax.set_title(f"{processor} feed by domain")
    return fig


def plant_limits_figure(plant: pd.DataFrame, limits: pd.DataFrame):
    """Mill feed and blend averages by period, with the limit values as dashed lines."""
    mill = plant[plant["processor"] == "mill"].sort_values("period")
    fig, axes = plt.subplots(2, 3, figsize=(12, 6), sharex=True)
    for ax, (col, limit, title) in zip(axes.ravel(), _LIMIT_PANELS, strict=True):
        ax.plot(mill["period"], mill[col], marker="o", color="#2f6c8f", lw=1.2)
        if col == "hours_used_h":
            ax.plot(mill["period"], mill["hours_available_h"], ls="--", color="#b04a5a")
        elif limit is not None:
            lim = limits[(limits["limit"] == limit)].sort_values("period")
            if len(lim):
                ax.step(lim["period"], lim["limit_value"], where="mid", ls="--", color="#b04a5a")
                binding = lim[lim["binding"]]
                merged = mill.merge(binding[["period"]], on="period")
                ax.scatter(merged["period"], merged[col], color="#b04a5a", zorder=3, s=18)
        ax.set_title(title, fontsize=9)
    for ax in axes[-1]:
        ax.set_xlabel("Period")
    fig.suptitle("Mill blend against its limits (dashed); red points: limit binding")
    fig.tight_layout()
    return fig


def scenarios_figure(scenarios: pd.DataFrame):
    """Scenario comparison: present value, Cu recovered and mill clay severity side by side.

    Bars after the first are labelled with their change against the first scenario (the base).
    """
    fig, axes = plt.subplots(1, 3, figsize=(12, 4))
    names = scenarios["scenario"].astype(str).tolist()
    x = np.arange(len(names))
    panels = (
        ("value_pv_usd", 1e6, "Value [M USD, present]"),
        ("cu_recovered_t", 1e3, "Cu recovered [kt]"),
        ("mill_clay_severity_idx", 1.0, "Mill clay severity [index]"),
    )
    feasible = scenarios["status"] != "infeasible"
    for ax, (col, scale, title) in zip(axes, panels, strict=True):
        vals = pd.to_numeric(scenarios[col], errors="coerce").to_numpy(float) / scale
        colours = np.where(feasible, "#2f6c8f", "#b04a5a")
        ax.bar(x, np.nan_to_num(vals), color=colours)
        base = vals[0] if len(vals) and np.isfinite(vals[0]) and vals[0] != 0 else np.nan
        for xi, ok, v in zip(x, feasible, vals, strict=True):
            if not ok:
                ax.text(xi, 0, "infeasible", rotation=90, ha="center", va="bottom", fontsize=8)
            elif xi > 0 and np.isfinite(base):
                ax.text(
                    xi, v, f"{(v / base - 1) * 100:+.1f} %", ha="center", va="bottom", fontsize=7
                )
        ax.set_xticks(x, names, rotation=30, ha="right", fontsize=8)
        ax.set_title(title, fontsize=9)
    fig.tight_layout()
    return fig
