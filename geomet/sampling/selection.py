"""Choosing, within each domain, the candidate intervals that best stand for the ore to be mined.

Attributes are standardised with the tonnage-weighted mean and standard deviation of the scheduled
blocks, so that a unit of distance means one standard deviation of the ore to be mined in every
attribute. Blocks are the demand (weighted by tonnes and period weight); very many blocks are
first grouped into weighted representatives (k-means or a grid of bins), which changes the
demand points but keeps their total weight. Each domain is then a p-median problem
(:mod:`geomet.sampling.pmedian`) whose existing testwork samples already serve nearby ore.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from time import perf_counter

import numpy as np
import pandas as pd

from geomet.errors import InputDataError
from geomet.sampling.pmedian import PMedianProblem, solve_pmedian

#: Plain words for attributes in the reasons written for the core shed (others use their name).
ATTRIBUTE_WORDS: dict[str, str] = {
    "cu_pct": "copper",
    "au_gpt": "gold",
    "clay_severity_idx": "clay",
    "clay_swelling_pct": "swelling clay",
    "clay_kaolin_pct": "kaolin clay",
    "clay_total_pct": "total clay",
    "sulfate_pct": "sulfate",
    "bond_bwi_kwh_t": "hardness",
    "smc_axb": "SMC A×b",
    "cu_recovery_frac": "Cu recovery",
    "au_recovery_frac": "Au recovery",
    "acid_kg_t": "acid consumption",
    "oxide_ratio_frac": "oxide ratio",
    "carbonate_pct": "carbonate",
}

DEFAULT_ATTRIBUTES = (
    "cu_pct",
    "au_gpt",
    "clay_severity_idx",
    "clay_swelling_pct",
    "sulfate_pct",
    "bond_bwi_kwh_t",
    "cu_recovery_frac",
)


def attribute_words(name: str) -> str:
    """Plain words for an attribute column (its name when none are defined)."""
    return ATTRIBUTE_WORDS.get(name, name)


def weighted_mean_std(values: np.ndarray, weights: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Column-wise weighted mean and standard deviation, ignoring NaN.

    Parameters
    ----------
    values : ndarray, shape (n, k)
    weights : ndarray, shape (n,)

    Returns
    -------
    mean, std : ndarray, shape (k,)
        The population (weighted) moments, :math:`\\bar x = \\sum w x / \\sum w`,
        :math:`s^2 = \\sum w (x - \\bar x)^2 / \\sum w`.
    """
    v = np.asarray(values, dtype=float)
    if v.ndim == 1:
        v = v[:, None]
    w = np.asarray(weights, dtype=float)[:, None] * np.isfinite(v)
    v0 = np.where(np.isfinite(v), v, 0.0)
    sw = w.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = (w * v0).sum(axis=0) / sw
        var = (w * (v0 - mean) ** 2).sum(axis=0) / sw
    return mean, np.sqrt(var)


@dataclass
class Standardiser:
    """Standardise attributes by a stated centre and scale, times an importance weight."""

    attributes: list[str]
    centre: np.ndarray
    scale: np.ndarray
    importance: np.ndarray

    @classmethod
    def from_blocks(
        cls,
        blocks: pd.DataFrame,
        attributes: Sequence[str],
        weights,
        *,
        importance: Mapping[str, float] | None = None,
    ) -> Standardiser:
        """Centre and scale from the weighted blocks; a constant attribute gets scale 1."""
        attributes = list(attributes)
        mean, std = weighted_mean_std(blocks[attributes].to_numpy(dtype=float), weights)
        bad = [a for a, m in zip(attributes, mean, strict=True) if not np.isfinite(m)]
        if bad:
            msg = (
                f"block_forecasts has no value for attribute(s) {', '.join(bad)} "
                "in scheduled blocks"
            )
            raise InputDataError(msg)
        std = np.where((std > 0) & np.isfinite(std), std, 1.0)
        imp = np.ones(len(attributes))
        if importance:
            unknown = sorted(set(importance) - set(attributes))
            if unknown:
                msg = (
                    f"attribute_weights names {', '.join(unknown)}, not among the attributes "
                    f"{', '.join(attributes)}"
                )
                raise InputDataError(msg)
            imp = np.array([float(importance.get(a, 1.0)) for a in attributes])
            if np.any(imp < 0):
                msg = "attribute_weights must be non-negative"
                raise InputDataError(msg)
        return cls(attributes, mean, std, imp)

    def transform(self, frame: pd.DataFrame) -> np.ndarray:
        """Standardised, importance-weighted values (NaN stays NaN)."""
        v = frame[self.attributes].to_numpy(dtype=float)
        return (v - self.centre) / self.scale * self.importance

    def z(self, frame: pd.DataFrame) -> np.ndarray:
        """Standardised values without the importance weights."""
        v = frame[self.attributes].to_numpy(dtype=float)
        return (v - self.centre) / self.scale


