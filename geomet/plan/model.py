"""The blend-scheduling model in Pyomo, built by small ``add_*`` functions from :class:`BlendData`.

Building never calls a solver (see :mod:`geomet.plan.solve`). Every row is a Pyomo
``LinearExpression`` over plain float lists; terms whose coefficient is one are the bare variables
(no monomial object per term), and the build runs with the garbage collector paused. Rows of this
form are what :func:`geomet.plan.standard_form.compile_linear` reads without Pyomo's expression
walker.

Variables
    ``flow[j]`` tonnes on route ``data.flows[j]`` = (from, to, period) [t];
    ``inventory[k]`` stockpile inventory at the end of a period [t];
    ``fed[d]`` (MILP only) 1 when a domain is fed to the MILP processor in a period.
Constraints
    ``mine_balance``: tonnes leaving each parcel = its tonnes (fixed mining) or <= (flexible);
    ``stock_balance``: inventory(t) = inventory(t-1) + in(t) - out(t);
    ``stock_capacity``: inventory <= capacity;
    ``plant_limit``: every processor limit of :data:`geomet.plan.limits.LIMITS` by period;
    ``feed_on_max`` / ``feed_on_min`` / ``domains_max``: the MILP rules.
Objective
    maximise Σ_t d_t Σ_j flow_j v_j: discounted net value (revenue of payable metal minus mining,
    rehandle, processing and acid costs).

An *elastic* model (``elastic=True``) adds a non-negative slack to every soft row (mined tonnes
that cannot be placed, stockpile capacities, plant limits) and minimises the weighted slack; a
feasible plan then always exists and the slacks say which limits must move, where and by how much.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import pyomo.environ as pyo
from pyomo.common.gc_manager import PauseGC
from pyomo.core.expr.numeric_expr import LinearExpression, MonomialTermExpression

from geomet.plan.data import BlendData
from geomet.plan.limits import LIMITS


class RowInfo(NamedTuple):
    """What one soft row of the model stands for, in plant terms."""

    limit: str  # limit name (LIMITS key, 'stockpile_capacity_t' or 'mined_t')
    node: str
    period_index: int
    sense: str  # 'max' | 'min' | 'equal'
    value: float  # the limit value in its own unit
    unit: str
    form: str  # 'sum' | 'blend'


@dataclass
class BlendModel:
    """A built Pyomo model with the plant meaning of its rows."""

    model: pyo.ConcreteModel
    data: BlendData
    elastic: bool = False
    rows: dict[str, list[RowInfo]] = field(default_factory=dict)  # component name -> RowInfo[i]
    fed_keys: list[tuple[str, int]] = field(default_factory=list)  # MILP binaries: (domain, period)
    soft_families: list[str] = field(default_factory=list)  # families with elastic slacks
    _flow: list = field(default_factory=list, repr=False)
    _inv: list = field(default_factory=list, repr=False)

    def counts(self) -> dict[str, int]:
        """Variables, constraints and binaries of the model (no solver needed)."""
        m = self.model
        n_var = sum(len(v) for v in m.component_objects(pyo.Var, active=True))
        n_con = sum(len(c) for c in m.component_objects(pyo.Constraint, active=True))
        n_bin = len(m.fed) if hasattr(m, "fed") else 0
        return {"variables": n_var, "constraints": n_con, "binaries": n_bin}


def build_blend_model(
    data: BlendData, *, elastic: bool = False, relax_integers: bool = False
) -> BlendModel:
    """Build the blend model from validated data.

    Parameters
    ----------
    data : BlendData
        From :func:`geomet.plan.data.blend_data`.
    elastic : bool
        Add penalised slacks to the soft rows and minimise them (feasibility diagnosis).
    relax_integers : bool
        Make the MILP's binaries continuous in [0, 1] (LP relaxation).

    Returns
    -------
    BlendModel
    """
    bm = BlendModel(model=pyo.ConcreteModel(name="geomet_blend"), data=data, elastic=elastic)
    with PauseGC():
        add_flow_variables(bm)
        add_inventory_variables(bm)
        add_mine_balance(bm)
        add_stockpile_balance(bm)
        add_stockpile_capacity(bm)
        add_plant_limits(bm)
        if data.milp.active:
            add_feed_rules(bm, relax=relax_integers)
        if elastic:
            add_elastic_objective(bm)
        else:
            add_value_objective(bm)
    return bm


def add_flow_variables(bm: BlendModel) -> None:
    """Tonnes on each route in each period [t], non-negative."""
    bm.model.flow = pyo.Var(range(len(bm.data.flows)), domain=pyo.NonNegativeReals)
    bm._flow = list(bm.model.flow.values())


def add_inventory_variables(bm: BlendModel) -> None:
    """Stockpile inventory at the end of each period [t], non-negative."""
    bm.model.inventory = pyo.Var(range(len(bm.data.inventories)), domain=pyo.NonNegativeReals)
    bm._inv = list(bm.model.inventory.values())


def linear(coefs, vars_) -> LinearExpression:
    """``sum_i coefs[i] * vars_[i]`` as a Pyomo ``LinearExpression``.

    ``coefs=None`` means every coefficient is one: the variables then become the expression's
    terms directly, without a (coefficient, variable) monomial object per term, which roughly
    halves the cost of such rows (tonnage balances, capacities).
    """
    if coefs is None:
        return LinearExpression(list(vars_))
    return LinearExpression(constant=0.0, linear_coefs=coefs, linear_vars=vars_)


def _soft(bm: BlendModel, name: str, bodies, infos: list[RowInfo], *, soft: bool = True) -> None:
    """Add a family of rows ``lb <= body <= ub``, with an elastic slack when asked.

    ``bodies[i]`` is ``(coefs, vars, lb, ub)``; ``coefs=None`` when all coefficients are one.
    """
    m = bm.model
    n = len(bodies)
    elastic = bm.elastic and soft
    if elastic:
        slack = pyo.Var(range(n), domain=pyo.NonNegativeReals)
        m.add_component(f"slack_{name}", slack)
        svars = list(slack.values())
    bm.rows[name] = infos
    if elastic:
        bm.soft_families.append(name)

    def rule(_m, i):
        coefs, vars_, lb, ub = bodies[i]
        if elastic:
            # relax toward feasibility: a max row gets -s, a min row +s (equalities: only
            # shortfall, i.e. tonnes that could not be placed)
            sign = -1.0 if infos[i].sense == "max" else 1.0
            if coefs is None and sign == 1.0:
                vars_ = [*vars_, svars[i]]
            else:
                coefs = [*([1.0] * len(vars_) if coefs is None else coefs), sign]
                vars_ = [*vars_, svars[i]]
        expr = linear(coefs, vars_)
        if lb is None:
            return expr <= ub
        if ub is None:
            return expr >= lb
        return expr == lb if lb == ub else (lb, expr, ub)

    m.add_component(name, pyo.Constraint(range(n), rule=rule))


def add_mine_balance(bm: BlendModel) -> None:
    """Tonnes leaving each parcel: equal to its tonnes (fixed) or at most its tonnes (flexible)."""
    data, flow = bm.data, bm._flow
    bodies, infos = [], []
    position = {p: i for i, p in enumerate(data.periods)}
    fixed = data.mining == "fixed"
    sense = "equal" if fixed else "max"
    out_all = data.out_flows_all
    for node in data.nodes_of("source"):
        attrs = data.node_data[node]
        tonnes = float(attrs.get("tonnes_t", 0.0))
        t0 = position[int(attrs["period"])]
        bodies.append(
            (
                None,
                list(map(flow.__getitem__, out_all.get(node, ()))),
                tonnes if fixed else None,
                tonnes,
            )
        )
        infos.append(RowInfo("mined_t", node, t0, sense, tonnes, "t", "sum"))
    # flexible mining: "at most the parcel" is a physical bound, never a limit to relax
    _soft(bm, "mine_balance", bodies, infos, soft=data.mining == "fixed")


def add_stockpile_balance(bm: BlendModel) -> None:
    """inventory(t) - inventory(t-1) - in(t) + out(t) = opening (t = first) or 0."""
    data, flow, inv = bm.data, bm._flow, bm._inv
    in_flows, out_flows, inv_index = data.in_flows, data.out_flows, data.inventory_index
    rows = []
    for k, (node, t) in enumerate(data.inventories):
        # terms with coefficient one are bare variables, the others (coefficient, variable)
        # monomials: both are valid LinearExpression arguments
        args = [inv[k]]
        rhs = 0.0
        if t == 0:
            rhs = float(data.node_data[node].get("opening_t", 0.0))
        else:
            args.append(MonomialTermExpression((-1.0, inv[inv_index[(node, t - 1)]])))
        args.extend(MonomialTermExpression((-1.0, flow[j])) for j in in_flows.get((node, t), ()))
        args.extend(map(flow.__getitem__, out_flows.get((node, t), ())))
        rows.append((args, rhs))

    def rule(_m, k):
        args, rhs = rows[k]
        return LinearExpression(args) == rhs

    bm.model.stock_balance = pyo.Constraint(range(len(rows)), rule=rule)


def add_stockpile_capacity(bm: BlendModel) -> None:
    """Inventory at the end of a period at most the stockpile's capacity [t]."""
    data, inv = bm.data, bm._inv
    bodies, infos = [], []
    for k, (node, t) in enumerate(data.inventories):
        cap = float(data.node_data[node].get("capacity_t", math.inf))
        if math.isfinite(cap):
            bodies.append((None, [inv[k]], None, cap))
            infos.append(RowInfo("stockpile_capacity_t", node, t, "max", cap, "t", "sum"))
    _soft(bm, "stock_capacity", bodies, infos)


