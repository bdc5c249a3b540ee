"""Geometallurgical domains: log-ratio features, clustering, downhole smoothing, rules,
naming and domain tables."""

from geomet.domains.cluster import DomainClusterer, cluster_jaccard, clustering_stability
from geomet.domains.features import (
    GROUP_COLUMNS,
    LogRatioFeatures,
    build_feature_pipeline,
    composition_columns,
    has_composition,
)
from geomet.domains.logratio import (
    closure,
    clr,
    clr_inverse,
    ilr,
    ilr_inverse,
    multiplicative_replacement,
    pivot_basis,
)
from geomet.domains.naming import THEMES, name_domains, theme_scores
from geomet.domains.rules import (
    Condition,
    Rule,
    apply_rules,
    compare_domains,
    parse_rule,
    parse_rules,
    site_domains_at_midpoints,
)
from geomet.domains.smoothing import downhole_runs, smooth_downhole
from geomet.domains.summary import domain_summary, summary_attributes, weighted_quantiles

__all__ = [
    "GROUP_COLUMNS",
    "THEMES",
    "Condition",
    "DomainClusterer",
    "LogRatioFeatures",
    "Rule",
    "apply_rules",
    "build_feature_pipeline",
    "closure",
    "clr",
    "clr_inverse",
    "cluster_jaccard",
    "clustering_stability",
    "compare_domains",
    "composition_columns",
    "domain_summary",
    "downhole_runs",
    "has_composition",
    "ilr",
    "ilr_inverse",
    "multiplicative_replacement",
    "name_domains",
    "parse_rule",
    "parse_rules",
    "pivot_basis",
    "site_domains_at_midpoints",
    "smooth_downhole",
    "summary_attributes",
    "theme_scores",
    "weighted_quantiles",
]
