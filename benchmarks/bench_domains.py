"""Benchmark: domaining a million composites x 35 scanned minerals.

Stages timed: multiplicative replacement, CLR, standardise + PCA, k-means with k chosen by
silhouette (fitted on a seeded 50 000-row subsample, then predicting every row), downhole
smoothing to 10 m. Baselines measured in the same run:

- scikit-bio ``multi_replace`` + ``clr`` on the same array (reference library),
- k-means fitted on every row for the chosen k (what subsampling avoids), with the adjusted
  Rand index between the two labellings to show what the subsample costs in agreement.

Run: ``python benchmarks/bench_domains.py [--quick] [--rows N]``.
"""

from __future__ import annotations

import argparse
import time

import numpy as np
from sklearn.cluster import KMeans
from sklearn.decomposition import PCA
from sklearn.metrics import adjusted_rand_score
from sklearn.preprocessing import StandardScaler
from threadpoolctl import threadpool_limits

from geomet.domains.cluster import DomainClusterer
from geomet.domains.logratio import clr, multiplicative_replacement
from geomet.domains.smoothing import smooth_downhole


def synthetic(n_rows: int, seed: int = 0):
    """Five invented alteration assemblages, Dirichlet noise, 35 parts, holes of 500 rows."""
    rng = np.random.default_rng(seed)
    n_zone, d = 5, 35
    means = rng.gamma(0.4, 1.0, size=(n_zone, d))
    means[:, 0] += 8  # quartz-feldspar everywhere
    # zones in downhole runs of 20-60 rows
    lengths = rng.integers(20, 60, size=n_rows // 20 + 2)
    zone = np.repeat(rng.integers(0, n_zone, size=lengths.size), lengths)[:n_rows]
    alpha = means[zone] / means[zone].sum(axis=1, keepdims=True) * 80 + 1e-3
    comp = rng.gamma(alpha) + 0.0
    comp /= comp.sum(axis=1, keepdims=True)
    comp *= 100
    comp[comp < 0.05] = 0.0  # scanner reporting limit
    hole = np.arange(n_rows) // 500
    from_m = (np.arange(n_rows) % 500).astype(float) * 2.0
    return comp, zone, hole, from_m


def timed(label, func, results, *args):
    t0 = time.perf_counter()
    out = func(*args)
    results[label] = time.perf_counter() - t0
    print(f"{label:<42s} {results[label]:8.2f} s", flush=True)
    return out


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="100 000 rows instead of 1 000 000")
    parser.add_argument("--rows", type=int, default=None, help="number of composites")
    parser.add_argument("--seed", type=int, default=0)
    parser.add_argument("--methods", default="gmm,density,step",
                        help="extra timings: any of gmm, density, step (comma separated)")
    args = parser.parse_args(argv)
    args.methods = set(args.methods.split(",")) if args.methods else set()
    n = args.rows or (100_000 if args.quick else 1_000_000)
    print(f"generating {n} composites x 35 minerals ...", flush=True)
    comp, zone, hole, from_m = synthetic(n, args.seed)
    print(f"zeros: {np.mean(comp == 0):.0%} of values")
    r: dict[str, float] = {}
    with threadpool_limits(limits=1):
        rep = timed("multiplicative replacement (geomet)",
                    lambda: multiplicative_replacement(comp, delta=0.065, total=100.0), r)
        z = timed("clr (geomet)", clr, r, rep)
        del rep
        zs = timed("standardise", StandardScaler().fit_transform, r, z)
        pca = PCA(n_components=0.9, svd_solver="covariance_eigh", random_state=args.seed)
        pcs = timed("PCA (90 % of variance)", pca.fit_transform, r, zs)
        del zs
        print(f"  {pcs.shape[1]} components, {pca.explained_variance_ratio_.sum():.0%} variance")
        clus = DomainClusterer(method="kmeans", n_domains="auto", k_min=3, k_max=8,
                               max_fit_rows=50_000, seed=args.seed)
        timed("k-means, k by silhouette (fit 50k, predict all)", lambda: clus.fit(pcs), r)
        labels = clus.labels_
        print(f"  chosen k = {clus.n_domains_}; ARI vs generating zones "
              f"{adjusted_rand_score(zone[:200_000], labels[:200_000]):.3f}")
        length = np.full(n, 2.0)
        timed("downhole smoothing to 10 m",
              lambda: smooth_downhole(hole, from_m, from_m + length, labels, 10.0,
                                      features=pcs, merge_to="similar"), r)
    total = sum(r.values())
    print(f"{'TOTAL (replacement -> smoothing)':<42s} {total:8.2f} s   (target < 60 s on 2 cores)")

    print("\nother clustering methods on the same components (fit on a subsample, predict all):")
    o: dict[str, float] = {}
    with threadpool_limits(limits=1):
        for method, rows in (("gmm", 50_000), ("density", 10_000)):
            if method not in args.methods:
                continue
            c = DomainClusterer(method=method, n_domains="auto", k_min=3, k_max=8,
                                max_fit_rows=rows, seed=args.seed)
            label = f"{method}, fit {rows // 1000}k, predict all"
            timed(label, c.fit, o, pcs)
            print(f"  k = {c.n_domains_}; ARI vs k-means "
                  f"{adjusted_rand_score(labels[:200_000], c.labels_[:200_000]):.3f}")

    if "step" in args.methods:
        print("\nend-to-end run step (DataFrame in; features, k-means auto, smoothing, names, "
              "summary, stability):")
        import pandas as pd

        from geomet.glossary import SCANNED_MINERAL_COLUMNS
        from geomet.run.registry import StepContext
        from geomet.run.steps.domains import DomainsOptions, domains_step

        table = pd.DataFrame(comp, columns=list(SCANNED_MINERAL_COLUMNS))
        rng = np.random.default_rng(args.seed)
        table.insert(0, "hole_id", np.char.add("VL-", hole.astype(str)))
        table.insert(1, "from_m", from_m)
        table.insert(2, "to_m", from_m + 2.0)
        table["length_m"] = 2.0
        table["cu_pct"] = rng.lognormal(-1.5, 0.8, n)
        table["au_gpt"] = rng.lognormal(-2.0, 0.8, n)
        ctx = StepContext(tables={"mineralogy": table}, seed=args.seed)
        s_: dict[str, float] = {}
        timed(f"domains step, {n} composites", domains_step, s_, ctx,
              DomainsOptions(plots=False))

    print("\nbaselines measured in this run:")
    b: dict[str, float] = {}
    from skbio.stats.composition import clr as sk_clr
    from skbio.stats.composition import multi_replace

    m = min(n, 200_000)
    with threadpool_limits(limits=1):
        timed(f"geomet replacement + clr, {m} rows",
              lambda: clr(multiplicative_replacement(comp[:m], 0.065, 100.0)), b)
        timed(f"scikit-bio multi_replace + clr, {m} rows",
              lambda: sk_clr(multi_replace(comp[:m] / 100.0, delta=0.065 / 100)), b)
        ours = b[f"geomet replacement + clr, {m} rows"]
        theirs = b[f"scikit-bio multi_replace + clr, {m} rows"]
        print(f"  ratio scikit-bio / geomet: {theirs / ours:.2f}")
        full = KMeans(n_clusters=clus.n_domains_, n_init=4, random_state=args.seed)
        timed(f"k-means k={clus.n_domains_} fitted on all {n} rows (no selection)",
              lambda: full.fit(pcs), b)
        sub = DomainClusterer(method="kmeans", n_domains=clus.n_domains_, max_fit_rows=50_000,
                              seed=args.seed)
        timed(f"k-means k={clus.n_domains_} fitted on 50k + predict all", lambda: sub.fit(pcs), b)
    ratio = b[f"k-means k={clus.n_domains_} fitted on all {n} rows (no selection)"] / b[
        f"k-means k={clus.n_domains_} fitted on 50k + predict all"]
    print(f"  ratio full fit / subsample fit: {ratio:.1f}x; ARI between them "
          f"{adjusted_rand_score(full.labels_, sub.labels_):.4f}")


if __name__ == "__main__":
    main()
