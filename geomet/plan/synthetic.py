"""Synthetic blend cases (parcels and plant limits) for tests and benchmarks.

The numbers are invented but of the right order for a porphyry Cu-Au operation (common practice):
hypogene parcels near 0.3-0.6 % Cu with low oxide ratio, some oxidised parcels suited to leach,
clay and sulfate that vary by domain.
"""

from __future__ import annotations

import numpy as np
import pandas as pd


def synthetic_parcels(
    n_domains: int, n_periods: int, *, seed: int = 0, tonnes_t: float = 150_000.0
) -> pd.DataFrame:
    """One parcel per domain and period with random attributes.

    Parameters
    ----------
    n_domains, n_periods : int
        Size of the case.
    seed : int
        Seed of ``numpy.random.default_rng``.
    tonnes_t : float
        Mean parcel tonnage [t].

    Returns
    -------
    DataFrame
        Columns as from :func:`geomet.plan.parcels.parcels_from_blocks`.
    """
    rng = np.random.default_rng(seed)
    d = np.repeat(np.arange(n_domains), n_periods)
    p = np.tile(np.arange(1, n_periods + 1), n_domains)
    n = len(d)
    dom_cu = rng.uniform(0.15, 0.7, n_domains)
    dom_ox = np.where(
        rng.random(n_domains) < 0.25,
        rng.uniform(0.5, 0.9, n_domains),
        rng.uniform(0.0, 0.2, n_domains),
    )
    dom_clay = rng.gamma(2.0, 3.0, n_domains)
    cu = np.clip(dom_cu[d] * rng.lognormal(0.0, 0.2, n), 0.02, 2.5)
    ox = np.clip(dom_ox[d] + rng.normal(0, 0.05, n), 0.0, 1.0)
    clay = np.clip(dom_clay[d] * rng.lognormal(0.0, 0.25, n), 0.0, 40.0)
    parcels = pd.DataFrame(
        {
            "parcel_id": [f"P{pi:02d}|main|D{di:03d}" for di, pi in zip(d, p, strict=True)],
            "period": p,
            "phase": "main",
            "domain": [f"D{di:03d}" for di in d],
            "tonnes_t": tonnes_t * rng.uniform(0.5, 1.5, n),
            "blocks_n": 10,
            "cu_pct": cu,
            "au_gpt": np.clip(cu * rng.uniform(0.3, 1.2, n), 0.0, 3.0),
            "cu_asol_pct": cu * ox,
            "clay_severity_idx": clay,
            "clay_swelling_pct": clay * rng.uniform(0.1, 0.5, n),
            "sulfate_pct": rng.gamma(1.5, 0.6, n),
            "mill_energy_kwh_t": rng.uniform(12.0, 22.0, n) * (1 + clay / 100.0),
            "acid_kg_t": rng.uniform(8.0, 40.0, n),
            "cu_recovery_frac": np.clip(0.92 - 0.6 * ox - 0.004 * clay, 0.3, 0.95),
            "au_recovery_frac": np.clip(0.75 - 0.005 * clay, 0.3, 0.9),
            "oxide_ratio_frac": ox,
        }
    )
    return parcels


def synthetic_plant_limits(n_periods: int, parcels: pd.DataFrame | None = None) -> pd.DataFrame:
    """Plant limits that bind part of the time for :func:`synthetic_parcels` cases.

    Mill capacity is set near 45 % of each period's mined tonnes (when ``parcels`` is given),
    leach near 20 %.
    """
    mined = (
        parcels.groupby("period")["tonnes_t"].sum().reindex(range(1, n_periods + 1)).to_numpy()
        if parcels is not None
        else np.full(n_periods, 3.0e6)
    )
    return pd.DataFrame(
        {
            "period": np.arange(1, n_periods + 1),
            "days": 91.0,
            "mill_power_kw": 0.45 * mined * 17.0 / (91.0 * 24.0 * 0.92),
            "mill_availability_frac": 0.92,
            "mill_max_t": 0.5 * mined,
            "leach_max_t": 0.2 * mined,
            "acid_supply_t": 0.2 * mined * 20.0 / 1000.0,
            "mill_clay_severity_max_idx": 7.0,
            "mill_swelling_clay_max_pct": 2.5,
            "mill_sulfate_max_pct": 1.2,
            "mill_cu_head_min_pct": 0.2,
            "mill_cu_head_max_pct": 1.5,
        }
    )
