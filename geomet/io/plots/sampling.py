"""Plots of a testwork program: how chosen samples sit within the ore to be mined.

Figures are built with :class:`matplotlib.figure.Figure` (no pyplot state, any backend).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from geomet.glossary import unit_of


def _wq(values: np.ndarray, weights: np.ndarray, qs) -> np.ndarray:
    ok = np.isfinite(values) & (weights > 0)
    v, w = values[ok], weights[ok]
    if v.size == 0:
        return np.full(len(qs), np.nan)
    order = np.argsort(v)
    v, w = v[order], w[order]
    cum = (np.cumsum(w) - 0.5 * w) / w.sum()
    return np.interp(qs, cum, v)


def coverage_figure(
    blocks: pd.DataFrame,
    selection: pd.DataFrame,
    attributes: Sequence[str],
    *,
    existing: pd.DataFrame | None = None,
    weight_column: str = "tonnes_t",
    max_columns: int = 4,
):
    """One panel per attribute: each domain's tonnage-weighted ore range with its samples on it.

    The bar spans the 10th to 90th percentile of the scheduled tonnes, the thin line the 1st to
    99th, the tick the median; filled circles are the chosen samples, open squares existing
    testwork samples.

    Parameters
    ----------
    blocks : DataFrame
        Scheduled blocks with ``domain``, the weight column and the attributes.
    selection : DataFrame
        The ``testwork_selection`` table (``domain`` and the attributes).
    attributes : sequence of str
    existing : DataFrame, optional
        Existing samples with ``domain`` and the attributes.
    weight_column : str
    max_columns : int

    Returns
    -------
    matplotlib.figure.Figure
    """
    attributes = list(attributes)
    domains = sorted(blocks["domain"].dropna().astype(str).unique())
    n = max(len(attributes), 1)
    ncol = min(max_columns, n)
    nrow = int(np.ceil(n / ncol))
    fig = Figure(figsize=(3.4 * ncol, 0.45 * len(domains) * nrow + 1.6))
    axes = fig.subplots(nrow, ncol, squeeze=False, sharey=True)
    w_all = blocks[weight_column].to_numpy(dtype=float)
    bdom = blocks["domain"].astype(str).to_numpy()
    for k, att in enumerate(attributes):
        ax = axes[k // ncol][k % ncol]
        vals = blocks[att].to_numpy(dtype=float)
        for y, dom in enumerate(domains):
            m = bdom == dom
            q01, q10, q50, q90, q99 = _wq(vals[m], w_all[m], [0.01, 0.1, 0.5, 0.9, 0.99])
            ax.plot([q01, q99], [y, y], color="#8a8a8a", lw=1, zorder=1)
            ax.plot([q10, q90], [y, y], color="#c9d6e3", lw=7, solid_capstyle="butt", zorder=2)
            ax.plot([q50, q50], [y - 0.22, y + 0.22], color="#34495e", lw=1.5, zorder=3)
            if len(selection) and att in selection:
                sv = selection.loc[selection["domain"].astype(str) == dom, att].to_numpy(float)
                ax.scatter(
                    sv,
                    np.full(sv.size, y),
                    s=22,
                    color="#c0392b",
                    zorder=4,
                    label="chosen" if (y == 0 and k == 0) else None,
                )
            if existing is not None and len(existing) and att in existing:
                ev = existing.loc[existing["domain"].astype(str) == dom, att].to_numpy(float)
                ax.scatter(
                    ev,
                    np.full(ev.size, y + 0.25),
                    s=22,
                    marker="s",
                    facecolor="none",
                    edgecolor="#1f6f43",
                    zorder=4,
                    label="existing" if (y == 0 and k == 0) else None,
                )
        unit = unit_of(att)
        ax.set_title(f"{att}" + (f" [{unit}]" if unit else ""), fontsize=9)
        ax.set_yticks(range(len(domains)))
        ax.set_yticklabels(domains, fontsize=8)
        ax.tick_params(axis="x", labelsize=8)
        ax.grid(axis="x", color="#eeeeee")
    for k in range(n, nrow * ncol):
        axes[k // ncol][k % ncol].set_visible(False)
    handles, labels = axes[0][0].get_legend_handles_labels()
    if handles:
        fig.legend(
            handles, labels, loc="lower center", ncol=len(handles), fontsize=8, frameon=False
        )
    fig.suptitle("Testwork samples within the scheduled ore (bar: P10-P90 of tonnes)", fontsize=10)
    fig.tight_layout(rect=(0, 0.05, 1, 0.95))
    return fig


def allocation_figure(allocation: pd.DataFrame):
    """Bars per domain: share of weighted tonnes, Neyman weight, and samples (existing + new).

    Parameters
    ----------
    allocation : DataFrame
        The ``testwork_allocation`` table.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig = Figure(figsize=(9, 0.5 * len(allocation) + 1.8))
    ax1, ax2 = fig.subplots(1, 2, sharey=True)
    y = np.arange(len(allocation))
    ax1.barh(
        y - 0.2,
        allocation["tonnes_share_frac"],
        height=0.4,
        color="#c9d6e3",
        label="share of weighted tonnes",
    )
    ax1.barh(
        y + 0.2,
        allocation["neyman_weight_frac"],
        height=0.4,
        color="#34495e",
        label="Neyman weight (tonnes × spread)",
    )
    ax1.set_yticks(y)
    ax1.set_yticklabels(allocation["domain"], fontsize=8)
    ax1.legend(fontsize=8, frameon=False)
    ax1.set_xlabel("fraction")
    ax2.barh(y, allocation["existing_tests"], color="#1f6f43", label="existing")
    ax2.barh(
        y,
        allocation["samples_allocated"],
        left=allocation["existing_tests"],
        color="#c0392b",
        label="new",
    )
    ax2.legend(fontsize=8, frameon=False)
    ax2.set_xlabel("samples")
    fig.suptitle("Testwork samples by domain", fontsize=10)
    fig.tight_layout()
    return fig
