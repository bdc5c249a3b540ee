"""Run step ``domains``: geometallurgical domains of composites, applied to blocks."""

from __future__ import annotations

from typing import Any, Literal

import numpy as np
import pandas as pd
from pydantic import Field, field_validator, model_validator
from sklearn.neighbors import KNeighborsClassifier
from sklearn.pipeline import Pipeline
from threadpoolctl import threadpool_limits

from geomet.domains.cluster import DomainClusterer, clustering_stability
from geomet.domains.features import (
    ABSORPTION_COLUMNS,
    CHEMISTRY_LINEAR_COLUMNS,
    CHEMISTRY_LOG_COLUMNS,
    build_feature_pipeline,
    composition_columns,
    has_composition,
)
from geomet.domains.naming import name_domains
from geomet.domains.rules import (
    apply_rules,
    compare_domains,
    parse_rules,
    site_domains_at_midpoints,
)
from geomet.domains.smoothing import smooth_downhole
from geomet.domains.summary import domain_summary
from geomet.errors import InputDataError
from geomet.run.registry import StepContext, StepOptions, register_step

UNCLASSIFIED = "Unclassified"
CROSSTAB_COLUMNS = [
    "reference", "domain", "reference_domain", "intervals", "length_m", "domain_share_frac",
    "reference_share_frac", "adjusted_rand_idx", "agreement_frac",
]


class DomainsOptions(StepOptions):
    """Options of the ``domains`` step (recipe section ``[domains]``)."""

    method: Literal["kmeans", "gmm", "density", "rules", "site"] = Field(
        "kmeans",
        description="How domains are made: k-means, Gaussian mixture, density (HDBSCAN) "
        "clustering of mineral log-ratios; 'rules' from the threshold rules; 'site' from the "
        "site_domain codes.",
    )
    n_domains: Literal["auto"] | int = Field(
        "auto", description="Number of domains, or 'auto' to choose it in [k_min, k_max] "
        "(silhouette or another criterion for k-means, BIC for Gaussian mixtures).",
    )
    k_min: int = Field(3, ge=2, description="Smallest number of domains tried with 'auto'.")
    k_max: int = Field(8, ge=2, description="Largest number of domains tried with 'auto'.")
    kmeans_criterion: Literal["silhouette", "calinski_harabasz", "davies_bouldin"] = Field(
        "silhouette", description="Rule choosing k for k-means (largest silhouette or "
        "Calinski-Harabasz, smallest Davies-Bouldin).",
    )
    features: Literal["minerals", "groups"] | list[str] = Field(
        "minerals", description="Composition used: the 35 scanned minerals, the mineral "
        "groups, or a list of columns.",
    )
    chemistry: bool = Field(
        True, description="Add log10 Cu, log10 Au and the oxide ratio to the features."
    )
    absorption: bool = Field(
        True, description="Add the white-mica Al-OH absorption wavelength to the features."
    )
    logratio: Literal["clr", "ilr"] = Field(
        "clr", description="Log-ratio transform: centred (clr) or isometric with the pivot "
        "basis (ilr).",
    )
    zero_delta_pct: float = Field(
        0.065, gt=0, description="Value [wt%] given to zero minerals (multiplicative "
        "replacement), after closing each row to 100 wt%.",
    )
    standardise: bool = Field(
        True, description="Scale every feature to unit variance before PCA."
    )
    pca_components: int | None = Field(
        None, ge=1, description="Number of principal components (default: by variance share)."
    )
    pca_variance_frac: float = Field(
        0.9, gt=0, le=1, description="Share of variance the principal components keep."
    )
    max_fit_rows: int = Field(
        50_000, ge=100, description="Clustering is fitted on at most this many composites "
        "(seeded subsample; at most 10 000 for the density method) and then predicts all "
        "rows.",
    )
    min_cluster_size: int | None = Field(
        None, ge=2, description="Density method: smallest cluster in composites (default 1% "
        "of the fitted rows).",
    )
    min_run_m: float = Field(
        10.0, ge=0, description="Downhole smoothing: runs shorter than this [m] merge into a "
        "neighbouring run (0 = no smoothing; never applied to site codes).",
    )
    merge_to: Literal["similar", "longer"] = Field(
        "similar", description="Which neighbour absorbs a short run: the more similar in "
        "feature space, or the longer.",
    )
    max_gap_m: float | None = Field(
        None, ge=0, description="Downhole smoothing: intervals separated by a gap wider than "
        "this [m] are not neighbours (empty: consecutive intervals always are).",
    )
    envelope_column: str = Field("cu_pct", description="Grade defining the grade envelope.")
    envelope_cutoff: float | None = Field(
        0.2, description="Grade-envelope cut-off (default 0.2 % Cu) for the inside/outside "
        "comparison; empty to leave it out.",
    )
    rules: list[str | dict[str, Any]] = Field(
        default_factory=list, description="Ordered domain rules, first match wins: text like "
        "'clay_swelling_pct >= 5 -> Swelling clay' or tables with domain and when (or "
        "column, op, value). Operators: >=, >, <=, <, ==, !=.",
    )
    rules_default: str = Field("Other", description="Domain of rows no rule matches.")
    compare_columns: list[str] = Field(
        default_factory=lambda: ["lith_code"], description="Further categorical columns "
        "(e.g. logged lithology) cross-tabulated against the domains when present.",
    )
    stability_seed_offsets: list[int] = Field(
        default_factory=lambda: [1, 2, 3], description="Seed offsets of the re-fits used to "
        "report stability (adjusted Rand index); empty to skip.",
    )
    stability_bootstrap: bool = Field(
        True, description="Stability re-fits draw their fit rows with replacement (bootstrap)."
    )
    name_domains: bool = Field(
        True, description="Name data-driven domains from their dominant mineral groups and "
        "grade (else 'Domain 1', 'Domain 2', ...).",
    )
    plots: bool = Field(True, description="Draw strip logs, the PCA scatter and the k curve.")
    n_threads: int | None = Field(
        1, ge=1, description="BLAS/OpenMP threads for the step (empty: the libraries' "
        "default). One is the default: threaded k-means ran over ten times slower on a busy "
        "2-core machine.",
    )
    plot_holes: int = Field(4, ge=1, le=12, description="Holes shown in the strip-log figure.")

    @field_validator("n_domains")
    @classmethod
    def _positive_k(cls, v):
        if isinstance(v, int) and v < 1:
            msg = f"n_domains must be 'auto' or at least 1; got {v}"
            raise ValueError(msg)
        return v

    @field_validator("rules")
    @classmethod
    def _parse(cls, v):
        parse_rules(v)  # raises RecipeError (a ValueError) with the rule's problem
        return v

    @model_validator(mode="after")
    def _k_range(self):
        if self.k_min > self.k_max:
            msg = f"k_min must not exceed k_max; got k_min={self.k_min}, k_max={self.k_max}"
            raise ValueError(msg)
        return self


