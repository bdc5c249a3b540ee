"""geomet's fast standard-form compile against Pyomo's own ``LinearStandardFormCompiler``.

The reference is Pyomo itself: ``compile_linear`` must return exactly the matrices, rows,
columns and right-hand sides that ``LinearStandardFormCompiler().write(model, mixed_form=True,
set_sense=minimize)`` returns, and fall back to it for anything outside its fast path.
"""

from __future__ import annotations

import numpy as np
import pyomo.environ as pyo
import pytest
from pyomo.common.errors import InfeasibleConstraintException
from pyomo.core.expr.numeric_expr import LinearExpression, MonomialTermExpression
from test_plan_helpers import small_case

from geomet.plan import MilpSpec, build_blend_model
from geomet.plan.standard_form import compile_linear, pyomo_compile


def assert_same(fast, ref):
    a, b = fast.info, ref.info
    assert a.A.shape == b.A.shape
    for part in ("indptr", "indices", "data"):
        np.testing.assert_array_equal(getattr(a.A, part), getattr(b.A, part))
    np.testing.assert_array_equal(a.c.toarray(), b.c.toarray())
    np.testing.assert_array_equal(np.asarray(a.c_offset), np.asarray(b.c_offset))
    assert list(a.rhs) == list(b.rhs)
    assert len(a.rows) == len(b.rows)
    assert all(r[0] is s[0] and r[1] == s[1] for r, s in zip(a.rows, b.rows, strict=True))
    assert len(a.columns) == len(b.columns)
    assert all(x is y for x, y in zip(a.columns, b.columns, strict=True))
    assert fast.row_family == ref.row_family
    np.testing.assert_array_equal(fast.row_index, ref.row_index)
    np.testing.assert_array_equal(fast.row_mult, ref.row_mult)
    assert fast.row_mult.tolist() == [r[1] for r in a.rows]
    assert fast.col_of.keys() == ref.col_of.keys()
    for name in fast.col_of:
        np.testing.assert_array_equal(fast.col_of[name], ref.col_of[name])


@pytest.mark.parametrize(
    "kwargs",
    [
        {},
        {"mining": "flexible"},
        {"milp": MilpSpec(min_feed_t=5_000.0, max_domains_per_period=2)},
        {"stockpiles": False},
    ],
)
@pytest.mark.parametrize("elastic", [False, True])
def test_blend_model_compiles_exactly_as_pyomo(kwargs, elastic):
    data = small_case(4, 3, seed=3, **kwargs)
    m = build_blend_model(data, elastic=elastic).model
    fast = compile_linear(m)
    assert fast.fast
    assert_same(fast, pyomo_compile(m))


def _toy():
    """Rows that exercise Pyomo's rules: duplicates, zeros, ranges, empty rows, unused columns."""
    m = pyo.ConcreteModel()
    m.y = pyo.Var(range(2))  # declared first, met second: columns still follow first use
    m.x = pyo.Var(range(4))
    m.z = pyo.Var(range(3))  # never used: no column
    x, y = list(m.x.values()), list(m.y.values())

    def lin(coefs, vars_):
        return LinearExpression(constant=0.0, linear_coefs=coefs, linear_vars=vars_)

    m.obj = pyo.Objective(expr=lin([1.0, -2.0, 0.0], [x[2], x[0], x[3]]), sense=pyo.maximize)
    bodies = [
        (lin([1.0, 1.0, 3.0], [x[0], x[0], y[1]]), None, 4.0),  # repeated variable: summed
        (lin([2.0, -2.0], [x[1], x[1]]), 1.0, None),  # cancels out: 0 >= 1 cannot hold
        (lin([1.0, 0.0], [y[0], x[1]]), -1.0, 5.0),  # ranged: upper row then lower row
        (lin([4.0], [x[3]]), 2.0, 2.0),  # equality
        (lin([0.0], [x[1]]), None, 3.0),  # all-zero row that holds: skipped
        (LinearExpression([x[2], y[0]]), None, 6.0),  # bare variables: coefficient one
        (LinearExpression([x[3], MonomialTermExpression((-2.0, y[1])), x[3]]), 0.0, None),
    ]
    return m, bodies


