"""Domain plots: downhole strip logs, principal-component scatter and the selection curve.

Functions take tables / arrays and return matplotlib figures (Agg backend); saving is the
caller's job (``StepContext.add_plot``).
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402
from matplotlib.ticker import MaxNLocator  # noqa: E402

from geomet.domains.smoothing import downhole_runs  # noqa: E402

__all__ = [
    "DOMAIN_COLOURS",
    "UNCLASSIFIED_COLOUR",
    "domain_colours",
    "representative_holes",
    "strip_log_figure",
    "pca_scatter_figure",
    "selection_curve_figure",
]

# geomet's own domain palette: earthy, distinguishable hues chosen for this project.
DOMAIN_COLOURS = (
    "#2f6c8f",  # slate blue
    "#d4892a",  # ochre
    "#5c9a4a",  # moss
    "#b04a5a",  # brick rose
    "#7a5ea8",  # heather
    "#8c6a3f",  # umber
    "#3fa3a0",  # teal
    "#c96fa3",  # orchid
    "#9a9a3c",  # olive
    "#1f3b57",  # deep navy
    "#e2b94e",  # straw
    "#6f7f8c",  # steel
)
UNCLASSIFIED_COLOUR = "#d9d9d9"
_GROUP_COLOURS = {
    "clay_swelling_pct": "#b04a5a",
    "clay_kaolin_pct": "#e2b94e",
    "white_mica_illite_pct": "#7a5ea8",
    "femg_silicate_pct": "#5c9a4a",
    "sulfate_pct": "#3fa3a0",
    "carbonate_pct": "#8c6a3f",
    "iron_oxide_pct": "#d4892a",
    "advanced_argillic_pct": "#c96fa3",
}
KEY_GROUPS = ("clay_swelling_pct", "clay_kaolin_pct", "white_mica_illite_pct",
              "femg_silicate_pct", "sulfate_pct")


def domain_colours(domain_ids: Sequence[int]) -> dict:
    """Colour of every domain id (ids <= 0, unclassified, are light grey)."""
    out = {}
    for d in sorted(set(int(x) for x in domain_ids)):
        out[d] = UNCLASSIFIED_COLOUR if d <= 0 else DOMAIN_COLOURS[(d - 1) % len(DOMAIN_COLOURS)]
    return out


def representative_holes(df: pd.DataFrame, n: int = 4) -> list:
    """Pick up to ``n`` holes that together show the most domains (greedy), longest first
    on ties, so a handful of strip logs shows most of the domains."""
    if df.empty:
        return []
    per_hole = df.groupby("hole_id", sort=True).agg(
        metres=("length_m", "sum"), domains=("domain_id", lambda s: frozenset(s))
    )
    chosen, seen = [], set()
    remaining = per_hole.copy()
    while len(chosen) < n and not remaining.empty:
        gain = remaining["domains"].map(lambda s, seen=frozenset(seen): len(s - seen))
        best = (
            pd.DataFrame({"gain": gain, "metres": remaining["metres"]})
            .sort_values(["gain", "metres"], ascending=[False, False], kind="stable")
            .index[0]
        )
        chosen.append(best)
        seen |= set(remaining.loc[best, "domains"])
        remaining = remaining.drop(index=best)
    return chosen


def _legend(ax_or_fig, names: Mapping[int, str], colours: Mapping[int, str], **kw):
    handles = [Patch(facecolor=colours[d], edgecolor="none", label=f"{d}: {names.get(d, d)}")
               for d in sorted(colours)]
    return ax_or_fig.legend(handles=handles, fontsize=7, frameon=False, **kw)


def strip_log_figure(
    df: pd.DataFrame,
    holes: Sequence,
    *,
    groups: Sequence[str] = KEY_GROUPS,
    grade: str = "cu_pct",
    names: Mapping[int, str] | None = None,
):
    """Downhole strip logs of a few holes: domain bar, key mineral groups and Cu.

    Parameters
    ----------
    df : pandas.DataFrame
        Domained intervals: ``hole_id``, ``from_m``, ``to_m``, ``domain_id`` (and
        ``domain``), group columns [wt%] and ``grade``.
    holes : sequence
        Hole ids, one column of panels each.
    groups : sequence of str
        Group columns drawn as lines [wt%] (those present).
    grade : str
        Grade column drawn in the third panel.
    names : mapping, optional
        domain_id -> name for the legend (default from the ``domain`` column).
    """
    holes = list(holes)
    groups = [g for g in groups if g in df.columns]
    has_grade = grade in df.columns
    if names is None and "domain" in df.columns:
        names = df.drop_duplicates("domain_id").set_index("domain_id")["domain"].to_dict()
    names = names or {}
    colours = domain_colours(df["domain_id"].unique() if len(df) else [])
    panels = 1 + bool(groups) + has_grade
    fig, axes = plt.subplots(
        1, max(1, len(holes)) * panels, figsize=(2.6 * max(1, len(holes)) + 1.5, 7),
        sharey=False, squeeze=False,
        gridspec_kw={"width_ratios": ([0.35] + [1.4] * bool(groups) + [0.9] * has_grade)
                     * max(1, len(holes))},
    )
    axes = axes[0]
    for h, hole in enumerate(holes):
        part = df[df["hole_id"] == hole].sort_values("from_m")
        f = part["from_m"].to_numpy(float)
        t = part["to_m"].to_numpy(float)
        mid = (f + t) / 2
        ax = axes[h * panels]
        if len(part):
            runs = downhole_runs(part["hole_id"], f, t, part["domain_id"].to_numpy(int))
            ax.bar(0.5, runs["to_m"] - runs["from_m"], bottom=runs["from_m"], width=1.0,
                   align="center", color=[colours[int(d)] for d in runs["label"]], linewidth=0)
        ax.set_xlim(0, 1)
        ax.set_xticks([])
        ax.set_title(str(hole), fontsize=8)
        ax.set_ylabel("Depth along hole (m)" if h == 0 else "")
        ylim = (t.max() if len(t) else 1, f.min() if len(f) else 0)
        ax.set_ylim(*ylim)
        k = 1
        if groups:
            axg = axes[h * panels + k]
            for g in groups:
                axg.plot(part[g].to_numpy(float), mid, lw=0.8,
                         color=_GROUP_COLOURS.get(g, "#444444"), label=g.removesuffix("_pct"))
            axg.set_ylim(*ylim)
            axg.set_yticklabels([])
            axg.set_xlabel("wt%", fontsize=7)
            axg.tick_params(labelsize=7)
            axg.xaxis.set_major_locator(MaxNLocator(3))
            axg.tick_params(axis="x", labelsize=6)
            if h == 0:
                axg.legend(fontsize=6, frameon=False, loc="lower right")
            k += 1
        if has_grade:
            axc = axes[h * panels + k]
            axc.plot(part[grade].to_numpy(float), mid, lw=0.9, color="#1f3b57")
            axc.set_ylim(*ylim)
            axc.set_yticklabels([])
            axc.set_xlabel(grade.replace("_pct", " (%)"), fontsize=7)
            axc.tick_params(labelsize=7)
            axc.xaxis.set_major_locator(MaxNLocator(2))
            axc.tick_params(axis="x", labelsize=6)
    _legend(fig, names, colours, loc="lower center", ncol=min(3, max(1, len(colours))),
            bbox_to_anchor=(0.5, -0.02 - 0.025 * np.ceil(len(colours) / 3)))
    fig.suptitle("Downhole domains, key mineral groups and grade", fontsize=10)
    fig.tight_layout(rect=(0, 0.02, 1, 0.97))
    return fig


def pca_scatter_figure(
    components,
    domain_ids,
    *,
    names: Mapping[int, str] | None = None,
    explained_frac: Sequence[float] | None = None,
    max_points: int = 20_000,
    seed: int = 0,
):
    """Scatter of the first two principal components coloured by domain.

    Parameters
    ----------
    components : array_like, shape (n_rows, >= 2)
    domain_ids : array_like of int
    names : mapping, optional
        domain_id -> name for the legend.
    explained_frac : sequence of float, optional
        Explained-variance ratio of each component [fraction], shown on the axes.
    max_points : int
        Points drawn at most (seeded subsample).
    seed : int
    """
    pcs = np.asarray(components, dtype=float)
    ids = np.asarray(domain_ids).astype(int)
    if pcs.shape[1] == 1:
        pcs = np.column_stack([pcs, np.zeros(len(pcs))])
    rng = np.random.default_rng(seed)
    idx = np.arange(len(pcs)) if len(pcs) <= max_points else rng.choice(
        len(pcs), max_points, replace=False)
    colours = domain_colours(ids)
    fig, ax = plt.subplots(figsize=(7, 5.5))
    for d in sorted(colours):
        sel = idx[ids[idx] == d]
        ax.scatter(pcs[sel, 0], pcs[sel, 1], s=4, alpha=0.5, color=colours[d], linewidths=0)
    ev = list(explained_frac) if explained_frac is not None else []
    ax.set_xlabel(f"PC1 ({ev[0]:.0%} of variance)" if len(ev) > 0 else "PC1")
    ax.set_ylabel(f"PC2 ({ev[1]:.0%} of variance)" if len(ev) > 1 else "PC2")
    ax.set_title("Composites in principal-component space, by domain", fontsize=10)
    _legend(ax, names or {}, colours, loc="center left", bbox_to_anchor=(1.01, 0.5))
    fig.tight_layout()
    return fig


def selection_curve_figure(selection: pd.DataFrame):
    """Criterion against the number of domains, the chosen k marked."""
    fig, ax = plt.subplots(figsize=(5, 3.5))
    ax.plot(selection["k"], selection["score"], marker="o", color="#2f6c8f", lw=1)
    chosen = selection[selection["chosen"].astype(bool)]
    ax.scatter(chosen["k"], chosen["score"], s=90, facecolor="none", edgecolor="#b04a5a",
               linewidths=1.5, label="chosen", zorder=3)
    crit = str(selection["criterion"].iloc[0]) if len(selection) else ""
    ax.set_xlabel("Number of domains")
    ax.set_ylabel(crit.replace("_", " "))
    ax.set_title("Choice of the number of domains", fontsize=10)
    ax.legend(frameon=False, fontsize=8)
    fig.tight_layout()
    return fig