def _feature_columns(df, blocks, options, ctx):
    parts = composition_columns(df, options.features)
    extra_log = list(CHEMISTRY_LOG_COLUMNS) if options.chemistry else []
    extra_lin = list(CHEMISTRY_LINEAR_COLUMNS) if options.chemistry else []
    if options.absorption:
        extra_lin += list(ABSORPTION_COLUMNS)
    extra_log = [c for c in extra_log if c in df.columns]
    extra_lin = [c for c in extra_lin if c in df.columns]
    if blocks is not None:
        missing_parts = [c for c in parts if c not in blocks.columns]
        if missing_parts:
            msg = (
                f"blocks_mineralogy lacks the composition columns {missing_parts} used to "
                "domain the composites; give the block model the same mineral columns"
            )
            raise InputDataError(msg)
        dropped = [c for c in extra_log + extra_lin if c not in blocks.columns]
        if dropped:
            ctx.note(f"Domains: {', '.join(dropped)} left out of the features because the "
                     "block model does not carry them.")
        extra_log = [c for c in extra_log if c in blocks.columns]
        extra_lin = [c for c in extra_lin if c in blocks.columns]
    return parts, extra_log, extra_lin


def _crosstab(df, options, ctx):
    frames, stats_all = [], {}
    refs = []
    if "site_domain" in df.columns and df["site_domain"].notna().any() and options.method != "site":
        refs.append("site_domain")
    if "rule_domain" in df.columns and options.method != "rules":
        refs.append("rule_domain")
    refs += [c for c in options.compare_columns
             if c in df.columns and c not in refs and df[c].notna().any()]
    for ref in refs:
        tab, stats = compare_domains(df["domain"], df[ref], df["length_m"], reference_name=ref)
        tab["adjusted_rand_idx"] = stats["adjusted_rand_idx"]
        tab["agreement_frac"] = stats["agreement_frac"]
        frames.append(tab)
        stats_all[ref] = stats
        ctx.note(
            f"Domains against {ref.replace('_', ' ')}s: adjusted Rand index "
            f"{stats['adjusted_rand_idx']:.2f}, {stats['agreement_frac']:.0%} of "
            f"{stats['length_m']:.0f} m in the best-matching domain."
        )
    if not frames:
        out = pd.DataFrame({c: pd.Series(dtype=float if c.endswith(("_m", "_frac", "_idx"))
                                          else object) for c in CROSSTAB_COLUMNS})
        note = ("No site domains, domain rules or comparison columns were given, so there is "
                "nothing to compare the domains with.")
        out.attrs["note"] = note
        ctx.note("Domains: " + note)
        return out, stats_all
    return pd.concat(frames, ignore_index=True)[CROSSTAB_COLUMNS], stats_all


