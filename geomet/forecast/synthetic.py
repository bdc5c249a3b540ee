"""Synthetic rows with the mineralogy columns the forecasts read (for tests and benchmarks).

Not a deposit model (that is :mod:`geomet.demo`): independent random draws in plausible ranges
of a porphyry Cu-Au ore, with the column names of ``docs/contracts.md``.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.forecast.acid import GANGUE_ACID_MINERALS


def synthetic_mineralogy(n: int, *, seed: int = 0, n_holes: int = 20) -> pd.DataFrame:
    """``n`` rows of composites-like mineralogy with hole ids and 2 m intervals.

    Parameters
    ----------
    n : int
        Rows.
    seed : int, keyword-only
        Seed of ``numpy.random.default_rng``.
    n_holes : int, keyword-only
        Holes the rows are spread over (``hole_id`` ``VT-001`` …).

    Returns
    -------
    DataFrame
        ``hole_id``, ``from_m``, ``to_m``, ``length_m``, assays (``cu_pct``, ``cu_asol_pct``,
        ``au_gpt``), group and index columns, normative Cu sulfides and pyrite, scanned gangue
        acid consumers and ``domain``.
    """
    rng = np.random.default_rng(seed)
    hole = rng.integers(0, n_holes, n)
    order = np.argsort(hole, kind="stable")
    hole = hole[order]
    pos = np.zeros(n)
    starts = np.r_[0, np.flatnonzero(np.diff(hole)) + 1]
    for a, b in zip(starts, np.r_[starts[1:], n], strict=True):
        pos[a:b] = np.arange(b - a) * 2.0
    swelling = rng.gamma(0.6, 2.0, n)
    kaolin = rng.gamma(0.8, 3.0, n)
    illite = rng.gamma(2.0, 4.0, n)
    cu = rng.lognormal(np.log(0.45), 0.5, n)
    oxide = rng.beta(0.6, 4.0, n)
    cpy_share = rng.uniform(0.4, 1.0, n)
    sulf_cu = cu * (1.0 - oxide)
    df = pd.DataFrame(
        {
            "hole_id": [f"VT-{h + 1:03d}" for h in hole],
            "from_m": pos,
            "to_m": pos + 2.0,
            "length_m": np.full(n, 2.0),
            "cu_pct": cu,
            "cu_asol_pct": cu * oxide,
            "au_gpt": rng.lognormal(np.log(0.3), 0.6, n),
            "clay_swelling_pct": swelling,
            "clay_kaolin_pct": kaolin,
            "white_mica_illite_pct": illite,
            "clay_total_pct": swelling + kaolin + illite,
            "clay_severity_idx": 3.0 * swelling + 1.0 * kaolin + 0.3 * illite,
            "advanced_argillic_pct": rng.gamma(0.5, 2.0, n),
            "sulfate_pct": rng.gamma(0.7, 1.5, n),
            "carbonate_pct": rng.gamma(0.7, 1.5, n),
            "femg_silicate_pct": rng.gamma(2.0, 3.0, n),
            "featureless_pct": rng.uniform(20.0, 60.0, n),
            "iron_oxide_pct": rng.gamma(0.8, 1.5, n),
            "oxide_ratio_frac": oxide,
            "norm_chalcopyrite_pct": sulf_cu * cpy_share / 0.3463,
            "norm_bornite_pct": sulf_cu * (1 - cpy_share) * 0.5 / 0.6331,
            "norm_chalcocite_pct": sulf_cu * (1 - cpy_share) * 0.5 / 0.7985,
            "norm_covellite_pct": np.zeros(n),
            "norm_pyrite_pct": rng.gamma(2.0, 1.0, n),
            "domain": rng.choice(["potassic", "phyllic", "argillic"], n),
        }
    )
    for mineral in GANGUE_ACID_MINERALS:
        df[f"{mineral}_pct"] = rng.gamma(0.8, 1.0, n)
    return df