def add_plant_limits(bm: BlendModel) -> None:
    """Every processor limit by period: tonnes, energy, acid (sums) and blend averages.

    Notes
    -----
    Sum limit: :math:`\\sum_j x_j c_j \\le L_t` (or ≥). Blend limit on the tonnage-weighted
    average of attribute a: :math:`\\sum_j x_j (a_j - L_t) \\le 0` (max) or ≥ 0 (min), summed
    over the routes j feeding the processor in period t.
    """
    data, flow = bm.data, bm._flow
    bodies, infos = [], []
    feeds: dict[tuple[str, int], tuple[np.ndarray, list]] = {}  # (proc, t) -> routes, variables
    for proc in data.nodes_of("processor"):
        for name, spec in LIMITS.items():
            if spec.processor != proc:
                continue
            values = data.limit(proc, name)
            if values is None:
                continue
            for t, limit in enumerate(values.tolist()):
                if math.isnan(limit):
                    continue
                if (proc, t) not in feeds:
                    idx = data.in_flows.get((proc, t), [])
                    feeds[(proc, t)] = (np.asarray(idx, dtype=np.int64), [flow[j] for j in idx])
                idx, vars_ = feeds[(proc, t)]  # one variable list serves every row of (proc, t)
                if not len(idx) and not (spec.sense == "min" and limit > 0):
                    continue  # nothing can reach the processor: the row is empty and satisfied
                if spec.attribute is None:
                    a = np.ones(len(idx))
                else:
                    a = data.flow_attr(spec.attribute)[idx] * spec.scale
                if spec.form == "blend":
                    coefs, bound = (a - limit).tolist(), 0.0
                elif spec.attribute is None:
                    coefs, bound = None, float(limit)  # tonnes: every coefficient is one
                else:
                    coefs, bound = a.tolist(), float(limit)
                lb, ub = (None, bound) if spec.sense == "max" else (bound, None)
                bodies.append((coefs, vars_, lb, ub))
                infos.append(RowInfo(name, proc, t, spec.sense, float(limit), spec.unit, spec.form))
    _soft(bm, "plant_limit", bodies, infos)


