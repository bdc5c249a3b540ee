"""The invented Vellantra porphyry Cu-Au demo deposit of the invented Orrin Vale Resources.

Pure functions returning DataFrames (writing them is :mod:`geomet.io.demo_files`'s job):

- :func:`generate_demo` builds every table, the hidden testwork truth and the planted errors.
- :func:`build_deposit` and :func:`sample_geology` give the 3-D model itself, for benchmark
  data of any size (vectorised over points).
"""

from geomet.demo.deposit import (
    LITH_CODES,
    DepositModel,
    Geology,
    build_deposit,
    bulk_density_t_m3,
    element_grades,
    lithology_at,
    sample_geology,
)
from geomet.demo.drilling import make_collars_surveys, positions_at
from geomet.demo.generate import ALL_TABLES, DemoData, generate_demo
from geomet.demo.intervals import LAB_ASSAY_HEADERS, LAB_DETECTION_LIMITS
from geomet.demo.testwork import TRUTH_PARAMETERS, true_responses, two_product_recovery_frac

__all__ = [
    "ALL_TABLES",
    "LAB_ASSAY_HEADERS",
    "LAB_DETECTION_LIMITS",
    "LITH_CODES",
    "TRUTH_PARAMETERS",
    "DemoData",
    "DepositModel",
    "Geology",
    "build_deposit",
    "bulk_density_t_m3",
    "element_grades",
    "lithology_at",
    "generate_demo",
    "make_collars_surveys",
    "positions_at",
    "sample_geology",
    "true_responses",
    "two_product_recovery_frac",
]