def aggregate_demand(
    points: np.ndarray,
    weights: np.ndarray,
    *,
    max_points: int,
    method: str = "kmeans",
    seed: int = 0,
    fit_points: int = 10_000,
):
    """Group many weighted points into at most ``max_points`` weighted representatives.

    Parameters
    ----------
    points : ndarray, shape (n, k)
        Standardised attributes of the blocks.
    weights : ndarray, shape (n,)
        Block weights (tonnes × period weight) [t].
    max_points : int
        Most representatives.
    method : {"kmeans", "grid"}
        ``"kmeans"``: weighted k-means, representatives at the weighted centroids; above
        ``fit_points`` points the centres are fitted on a seeded random subset, every point is
        then assigned to its nearest centre and the centres moved to the weighted centroids of
        their points (one Lloyd step over all points). ``"grid"``: bins of 0.5 standard
        units on every axis, representatives at the weighted centroid of each occupied bin,
        the lightest bins merged into the nearest of the ``max_points`` heaviest.
    seed : int
        Seed of the k-means initialisation and of the subset.
    fit_points : int
        Largest number of points k-means is fitted on.

    Returns
    -------
    centres : ndarray, shape (m, k)
    centre_weights : ndarray, shape (m,)
        Sum of the weights of the points of each group (total weight kept).
    labels : ndarray of int, shape (n,)
        Group of each point.
    """
    n = points.shape[0]
    if n <= max_points:
        return points.copy(), weights.astype(float).copy(), np.arange(n)
    if method == "kmeans":
        from sklearn.cluster import KMeans
        from threadpoolctl import threadpool_limits  # installed with scikit-learn

        km = KMeans(n_clusters=max_points, random_state=seed, n_init=1, max_iter=100)
        # One thread: measured 3-5x faster than the default on this 2-core machine under load,
        # where the threads of k-means and BLAS compete with everything else.
        with threadpool_limits(limits=1):
            if n > fit_points:
                rng = np.random.default_rng(seed)
                subset = rng.choice(n, size=fit_points, replace=False)
                km.fit(points[subset], sample_weight=weights[subset])
                labels, _ = nearest(points, km.cluster_centers_)
            else:
                labels = km.fit_predict(points, sample_weight=weights)
    elif method == "grid":
        codes = np.floor(points / 0.5).astype(np.int64)
        _, labels = np.unique(codes, axis=0, return_inverse=True)
        labels = labels.ravel()
        m = labels.max() + 1
        if m > max_points:
            cw = np.bincount(labels, weights=weights, minlength=m)
            cen = _group_centres(points, weights, labels, m)
            keep = np.argsort(-cw, kind="stable")[:max_points]
            from scipy.spatial import cKDTree

            _, near = cKDTree(cen[keep]).query(cen)
            remap = keep[near]
            remap[keep] = keep
            labels = remap[labels]
    else:
        msg = f"unknown aggregation method {method!r}; use 'kmeans' or 'grid'"
        raise InputDataError(msg)
    uniq, labels = np.unique(labels, return_inverse=True)
    m = uniq.size
    cw = np.bincount(labels, weights=weights, minlength=m)
    return _group_centres(points, weights, labels, m), cw, labels


