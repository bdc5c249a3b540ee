"""Blend scheduling: route graph, Pyomo model, HiGHS solve, shadow prices, diagnosis, scenarios.

Typical use::

    parcels = parcels_from_blocks(block_forecasts)
    days, limits = period_limits(plant_limits, periods)
    graph = blend_route_graph(parcels, limits)
    data = blend_data(graph, periods, days, Economics())
    result = solve_blend(data)            # result.schedule, .plant, .stockpiles, .limits
"""

from geomet.plan.data import BlendData, MilpSpec, blend_data
from geomet.plan.diagnose import diagnose_infeasibility, elastic_diagnosis, iis_diagnosis
from geomet.plan.economics import Economics, discount_factors, leach_value_usd_t, mill_value_usd_t
from geomet.plan.graph import blend_route_graph, route_graph, validate_route_graph
from geomet.plan.limits import LIMITS, mill_energy_available_kwh, period_limits
from geomet.plan.model import BlendModel, build_blend_model
from geomet.plan.parcels import parcels_from_blocks, weighted_mean
from geomet.plan.plan import BlendResult, scenario_summary, solve_blend, solve_scenarios
from geomet.plan.solve import SolveOptions, compile_blend_model, solve_compiled

__all__ = [
    "LIMITS",
    "BlendData",
    "BlendModel",
    "BlendResult",
    "Economics",
    "MilpSpec",
    "SolveOptions",
    "blend_data",
    "blend_route_graph",
    "build_blend_model",
    "compile_blend_model",
    "diagnose_infeasibility",
    "discount_factors",
    "elastic_diagnosis",
    "iis_diagnosis",
    "leach_value_usd_t",
    "mill_energy_available_kwh",
    "mill_value_usd_t",
    "parcels_from_blocks",
    "period_limits",
    "route_graph",
    "scenario_summary",
    "solve_blend",
    "solve_compiled",
    "solve_scenarios",
    "validate_route_graph",
    "weighted_mean",
]
