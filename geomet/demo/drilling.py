"""Demo drill holes: collars on a rough grid, curving inclined holes, and their positions.

Positions along a hole come from the minimum-curvature method, evaluated exactly inside a
survey segment (the direction turns along the great circle between the two stations), so
the demo's geology sits where a minimum-curvature desurvey of ``surveys.csv`` puts it.

References
----------
.. [1] Sawaryn, S.J. & Thorogood, J.L. (2005). A compendium of directional calculations
   based on the minimum curvature method. SPE Drilling & Completion 20(1), 24-36.
   DOI: 10.2118/84246-PA
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.demo.deposit import CENTRE_E_M, CENTRE_N_M, DepositModel
from geomet.errors import InputDataError

GRID_HALF_WIDTH_M = 620.0


def make_collars_surveys(
    model: DepositModel, n_holes: int, rng: np.random.Generator
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Collars and downhole surveys of ``n_holes`` demo holes.

    Collars sit on a jittered square grid over the system (the cells nearest the centre
    first), at the topographic surface. A quarter of the holes are near-vertical; the rest
    dip 55-75 degrees towards the system's centre or along the drilling grid. Surveys are
    taken every 30-50 m with a right-hand azimuth walk and a slow lift of the dip; about one
    hole in seven stops short of its planned depth.

    Returns
    -------
    collars : DataFrame
        hole_id, easting_m, northing_m, elevation_m, total_depth_m.
    surveys : DataFrame
        hole_id, depth_m, azimuth_deg, dip_deg (negative down), one row per station.
    """
    side = int(np.ceil(np.sqrt(n_holes * 1.15)))
    spacing = 2 * GRID_HALF_WIDTH_M / max(side - 1, 1)
    gx, gy = np.meshgrid(np.arange(side), np.arange(side))
    ex = CENTRE_E_M - GRID_HALF_WIDTH_M + gx.ravel() * spacing
    ny = CENTRE_N_M - GRID_HALF_WIDTH_M + gy.ravel() * spacing
    order = np.argsort(np.hypot(ex - CENTRE_E_M, ny - CENTRE_N_M), kind="stable")[:n_holes]
    ex = ex[order] + rng.uniform(-0.25, 0.25, n_holes) * spacing
    ny = ny[order] + rng.uniform(-0.25, 0.25, n_holes) * spacing
    elev = model.topography_m(ex, ny)
    r = np.hypot(ex - CENTRE_E_M, ny - CENTRE_N_M)
    planned = np.clip(500.0 - 0.35 * r + rng.normal(0.0, 40.0, n_holes), 200.0, 500.0)
    short = rng.uniform(size=n_holes) < 0.14
    total = np.where(short, planned * rng.uniform(0.45, 0.85, n_holes), planned)
    total = np.round(np.maximum(total, 120.0), 1)
    vertical = rng.uniform(size=n_holes) < 0.25
    to_centre = (np.degrees(np.arctan2(CENTRE_E_M - ex, CENTRE_N_M - ny)) + 360.0) % 360.0
    grid_az = np.where(rng.uniform(size=n_holes) < 0.5, 45.0, 225.0)
    az0 = np.where(rng.uniform(size=n_holes) < 0.6, to_centre, grid_az)
    az0 = (az0 + rng.normal(0.0, 8.0, n_holes)) % 360.0
    dip0 = np.where(
        vertical, rng.uniform(-89.5, -85.0, n_holes), rng.uniform(-75.0, -55.0, n_holes)
    )
    years = np.sort(rng.choice([21, 22, 23, 24], size=n_holes, p=[0.2, 0.3, 0.3, 0.2]))
    hole_ids = []
    counters: dict[int, int] = {}
    for yr in years:
        counters[yr] = counters.get(yr, 0) + 1
        hole_ids.append(f"VL{yr:02d}-{counters[yr]:03d}")
    hole_ids = np.array(hole_ids)
    perm = rng.permutation(n_holes)  # grid position independent of the campaign
    ex, ny, elev, total, az0, dip0 = (a[perm] for a in (ex, ny, elev, total, az0, dip0))

    rows_h, rows_d, rows_a, rows_i = [], [], [], []
    for h in range(n_holes):
        steps = []
        depth = 0.0
        while True:
            depth += float(rng.uniform(30.0, 50.0))
            if depth >= total[h] - 5.0:
                break
            steps.append(round(depth, 1))
        depths = np.array([0.0, *steps, total[h]])
        k = len(depths)
        seg = np.diff(depths, prepend=0.0) / 30.0
        walk = 1.4 * rng.uniform(0.3, 1.5) if dip0[h] > -84 else 0.5
        az = (az0[h] + np.cumsum(seg * (walk + rng.normal(0.0, 0.6, k)))) % 360.0
        lift = 0.45 * rng.uniform(0.3, 1.4)
        dip = np.minimum(dip0[h] + np.cumsum(seg * (lift + rng.normal(0.0, 0.25, k))), -40.0)
        dip = np.maximum(dip, -90.0)
        rows_h.extend([hole_ids[h]] * k)
        rows_d.extend(depths)
        rows_a.extend(np.round(az, 1) % 360.0)
        rows_i.extend(np.round(dip, 1))
    collars = (
        pd.DataFrame(
            {
                "hole_id": hole_ids,
                "easting_m": np.round(ex, 2),
                "northing_m": np.round(ny, 2),
                "elevation_m": np.round(elev, 2),
                "total_depth_m": total,
            }
        )
        .sort_values("hole_id", kind="stable")
        .reset_index(drop=True)
    )
    surveys = pd.DataFrame(
        {
            "hole_id": rows_h,
            "depth_m": np.round(rows_d, 1),
            "azimuth_deg": rows_a,
            "dip_deg": rows_i,
        }
    )
    surveys = surveys.sort_values(["hole_id", "depth_m"], kind="stable").reset_index(drop=True)
    return collars, surveys