def _group_centres(points, weights, labels, m):
    cw = np.bincount(labels, weights=weights, minlength=m)
    cw_safe = np.where(cw > 0, cw, 1.0)
    cen = np.empty((m, points.shape[1]))
    for k in range(points.shape[1]):
        cen[:, k] = np.bincount(labels, weights=weights * points[:, k], minlength=m) / cw_safe
    return cen


def nearest(points: np.ndarray, targets: np.ndarray):
    """Index of and distance to the nearest target of every point (Euclidean, k-d tree)."""
    from scipy.spatial import cKDTree

    if targets.shape[0] == 0:
        return np.full(points.shape[0], -1), np.full(points.shape[0], np.inf)
    tree = cKDTree(targets)
    dist, idx = tree.query(points, k=1)
    return np.asarray(idx), np.asarray(dist)


def _shortlist(demand: np.ndarray, cand: np.ndarray, index: np.ndarray, size: int) -> np.ndarray:
    """Union of every demand point's nearest candidates, about ``size`` in all (sorted)."""
    from scipy.spatial import cKDTree

    tree = cKDTree(cand)
    k = max(1, size // max(len(demand), 1))
    keep = np.array([], dtype=int)
    while True:
        _, nn = tree.query(demand, k=min(k, len(cand)))
        keep = np.unique(np.asarray(nn).ravel())
        if keep.size >= size or k >= len(cand):
            break
        k *= 2
    return index[keep]


def _fill_nan(z: np.ndarray, weights: np.ndarray) -> np.ndarray:
    """Replace NaN by the column's weighted mean (of the same domain's blocks)."""
    if not np.isnan(z).any():
        return z
    mean, _ = weighted_mean_std(z, weights)
    mean = np.where(np.isfinite(mean), mean, 0.0)
    return np.where(np.isnan(z), mean, z)


@dataclass
class DomainSolve:
    """How one domain's selection was found."""

    domain: str
    requested: int
    chosen: int
    method: str
    status: str
    objective: float
    gap_frac: float | None
    n_demand: int
    n_blocks: int
    n_candidates: int
    details: dict = field(default_factory=dict)
    timings_s: dict = field(default_factory=dict)  # aggregate, solve, assign [s]


@dataclass
class SelectionResult:
    """Chosen samples, which sample serves each block, and how each domain was solved."""

    selection: pd.DataFrame
    block_sample: pd.DataFrame  # block position, domain, serving sample key, distance
    solves: list[DomainSolve]
    standardiser: Standardiser


def select_samples(
    candidates: pd.DataFrame,
    blocks: pd.DataFrame,
    allocation: Mapping[str, int],
    attributes: Sequence[str],
    *,
    block_weight=None,
    existing: pd.DataFrame | None = None,
    max_demand_points: int = 300,
    aggregation: str = "kmeans",
    max_per_hole: int | None = 2,
    min_separation_m: float | None = 10.0,
    milp_max_pairs: int = 10_000,
    time_limit_s: float = 30.0,
    attribute_weights: Mapping[str, float] | None = None,
    seed: int = 0,
    high_low_sd: float = 0.75,
    shortlist_max: int = 4000,
    heuristic_starts: int = 1,
) -> SelectionResult:
    """Choose each domain's allocated number of candidates by the p-median rule.

    Parameters
    ----------
    candidates : DataFrame
        From :func:`geomet.sampling.candidates.build_candidates`.
    blocks : DataFrame
        Scheduled blocks: ``domain``, ``tonnes_t`` [t], ``period``, the attributes.
    allocation : mapping of str to int
        New samples per domain.
    attributes : sequence of str
        Attribute columns present in both tables.
    block_weight : array-like, optional
        Demand weight of each block (default: ``tonnes_t``) [t].
    existing : DataFrame, optional
        Existing testwork samples with ``sample_id``, ``domain`` and the attributes; they serve
        the ore near them, so new samples go elsewhere.
    max_demand_points : int, optional
        Blocks of a domain beyond this number are grouped (:func:`aggregate_demand`).
    aggregation : {"kmeans", "grid"}, optional
    max_per_hole : int, optional
        Most new samples per hole.
    min_separation_m : float, optional
        Least gap between chosen intervals of one hole [m].
    milp_max_pairs : int, optional
        MILP when demand points × candidates is at most this; the heuristic otherwise.
    time_limit_s : float, optional
        MILP time limit per domain [s].
    attribute_weights : mapping, optional
        Importance of each attribute in the distance (default 1 each).
    seed : int, optional
    high_low_sd : float, optional
        A sample stands for the "high" or "low" part of a domain in an attribute when it lies
        this many of the domain's standard deviations from the domain mean.
    shortlist_max : int, optional
        When a domain is solved heuristically and has more candidates than this, the heuristic
        works on a shortlist: the union of each demand point's nearest candidates, with as
        many neighbours per point as keep the union near this size (a candidate-list strategy;
        the candidates left out are those no demand point has among its nearest).
    heuristic_starts : int, optional
        Starts of the greedy + swap heuristic (the first greedy, the others random).

    Notes
    -----
    Domains are solved one after another, the one with most samples first; a hole's allowance
    and the separation rule carry over to the domains that follow, so both hold for the whole
    program, not only within a domain.

    Returns
    -------
    SelectionResult
    """
    attributes = list(attributes)
    weight = (
        blocks["tonnes_t"].to_numpy(dtype=float)
        if block_weight is None
        else np.asarray(block_weight, dtype=float)
    )
    std = Standardiser.from_blocks(blocks, attributes, weight, importance=attribute_weights)
    cand_z = std.transform(candidates)
    cand_ok = np.all(np.isfinite(cand_z), axis=1)
    blk_z = std.transform(blocks)
    ex_z = std.transform(existing) if existing is not None and len(existing) else None

    blk_dom = blocks["domain"].astype(str).to_numpy()
    cand_dom = candidates["domain"].astype(str).to_numpy()
    ex_dom = existing["domain"].astype(str).to_numpy() if ex_z is not None else np.array([])
    holes_all = candidates["hole_id"].astype(str).to_numpy()
    cand_ids = candidates["candidate_id"].to_numpy()
    ex_ids = existing["sample_id"].to_numpy() if ex_z is not None else np.array([])

    hole_code_all, hole_names = pd.factorize(holes_all)
    hole_names = pd.Index(hole_names)
    cap_left = np.full(len(hole_names), int(max_per_hole)) if max_per_hole is not None else None
    cand_from = candidates["from_m"].to_numpy(dtype=float)
    cand_to = candidates["to_m"].to_numpy(dtype=float)
    blocked = np.zeros(len(candidates), dtype=bool)  # too close to a sample of another domain

    rows, solves = [], []
    serve_key = np.full(len(blocks), "", dtype=object)
    serve_dist = np.full(len(blocks), np.nan)
    # Domains one after another, most samples first: a hole's allowance and the separation
    # rule carry over to the domains that follow.
    domains = sorted(set(blk_dom) | set(map(str, allocation)))
    domains.sort(key=lambda d: -int(allocation.get(d, 0)))
    for dom in domains:
        p = int(allocation.get(dom, 0))
        bi = np.flatnonzero(blk_dom == dom)
        if bi.size == 0:
            continue
        zb = _fill_nan(blk_z[bi], weight[bi])
        wb = weight[bi]
        open_hole = (cap_left[hole_code_all] > 0) if cap_left is not None else True
        ci = np.flatnonzero((cand_dom == dom) & cand_ok & ~blocked & open_hole)
        ei = np.flatnonzero(ex_dom == dom) if ex_z is not None else np.array([], dtype=int)
        ze = _fill_nan(ex_z[ei], np.ones(ei.size)) if ei.size else np.empty((0, zb.shape[1]))
        t0 = perf_counter()
        cen, cw, _ = aggregate_demand(
            zb, wb, max_points=max_demand_points, method=aggregation, seed=seed
        )
        timing = {"aggregate": perf_counter() - t0}
        t0 = perf_counter()
        chosen = np.array([], dtype=int)
        if p > 0 and ci.size:
            from scipy.spatial.distance import cdist

            n_pool = ci.size
            if ci.size * len(cen) > milp_max_pairs and ci.size > shortlist_max:
                ci = _shortlist(cen, cand_z[ci], ci, shortlist_max)
            dist = cdist(cen, cand_z[ci]).astype(
                np.float64 if ci.size * len(cen) <= 4e6 else np.float32
            )
            base = cdist(cen, ze).min(axis=1) if ei.size else None
            hole_codes, local_holes = pd.factorize(holes_all[ci])
            capacity = (
                cap_left[hole_names.get_indexer(local_holes)] if cap_left is not None else None
            )
            problem = PMedianProblem(
                dist,
                cw,
                p,
                base_distance=base,
                hole=hole_codes,
                from_m=cand_from[ci],
                to_m=cand_to[ci],
                hole_capacity=capacity,
                min_separation_m=min_separation_m,
            )
            res = solve_pmedian(
                problem,
                milp_max_pairs=milp_max_pairs,
                time_limit_s=time_limit_s,
                n_starts=heuristic_starts,
                seed=seed,
            )
            chosen = ci[res.chosen]
            for c in chosen:
                if cap_left is not None:
                    cap_left[hole_code_all[c]] -= 1
                if min_separation_m is not None:
                    same = hole_code_all == hole_code_all[c]
                    gap = np.maximum(cand_from - cand_to[c], cand_from[c] - cand_to)
                    blocked |= same & (gap < min_separation_m - 1e-9)
            details = (
                dict(res.details, shortlisted=int(ci.size)) if ci.size < n_pool else res.details
            )
            solves.append(
                DomainSolve(
                    dom,
                    p,
                    chosen.size,
                    res.method,
                    res.status,
                    res.objective,
                    res.gap_frac,
                    len(cen),
                    bi.size,
                    n_pool,
                    details,
                )
            )
        else:
            solves.append(
                DomainSolve(
                    dom,
                    p,
                    0,
                    "none",
                    "no candidates" if p else "none needed",
                    float("nan"),
                    None,
                    len(cen),
                    bi.size,
                    ci.size,
                )
            )
        timing["solve"] = perf_counter() - t0
        solves[-1].timings_s = timing
        t0 = perf_counter()
        # Every block of the domain is served by its nearest chosen or existing sample.
        keys = [f"new:{int(k)}" for k in cand_ids[chosen]]
        keys += [f"existing:{k}" for k in ex_ids[ei]]
        targets = np.vstack([cand_z[chosen], ze]) if keys else np.empty((0, zb.shape[1]))
        idx, dist_b = nearest(zb, targets)
        if keys:
            serve_key[bi] = np.asarray(keys, dtype=object)[idx]
            serve_dist[bi] = dist_b
        if chosen.size:
            rows.append(
                _describe_chosen(
                    dom,
                    candidates,
                    chosen,
                    cand_z,
                    zb,
                    wb,
                    idx,
                    blocks,
                    bi,
                    std,
                    attributes,
                    high_low_sd,
                )
            )
        timing["assign"] = perf_counter() - t0
    selection = (
        pd.concat(rows, ignore_index=True)
        if rows
        else pd.DataFrame(columns=["domain", "candidate_id"])
    )
    block_sample = pd.DataFrame(
        {
            "block_row": np.arange(len(blocks)),
            "domain": blk_dom,
            "sample_key": serve_key,
            "distance_std": serve_dist,
        }
    )
    return SelectionResult(selection, block_sample, solves, std)


def format_periods(periods: Sequence[int]) -> str:
    """Periods as words with ranges: ``[1, 2, 3, 5]`` -> ``"periods 1-3, 5"``.

    Examples
    --------
    >>> format_periods([3, 1, 2, 5])
    'periods 1-3, 5'
    >>> format_periods([4])
    'period 4'
    """
    ps = sorted({int(p) for p in periods})
    if not ps:
        return "no scheduled period"
    parts, a = [], ps[0]
    prev = a
    for q in ps[1:] + [None]:
        if q is not None and q == prev + 1:
            prev = q
            continue
        parts.append(f"{a}-{prev}" if prev > a else f"{a}")
        if q is not None:
            a = prev = q
    word = "period" if len(ps) == 1 else "periods"
    return f"{word} {', '.join(parts)}"


def describe_periods(periods, tonnes, *, minor_frac: float = 0.05, mostly_frac: float = 0.5) -> str:
    """The periods in which some tonnes are mined, in words.

    Periods holding less than ``minor_frac`` of the tonnes are left out, and the rest given as
    their first to last period; when the heaviest periods that together hold ``mostly_frac`` are
    at most half of them and hold at least 1.25 times their even share, they are named too.

    Examples
    --------
    >>> describe_periods([1, 1, 1, 2, 3, 4], [10, 10, 10, 2, 2, 2])
    'periods 1-4, mostly 1'
    >>> describe_periods([2, 3, 5, 8], [1, 1, 1, 1])
    'periods 2-8'
    """
    pt = pd.Series(np.asarray(tonnes, dtype=float)).groupby(np.asarray(periods, dtype=float)).sum()
    pt = pt[np.isfinite(pt.index.to_numpy(dtype=float))]
    total = pt.sum()
    if total <= 0 or pt.empty:
        return "no scheduled period"
    pt = pt[pt >= minor_frac * total]
    first, last = int(pt.index.min()), int(pt.index.max())
    text = f"period {first}" if first == last else f"periods {first}-{last}"
    heavy = pt.sort_values(ascending=False, kind="stable")
    top = heavy.index[: int(np.searchsorted(heavy.cumsum().to_numpy(), mostly_frac * total)) + 1]
    top_share = float(heavy.loc[top].sum() / total)
    if len(pt) > 1 and len(top) <= len(pt) / 2 and top_share >= 1.25 * len(top) / len(pt):
        text += ", mostly " + format_periods([int(p) for p in top]).split(" ", 1)[1]
    return text


def format_tonnes(t: float) -> str:
    """Tonnes in words a planner reads: ``1.2 Mt``, ``350 kt``, ``900 t``."""
    if t >= 1e6:
        return f"{t / 1e6:.1f} Mt"
    if t >= 1e3:
        return f"{t / 1e3:.0f} kt"
    return f"{t:.0f} t"


def _describe_chosen(
    dom, candidates, chosen, cand_z, zb, wb, idx, blocks, bi, std, attributes, high_low_sd
):
    tonnes = blocks["tonnes_t"].to_numpy(dtype=float)[bi]
    period = blocks["period"].to_numpy(dtype=float)[bi] if "period" in blocks else None
    dom_tonnes = tonnes.sum()
    mean_z, sd_z = weighted_mean_std(zb, wb)
    sd_z = np.where(sd_z > 0, sd_z, 1.0)
    out = candidates.iloc[chosen].copy()
    represented, share, reasons, period_text = [], [], [], []
    for k, _c in enumerate(chosen):
        mine = idx == k
        t_rep = float(tonnes[mine].sum())
        represented.append(t_rep)
        share.append(t_rep / dom_tonnes if dom_tonnes > 0 else 0.0)
        ptxt = describe_periods(period[mine], tonnes[mine]) if period is not None else ""
        period_text.append(ptxt)
        dev = (cand_z[chosen[k]] - mean_z) / sd_z
        order = np.argsort(-np.abs(dev))
        parts = []
        for a in order[:2]:
            if abs(dev[a]) >= high_low_sd and std.importance[a] > 0:
                parts.append(("high " if dev[a] > 0 else "low ") + attribute_words(attributes[a]))
        part = f"the {', '.join(parts)} part" if parts else "the typical part"
        if not mine.any():
            reasons.append(f"chosen for domain {dom} but nearest to no block: a spare sample")
        else:
            when = f"{ptxt}, " if ptxt else ""
            reasons.append(
                f"stands for {format_tonnes(t_rep)} of domain {dom} ({share[-1]:.0%}), {when}{part}"
            )
    out["tonnes_represented_t"] = represented
    out["domain_share_frac"] = share
    out["periods"] = period_text
    out["reason"] = reasons
    return out
