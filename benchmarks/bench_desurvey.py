"""Benchmark: minimum-curvature desurvey of 2 000 holes x 50 surveys, and 1 million interval points.

Times geomet's vectorised ``desurvey_holes`` (station positions) and ``positions_at`` (points at
any depth) on synthetic Vellantra holes (seeded), against a straightforward per-hole,
per-station Python loop (scalar ``math``) measured in the same run on a subset of holes and
scaled linearly.

    python benchmarks/bench_desurvey.py [--quick] [--seed N]
"""

from __future__ import annotations

import argparse
import math
import time

import numpy as np
import pandas as pd

from geomet.drillholes.desurvey import desurvey_holes, positions_at


def synthetic(n_holes: int, n_surveys: int, seed: int):
    rng = np.random.default_rng(seed)
    holes = np.array([f"VL-{i:05d}" for i in range(n_holes)], dtype=object)
    collars = pd.DataFrame(
        {
            "hole_id": holes,
            "easting_m": rng.uniform(0, 3000, n_holes),
            "northing_m": rng.uniform(0, 3000, n_holes),
            "elevation_m": rng.uniform(3000, 3400, n_holes),
            "total_depth_m": 10.0 * n_surveys,
        }
    )
    azi0 = rng.uniform(0, 360, n_holes)
    dip0 = rng.uniform(-85, -50, n_holes)
    steps = np.arange(n_surveys)
    azi = (azi0[:, None] + np.cumsum(rng.normal(0, 1.0, (n_holes, n_surveys)), axis=1)) % 360
    dip = np.clip(
        dip0[:, None] + np.cumsum(rng.normal(0, 0.5, (n_holes, n_surveys)), axis=1), -90, -30
    )
    surveys = pd.DataFrame(
        {
            "hole_id": np.repeat(holes, n_surveys),
            "depth_m": np.tile(steps * 10.0, n_holes),
            "azimuth_deg": azi.ravel(),
            "dip_deg": dip.ravel(),
        }
    )
    return collars, surveys


def loop_desurvey(collars: pd.DataFrame, surveys: pd.DataFrame) -> dict:
    """Per-hole, per-station loop of the minimum curvature formulas with scalar math."""
    out = {}
    by_hole = dict(tuple(surveys.groupby("hole_id", sort=False)))
    for row in collars.itertuples(index=False):
        s = by_hole[row.hole_id].sort_values("depth_m")
        x, y, z = row.easting_m, row.northing_m, row.elevation_m
        pts = [(x, y, z)]
        md, az, dp = s.depth_m.to_list(), s.azimuth_deg.to_list(), s.dip_deg.to_list()
        for k in range(1, len(md)):
            i1, i2 = math.radians(90 + dp[k - 1]), math.radians(90 + dp[k])
            a1, a2 = math.radians(az[k - 1]), math.radians(az[k])
            cb = math.cos(i2 - i1) - math.sin(i1) * math.sin(i2) * (1 - math.cos(a2 - a1))
            beta = math.acos(max(-1.0, min(1.0, cb)))
            rf = 1.0 if beta < 1e-6 else 2 / beta * math.tan(beta / 2)
            h = (md[k] - md[k - 1]) / 2 * rf
            y += h * (math.sin(i1) * math.cos(a1) + math.sin(i2) * math.cos(a2))
            x += h * (math.sin(i1) * math.sin(a1) + math.sin(i2) * math.sin(a2))
            z -= h * (math.cos(i1) + math.cos(i2))
            pts.append((x, y, z))
        out[row.hole_id] = pts
    return out


def best_of(func, *args, repeat=3):
    best, out = np.inf, None
    for _ in range(repeat):
        start = time.perf_counter()
        out = func(*args)
        best = min(best, time.perf_counter() - start)
    return best, out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="200 holes")
    parser.add_argument("--seed", type=int, default=20261201)
    parser.add_argument("--loop-holes", type=int, default=200)
    args = parser.parse_args()
    n_holes, n_surveys = (200, 50) if args.quick else (2000, 50)
    collars, surveys = synthetic(n_holes, n_surveys, args.seed)
    print(
        f"data: {n_holes:,} holes x {n_surveys} surveys = {len(surveys):,} stations "
        f"(seed {args.seed})"
    )
    t_st, stations = best_of(desurvey_holes, collars, surveys)
    print(f"geomet desurvey_holes       : {t_st:7.3f} s")

    n_points = 1_000_000 if not args.quick else 100_000
    rng = np.random.default_rng(args.seed + 1)
    q_hole = collars["hole_id"].to_numpy()[rng.integers(0, n_holes, n_points)]
    q_depth = rng.uniform(0, 10.0 * n_surveys, n_points)
    t_pts, _ = best_of(positions_at, stations, q_hole, q_depth)
    print(f"geomet positions_at         : {t_pts:7.3f} s  ({n_points:,} points on the arcs)")

    k = min(args.loop_holes, n_holes)
    sub_c = collars.iloc[:k]
    sub_s = surveys[surveys.hole_id.isin(sub_c.hole_id)]
    start = time.perf_counter()
    loop = loop_desurvey(sub_c, sub_s)
    t_loop = (time.perf_counter() - start) * n_holes / k
    print(f"per-hole loop desurvey      : {t_loop:7.3f} s  (timed on {k} holes, x{n_holes / k:g})")
    print(f"speed-up desurvey           : {t_loop / t_st:7.1f} x")
    ours = stations[stations.hole_id.isin(sub_c.hole_id)][["x_m", "y_m", "z_m"]].to_numpy()
    ref = np.array([p for h in sub_c.hole_id for p in loop[h]])
    print(f"check: max position difference vs loop {np.abs(ours - ref).max():.2e} m")


if __name__ == "__main__":
    main()
