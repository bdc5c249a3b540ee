"""Drill-hole data: censored values, validation, desurvey, merging and compositing.

Pure functions over pandas tables (no file input or output: readers live in :mod:`geomet.io`).
"""

from geomet.drillholes.censored import DetectionRule, parse_censored
from geomet.drillholes.composite import composite_intervals, metal_content
from geomet.drillholes.desurvey import (
    desurvey_holes,
    desurvey_intervals,
    minimum_curvature,
    positions_at,
    ratio_factor,
)
from geomet.drillholes.merge import merge_intervals
from geomet.drillholes.problems import Problem, problems_frame
from geomet.drillholes.validation import exclude_problem_rows, validate_tables

__all__ = [
    "DetectionRule",
    "Problem",
    "composite_intervals",
    "desurvey_holes",
    "desurvey_intervals",
    "exclude_problem_rows",
    "merge_intervals",
    "metal_content",
    "minimum_curvature",
    "parse_censored",
    "positions_at",
    "problems_frame",
    "ratio_factor",
    "validate_tables",
]
