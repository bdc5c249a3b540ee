"""Why a blend plan is infeasible, in plant terms.

Two views, both returned in one table:

- **elastic**: every soft row (plant limits, stockpile capacities, mined tonnes that must be placed)
  gets a non-negative slack, and the weighted slack is minimised (a phase-one problem, see
  Chinneck 2008). The slacks left say which limits must move, in which periods, and by how much.
- **iis**: HiGHS's irreducible infeasible subset of the LP (``Highs.getIis``): a smallest set
  of rows that cannot hold together. A MILP is diagnosed through its LP relaxation.

References
----------
Chinneck, J. W. (2008). *Feasibility and Infeasibility in Optimization: Algorithms and
Computational Methods*. Springer, International Series in Operations Research & Management
Science 118. DOI 10.1007/978-0-387-74932-7.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.plan.data import BlendData
from geomet.plan.highs import quiet_highs
from geomet.plan.limits import LIMITS
from geomet.plan.model import RowInfo, build_blend_model
from geomet.plan.results import values_of
from geomet.plan.solve import (
    SolveOptions,
    compile_blend_model,
    compile_or_infeasible,
    solve_compiled,
)

DIAGNOSIS_COLUMNS = (
    "method",
    "limit",
    "description",
    "node",
    "period",
    "sense",
    "limit_value",
    "unit",
    "required_change",
    "required_limit",
    "message",
)

_HARD_ROWS = {
    "stock_balance": "stockpile balance",
    "feed_on_max": "feed only when a domain is switched on",
    "feed_on_min": "minimum feed once a domain is fed",
    "domains_max": "most domains fed in a period",
}


def _num(value: float) -> str:
    """A number as a planner reads it: thousands separated, few digits for small values.

    Examples
    --------
    >>> _num(18_000_000.0), _num(0.63883), _num(12.5)
    ('18,000,000', '0.6388', '12.5')
    """
    if abs(value) >= 1000:
        return f"{value:,.0f}"
    return f"{value:.4g}"


def _describe(info: RowInfo) -> str:
    if info.limit in LIMITS:
        return LIMITS[info.limit].description
    if info.limit == "stockpile_capacity_t":
        return "stockpile capacity"
    return "parcel tonnes that must be mined and placed"


def elastic_diagnosis(data: BlendData, options: SolveOptions | None = None) -> pd.DataFrame:
    """Minimal weighted moves of the soft limits that make the plan feasible.

    Returns
    -------
    DataFrame
        One row per limit and period that must move (columns :data:`DIAGNOSIS_COLUMNS`);
        ``required_change`` is in the limit's unit (positive = raise), ``required_limit`` the
        value that would hold.

    Notes
    -----
    For a blend row :math:`\\sum_j x_j (a_j - L) \\le s` the slack s [t × unit] converts to a
    change of the limit :math:`\\Delta L = s / F` with F the feed in the elastic plan.
    """
    bm = build_blend_model(data, elastic=True)
    cm = compile_blend_model(bm)
    out = solve_compiled(cm, options or SolveOptions(algorithm="simplex"))
    tonnes = values_of(cm, out, "flow")
    records = []
    for name in bm.soft_families:
        infos = bm.rows[name]
        slack = values_of(cm, out, f"slack_{name}")
        for i, info in enumerate(infos):
            s = float(slack[i]) if i < len(slack) else 0.0
            if s <= 1e-6 * max(abs(info.value), 1.0):
                continue
            period = data.periods[info.period_index]
            if info.form == "blend":
                idx = data.in_flows.get((info.node, info.period_index), [])
                feed = float(tonnes[idx].sum()) if idx else 0.0
                change = s / feed if feed > 0 else np.nan
            else:
                change = s
            change = -change if info.sense == "min" else change
            if info.limit == "mined_t":
                change = -s
                message = (
                    f"period {period}: {s:,.0f} t of parcel {info.node} cannot be placed "
                    "(no route, processor or stockpile can take it)"
                )
            else:
                verb = "rise" if change > 0 else "fall"
                message = (
                    f"period {period}: {_describe(info)} ({info.limit} at {info.node}) "
                    f"{_num(info.value)} {info.unit} must {verb} by {_num(abs(change))} to "
                    f"{_num(info.value + change)}"
                )
            records.append(
                (
                    "elastic",
                    info.limit,
                    _describe(info),
                    info.node,
                    period,
                    info.sense,
                    info.value,
                    info.unit,
                    change,
                    info.value + change,
                    message,
                )
            )
    return pd.DataFrame.from_records(records, columns=list(DIAGNOSIS_COLUMNS))


def iis_diagnosis(data: BlendData) -> pd.DataFrame:
    """The rows of HiGHS's irreducible infeasible subset, named in plant terms.

    A MILP is diagnosed on its LP relaxation (``getIis`` handles LPs only). Column bounds in
    the subset (non-negative tonnes) are summarised in one row.
    """
    import highspy

    bm = build_blend_model(data, relax_integers=True)
    cm = compile_or_infeasible(bm)
    if cm is None:
        return _empty_minimum_rows(bm)
    h = quiet_highs()
    h.setOptionValue("output_flag", False)
    A = cm.A
    h.passModel(
        int(A.shape[1]),
        int(A.shape[0]),
        int(A.nnz),
        1,
        1,
        0.0,
        cm.cost,
        cm.col_lower,
        cm.col_upper,
        cm.row_lower,
        cm.row_upper,
        A.indptr.astype(np.int32),
        A.indices.astype(np.int32),
        A.data.astype(float),
        np.zeros(A.shape[1], dtype=np.int32),
    )
    h.setOptionValue("iis_strategy", 2)
    h.run()
    status, iis = h.getIis()
    records = []
    if status != highspy.HighsStatus.kOk or not iis.valid_:
        return pd.DataFrame(columns=list(DIAGNOSIS_COLUMNS))
    for r in iis.row_index_:
        family, index = cm.row_family[r], int(cm.row_index[r])
        infos = bm.rows.get(family)
        if infos is not None:
            info = infos[index]
            period = data.periods[info.period_index]
            message = (
                f"period {period}: {_describe(info)} ({info.limit} at {info.node}, "
                f"{_num(info.value)} {info.unit}) is part of a conflicting set"
            )
            records.append(_iis_limit_record(info, period, message))
        else:
            what = _HARD_ROWS.get(family, family)
            node, period = _hard_row_place(bm, family, index)
            message = f"period {period}: {what} at {node} is part of a conflicting set"
            records.append(
                ("iis", family, what, node, period, "equal", np.nan, "", np.nan, np.nan, message)
            )
    n_bounds = len(iis.col_index_)
    if n_bounds:
        records.append(
            (
                "iis",
                "route_bounds",
                "tonnes on a route cannot be negative",
                "",
                np.nan,
                "min",
                0.0,
                "t",
                np.nan,
                np.nan,
                f"{n_bounds} route(s) at zero tonnes complete the conflicting set",
            )
        )
    return pd.DataFrame.from_records(records, columns=list(DIAGNOSIS_COLUMNS))


def _iis_limit_record(info, period, message: str) -> tuple:
    """One diagnosis row (DIAGNOSIS_COLUMNS order) for a plant limit in a conflicting set."""
    return (
        "iis",
        info.limit,
        _describe(info),
        info.node,
        period,
        info.sense,
        info.value,
        info.unit,
        np.nan,
        np.nan,
        message,
    )


def _empty_minimum_rows(bm) -> pd.DataFrame:
    """Minimum limits on processors that no route reaches (a conflict on their own)."""
    data = bm.data
    records = []
    for info in bm.rows.get("plant_limit", []):
        if (
            info.sense == "min"
            and info.value > 0
            and not data.in_flows.get((info.node, info.period_index))
        ):
            period = data.periods[info.period_index]
            message = (
                f"period {period}: {_describe(info)} ({info.limit} at {info.node}, "
                f"{_num(info.value)} {info.unit}) cannot hold: no route reaches {info.node} "
                "in that period"
            )
            records.append(_iis_limit_record(info, period, message))
    return pd.DataFrame.from_records(records, columns=list(DIAGNOSIS_COLUMNS))


def _hard_row_place(bm, family: str, index: int) -> tuple[str, object]:
    data = bm.data
    if family == "stock_balance":
        node, t = data.inventories[index]
        return node, data.periods[t]
    if family in ("feed_on_max", "feed_on_min") and bm.fed_keys:
        domain, t = bm.fed_keys[index]
        return f"domain {domain}", data.periods[t]
    return "", np.nan


def diagnose_infeasibility(data: BlendData, options: SolveOptions | None = None) -> pd.DataFrame:
    """Elastic moves and the infeasible subset, in one table (see module notes)."""
    frames = [elastic_diagnosis(data, options), iis_diagnosis(data)]
    frames = [f for f in frames if len(f)]
    if not frames:
        return pd.DataFrame(columns=list(DIAGNOSIS_COLUMNS))
    return pd.concat(frames, ignore_index=True)