@register_step(
    "domains",
    options=DomainsOptions,
    needs=("mineralogy",),
    optional_needs=("blocks_mineralogy", "site_domains"),
    produces={
        "domained": "Composites with their geometallurgical domain (domain, domain_id).",
        "domain_summary": "Each domain's metres, share and mineral, clay and grade statistics, "
        "overall and inside/outside the grade envelope.",
        "domain_crosstab": "Domains against site domain codes and rule-based domains: "
        "intervals and metres.",
        "blocks_domained": "Blocks with the domain predicted by the fitted domain model.",
    },
    order=40,
)
def domains_step(ctx: StepContext, options: DomainsOptions) -> dict[str, pd.DataFrame]:
    """Group composites into geometallurgical domains and assign blocks to them."""
    with threadpool_limits(limits=options.n_threads):
        return _domains(ctx, options)


def _fit_features(df, valid, parts, log_cols, lin_cols, options, seed, ctx):
    """Fit the log-ratio -> impute -> scale -> PCA pipeline on the composites with minerals."""
    n_features = len(parts) - (options.logratio == "ilr") + len(log_cols) + len(lin_cols)
    features = build_feature_pipeline(
        parts, logratio=options.logratio, delta_pct=options.zero_delta_pct,
        log_columns=log_cols, linear_columns=lin_cols, standardise=options.standardise,
        pca_components=None if options.pca_components is None
        else min(options.pca_components, n_features),
        pca_variance_frac=options.pca_variance_frac, seed=seed,
    )
    used = [*parts, *log_cols, *lin_cols]
    dv = df[used] if valid.all() else df.loc[valid, used]
    Z = features.fit_transform(dv)
    pca = features.named_steps["pca"]
    explained = pca.explained_variance_ratio_
    ctx.note(
        f"Domains: {len(parts)} composition parts ({options.logratio}), "
        f"{len(log_cols) + len(lin_cols)} chemistry/absorption features; {Z.shape[1]} principal "
        f"components keep {explained.sum():.0%} of the variance."
    )
    return features, Z, pca, explained


