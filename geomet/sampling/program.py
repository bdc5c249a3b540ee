"""A whole testwork program in one call: candidates, allocation, selection and coverage.

:func:`plan_testwork` ties the sampling modules together over the contract tables
(``composite_forecasts``, ``block_forecasts``, optional ``testwork``) and returns the three tables
of the ``testwork_selection`` step.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from geomet.errors import InputDataError
from geomet.sampling.allocation import allocate_samples, period_weights
from geomet.sampling.candidates import (
    build_candidates,
    exclusions_frame,
    overlap_length_m,
    unavailable_mask,
)
from geomet.sampling.coverage import coverage_table
from geomet.sampling.selection import (
    SelectionResult,
    Standardiser,
    select_samples,
    weighted_mean_std,
)


@dataclass
class TestworkPlan:
    """The tables of a testwork program and what was learnt building them."""

    __test__ = False  # not a pytest test class

    allocation: pd.DataFrame
    selection: pd.DataFrame
    coverage: pd.DataFrame
    candidates: pd.DataFrame
    existing: pd.DataFrame
    result: SelectionResult
    notes: list[str] = field(default_factory=list)
    timings_s: dict[str, float] = field(default_factory=dict)


def selection_columns(attributes) -> list[str]:
    """Columns of the selection table, in the order a core-shed technician reads them."""
    return [
        "sample_ref",
        "hole_id",
        "from_m",
        "to_m",
        "length_m",
        "mass_kg",
        "core_size",
        "core_fraction",
        "domain",
        *attributes,
        "tonnes_represented_t",
        "domain_share_frac",
        "periods",
        "reason",
        "candidate_id",
        "n_composites",
        "density_t_m3",
    ]


def existing_samples(
    testwork: pd.DataFrame | None, composites: pd.DataFrame, attributes: Sequence[str]
) -> pd.DataFrame:
    """Existing testwork samples with the domain and attributes of the core they came from.

    Parameters
    ----------
    testwork : DataFrame or None
        ``sample_id``, ``hole_id``, ``from_m``, ``to_m`` [m].
    composites : DataFrame
        ``hole_id``, ``from_m``, ``to_m``, ``domain``, the attributes.
    attributes : sequence of str

    Returns
    -------
    DataFrame
        ``sample_id``, ``hole_id``, ``from_m``, ``to_m``, ``domain`` (the domain of the longest
        overlap), ``overlap_m`` [m] and the overlap-length-weighted attribute means; samples that
        overlap no composite are left out.
    """
    cols = ["sample_id", "hole_id", "from_m", "to_m", "domain", "overlap_m", *attributes]
    if testwork is None or len(testwork) == 0:
        return pd.DataFrame(columns=cols)
    tw = testwork.reset_index(drop=True)
    if "sample_id" not in tw.columns:
        tw = tw.assign(sample_id=[f"row {i + 1}" for i in range(len(tw))])
    pairs = overlap_length_m(tw, composites)
    if len(pairs) == 0:
        return pd.DataFrame(columns=cols)
    comp = composites.reset_index(drop=True)
    pairs["domain"] = comp["domain"].astype(str).to_numpy()[pairs["right"].to_numpy()]
    by_dom = pairs.groupby(["left", "domain"], sort=True)["overlap_m"].sum().reset_index()
    best = by_dom.sort_values(["left", "overlap_m"], ascending=[True, False]).drop_duplicates(
        "left"
    )
    out = tw.iloc[best["left"].to_numpy()][["sample_id", "hole_id", "from_m", "to_m"]].copy()
    out["domain"] = best["domain"].to_numpy()
    out["overlap_m"] = pairs.groupby("left")["overlap_m"].sum().reindex(best["left"]).to_numpy()
    for att in attributes:
        v = comp[att].to_numpy(dtype=float)[pairs["right"].to_numpy()]
        w = pairs["overlap_m"].to_numpy() * np.isfinite(v)
        num = pd.Series(np.where(np.isfinite(v), v, 0.0) * w).groupby(pairs["left"]).sum()
        den = pd.Series(w).groupby(pairs["left"]).sum()
        mean = (num / den.where(den > 0)).reindex(best["left"]).to_numpy()
        out[att] = mean
    return out.reset_index(drop=True)


def domain_variability(
    frame: pd.DataFrame, standardiser: Standardiser, weights, domain_column: str = "domain"
) -> pd.Series:
    """Spread of each domain in the standardised (importance-weighted) attribute space.

    Notes
    -----
    :math:`S_h = \\sqrt{\\frac{1}{k} \\sum_a s_{h,a}^2}`, the root mean of the weighted
    variances :math:`s_{h,a}^2` of the standardised attributes within domain :math:`h`
    (equivalently the root-mean-square distance to the domain centroid over :math:`\\sqrt{k}`).
    This single spread is what Neyman allocation weighs the tonnes by.
    """
    z = standardiser.transform(frame)
    dom = frame[domain_column].astype(str).to_numpy()
    w = np.asarray(weights, dtype=float)
    out = {}
    for d in sorted(set(dom)):
        m = dom == d
        _, sd = weighted_mean_std(z[m], w[m])
        sd = sd[np.isfinite(sd)]
        out[d] = float(np.sqrt(np.mean(sd**2))) if sd.size else 0.0
    return pd.Series(out, name="variability_idx")


def plan_testwork(
    composites: pd.DataFrame,
    blocks: pd.DataFrame,
    testwork: pd.DataFrame | None = None,
    *,
    n_samples: int = 24,
    mass_kg: float = 25.0,
    core_diameter_mm: float = 63.5,
    core_size_label: str = "HQ",
    core_fraction: float = 0.5,
    max_interval_m: float | None = 20.0,
    attributes: Sequence[str] = (),
    attribute_weights: Mapping[str, float] | None = None,
    period_discount_frac: float = 0.0,
    period_weight_map: Mapping[int, float] | None = None,
    variability_source: str = "composites",
    min_per_domain: int = 2,
    min_domain_share_frac: float = 0.05,
    max_per_hole: int | None = 2,
    min_separation_m: float | None = 10.0,
    milp_max_pairs: int = 10_000,
    time_limit_s: float = 30.0,
    max_demand_points: int = 300,
    aggregation: str = "kmeans",
    heuristic_starts: int = 1,
    coverage_within_std: float = 0.5,
    coverage_gap_share_frac: float = 0.10,
    exclusions=None,
    seed: int = 0,
) -> TestworkPlan:
    """Candidates, Neyman allocation, p-median selection and coverage for a testwork program.

    Parameters
    ----------
    composites : DataFrame
        ``composite_forecasts``: ``hole_id``, ``from_m``, ``to_m`` [m], ``density_t_m3`` [t/m³],
        ``domain`` and the attributes.
    blocks : DataFrame
        ``block_forecasts``: ``domain``, ``tonnes_t`` [t], ``period`` (NaN: not scheduled) and
        the attributes.
    testwork : DataFrame, optional
        Existing samples (``sample_id``, ``hole_id``, ``from_m``, ``to_m``): their core is used
        up, they count towards their domain's samples and they already represent the ore near
        them.
    n_samples : int
        New samples to choose.
    mass_kg : float
        Mass one test needs [kg].
    core_diameter_mm : float
        Core diameter [mm].
    core_size_label : str
        Core size written on the sheet (e.g. ``"HQ"``).
    core_fraction : float
        Available fraction of the core (0.5: half core) [fraction].
    max_interval_m : float, optional
        Longest acceptable interval [m].
    attributes : sequence of str
        Attributes the samples must represent (missing ones are left out with a note).
    attribute_weights : mapping, optional
        Importance of each attribute in the distance.
    period_discount_frac : float
        Weight of period :math:`p` is :math:`1/(1+r)^{p-1}` [fraction per period].
    period_weight_map : mapping of int to float, optional
        Explicit period weights (override the discount).
    variability_source : {"composites", "blocks"}
        Where the domain spread :math:`S_h` is measured. Composites keep the short-range
        variability that estimated blocks smooth away.
    min_per_domain : int
        Fewest samples (existing + new) for a domain with at least ``min_domain_share_frac`` of
        the weighted tonnes.
    min_domain_share_frac : float
    max_per_hole : int, optional
    min_separation_m : float, optional
        [m]
    milp_max_pairs, time_limit_s, max_demand_points, aggregation, heuristic_starts
        See :func:`geomet.sampling.selection.select_samples`.
    coverage_within_std : float
        Standardised distance counted as covered.
    coverage_gap_share_frac : float
        Uncovered tails below this share of a domain's tonnes are not reported as gaps.
    exclusions : sequence of mappings or DataFrame, optional
        Intervals not to be used (``hole_id``, ``from_m``, ``to_m``).
    seed : int

    Returns
    -------
    TestworkPlan
    """
    import time

    timings: dict[str, float] = {}
    notes: list[str] = []
    t0 = time.perf_counter()
    for name, table, cols in (
        (
            "composite_forecasts",
            composites,
            ("hole_id", "from_m", "to_m", "density_t_m3", "domain"),
        ),
        ("block_forecasts", blocks, ("domain", "tonnes_t")),
    ):
        missing = [c for c in cols if c not in table.columns]
        if missing:
            msg = f"{name} lacks column(s) {', '.join(missing)} needed for testwork selection"
            raise InputDataError(msg)
    wanted = list(attributes)
    attrs = [a for a in wanted if a in composites.columns and a in blocks.columns]
    left_out = [a for a in wanted if a not in attrs]
    if left_out:
        notes.append(
            f"testwork selection: attribute(s) {', '.join(left_out)} not in both "
            "composite_forecasts and block_forecasts; left out"
        )
    if attribute_weights:
        attribute_weights = {k: v for k, v in attribute_weights.items() if k not in left_out}
    if not attrs:
        msg = (
            f"none of the attributes {', '.join(wanted) or '(none given)'} is in both "
            "composite_forecasts and block_forecasts"
        )
        raise InputDataError(msg)

    # Scheduled blocks and their weights.
    if "period" in blocks.columns and blocks["period"].notna().any():
        sched = blocks[blocks["period"].notna()].reset_index(drop=True)
        pw = period_weights(
            sched["period"].to_numpy(dtype=float),
            discount_rate=period_discount_frac,
            weights=period_weight_map,
        )
    else:
        sched = blocks.reset_index(drop=True)
        pw = np.ones(len(sched))
        notes.append("testwork selection: no block has a period; every block counts as scheduled")
    has_dom = sched["domain"].notna().to_numpy()
    sched = sched[has_dom].reset_index(drop=True)
    pw = pw[has_dom]
    if len(sched) == 0:
        msg = "block_forecasts has no scheduled block with a domain to sample for"
        raise InputDataError(msg)
    tonnes = sched["tonnes_t"].to_numpy(dtype=float)
    weight = tonnes * pw

    # Existing samples and candidates.
    existing = existing_samples(testwork, composites, attrs)
    if testwork is not None and len(testwork) and len(existing) < len(testwork):
        notes.append(
            f"testwork selection: {len(testwork) - len(existing)} existing sample(s) "
            "overlap no composite and are not counted"
        )
    excl = exclusions_frame(exclusions)
    unav = unavailable_mask(composites, testwork, excl)
    no_density = int((~np.isfinite(composites["density_t_m3"].to_numpy(dtype=float))).sum())
    if no_density:
        notes.append(
            f"testwork selection: {no_density} composite(s) have no density_t_m3, so their core "
            "mass is unknown and they form no candidate"
        )
    timings["prepare"] = time.perf_counter() - t0
    t0 = time.perf_counter()
    cands = build_candidates(
        composites,
        mass_kg=mass_kg,
        core_diameter_mm=core_diameter_mm,
        core_fraction=core_fraction,
        attributes=attrs,
        unavailable=unav,
        max_length_m=max_interval_m,
    )
    timings["candidates"] = time.perf_counter() - t0

    # Allocation.
    t0 = time.perf_counter()
    std = Standardiser.from_blocks(sched, attrs, weight, importance=attribute_weights)
    if variability_source == "composites":
        cw = (composites["to_m"] - composites["from_m"]).to_numpy(dtype=float) * composites[
            "density_t_m3"
        ].to_numpy(dtype=float)
        var = domain_variability(
            composites[composites["domain"].notna()],
            std,
            cw[composites["domain"].notna().to_numpy()],
        )
    elif variability_source == "blocks":
        var = domain_variability(sched, std, weight)
    else:
        msg = f"variability_source must be 'composites' or 'blocks'; got {variability_source!r}"
        raise InputDataError(msg)
    dom_t = pd.Series(tonnes).groupby(sched["domain"].astype(str).to_numpy()).sum()
    dom_w = pd.Series(weight).groupby(sched["domain"].astype(str).to_numpy()).sum()
    domains = list(dom_t.index)
    n_exist = existing["domain"].value_counts().reindex(domains, fill_value=0).to_numpy()
    ok_c = np.all(np.isfinite(std.transform(cands)), axis=1) if len(cands) else np.array([], bool)
    avail = (
        pd.Series(cands["domain"].astype(str).to_numpy()[ok_c])
        .value_counts()
        .reindex(domains, fill_value=0)
        .to_numpy()
    )
    # What can be placed apart in one domain bounds its allocation too.
    from geomet.sampling.pmedian import PMedianProblem, max_feasible_count

    placeable = []
    for d, a in zip(domains, avail, strict=True):
        if a == 0:
            placeable.append(0)
            continue
        m = (cands["domain"].astype(str).to_numpy() == d) & ok_c
        prob = PMedianProblem(
            np.zeros((1, int(m.sum()))),
            [1.0],
            0,
            hole=pd.factorize(cands["hole_id"].to_numpy()[m])[0],
            from_m=cands["from_m"].to_numpy()[m],
            to_m=cands["to_m"].to_numpy()[m],
            max_per_hole=max_per_hole,
            min_separation_m=min_separation_m,
        )
        placeable.append(max_feasible_count(prob))
    variability = var.reindex(domains).fillna(0.0).to_numpy()
    alloc = allocate_samples(
        n_samples,
        domains,
        dom_w.to_numpy(),
        variability,
        existing=n_exist,
        available=np.array(placeable),
        min_per_domain=min_per_domain,
        min_share_frac=min_domain_share_frac,
        tonnes_t=dom_t.to_numpy(),
    )
    alloc["candidates_available"] = avail
    short = n_samples - int(alloc["samples_allocated"].sum())
    if short > 0:
        notes.append(
            f"testwork selection: only {n_samples - short} of {n_samples} samples could be "
            "placed (too few separate candidates)"
        )
    timings["allocation"] = time.perf_counter() - t0

    # Selection.
    t0 = time.perf_counter()
    res = select_samples(
        cands,
        sched,
        dict(zip(alloc["domain"], alloc["samples_allocated"], strict=True)),
        attrs,
        block_weight=weight,
        existing=existing if len(existing) else None,
        max_demand_points=max_demand_points,
        aggregation=aggregation,
        max_per_hole=max_per_hole,
        min_separation_m=min_separation_m,
        milp_max_pairs=milp_max_pairs,
        time_limit_s=time_limit_s,
        heuristic_starts=heuristic_starts,
        attribute_weights=attribute_weights,
        seed=seed,
    )
    timings["selection"] = time.perf_counter() - t0
    solves = {s.domain: s for s in res.solves}
    alloc["samples_chosen"] = [solves[d].chosen if d in solves else 0 for d in alloc["domain"]]
    alloc["method"] = [solves[d].method if d in solves else "none" for d in alloc["domain"]]
    alloc["solver_status"] = [solves[d].status if d in solves else "" for d in alloc["domain"]]
    alloc["demand_points"] = [solves[d].n_demand if d in solves else 0 for d in alloc["domain"]]

    n_chosen = int(alloc["samples_chosen"].sum())
    n_alloc = int(alloc["samples_allocated"].sum())
    if n_chosen < n_alloc:
        lacking = alloc.loc[alloc["samples_chosen"] < alloc["samples_allocated"], "domain"]
        notes.append(
            f"testwork selection: {n_chosen} of {n_alloc} allocated samples chosen; the "
            "hole limit and separation rule left too few candidates in " + ", ".join(lacking)
        )
    sel = res.selection.reset_index(drop=True)
    if len(sel):
        sel = sel.sort_values(["domain", "hole_id", "from_m"], kind="stable").reset_index(drop=True)
        sel.insert(0, "sample_ref", [f"TWS-{k + 1:03d}" for k in range(len(sel))])
        sel["core_size"] = core_size_label
        sel["core_fraction"] = core_fraction
        sel = sel[selection_columns(attrs)]

    # Coverage.
    t0 = time.perf_counter()
    samples = (
        pd.concat(
            [
                sel.assign(source="new")[["domain", "source", *attrs]] if len(sel) else None,
                existing.assign(source="existing")[["domain", "source", *attrs]]
                if len(existing)
                else None,
            ],
            ignore_index=True,
        )
        if (len(sel) or len(existing))
        else pd.DataFrame(columns=["domain", "source", *attrs])
    )
    cov = coverage_table(
        sched,
        samples,
        cands,
        attrs,
        std,
        block_weight=weight,
        within_std=coverage_within_std,
        gap_share_frac=coverage_gap_share_frac,
    )
    timings["coverage"] = time.perf_counter() - t0
    return TestworkPlan(alloc, sel, cov, cands, existing, res, notes, timings)
