"""Seeded synthetic composite, block and testwork tables for the sampling tests and benchmark.

The tables carry the contract names (``composite_forecasts``, ``block_forecasts``, ``testwork``)
and the attributes the selection uses, from invented domains of the invented Vellantra deposit.
They are statistical stand-ins, not a geological model: each domain has its own mean and spread
per attribute, and attributes wander smoothly down each hole (a first-order autoregression).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

#: Invented domains: name -> (share of holes' metres, attribute means).
_DOMAINS = {
    "VL-potassic": (
        0.35,
        {
            "cu_pct": 0.55,
            "au_gpt": 0.45,
            "clay_severity_idx": 2.0,
            "clay_swelling_pct": 0.4,
            "sulfate_pct": 1.5,
            "bond_bwi_kwh_t": 15.5,
            "cu_recovery_frac": 0.90,
        },
    ),
    "VL-phyllic": (
        0.30,
        {
            "cu_pct": 0.40,
            "au_gpt": 0.25,
            "clay_severity_idx": 6.0,
            "clay_swelling_pct": 1.0,
            "sulfate_pct": 0.8,
            "bond_bwi_kwh_t": 13.0,
            "cu_recovery_frac": 0.86,
        },
    ),
    "VL-argillic": (
        0.20,
        {
            "cu_pct": 0.30,
            "au_gpt": 0.15,
            "clay_severity_idx": 14.0,
            "clay_swelling_pct": 4.0,
            "sulfate_pct": 0.3,
            "bond_bwi_kwh_t": 10.5,
            "cu_recovery_frac": 0.78,
        },
    ),
    "VL-propylitic": (
        0.15,
        {
            "cu_pct": 0.15,
            "au_gpt": 0.08,
            "clay_severity_idx": 4.0,
            "clay_swelling_pct": 1.5,
            "sulfate_pct": 0.5,
            "bond_bwi_kwh_t": 14.0,
            "cu_recovery_frac": 0.82,
        },
    ),
}
_SPREAD = {
    "cu_pct": 0.35,
    "au_gpt": 0.5,
    "clay_severity_idx": 0.45,
    "clay_swelling_pct": 0.7,
    "sulfate_pct": 0.6,
    "bond_bwi_kwh_t": 0.12,
    "cu_recovery_frac": 0.04,
}


def _values(rng, means: dict, n: int, shocks: np.ndarray) -> dict[str, np.ndarray]:
    out = {}
    for k, (att, mu) in enumerate(means.items()):
        z = shocks[:, k % shocks.shape[1]]
        if att == "cu_recovery_frac":
            out[att] = np.clip(mu + _SPREAD[att] * z, 0.3, 0.98)
        else:
            out[att] = mu * np.exp(_SPREAD[att] * z - 0.5 * _SPREAD[att] ** 2)
    return out


def synthetic_composites(
    n_holes: int = 40, composites_per_hole: int = 150, *, composite_m: float = 2.0, seed: int = 0
) -> pd.DataFrame:
    """Composites with domain and forecast columns, ``composite_m`` long, down ``n_holes`` holes."""
    rng = np.random.default_rng(seed)
    names = list(_DOMAINS)
    shares = np.array([_DOMAINS[d][0] for d in names])
    frames = []
    for h in range(n_holes):
        n = composites_per_hole
        # Domain runs of 10-60 composites.
        dom = np.empty(n, dtype=object)
        pos = 0
        while pos < n:
            run = int(rng.integers(10, 61))
            dom[pos : pos + run] = names[rng.choice(len(names), p=shares)]
            pos += run
        shocks = np.empty((n, 7))
        e = rng.normal(size=(n, 7))
        shocks[0] = e[0]
        for i in range(1, n):
            shocks[i] = 0.8 * shocks[i - 1] + 0.6 * e[i]
        vals = {att: np.empty(n) for att in _SPREAD}
        for d in names:
            m = dom == d
            if m.any():
                v = _values(rng, _DOMAINS[d][1], int(m.sum()), shocks[m])
                for att in vals:
                    vals[att][m] = v[att]
        frm = np.arange(n) * composite_m
        frames.append(
            pd.DataFrame(
                {
                    "hole_id": f"VLT-{h + 1:04d}",
                    "from_m": frm,
                    "to_m": frm + composite_m,
                    "length_m": composite_m,
                    "density_t_m3": rng.normal(2.62, 0.06, n).round(3),
                    "domain": dom.astype(str),
                    **vals,
                }
            )
        )
    return pd.concat(frames, ignore_index=True)


def synthetic_blocks(
    n_blocks: int = 20_000, *, n_periods: int = 8, unscheduled_frac: float = 0.1, seed: int = 0
) -> pd.DataFrame:
    """Blocks (15 m cubes) with domain, period, tonnes and the same attributes."""
    rng = np.random.default_rng(seed + 1)
    names = list(_DOMAINS)
    shares = np.array([_DOMAINS[d][0] for d in names])
    dom_idx = rng.choice(len(names), size=n_blocks, p=shares)
    shocks = rng.normal(size=(n_blocks, 7)) * 0.8  # block estimates are smoother than core
    cols = {att: np.empty(n_blocks) for att in _SPREAD}
    for k, d in enumerate(names):
        m = dom_idx == k
        if m.any():
            v = _values(rng, _DOMAINS[d][1], int(m.sum()), shocks[m])
            for att in cols:
                cols[att][m] = v[att]
    density = rng.normal(2.62, 0.05, n_blocks)
    # Shallow argillic ore tends to come early (a stand-in for a real schedule).
    early = np.where(dom_idx == names.index("VL-argillic"), 0.6, 1.0)
    period = np.ceil(rng.uniform(0, 1, n_blocks) ** early * n_periods).clip(1, n_periods)
    period = np.where(rng.uniform(size=n_blocks) < unscheduled_frac, np.nan, period)
    return pd.DataFrame(
        {
            "block_id": np.arange(n_blocks),
            "domain": np.array(names, dtype=object)[dom_idx],
            "density_t_m3": density,
            "tonnes_t": 15.0**3 * density,
            "period": period,
            **cols,
        }
    )


def synthetic_testwork(
    composites: pd.DataFrame, n_samples: int = 6, *, length_m: float = 8.0, seed: int = 0
) -> pd.DataFrame:
    """Existing testwork sample intervals placed on random holes of ``composites``."""
    rng = np.random.default_rng(seed + 2)
    holes = composites.groupby("hole_id")["to_m"].max()
    pick = rng.choice(len(holes), size=n_samples, replace=n_samples > len(holes))
    rows = []
    for k, h in enumerate(pick):
        top = float(rng.uniform(0, holes.iloc[h] - length_m))
        top = round(top / 2.0) * 2.0
        rows.append(
            {
                "sample_id": f"VMT-{k + 1:03d}",
                "hole_id": holes.index[h],
                "from_m": top,
                "to_m": top + length_m,
            }
        )
    return pd.DataFrame(rows)