def _domains(ctx: StepContext, options: DomainsOptions) -> dict[str, pd.DataFrame]:
    # shallow copies: pandas copy-on-write keeps the input tables unchanged
    df = ctx.tables["mineralogy"].copy(deep=False)
    blocks = ctx.tables.get("blocks_mineralogy")
    blocks = blocks.copy(deep=False) if blocks is not None else None
    for col in ("hole_id", "from_m", "to_m"):
        if col not in df.columns:
            msg = f"mineralogy table needs column {col!r} to make domains"
            raise InputDataError(msg)
    if "length_m" not in df.columns:
        df["length_m"] = df["to_m"] - df["from_m"]
    if "site_domain" not in df.columns and ctx.tables.get("site_domains") is not None:
        df["site_domain"] = site_domains_at_midpoints(df, ctx.tables["site_domains"])
    rules = parse_rules(options.rules)
    if rules:
        df["rule_domain"] = apply_rules(df, rules, options.rules_default, table="mineralogy")
    if options.method == "rules" and not rules:
        msg = "domains method 'rules' needs at least one rule in [domains] rules"
        raise InputDataError(msg)
    if options.method == "site" and (
        "site_domain" not in df.columns or df["site_domain"].isna().all()
    ):
        msg = ("domains method 'site' needs site domain codes: a site_domain column in the "
               "composites or a site_domains input table")
        raise InputDataError(msg)

    clustering = options.method in ("kmeans", "gmm", "density")
    try:
        parts, log_cols, lin_cols = _feature_columns(df, blocks, options, ctx)
    except InputDataError:
        if clustering:
            raise
        parts, log_cols, lin_cols = [], [], []  # rules and site codes work without minerals
    valid = has_composition(df, parts) if parts else np.zeros(len(df), dtype=bool)
    if valid.sum() < 2 and clustering:
        msg = (f"mineralogy has {int(valid.sum())} composite(s) with mineral abundances in "
               f"{parts[:3]}...; domains need at least 2")
        raise InputDataError(msg)
    seed = int(ctx.seed)
    if valid.sum() < 2:
        ctx.note(f"Domains: fewer than 2 composites carry mineral abundances, so the "
                 f"{options.method} domains are used without mineral features (no PCA, "
                 "smoothing by run length).")
        features = Z = pca = None
        explained = np.zeros(0)
        valid = np.zeros(len(df), dtype=bool)
    else:
        features, Z, pca, explained = _fit_features(
            df, valid, parts, log_cols, lin_cols, options, seed, ctx)

    clusterer = None
    model_info: dict[str, Any] = {}
    if options.method in ("kmeans", "gmm", "density"):
        clusterer = DomainClusterer(
            method=options.method, n_domains=options.n_domains, k_min=options.k_min,
            k_max=options.k_max, criterion=options.kmeans_criterion,
            max_fit_rows=options.max_fit_rows if options.method != "density"
            else min(options.max_fit_rows, 10_000),
            min_cluster_size=options.min_cluster_size, seed=seed,
        )
        clusterer.fit(Z)
        raw = clusterer.labels_
        raw_names = None
    elif options.method == "rules":  # rules and site codes need no mineral abundances
        codes, uniques = pd.factorize(df["rule_domain"], sort=True)
        raw_all, raw_names = codes, list(uniques)
    else:
        codes, uniques = pd.factorize(df["site_domain"].astype("string"), sort=True)
        raw_all, raw_names = codes, list(uniques)  # -1 where a composite has no site code

    # smoothing (not for site codes): labels -1 are barriers
    if clusterer is not None:
        labels = np.full(len(df), -1, dtype=int)
        labels[valid] = raw
    else:
        labels = np.asarray(raw_all, dtype=int).copy()
    raw_before = labels.copy()
    if options.min_run_m > 0 and options.method != "site":
        Zfull = None
        if Z is not None:
            Zfull = np.zeros((len(df), Z.shape[1]))
            Zfull[valid] = Z
        labels = smooth_downhole(
            df["hole_id"].to_numpy(), df["from_m"].to_numpy(float), df["to_m"].to_numpy(float),
            labels, options.min_run_m, features=Zfull, merge_to=options.merge_to,
            max_gap_m=options.max_gap_m,
        )
        changed = labels != raw_before
        metres = float(df["length_m"].to_numpy(float)[changed].sum())
        ctx.note(
            f"Domains: downhole smoothing to runs of at least {options.min_run_m:g} m relabelled "
            f"{int(changed.sum())} composites ({metres:.0f} m, "
            f"{metres / max(df['length_m'].sum(), 1e-12):.1%} of the metres)."
        )

    # domain ids 1..k by descending metres; 0 = unclassified
    length = df["length_m"].to_numpy(float)
    lab_s = pd.Series(labels)
    metres_by = pd.Series(length).groupby(lab_s).sum()
    metres_by = metres_by[metres_by.index >= 0]
    order = sorted(metres_by.index, key=lambda k: (-metres_by[k], k))
    raw_to_id = {int(k): i + 1 for i, k in enumerate(order)}
    domain_id = np.array([raw_to_id.get(int(k), 0) for k in labels], dtype=int)

    if raw_names is not None:
        names = {raw_to_id[k]: str(raw_names[k]) for k in raw_to_id}
    elif options.name_domains:
        ok = domain_id > 0
        names = name_domains(df.loc[ok], domain_id[ok])
        names = {int(k): v for k, v in names.items()}
    else:
        names = {i: f"Domain {i}" for i in raw_to_id.values()}
    names[0] = UNCLASSIFIED
    df["domain_id"] = domain_id
    df["domain"] = [names[i] for i in domain_id]
    if (domain_id == 0).any():
        why = {"site": "without a site domain code"}.get(
            options.method, "without mineral abundances")
        ctx.note(f"Domains: {int((domain_id == 0).sum())} composites {why} are Unclassified "
                 "(domain_id 0).")

    out: dict[str, pd.DataFrame] = {}
    # blocks
    if blocks is not None:
        b_id, n_assigned = _assign_blocks(
            blocks, options=options, parts=parts, features=features, clusterer=clusterer,
            rules=rules, names=names, raw_to_id=raw_to_id, Z=Z,
            composite_ids=domain_id[valid], model_info=model_info,
        )
        blocks["domain_id"] = b_id
        blocks["domain"] = [names.get(i, UNCLASSIFIED) for i in b_id]
        out["blocks_domained"] = blocks
        ctx.note(f"Domains: {n_assigned} of {len(blocks)} blocks assigned to domains "
                 "with the composites' fitted model.")

    # stability of the data-driven clustering
    stability = None
    if clusterer is not None and options.stability_seed_offsets:
        rng = np.random.default_rng(seed)
        ev = np.arange(len(Z)) if len(Z) <= 20_000 else rng.choice(len(Z), 20_000, replace=False)
        stability = clustering_stability(
            Z[ev], clusterer, raw[ev], seed_offsets=options.stability_seed_offsets,
            bootstrap=options.stability_bootstrap, seed=seed,
        )
        boot = ", bootstrap" if options.stability_bootstrap else ""
        ctx.note(
            f"Domains: stability over {len(stability)} re-fits (seed offsets "
            f"{options.stability_seed_offsets}{boot}): adjusted Rand index mean "
            f"{stability['adjusted_rand_idx'].mean():.2f}, "
            f"min {stability['adjusted_rand_idx'].min():.2f} (1 = identical domains)."
        )

    summary = domain_summary(
        df, envelope_column=options.envelope_column,
        envelope_cutoff=options.envelope_cutoff if options.envelope_column in df.columns
        else None,
    )
    if stability is not None:
        # cluster-wise stability (Hennig 2007): mean best Jaccard match over the re-fits
        jac = {raw_to_id[k]: float(stability[f"jaccard_{k}_frac"].mean())
               for k in raw_to_id if f"jaccard_{k}_frac" in stability.columns}
        summary["stability_jaccard_frac"] = summary["domain_id"].map(jac)
        weak = sorted(i for i, v in jac.items() if v < 0.6)
        if weak:
            ctx.note("Domains: " + ", ".join(f"{i} {names[i]}" for i in weak) + " reproduce "
                     "poorly across re-fits (best Jaccard match below 0.6, a rule of thumb).")
    crosstab, cross_stats = _crosstab(df, options, ctx)

    k = len(raw_to_id)
    how = {"kmeans": f"k-means ({options.kmeans_criterion})", "gmm": "Gaussian mixture (BIC)",
           "density": "HDBSCAN density clustering", "rules": "domain rules",
           "site": "site domain codes"}[options.method]
    ctx.note(f"Domains: {k} domains from {how}: " + "; ".join(
        f"{i} {names[i]}" for i in sorted(names) if i > 0 and i in raw_to_id.values()))
    if clusterer is not None and not clusterer.selection_.empty:
        sel = clusterer.selection_
        ctx.note("Domains: number of domains chosen by " + str(sel["criterion"].iloc[0]) + " ("
                 + ", ".join(f"k={int(r.k)}: {r.score:.3g}" for r in sel.itertuples()) + ").")
    if clusterer is not None and options.method == "density":
        ctx.note(f"Domains: HDBSCAN called {clusterer.noise_frac_:.1%} of the fitted composites "
                 "noise; they joined the cluster of their nearest clustered neighbour.")

    # saved model description (plain JSON) and the fitted objects for later steps
    model_info.update({
        "method": options.method,
        "composition_columns": parts,
        "log10_columns": log_cols,
        "linear_columns": lin_cols,
        "logratio": options.logratio,
        "zero_delta_pct": options.zero_delta_pct,
        "pca_explained_variance_frac": [float(x) for x in explained],
        "n_domains": k,
        "domain_names": {str(i): names[i] for i in sorted(names)},
        "min_run_m": options.min_run_m,
        "seed": seed,
    })
    # the fitted transform, enough to re-apply it elsewhere:
    # z = ((features with NaN -> impute_mean) - scale_mean) / scale_std, then
    # pcs = (z - pca_mean) @ pca_components.T
    if features is not None:
        model_info.update(_transform_info(features))
    if clusterer is not None:
        model_info["fit_rows"] = int(clusterer.fit_rows_)
        model_info["selection_curve"] = clusterer.selection_.to_dict(orient="list")
        model_info["centroids_pca"] = clusterer.centroids().tolist()
        model_info["cluster_to_domain_id"] = {str(a): b for a, b in raw_to_id.items()}
    if stability is not None:
        model_info["stability"] = stability.to_dict(orient="list")
    if cross_stats:
        model_info["comparison"] = cross_stats
    ctx.extras.setdefault("json_files", {})["domains"] = model_info
    if features is not None:
        ctx.extras["domains_pipeline"] = Pipeline(
            [*features.steps, ("cluster", clusterer)] if clusterer is not None
            else features.steps
        )

    if options.plots and ctx.plot_dir is not None:
        _plots(ctx, df, valid, Z, explained, names, clusterer, options)

    out["domained"] = df
    out["domain_summary"] = summary
    out["domain_crosstab"] = crosstab
    return out


