"""geomet: drill-core data to ore domains, process forecasts, blend plans and testwork selection.

The public Python API, for notebook users; the ``geomet`` command is a thin layer over it.
Everything a recipe run does is callable with tables in and tables out::

    import geomet
    result = geomet.run_recipe("recipes/demo.toml")          # files in, output folder out
    result.tables["blend_plant"]                               # every table as a DataFrame
    result = geomet.run_steps(tables, ["composite", "mineralogy"], {"composite": {"length_m": 5}})

Names are imported on first use, so ``import geomet`` stays quick.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

# public name -> module that defines it
_EXPORTS = {
    # running recipes and steps
    "run_recipe": "geomet.run.pipeline",
    "run_steps": "geomet.run.pipeline",
    "save_result": "geomet.run.pipeline",
    "RunResult": "geomet.run.pipeline",
    "load_recipe": "geomet.recipe",
    # files
    "read_table": "geomet.io.readers",
    "write_workbook": "geomet.io.workbook",
    "write_demo": "geomet.io.demo_files",
    # drill-hole data
    "DetectionRule": "geomet.drillholes.censored",
    "validate_tables": "geomet.drillholes.validation",
    "desurvey_holes": "geomet.drillholes.desurvey",
    "minimum_curvature": "geomet.drillholes.desurvey",
    "merge_intervals": "geomet.drillholes.merge",
    "composite_intervals": "geomet.drillholes.composite",
    # mineralogy and domains
    "add_mineralogy_columns": "geomet.minerals.groups",
    "normative_speciation": "geomet.minerals.speciation",
    "element_mass_fractions": "geomet.minerals.formula",
    "clr": "geomet.domains.logratio",
    "ilr": "geomet.domains.logratio",
    "multiplicative_replacement": "geomet.domains.logratio",
    "DomainClusterer": "geomet.domains.cluster",
    "smooth_downhole": "geomet.domains.smoothing",
    # forecasts and flags
    "bond_specific_energy": "geomet.forecast.comminution",
    "morrell_specific_energy": "geomet.forecast.comminution",
    "first_order_recovery": "geomet.forecast.flotation",
    "klimpel_recovery": "geomet.forecast.flotation",
    "two_product_recovery_frac": "geomet.forecast.testwork",
    "flag_blocks": "geomet.flags",
    "lookahead_table": "geomet.flags",
    # planning and sampling
    "solve_blend": "geomet.plan.plan",
    "neyman_allocation": "geomet.sampling.allocation",
    "solve_pmedian": "geomet.sampling.pmedian",
}

__all__ = ["__version__", *_EXPORTS]


def __getattr__(name: str):
    module = _EXPORTS.get(name)
    if module is None:
        message = f"module 'geomet' has no attribute {name!r}"
        raise AttributeError(message)
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__():
    return sorted(__all__)
