"""Choosing drill-core intervals for metallurgical testwork.

- :mod:`~geomet.sampling.candidates`: core mass and candidate intervals (sliding windows of
  composites of one domain), consumed and excluded core.
- :mod:`~geomet.sampling.allocation`: Neyman allocation of samples to domains, with minimums,
  caps, existing tests and largest-remainder rounding.
- :mod:`~geomet.sampling.pmedian`: the p-median problem with spread rules, as a MILP (Pyomo +
  HiGHS) and by greedy + Teitz-Bart swap.
- :mod:`~geomet.sampling.selection`: standardised attribute space, demand aggregation, the
  choice within each domain and the reasons in words.
- :mod:`~geomet.sampling.coverage`: how well the samples span the ore to be mined.
- :mod:`~geomet.sampling.program`: everything in one call (:func:`plan_testwork`).
"""

from geomet.sampling.allocation import (
    allocate_samples,
    bounded_allocation,
    largest_remainder_round,
    neyman_allocation,
    period_weights,
)
from geomet.sampling.candidates import (
    CORE_DIAMETERS_MM,
    build_candidates,
    core_diameter_mm,
    core_length_for_mass_m,
    core_mass_kg,
    unavailable_mask,
)
from geomet.sampling.coverage import coverage_table
from geomet.sampling.pmedian import (
    PMedianProblem,
    solve_pmedian,
    solve_pmedian_heuristic,
    solve_pmedian_milp,
)
from geomet.sampling.program import TestworkPlan, plan_testwork
from geomet.sampling.selection import DEFAULT_ATTRIBUTES, select_samples

__all__ = [
    "CORE_DIAMETERS_MM",
    "DEFAULT_ATTRIBUTES",
    "PMedianProblem",
    "TestworkPlan",
    "allocate_samples",
    "bounded_allocation",
    "build_candidates",
    "core_diameter_mm",
    "core_length_for_mass_m",
    "core_mass_kg",
    "coverage_table",
    "largest_remainder_round",
    "neyman_allocation",
    "period_weights",
    "plan_testwork",
    "select_samples",
    "solve_pmedian",
    "solve_pmedian_heuristic",
    "solve_pmedian_milp",
    "unavailable_mask",
]
