"""Benchmark the demo generator: scan intervals per second, vectorised vs a per-hole loop.

Run ``python benchmarks/bench_demo.py`` (about a million 1 m scan intervals from
3 000 holes) or with ``--quick`` (300 holes). The baseline evaluates the geology hole by hole
(one ``sample_geology`` call per hole, the straightforward loop), timed on a subset of holes
and scaled linearly to all holes; the ratio is measured in the same run.
"""

from __future__ import annotations

import argparse
import time

import numpy as np

from geomet.demo import build_deposit, generate_demo, positions_at, sample_geology


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="300 holes instead of 3 000")
    parser.add_argument("--seed", type=int, default=7)
    args = parser.parse_args()
    holes = 300 if args.quick else 3000

    t0 = time.perf_counter()
    data = generate_demo(args.seed, holes=holes, tables=("scan",), plant=False)
    t_gen = time.perf_counter() - t0
    scan = data.clean["scan"]
    n = len(scan)

    # baseline: the same geology evaluated one hole at a time, on a subset of holes
    model = build_deposit(args.seed)
    collars, surveys = data.clean["collars"], data.clean["surveys"]
    subset = collars["hole_id"].to_numpy()[: max(10, holes // 30)]
    mids = (scan["from_m"] + scan["to_m"]).to_numpy() / 2
    hole = scan["hole_id"].to_numpy()
    t0 = time.perf_counter()
    n_sub = 0
    for h in subset:
        sel = hole == h
        x, y, z = positions_at(collars, surveys, hole[sel], mids[sel])
        sample_geology(model, x, y, z)
        n_sub += int(sel.sum())
    t_loop_sub = time.perf_counter() - t0
    t_loop = t_loop_sub * n / max(n_sub, 1)

    t0 = time.perf_counter()
    x, y, z = positions_at(collars, surveys, hole, mids)
    sample_geology(model, x, y, z)
    t_vec = time.perf_counter() - t0

    print(f"holes {holes}, scan intervals {n:,}")
    print(
        f"generate_demo (scan table, with noise and rounding): {t_gen:.2f} s "
        f"({n / t_gen:,.0f} intervals/s)"
    )
    print(f"geology at all intervals, vectorised: {t_vec:.2f} s")
    print(f"geology hole by hole (timed on {len(subset)} holes, scaled): {t_loop:.2f} s")
    print(f"ratio loop / vectorised: {t_loop / t_vec:.1f}x")
    print(f"scan sums: mean {np.mean(scan.iloc[:, 3:38].sum(axis=1)):.2f} wt%")


if __name__ == "__main__":
    main()
