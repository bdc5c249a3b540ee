"""Minerals: formulas, reference, plant groups, clay indices and normative speciation.

Mineral formulas and the reference of known minerals, the plant groups and clay indices of
scanned mineralogy, normative speciation of assays into minerals, and scan-assay reconciliation.
"""

from geomet.minerals.clay import (
    DEFAULT_SEVERITY_WEIGHTS,
    ClaySeverityRegressor,
    clay_severity_index,
    fit_severity_weights,
    validate_severity_weights,
)
from geomet.minerals.formula import (
    ATOMIC_WEIGHTS_G_MOL,
    element_mass_fractions,
    molar_mass_g_mol,
    parse_formula,
)
from geomet.minerals.groups import (
    DEFAULT_GROUPS,
    add_mineralogy_columns,
    group_totals,
    oxide_ratio,
    validate_groups,
)
from geomet.minerals.nnls import nnls_batched
from geomet.minerals.reconcile import reconcile_scan_assays, scan_element_grades
from geomet.minerals.reference import MINERALS, Mineral, get_mineral, mineral_reference_table
from geomet.minerals.speciation import NORM_COLUMNS, flag_counts, normative_speciation

__all__ = [
    "ATOMIC_WEIGHTS_G_MOL",
    "DEFAULT_GROUPS",
    "DEFAULT_SEVERITY_WEIGHTS",
    "ClaySeverityRegressor",
    "MINERALS",
    "NORM_COLUMNS",
    "Mineral",
    "add_mineralogy_columns",
    "clay_severity_index",
    "element_mass_fractions",
    "fit_severity_weights",
    "flag_counts",
    "get_mineral",
    "group_totals",
    "mineral_reference_table",
    "molar_mass_g_mol",
    "nnls_batched",
    "normative_speciation",
    "oxide_ratio",
    "parse_formula",
    "reconcile_scan_assays",
    "scan_element_grades",
    "validate_groups",
    "validate_severity_weights",
]