def add_feed_rules(bm: BlendModel, *, relax: bool = False) -> None:
    """MILP rules: a domain fed in a period gets at least ``min_feed_t``; at most K domains.

    Notes
    -----
    With binary :math:`y_{dt}` and feed :math:`F_{dt} = \\sum_{j \\in d,t} x_j`:
    :math:`F_{dt} \\le M_t y_{dt}` (M_t = processor capacity), :math:`F_{dt} \\ge m\\,y_{dt}` and
    :math:`\\sum_d y_{dt} \\le K`.
    """
    data, flow = bm.data, bm._flow
    spec = data.milp
    proc = spec.processor
    cap = data.limit(proc, f"{proc}_max_t")
    groups: dict[tuple[str, int], list[int]] = {}
    for t in range(len(data.periods)):
        for j in data.in_flows.get((proc, t), []):
            groups.setdefault((data.domain_of(data.flows[j][0]), t), []).append(j)
    keys = sorted(groups, key=lambda k: (k[1], k[0]))
    bm.fed_keys = keys
    domain = pyo.UnitInterval if relax else pyo.Binary
    bm.model.fed = pyo.Var(range(len(keys)), domain=domain)
    fed = list(bm.model.fed.values())

    def on_max(_m, i):
        d, t = keys[i]
        idx = groups[(d, t)]
        expr = LinearExpression(
            constant=0.0,
            linear_coefs=[1.0] * len(idx) + [-float(cap[t])],
            linear_vars=[flow[j] for j in idx] + [fed[i]],
        )
        return expr <= 0.0

    bm.model.feed_on_max = pyo.Constraint(range(len(keys)), rule=on_max)
    if spec.min_feed_t:

        def on_min(_m, i):
            d, t = keys[i]
            idx = groups[(d, t)]
            expr = LinearExpression(
                constant=0.0,
                linear_coefs=[1.0] * len(idx) + [-float(spec.min_feed_t)],
                linear_vars=[flow[j] for j in idx] + [fed[i]],
            )
            return expr >= 0.0

        bm.model.feed_on_min = pyo.Constraint(range(len(keys)), rule=on_min)
    if spec.max_domains_per_period is not None:
        by_t: dict[int, list[int]] = {}
        for i, (_d, t) in enumerate(keys):
            by_t.setdefault(t, []).append(i)
        ts = sorted(by_t)

        def dom_max(_m, k):
            idx = by_t[ts[k]]
            expr = LinearExpression(
                constant=0.0, linear_coefs=[1.0] * len(idx), linear_vars=[fed[i] for i in idx]
            )
            return expr <= float(spec.max_domains_per_period)

        bm.model.domains_max = pyo.Constraint(range(len(ts)), rule=dom_max)


