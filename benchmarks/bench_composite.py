"""Benchmark: merging and compositing 1 million intervals over 2 000 drill holes.

Times geomet's vectorised ``merge_intervals`` and ``composite_intervals`` on synthetic Vellantra
data (seeded) and compares them with a straightforward per-hole Python loop measured in the same
run. The loop is timed on a subset of holes and scaled linearly to all holes (its cost is linear
in the number of holes; the scaling is printed). geomet timings are the best of ``--repeat`` runs.

    python benchmarks/bench_composite.py [--quick] [--seed N]
"""

from __future__ import annotations

import argparse
import time

import numpy as np
import pandas as pd

from geomet.drillholes.composite import composite_intervals
from geomet.drillholes.merge import merge_intervals


def synthetic(n_holes: int, per_hole: int, seed: int):
    """Assays (about 1 m samples) and lithology (longer logged runs) with different breaks."""
    rng = np.random.default_rng(seed)
    holes = np.array([f"VL-{i:05d}" for i in range(n_holes)], dtype=object)
    lengths = rng.uniform(0.5, 1.5, size=(n_holes, per_hole))
    to = np.cumsum(lengths, axis=1)
    frm = np.concatenate([np.zeros((n_holes, 1)), to[:, :-1]], axis=1)
    assays = pd.DataFrame(
        {
            "hole_id": np.repeat(holes, per_hole),
            "from_m": frm.ravel(),
            "to_m": to.ravel(),
            "cu_pct": rng.lognormal(-1.0, 0.6, n_holes * per_hole),
            "au_gpt": rng.lognormal(-1.5, 0.8, n_holes * per_hole),
            "s_pct": rng.uniform(0.2, 4.0, n_holes * per_hole),
            "density_t_m3": rng.normal(2.65, 0.08, n_holes * per_hole),
        }
    )
    n_lith = max(per_hole // 20, 2)
    lith_to = np.sort(rng.uniform(0, 1, size=(n_holes, n_lith)), axis=1) * to[:, -1:]
    lith_to[:, -1] = to[:, -1]
    lith_from = np.concatenate([np.zeros((n_holes, 1)), lith_to[:, :-1]], axis=1)
    lithology = pd.DataFrame(
        {
            "hole_id": np.repeat(holes, n_lith),
            "from_m": lith_from.ravel(),
            "to_m": lith_to.ravel(),
            "lith_code": rng.choice(
                np.array(["QFP", "AND", "DIO", "BX"], dtype=object), n_holes * n_lith
            ),
        }
    )
    return assays, lithology


def loop_merge(assays: pd.DataFrame, lithology: pd.DataFrame) -> pd.DataFrame:
    """Straightforward per-hole loop: union breaks, then overlap weighting interval by interval."""
    rows = []
    lith_by_hole = dict(tuple(lithology.groupby("hole_id", sort=False)))
    for hole, a in assays.groupby("hole_id", sort=False):
        lith = lith_by_hole.get(hole, lithology.iloc[:0])
        cuts = np.unique(np.concatenate([a.from_m, a.to_m, lith.from_m, lith.to_m]))
        af, at, cu = a.from_m.to_numpy(), a.to_m.to_numpy(), a.cu_pct.to_numpy()
        lf, lt, lc = lith.from_m.to_numpy(), lith.to_m.to_numpy(), lith.lith_code.to_numpy()
        for f, t in zip(cuts[:-1], cuts[1:], strict=True):
            ov = np.minimum(at, t) - np.maximum(af, f)
            m = ov > 0
            grade = float((ov[m] * cu[m]).sum() / ov[m].sum()) if m.any() else np.nan
            lov = np.minimum(lt, t) - np.maximum(lf, f)
            code = lc[np.argmax(lov)] if (lov > 0).any() else None
            rows.append((hole, f, t, grade, code))
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", "cu_pct", "lith_code"])


def loop_composite(samples: pd.DataFrame, length_m: float) -> pd.DataFrame:
    """Straightforward per-hole, per-composite loop (density-weighted grades)."""
    rows = []
    for hole, s in samples.groupby("hole_id", sort=False):
        f, t = s.from_m.to_numpy(), s.to_m.to_numpy()
        rho = s.density_t_m3.to_numpy()
        grades = s[["cu_pct", "au_gpt", "s_pct"]].to_numpy()
        top = f.min()
        while top < t.max() - 1e-9:
            bottom = min(top + length_m, t.max())
            ov = np.clip(np.minimum(t, bottom) - np.maximum(f, top), 0.0, None)
            w = ov * rho
            rows.append((hole, top, bottom, *(w @ grades / w.sum())))
            top = bottom
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", "cu_pct", "au_gpt", "s_pct"])


def timed(func, *args, repeat: int = 1, **kwargs):
    best, out = np.inf, None
    for _ in range(repeat):
        start = time.perf_counter()
        out = func(*args, **kwargs)
        best = min(best, time.perf_counter() - start)
    return best, out


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="200 holes x 500 intervals")
    parser.add_argument("--seed", type=int, default=20261201)
    parser.add_argument(
        "--repeat",
        type=int,
        default=3,
        help="repeats of each geomet timing (best is reported; the loop runs once)",
    )
    parser.add_argument(
        "--loop-holes",
        type=int,
        default=40,
        help="holes timed with the per-hole loop (then scaled linearly)",
    )
    args = parser.parse_args()
    n_holes = 200 if args.quick else 2000
    per_hole = 500
    assays, lithology = synthetic(n_holes, per_hole, args.seed)
    print(
        f"data: {len(assays):,} assay intervals + {len(lithology):,} lithology intervals, "
        f"{n_holes:,} holes (seed {args.seed})"
    )

    tables = {"assays": assays, "lithology": lithology}
    t_merge, merged = timed(merge_intervals, tables, repeat=args.repeat)
    t_comp, comps = timed(composite_intervals, merged, length_m=2.0, repeat=args.repeat)
    t_direct, _ = timed(composite_intervals, assays, length_m=2.0, repeat=args.repeat)
    print(f"geomet merge_intervals      : {t_merge:7.2f} s  ({len(merged):,} merged intervals)")
    print(f"geomet composite_intervals  : {t_comp:7.2f} s  ({len(comps):,} composites of 2 m)")
    print(f"geomet composite (assays)   : {t_direct:7.2f} s")
    print(f"geomet merge + composite    : {t_merge + t_comp:7.2f} s")

    k = min(args.loop_holes, n_holes)
    sub_holes = assays["hole_id"].drop_duplicates().iloc[:k]
    sub_a = assays[assays.hole_id.isin(sub_holes)]
    sub_l = lithology[lithology.hole_id.isin(sub_holes)]
    scale = n_holes / k
    t_loop_merge, loop_m = timed(loop_merge, sub_a, sub_l)
    t_loop_comp, loop_c = timed(loop_composite, sub_a, 2.0)
    t_loop_merge *= scale
    t_loop_comp *= scale
    print(f"per-hole loop merge         : {t_loop_merge:7.2f} s  (timed on {k} holes, x{scale:g})")
    print(f"per-hole loop composite     : {t_loop_comp:7.2f} s  (timed on {k} holes, x{scale:g})")
    print(f"speed-up merge              : {t_loop_merge / t_merge:7.1f} x")
    print(f"speed-up composite (assays) : {t_loop_comp / t_direct:7.1f} x")

    # the two implementations agree on the subset
    ours = composite_intervals(sub_a, length_m=2.0, remnant="keep", min_coverage_frac=0.0)
    diff = np.nanmax(np.abs(ours["cu_pct"].to_numpy() - loop_c["cu_pct"].to_numpy()))
    ours_m = merge_intervals({"assays": sub_a, "lithology": sub_l})
    diff_m = np.nanmax(np.abs(ours_m["cu_pct"].to_numpy() - loop_m["cu_pct"].to_numpy()))
    same_lith = float((ours_m["lith_code"].to_numpy() == loop_m["lith_code"].to_numpy()).mean())
    print(
        f"check: max |cu_pct| difference composite {diff:.2e}, merge {diff_m:.2e}; "
        f"lith_code agreement {same_lith:.4f}"
    )


if __name__ == "__main__":
    main()