def _unit_vectors(az_deg, dip_deg):
    inc = np.radians(90.0 + np.asarray(dip_deg, dtype=float))
    az = np.radians(np.asarray(az_deg, dtype=float))
    return np.stack([np.sin(inc) * np.sin(az), np.sin(inc) * np.cos(az), -np.cos(inc)], axis=-1)


def _rf(beta):
    small = beta < 1e-7
    safe = np.where(small, 1.0, beta)
    return np.where(small, 1.0 + beta**2 / 12.0, 2.0 / safe * np.tan(safe / 2.0))


def positions_at(
    collars: pd.DataFrame, surveys: pd.DataFrame, hole_id, depth_m
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Easting, northing and elevation [m] of points at downhole depths (minimum curvature).

    Parameters
    ----------
    collars, surveys : DataFrame
        Canonical collar and survey tables; each hole needs a survey station at depth 0
        (the collar's orientation).
    hole_id : array_like of str
    depth_m : array_like of float
        Downhole depths [m]; beyond the last station the hole runs straight on.

    Notes
    -----
    Between stations 1 and 2 with unit tangents t1, t2 and dogleg beta
    (cos beta = t1 . t2), the point at a fraction f of the segment length L has tangent
    t(f) = [sin((1-f) beta) t1 + sin(f beta) t2] / sin beta, and lies at
    p1 + (f L / 2) (t1 + t(f)) RF(f beta), RF(b) = (2/b) tan(b/2) (ref. [1]).
    """
    hole_id = np.asarray(hole_id)
    depth = np.asarray(depth_m, dtype=float)
    holes = pd.Index(collars["hole_id"].to_numpy())
    q_idx = holes.get_indexer(hole_id)
    s_idx = holes.get_indexer(surveys["hole_id"].to_numpy())
    for name, idx, ids in (("query", q_idx, hole_id), ("survey", s_idx, surveys["hole_id"])):
        if (idx < 0).any():
            missing = sorted({str(h) for h in np.asarray(ids)[idx < 0]})
            msg = f"{name} hole(s) {missing[:10]} have no collar; every hole needs a collar row"
            raise InputDataError(msg)
    if len(holes) and not np.isin(np.arange(len(holes)), s_idx).all():
        lacking = sorted(str(h) for h in holes[~np.isin(np.arange(len(holes)), s_idx)])
        msg = f"hole(s) {lacking[:10]} have no survey station; give each hole one at depth 0"
        raise InputDataError(msg)
    order = np.lexsort((surveys["depth_m"].to_numpy(dtype=float), s_idx))
    s_idx = s_idx[order]
    s_md = surveys["depth_m"].to_numpy(dtype=float)[order]
    t = _unit_vectors(
        surveys["azimuth_deg"].to_numpy()[order], surveys["dip_deg"].to_numpy()[order]
    )
    # station positions
    same = np.r_[False, s_idx[1:] == s_idx[:-1]]
    cosb = np.clip(np.einsum("ij,ij->i", t[1:], t[:-1]), -1.0, 1.0)
    beta = np.arccos(cosb)
    dmd = np.diff(s_md)
    step = (dmd / 2.0 * _rf(beta))[:, None] * (t[1:] + t[:-1])
    step = np.vstack([np.zeros(3), step])
    step[~same] = 0.0
    csum = np.cumsum(step, axis=0)
    first = np.flatnonzero(~same)
    group_start = np.maximum.accumulate(np.where(~same, np.arange(len(same)), 0))
    base = csum[first][np.searchsorted(first, group_start)]
    collar_xyz = collars[["easting_m", "northing_m", "elevation_m"]].to_numpy(dtype=float)
    station_xyz = collar_xyz[s_idx] + (csum - base)
    # locate each query in its segment
    key_s = s_idx * 1e6 + s_md
    key_q = q_idx * 1e6 + depth
    seg = np.searchsorted(key_s, key_q, side="right") - 1
    seg = np.clip(seg, 0, len(s_md) - 1)
    nxt = np.minimum(seg + 1, len(s_md) - 1)
    last = (nxt == seg) | (s_idx[nxt] != s_idx[seg])
    p1 = station_xyz[seg]
    t1 = t[seg]
    t2 = np.where(last[:, None], t1, t[nxt])
    seg_len = np.where(last, 1.0, s_md[nxt] - s_md[seg])
    dl = depth - s_md[seg]
    frac = np.where(last, 0.0, dl / np.where(seg_len > 0, seg_len, 1.0))
    b = np.arccos(np.clip(np.einsum("ij,ij->i", t1, t2), -1.0, 1.0))
    sinb = np.sin(b)
    straight = sinb < 1e-9
    safe = np.where(straight, 1.0, sinb)
    a1 = np.where(straight, 1.0 - frac, np.sin((1.0 - frac) * b) / safe)
    a2 = np.where(straight, frac, np.sin(frac * b) / safe)
    tf = a1[:, None] * t1 + a2[:, None] * t2
    tf /= np.linalg.norm(tf, axis=1, keepdims=True)
    xyz = p1 + (dl / 2.0 * _rf(frac * b))[:, None] * (t1 + tf)
    return xyz[:, 0], xyz[:, 1], xyz[:, 2]