def _assign_blocks(blocks, *, options, parts, features, clusterer, rules, names, raw_to_id,
                   Z, composite_ids, model_info) -> tuple[np.ndarray, int]:
    """Domain id of every block: by the rules, the fitted clusterer, or (site codes) the 15
    nearest composites in feature space. Adds rule domains only blocks have to ``names``."""
    b_id = np.zeros(len(blocks), dtype=int)
    if options.method == "rules":
        rd = apply_rules(blocks, rules, options.rules_default, table="blocks_mineralogy")
        name_to_id = {v: k for k, v in names.items() if k > 0}
        next_id = max(name_to_id.values(), default=0) + 1
        for nm in sorted(set(rd) - set(name_to_id)):
            name_to_id[nm] = next_id
            names[next_id] = nm
            next_id += 1
        return rd.map(name_to_id).to_numpy(int), len(blocks)
    if features is None or not len(blocks):
        return b_id, 0
    bvalid = has_composition(blocks, parts)
    if not bvalid.any():
        return b_id, 0
    Zb = features.transform(blocks.loc[bvalid])
    if clusterer is not None:
        raw_b = clusterer.predict(Zb)
        # a cluster that smoothing removed hands its blocks to the nearest surviving centre
        cent = clusterer.centroids()
        alive = np.array(sorted(raw_to_id))
        lookup = np.empty(clusterer.n_domains_, dtype=int)
        for k in range(clusterer.n_domains_):
            near = k if k in raw_to_id else int(
                alive[np.argmin(np.linalg.norm(cent[alive] - cent[k], axis=1))])
            lookup[k] = raw_to_id[near]
        b_id[bvalid] = lookup[raw_b]
        return b_id, int(bvalid.sum())
    train = composite_ids > 0
    if not train.any():
        return b_id, 0
    knn = KNeighborsClassifier(n_neighbors=min(15, int(train.sum())), weights="distance")
    knn.fit(Z[train], composite_ids[train])
    b_id[bvalid] = knn.predict(Zb)
    model_info["block_classifier"] = "15 nearest composites in feature space (distance-weighted)"
    return b_id, int(bvalid.sum())


