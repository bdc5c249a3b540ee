"""Build, solve and report a blend plan in one call; compare scenarios side by side."""

from __future__ import annotations

import time
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from pyomo.common.gc_manager import PauseGC

from geomet.errors import ModelInfeasible
from geomet.plan.data import BlendData
from geomet.plan.diagnose import DIAGNOSIS_COLUMNS, diagnose_infeasibility
from geomet.plan.model import build_blend_model
from geomet.plan.results import (
    LIMIT_COLUMNS,
    PLANT_COLUMNS,
    SCHEDULE_COLUMNS,
    STOCKPILE_COLUMNS,
    limits_table,
    plant_table,
    schedule_table,
    stockpile_table,
)
from geomet.plan.solve import SolveOptions, WarmStart, compile_or_infeasible, solve_compiled

SCENARIO_COLUMNS = (
    "scenario",
    "status",
    "value_pv_usd",
    "mip_gap_frac",
    "mill_feed_t",
    "leach_feed_t",
    "waste_t",
    "cu_recovered_t",
    "au_recovered_oz",
    "acid_t",
    "mill_clay_severity_idx",
    "closing_stockpile_t",
    "binding_limits_n",
    "top_limit",
    "top_shadow_price_usd",
    "changes",
)


@dataclass
class BlendResult:
    """A solved (or diagnosed) blend plan."""

    status: str  # 'optimal' | 'time_limit' | 'infeasible'
    value_pv_usd: float
    mip_gap: float
    schedule: pd.DataFrame
    plant: pd.DataFrame
    stockpiles: pd.DataFrame
    limits: pd.DataFrame
    diagnosis: pd.DataFrame
    timings: dict[str, float] = field(default_factory=dict)
    counts: dict[str, int] = field(default_factory=dict)
    warm_start: WarmStart | None = None  # basis for warm-starting related scenarios
    simplex_iterations: int = 0

    @property
    def feasible(self) -> bool:
        return self.status != "infeasible"

    def raise_if_infeasible(self) -> None:
        """Raise :class:`~geomet.errors.ModelInfeasible` carrying the diagnosis table."""
        if self.feasible:
            return
        lines = self.diagnosis.loc[self.diagnosis["method"] == "elastic", "message"].head(5)
        message = "blend plan is infeasible: " + ("; ".join(lines) or "see the diagnosis table")
        raise ModelInfeasible(message, diagnosis=self.diagnosis)


def _empty(columns) -> pd.DataFrame:
    return pd.DataFrame(columns=list(columns))


def solve_blend(
    data: BlendData,
    options: SolveOptions | None = None,
    *,
    diagnose: bool = True,
    warm_start: WarmStart | None = None,
) -> BlendResult:
    """Build the model, hand it to HiGHS and return the plan's tables.

    Parameters
    ----------
    data : BlendData
        From :func:`geomet.plan.data.blend_data`.
    options : SolveOptions, optional
        Solver settings.
    diagnose : bool
        On infeasibility, run the elastic model and the IIS (see :mod:`geomet.plan.diagnose`).
    warm_start : WarmStart, optional
        ``result.warm_start`` of a related plan (same parcels and routes, other limit values):
        an LP then re-solves by dual simplex from that basis.

    Returns
    -------
    BlendResult
        Timings: ``build_s`` (Pyomo model), ``handover_s`` (standard-form compile and
        ``passModel``), ``solve_s`` (HiGHS), ``ranging_s``, ``report_s`` (tables).
    """
    with PauseGC():  # build, hand-over and reporting allocate many small objects
        return _solve_blend(data, options or SolveOptions(), diagnose, warm_start)