def objective_coefficients(data: BlendData) -> np.ndarray:
    """Discounted net value of one tonne on each flow [USD/t, present value]."""
    t = np.fromiter((f[2] for f in data.flows), dtype=int, count=len(data.flows))
    return data.flow_value_usd_t * data.discount[t] if len(t) else np.zeros(0)


def add_value_objective(bm: BlendModel) -> None:
    """Maximise the discounted net value of the plan [USD, present value]."""
    coefs = objective_coefficients(bm.data).tolist()
    bm.model.value = pyo.Objective(
        expr=LinearExpression(constant=0.0, linear_coefs=coefs, linear_vars=bm._flow),
        sense=pyo.maximize,
    )


def elastic_weight(info: RowInfo, data: BlendData) -> float:
    """Penalty per unit of slack: one per unit of the limit's own size, so moves are relative.

    Blend slacks are in tonne × unit; they are divided by the processor's capacity so that one
    point of average over a full period's feed weighs like one unit of the limit.
    """
    if info.form == "blend":
        cap = data.limit(info.node, f"{info.node}_max_t")
        size = float(cap[info.period_index]) if cap is not None else 1.0
        return 1.0 / max(size * max(abs(info.value), 1e-3), 1.0)
    return 1.0 / max(abs(info.value), 1.0)


def add_elastic_objective(bm: BlendModel) -> None:
    """Minimise the weighted slack on every soft row (a phase-one feasibility objective)."""
    coefs, vars_ = [], []
    for name in bm.soft_families:
        infos = bm.rows[name]
        slack = getattr(bm.model, f"slack_{name}")
        for i, info in enumerate(infos):
            coefs.append(elastic_weight(info, bm.data))
            vars_.append(slack[i])
    bm.model.shortfall = pyo.Objective(
        expr=LinearExpression(constant=0.0, linear_coefs=coefs, linear_vars=vars_),
        sense=pyo.minimize,
    )