def _transform_info(features: Pipeline) -> dict[str, Any]:
    """Plain-JSON parameters of the fitted feature pipeline."""
    lr = features.named_steps["logratio"]
    scaler = features.named_steps["scale"]
    pca = features.named_steps["pca"]
    return {
        "feature_names": [str(x) for x in lr.get_feature_names_out()],
        "log10_floors": {k: float(v) for k, v in lr.log_floors_.items()},
        "impute_mean": features.named_steps["impute"].statistics_.tolist(),
        "scale_mean": scaler.mean_.tolist(),
        "scale_std": (scaler.scale_.tolist() if scaler.scale_ is not None
                      else [1.0] * len(scaler.mean_)),
        "pca_mean": pca.mean_.tolist(),
        "pca_components": pca.components_.tolist(),
    }


def _plots(ctx, df, valid, Z, explained, names, clusterer, options):
    from geomet.io.plots.domains import (
        pca_scatter_figure,
        representative_holes,
        selection_curve_figure,
        strip_log_figure,
    )

    holes = representative_holes(df, options.plot_holes)
    if holes:
        fig = strip_log_figure(df, holes, names=names)
        ctx.add_plot("domains_strip_logs", fig,
                     f"Domains down {len(holes)} holes chosen to show most domains, with key "
                     "mineral groups and Cu.", table="domain_summary")
    if Z is not None and Z.shape[1] >= 1:
        fig = pca_scatter_figure(Z, df.loc[valid, "domain_id"].to_numpy(), names=names,
                                 explained_frac=explained, seed=int(ctx.seed))
        ctx.add_plot("domains_pca", fig, "Composites on the first two principal components, "
                     "coloured by domain.", table="domain_summary")
    if clusterer is not None and not clusterer.selection_.empty:
        fig = selection_curve_figure(clusterer.selection_)
        ctx.add_plot("domains_k_choice", fig, "Criterion used to choose the number of domains.",
                     table="domain_summary")
