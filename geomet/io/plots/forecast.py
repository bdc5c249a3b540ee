"""Forecast plots: flagged tonnes by schedule period, and calibration (measured vs predicted).

Functions take tables and return matplotlib figures (Agg backend); saving is the caller's job
(``StepContext.add_plot``). No science here.
"""

from __future__ import annotations

from collections.abc import Mapping

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

__all__ = ["flagged_tonnes_figure", "calibration_figure", "FLAG_COLOURS"]

# geomet's own flag palette, chosen for this project (one hue per flag, in rule order).
FLAG_COLOURS = (
    "#a0522d",
    "#6b8e23",
    "#4682b4",
    "#b8860b",
    "#8b3a62",
    "#2e8b57",
    "#696969",
    "#cd853f",
)


def flagged_tonnes_figure(lookahead: pd.DataFrame, *, current_period: int | None = None):
    """Grouped bars of flagged tonnes by period: alert solid, watch (at or beyond the watch
    threshold, alert included) as a pale bar behind it.

    Parameters
    ----------
    lookahead : DataFrame
        The ``lookahead`` table (``period``, ``flag``, ``level``, ``flagged_t``).
    current_period : int, optional
        Marked with a vertical line.

    Returns
    -------
    matplotlib.figure.Figure
    """
    fig, ax = plt.subplots(figsize=(9.0, 4.2))
    if lookahead.empty:
        ax.text(
            0.5,
            0.5,
            "No scheduled blocks to flag",
            ha="center",
            va="center",
            transform=ax.transAxes,
        )
        ax.set_axis_off()
        return fig
    periods = np.sort(lookahead["period"].unique())
    flags = list(dict.fromkeys(lookahead["flag"]))
    width = 0.8 / max(len(flags), 1)
    x = np.arange(len(periods))
    for i, flag in enumerate(flags):
        colour = FLAG_COLOURS[i % len(FLAG_COLOURS)]
        sub = lookahead[lookahead["flag"] == flag]
        for level, alpha, label in (("watch", 0.35, None), ("alert", 1.0, flag)):
            t = (
                sub[sub["level"] == level]
                .set_index("period")["flagged_t"]
                .reindex(periods)
                .fillna(0.0)
                .to_numpy()
            )
            ax.bar(
                x - 0.4 + width * (i + 0.5),
                t / 1e3,
                width=width,
                color=colour,
                alpha=alpha,
                label=label,
                edgecolor="none",
            )
    ax.set_xticks(x, [str(p) for p in periods])
    ax.set_xlabel("Schedule period")
    ax.set_ylabel("Flagged ore [kt]")
    ax.set_title("Ore over flag thresholds by period (solid: alert; pale: watch)")
    if current_period is not None and current_period in set(periods):
        pos = int(np.flatnonzero(periods == current_period)[0])
        ax.axvline(pos - 0.5, color="#333333", lw=1.0, ls="--")
    ax.legend(ncol=min(len(flags), 7), fontsize=8, frameon=False, loc="upper center",
              bbox_to_anchor=(0.5, -0.2))
    ax.spines[["top", "right"]].set_visible(False)
    fig.tight_layout()
    return fig


def calibration_figure(pairs: Mapping[str, tuple[np.ndarray, np.ndarray, np.ndarray]]):
    """Measured against cross-validated predictions, one panel per response.

    Parameters
    ----------
    pairs : mapping
        Response name -> (measured, default prediction, calibrated out-of-fold prediction).

    Returns
    -------
    matplotlib.figure.Figure
    """
    n = max(len(pairs), 1)
    cols = min(n, 3)
    rows = int(np.ceil(n / cols))
    fig, axes = plt.subplots(rows, cols, figsize=(3.6 * cols, 3.4 * rows), squeeze=False)
    for ax, (name, (y, default, cv)) in zip(axes.flat, pairs.items(), strict=False):
        y = np.asarray(y, float)
        ax.scatter(y, default, s=10, color="#b0b0b0", label="default")
        ax.scatter(y, cv, s=10, color="#2f6c8f", label="calibrated (CV)")
        finite = np.concatenate([y, default, cv])
        finite = finite[np.isfinite(finite)]
        if finite.size:
            lo, hi = finite.min(), finite.max()
            ax.plot([lo, hi], [lo, hi], color="#333333", lw=0.8)
        ax.set_title(name, fontsize=9)
        ax.set_xlabel("measured", fontsize=8)
        ax.set_ylabel("predicted", fontsize=8)
        ax.legend(fontsize=7, frameon=False)
    for ax in list(axes.flat)[len(pairs) :]:
        ax.set_axis_off()
    fig.tight_layout()
    return fig