def _add_rows(m, bodies):
    def rule(_m, i):
        body, lb, ub = bodies[i]
        if lb is None:
            return body <= ub
        if ub is None:
            return body >= lb
        return body == lb if lb == ub else (lb, body, ub)

    m.rows = pyo.Constraint(range(len(bodies)), rule=rule)


def test_pyomo_rules_reproduced_on_a_toy_model():
    m, bodies = _toy()
    bodies[1] = (bodies[1][0], -1.0, None)  # empty row whose constant (0) satisfies >= -1
    _add_rows(m, bodies)
    fast = compile_linear(m)
    assert fast.fast
    ref = pyomo_compile(m)
    assert_same(fast, ref)
    # worked by hand: the objective meets x first, so x0 x2 x3 (x1 only has zero or cancelling
    # coefficients) come before y0 y1; z is never used; rows 0, 2 (upper, lower), 3, 5, 6 remain
    assert fast.info.A.shape == (6, 5)
    assert fast.col_of["x"].tolist() == [0, -1, 1, 2]
    assert fast.col_of["y"].tolist() == [3, 4]
    assert fast.col_of["z"].tolist() == [-1, -1, -1]
    assert [r[1] for r in fast.info.rows] == [1, 1, -1, 0, 1, -1]
    assert fast.info.rhs == [4.0, 5.0, -1.0, 2.0, 6.0, 0.0]
    np.testing.assert_array_equal(
        fast.info.A.toarray(),
        [
            [2, 0, 0, 0, 3],
            [0, 0, 0, 1, 0],
            [0, 0, 0, 1, 0],
            [0, 0, 4, 0, 0],
            [0, 1, 0, 1, 0],
            [0, 0, 2, 0, -2],
        ],
    )
    np.testing.assert_array_equal(fast.info.c.toarray(), [[2, -1, 0, 0, 0]])  # maximum negated


def test_infeasible_empty_row_raises_like_pyomo():
    m, bodies = _toy()
    _add_rows(m, bodies)  # row 1 is 0 >= 1
    with pytest.raises(InfeasibleConstraintException, match=r"trivially infeasible.*rows\[1\]"):
        compile_linear(m)
    with pytest.raises(InfeasibleConstraintException, match=r"trivially infeasible.*rows\[1\]"):
        pyomo_compile(m)


@pytest.mark.parametrize(
    "change", ["param", "fixed", "variable_body", "expression", "block", "foreign_variable"]
)
def test_models_outside_the_fast_path_fall_back_to_pyomo(change):
    m, bodies = _toy()
    bodies[1] = (bodies[1][0], -1.0, None)
    _add_rows(m, bodies)
    if change == "param":
        m.p = pyo.Param(initialize=2.0, mutable=True)
        m.extra = pyo.Constraint(expr=m.p * m.x[0] <= 3.0)
    elif change == "fixed":
        m.y[0].fix(1.0)
    elif change == "variable_body":
        m.extra = pyo.Constraint([0], rule=lambda _m, _i: m.x[0] <= 3.0)
    elif change == "expression":
        m.e = pyo.Expression(expr=m.x[0] + 2 * m.x[1])
        m.extra = pyo.Constraint([0], rule=lambda _m, _i: m.e <= 3.0)
    elif change == "block":
        m.sub = pyo.Block()
        m.sub.v = pyo.Var()
    else:  # a variable that belongs to no component of this model
        other = pyo.ConcreteModel()
        other.w = pyo.Var()
        m.extra = pyo.Constraint([0], rule=lambda _m, _i: LinearExpression([other.w, m.x[0]]) <= 1)
    fast = compile_linear(m)
    assert not fast.fast
    assert_same(fast, pyomo_compile(m))
