"""Domain plots return matplotlib figures with the expected content."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402
from test_domains_synthetic import make_mineralogy  # noqa: E402

from geomet.io.plots.domains import (  # noqa: E402
    DOMAIN_COLOURS,
    UNCLASSIFIED_COLOUR,
    domain_colours,
    pca_scatter_figure,
    representative_holes,
    selection_curve_figure,
    strip_log_figure,
)


def _domained():
    df = make_mineralogy(n_holes=3, seed=2, flicker=0.0)
    ids = df["true_zone"].map({"leached": 1, "argillic": 2, "phyllic": 3, "potassic": 4})
    df["domain_id"] = ids.to_numpy()
    df.loc[(df["hole_id"] == "VL-002"), "domain_id"] = 2  # hole 2 shows one domain only
    df["domain"] = "D" + df["domain_id"].astype(str)
    return df


def test_colours():
    c = domain_colours([0, 1, 2, 13])
    assert c[0] == UNCLASSIFIED_COLOUR
    assert c[1] == DOMAIN_COLOURS[0]
    assert c[13] == DOMAIN_COLOURS[0]  # palette cycles after 12 domains


def test_representative_holes_cover_domains_first():
    df = _domained()
    assert representative_holes(df, 1) in (["VL-001"], ["VL-003"])
    two = representative_holes(df, 2)
    assert "VL-002" not in two
    assert representative_holes(df.iloc[:0], 3) == []


def test_strip_log_figure():
    df = _domained()
    fig = strip_log_figure(df, ["VL-001", "VL-003"])
    # 3 panels per hole: domain bar, groups, Cu
    assert len(fig.axes) == 6
    bar_ax = fig.axes[0]
    assert bar_ax.get_ylim()[0] > bar_ax.get_ylim()[1]  # depth increases downward
    assert len(bar_ax.patches) == 4  # one rectangle per downhole run
    plt.close(fig)


def test_pca_scatter_and_selection_curve():
    pcs = np.random.default_rng(0).normal(size=(500, 3))
    ids = np.repeat([0, 1, 2, 3, 4], 100)
    fig = pca_scatter_figure(pcs, ids, names={1: "A"}, explained_frac=[0.4, 0.2, 0.1],
                             max_points=200)
    ax = fig.axes[0]
    assert "40%" in ax.get_xlabel()
    assert sum(len(c.get_offsets()) for c in ax.collections) == 200
    plt.close(fig)
    sel = pd.DataFrame({"k": [2, 3, 4], "criterion": "silhouette", "score": [0.3, 0.5, 0.4],
                        "chosen": [False, True, False]})
    fig = selection_curve_figure(sel)
    assert fig.axes[0].get_ylabel() == "silhouette"
    plt.close(fig)