def _solve_blend(data: BlendData, options: SolveOptions, diagnose: bool, warm_start) -> BlendResult:
    start = time.perf_counter()
    bm = build_blend_model(data)
    timings = {"build_s": time.perf_counter() - start}
    counts = bm.counts()
    cm = compile_or_infeasible(bm)
    out = None
    if cm is not None:
        out = solve_compiled(cm, options, warm_start=warm_start)
        timings["handover_s"] = cm.compile_s + out.handover_s
        timings["solve_s"] = out.solve_s
        timings["ranging_s"] = out.ranging_s
        timings["warm_started"] = float(out.warm_started)
    if out is None or out.status == "infeasible":
        start = time.perf_counter()
        diagnosis = diagnose_infeasibility(data, options) if diagnose else _empty(DIAGNOSIS_COLUMNS)
        timings["diagnosis_s"] = time.perf_counter() - start
        return BlendResult(
            "infeasible",
            np.nan,
            np.nan,
            _empty(SCHEDULE_COLUMNS),
            _empty(PLANT_COLUMNS),
            _empty(STOCKPILE_COLUMNS),
            _empty(LIMIT_COLUMNS),
            diagnosis,
            timings,
            counts,
        )
    start = time.perf_counter()
    result = BlendResult(
        out.status,
        out.objective,
        out.mip_gap,
        schedule_table(data, cm, out),
        plant_table(data, cm, out),
        stockpile_table(data, cm, out),
        limits_table(bm, cm, out),
        _empty(DIAGNOSIS_COLUMNS),
        timings,
        counts,
        out.warm_start,
        out.simplex_iterations,
    )
    timings["report_s"] = time.perf_counter() - start
    return result


def scenario_summary(
    name: str, result: BlendResult, changes: Mapping[str, object] | None = None
) -> dict:
    """One row of the scenario comparison for a solved plan."""
    plant, sched = result.plant, result.schedule
    row = dict.fromkeys(SCENARIO_COLUMNS, np.nan)
    row.update(
        scenario=name,
        status=result.status,
        value_pv_usd=result.value_pv_usd,
        mip_gap_frac=result.mip_gap,
        changes=", ".join(f"{k}={v}" for k, v in (changes or {}).items()),
    )
    if not result.feasible:
        return row
    mill = plant[plant["processor"] == "mill"]
    leach = plant[plant["processor"] == "leach"]
    row["mill_feed_t"] = float(mill["feed_t"].sum())
    row["leach_feed_t"] = float(leach["feed_t"].sum())
    row["waste_t"] = float(sched.loc[sched["destination"] == "waste", "tonnes_t"].sum())
    row["cu_recovered_t"] = float(plant["cu_recovered_t"].sum())
    row["au_recovered_oz"] = float(plant["au_recovered_oz"].sum())
    row["acid_t"] = float(leach["acid_t"].sum())
    feed = mill["feed_t"].to_numpy(float)
    sev = mill["clay_severity_idx"].to_numpy(float)
    ok = feed > 0
    row["mill_clay_severity_idx"] = (
        float((feed[ok] * sev[ok]).sum() / feed[ok].sum()) if ok.any() else np.nan
    )
    if len(result.stockpiles):
        last = result.stockpiles["period"].max()
        row["closing_stockpile_t"] = float(
            result.stockpiles.loc[result.stockpiles["period"] == last, "closing_t"].sum()
        )
    else:
        row["closing_stockpile_t"] = 0.0
    lim = result.limits
    binding = lim[lim["binding"]]
    row["binding_limits_n"] = len(binding)
    if len(binding):
        totals = binding.groupby("limit")["shadow_price_usd"].apply(lambda s: s.abs().sum())
        top = totals.idxmax()
        row["top_limit"] = top
        row["top_shadow_price_usd"] = float(totals.max())
    return row


def solve_scenarios(
    datas: Mapping[str, BlendData],
    options: SolveOptions | None = None,
    *,
    changes: Mapping[str, Mapping[str, object]] | None = None,
) -> tuple[dict[str, BlendResult], pd.DataFrame]:
    """Solve several variants and compare them in one table.

    Parameters
    ----------
    datas : mapping
        Scenario name -> its BlendData (built with the scenario's limits and prices).
    options : SolveOptions, optional
    changes : mapping, optional
        Scenario name -> the overrides it applies (shown in the table).

    Returns
    -------
    results : dict of str -> BlendResult
    comparison : DataFrame
        One row per scenario (columns :data:`SCENARIO_COLUMNS`); ``top_limit`` is the limit with
        the largest total |shadow price| over periods.
    """
    results, rows = {}, []
    for name, data in datas.items():
        res = solve_blend(data, options)
        results[name] = res
        rows.append(scenario_summary(name, res, (changes or {}).get(name)))
    return results, pd.DataFrame(rows, columns=list(SCENARIO_COLUMNS))
