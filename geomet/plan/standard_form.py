"""Compile a linear Pyomo model made of ``LinearExpression`` rows to sparse matrices, fast.

Pyomo's ``LinearStandardFormCompiler`` walks every constraint body with its general expression
visitor, one Python call per term; on the blend model that was most of the hand-over time.
Every row geomet builds is a ``LinearExpression`` whose terms are (float coefficient, variable)
monomials or bare variables (coefficient one), so the matrix can be read off the expression
objects directly: the terms of all rows are gathered in one pass, coefficients are converted to
arrays in C (``map`` / ``numpy.fromiter``) and variables are matched to columns by object
identity with a sorted-array search, without a per-term Python frame.

:func:`compile_linear` returns exactly what ``LinearStandardFormCompiler().write(model,
mixed_form=True, set_sense=minimize)`` returns (same rows, row order, columns, column order,
coefficients and right-hand sides; checked in ``tests/test_plan_standard_form.py``), and hands
the model to that compiler unchanged whenever it holds anything outside the fast path
(sub-blocks, Params, Expressions, fixed or foreign variables, inactive rows, bodies that are not
a ``LinearExpression``, non-numeric coefficients or bounds, non-integer row indices).

Pyomo's rules reproduced here:

- columns are whole ``Var`` components in the order they are first met (objective first, then
  rows), each in its index order; columns without a non-zero in the objective or any row are
  dropped;
- within a row, repeated variables are summed and zero coefficients removed;
- a row with neither bound is skipped; a row left with no variables is skipped when its
  constant satisfies the bounds and raises ``InfeasibleConstraintException`` otherwise;
- mixed form: an equality is one row (multiplier 0); a ranged row is an upper row (+1)
  followed by a lower row (-1); the right-hand side is the bound minus the body's constant;
- the objective is negated when it is a maximum (minimisation form).
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from functools import partial
from operator import attrgetter, is_, is_not, itemgetter, methodcaller, not_

import numpy as np
import pyomo.environ as pyo
import scipy.sparse as sp
from pyomo.common.errors import InfeasibleConstraintException
from pyomo.common.gc_manager import PauseGC
from pyomo.common.numeric_types import native_numeric_types, native_types
from pyomo.core.base.objective import ObjectiveSense
from pyomo.core.base.var import ScalarVar, VarData
from pyomo.core.expr.numeric_expr import LinearExpression, MonomialTermExpression
from pyomo.repn.plugins.standard_form import (
    LinearStandardFormCompiler,
    LinearStandardFormInfo,
    RowEntry,
)

_ARGS = attrgetter("_args_")
_FIRST = itemgetter(0)
_SECOND = itemgetter(1)
_IS_NOT_NONE = partial(is_not, None)
_MONO = MonomialTermExpression
_THIRD = itemgetter(2)
_FIXED = attrgetter("fixed")
_ACTIVE = attrgetter("active")
_ARGS_PROPERTY = attrgetter("args")
_BOUNDED = methodcaller("to_bounded_expression")
_VAR_TYPES = frozenset({VarData, ScalarVar})
_ALLOWED = (pyo.Var, pyo.Constraint, pyo.Objective, pyo.Set, pyo.RangeSet)


class _NotFast(Exception):
    """The model holds something the fast path does not read; use Pyomo's compiler."""


@dataclass
class LinearForm:
    """Compiled matrices plus, for each row and column, the Pyomo component it came from.

    Attributes
    ----------
    info : LinearStandardFormInfo
        As returned by Pyomo's compiler.
    row_family : list of str
        Local name of the constraint component of each row.
    row_index : ndarray of int
        Index of each row's constraint within its component (-1 when not an integer).
    row_mult : ndarray of int8
        Each row's ``bound_type`` (0 equality, 1 upper bound, -1 lower bound).
    col_of : dict
        Variable component name -> column of each of its members in index order (-1: the
        variable holds no non-zero and was dropped).
    fast : bool
        True when read by the fast path, False when Pyomo's compiler was used.
    """

    info: LinearStandardFormInfo
    row_family: list[str]
    row_index: np.ndarray
    row_mult: np.ndarray
    col_of: dict[str, np.ndarray] = field(default_factory=dict)
    fast: bool = True


def compile_linear(model: pyo.ConcreteModel) -> LinearForm:
    """Mixed-form minimisation matrices of a linear model (see the module notes).

    Parameters
    ----------
    model : pyomo ConcreteModel
        A linear model with one active objective; row indices must be integers.

    Returns
    -------
    LinearForm
        ``info`` as from ``LinearStandardFormCompiler().write(model, mixed_form=True,
        set_sense=ObjectiveSense.minimize)``.

    Raises
    ------
    InfeasibleConstraintException
        When a row has no variables and its constant breaks its bounds.
    """
    try:
        with PauseGC():  # the pass makes large lists; a collection would rescan the whole model
            return _fast(model)
    except _NotFast:
        return pyomo_compile(model)


def pyomo_compile(model: pyo.ConcreteModel) -> LinearForm:
    """The same matrices from Pyomo's own ``LinearStandardFormCompiler`` (reference path)."""
    info = LinearStandardFormCompiler().write(
        model, mixed_form=True, set_sense=ObjectiveSense.minimize
    )
    pos = {id(v): j for j, v in enumerate(info.columns)}
    col_of = {
        comp.local_name: np.fromiter(
            (pos.get(id(v), -1) for v in comp.values()), dtype=np.int64, count=len(comp)
        )
        for comp in model.component_objects(pyo.Var, active=True)
    }
    family = [r[0].parent_component().local_name for r in info.rows]
    index = np.fromiter(
        (_int_index(r[0].index()) for r in info.rows), dtype=np.int64, count=len(info.rows)
    )
    mult = np.fromiter((r[1] for r in info.rows), dtype=np.int8, count=len(info.rows))
    return LinearForm(info, family, index, mult, col_of, fast=False)


def _int_index(index) -> int:
    """An integer row index (-1 for a scalar constraint or a non-integer index)."""
    return index if index.__class__ is int else -1


def _terms(body) -> list:
    """The monomials of a row body, or raise :class:`_NotFast`."""
    if body.__class__ is not LinearExpression:
        raise _NotFast
    return body.args


def _bounds(values: list) -> tuple[np.ndarray, np.ndarray]:
    """(has bound, bound value) arrays from a list of numbers and None."""
    has = np.fromiter(map(_IS_NOT_NONE, values), dtype=bool, count=len(values))
    vals = np.zeros(len(values))
    if has.any():
        vals[has] = np.fromiter(
            itertools.compress(values, has.tolist()), dtype=float, count=int(has.sum())
        )
    return has, vals


def _fast(model) -> LinearForm:
    for comp in model.component_objects(descend_into=False):
        if not isinstance(comp, _ALLOWED):
            raise _NotFast
    objectives = list(model.component_data_objects(pyo.Objective, active=True))
    if len(objectives) != 1:
        raise _NotFast
    var_comps = list(model.component_objects(pyo.Var, descend_into=False))
    var_data = [list(comp.values()) for comp in var_comps]
    sizes = np.array([len(v) for v in var_data], dtype=np.int64)
    all_vars = list(itertools.chain.from_iterable(var_data))
    if any(map(_FIXED, all_vars)):
        raise _NotFast
    slot = _SlotTable(all_vars)
    comp_start = np.concatenate(([0], np.cumsum(sizes)))

    obj = objectives[0]
    obj_coef, obj_slot, obj_const = _read(_terms(obj.expr), slot)
    # rows: one entry per constraint, in declaration and index order
    cons, lbs, ubs, row_terms, names, counts, indices = [], [], [], [], [], [], []
    for comp in model.component_objects(pyo.Constraint, active=True, descend_into=False):
        keys = list(comp.keys())
        members = list(comp.values())
        if not all(map(_ACTIVE, members)) or not set(map(type, keys)) <= {int}:
            raise _NotFast
        bounded = list(map(_BOUNDED, members))
        lb_c = list(map(_FIRST, bounded))
        ub_c = list(map(_THIRD, bounded))
        bodies = list(map(_SECOND, bounded))
        if not (set(map(type, lb_c)) | set(map(type, ub_c))) <= native_types:
            raise _NotFast  # bounds that are expressions: leave them to Pyomo
        if not set(map(type, bodies)) <= {LinearExpression}:
            raise _NotFast
        cons.extend(members)
        lbs.extend(lb_c)
        ubs.extend(ub_c)
        indices.extend(keys)
        row_terms.extend(map(_ARGS_PROPERTY, bodies))
        names.append(comp.local_name)
        counts.append(len(members))
    n_con = len(cons)
    lengths = np.fromiter(map(len, row_terms), dtype=np.int64, count=n_con)
    coef, slots, const = _read(list(itertools.chain.from_iterable(row_terms)), slot)
    if const:
        raise _NotFast  # constants inside rows: leave them to Pyomo

    # column order: Var components in order of first appearance, objective first
    comp_of_slot = np.repeat(np.arange(len(var_comps)), sizes)
    seen = comp_of_slot[np.concatenate((obj_slot, slots))]
    firsts, first_at = np.unique(seen, return_index=True)
    order = firsts[np.argsort(first_at, kind="stable")]
    new_start = np.zeros(len(var_comps), dtype=np.int64)
    new_start[order] = np.concatenate(([0], np.cumsum(sizes[order])[:-1]))
    col_of_slot = np.full(len(all_vars), -1, dtype=np.int64)
    for k in order:
        col_of_slot[comp_start[k] : comp_start[k + 1]] = new_start[k] + np.arange(sizes[k])
    n_cols = int(sizes[order].sum())

    # one row per constraint, duplicates summed, zeros removed (as the expression walker does)
    indptr = np.concatenate(([0], np.cumsum(lengths)))
    M = sp.csr_array((coef, col_of_slot[slots], indptr), shape=(n_con, n_cols))
    M.sum_duplicates()
    M.eliminate_zeros()
    nnz_row = np.diff(M.indptr)

    # rows of the mixed form
    has_lb, lb = _bounds(lbs)
    has_ub, ub = _bounds(ubs)
    keep = has_lb | has_ub
    empty = keep & (nnz_row == 0)
    if empty.any():
        bad = empty & ~((~has_lb | (lb <= 0)) & (~has_ub | (ub >= 0)))
        if bad.any():
            name = cons[int(np.flatnonzero(bad)[0])].name
            message = f"model contains a trivially infeasible constraint, '{name}'"
            raise InfeasibleConstraintException(message)
        keep &= ~empty
    equal = has_lb & has_ub & (lb == ub)
    # two candidate rows per constraint, upper (or equality) first, then lower
    valid = np.stack((keep & (equal | has_ub), keep & has_lb & ~equal), axis=1).ravel()
    mult = np.stack((np.where(equal, 0, 1), np.full(n_con, -1)), axis=1).ravel()[valid]
    rhs = np.stack((np.where(equal, lb, ub), lb), axis=1).ravel()[valid]
    take = np.repeat(np.arange(n_con), 2)[valid]
    A = M if np.array_equal(take, np.arange(n_con)) else M[take]
    A = sp.csc_array(A)
    A.sum_duplicates()
    rows = list(map(RowEntry, map(cons.__getitem__, take.tolist()), mult.tolist()))

    sign = -1.0 if obj.sense == pyo.maximize else 1.0
    c = sp.csr_array(
        (sign * obj_coef, col_of_slot[obj_slot], np.array([0, len(obj_slot)])),
        shape=(1, n_cols),
    ).tocsc()
    c.sum_duplicates()
    c.eliminate_zeros()

    # drop columns that hold no non-zero
    active = (np.diff(A.indptr) > 0) | (np.diff(c.indptr) > 0)
    columns = [None] * n_cols
    for k in order:
        columns[new_start[k] : new_start[k] + sizes[k]] = var_data[k]
    renumber = np.cumsum(active) - 1
    if not active.all():
        mask = np.concatenate((active, [True]))
        columns = list(itertools.compress(columns, active.tolist()))
        A = sp.csc_array((A.data, A.indices, A.indptr[mask]), shape=(A.shape[0], len(columns)))
        c = sp.csc_array((c.data, c.indices, c.indptr[mask]), shape=(1, len(columns)))
    col = np.where(col_of_slot >= 0, renumber[np.maximum(col_of_slot, 0)], -1)
    col = np.where((col_of_slot >= 0) & active[np.maximum(col_of_slot, 0)], col, -1)
    col_of = {
        comp.local_name: col[comp_start[k] : comp_start[k + 1]] for k, comp in enumerate(var_comps)
    }
    family = np.repeat(np.array(names, dtype=object), counts)[take].tolist()
    index = np.asarray(indices, dtype=np.int64)[take]
    info = LinearStandardFormInfo(
        c, np.array([sign * obj_const]), A, rhs.tolist(), rows, columns, objectives, []
    )
    return LinearForm(info, family, index, mult.astype(np.int8), col_of)


def _read(terms: list, slot: _SlotTable) -> tuple[np.ndarray, np.ndarray, float]:
    """Coefficients, variable slots and summed constant of a list of linear-expression args.

    The args may be monomials (coefficient, variable), bare variables (coefficient one) and
    numbers (the constant); anything else raises :class:`_NotFast`.
    """
    if not terms:
        return np.zeros(0), np.zeros(0, dtype=np.int64), 0.0
    const = 0.0
    kinds = set(map(type, terms))
    if not kinds <= {MonomialTermExpression} | _VAR_TYPES:
        numbers = [t for t in terms if t.__class__ in native_numeric_types]
        if any(not (k in native_numeric_types or k in _VAR_TYPES) for k in kinds - {_MONO}):
            raise _NotFast
        const = float(sum(numbers))
        terms = [t for t in terms if t.__class__ not in native_numeric_types]
        if not terms:
            return np.zeros(0), np.zeros(0, dtype=np.int64), const
        kinds = set(map(type, terms))
    n = len(terms)
    if kinds == {_MONO}:
        pairs = list(map(_ARGS, terms))
        coefs = list(map(_FIRST, pairs))  # (never zip(*pairs): quadratic in the number of terms)
        vars_ = list(map(_SECOND, pairs))
        coef = _coefficients(coefs)
    elif _MONO not in kinds:
        vars_, coef = terms, np.ones(n)
    else:
        mono = list(map(is_, map(type, terms), itertools.repeat(_MONO)))
        bare = list(map(not_, mono))
        pairs = list(map(_ARGS, itertools.compress(terms, mono)))
        is_mono = np.array(mono, dtype=bool)
        coef = np.ones(n)
        coef[is_mono] = _coefficients(list(map(_FIRST, pairs)))
        slots = np.empty(n, dtype=np.int64)
        slots[is_mono] = _slots(map(_SECOND, pairs), slot, len(pairs))
        slots[~is_mono] = _slots(itertools.compress(terms, bare), slot, n - len(pairs))
        return coef, slots, const
    return coef, _slots(vars_, slot, n), const


class _SlotTable:
    """Position of a variable among the model's variables, looked up by object identity.

    Identities are compared as integers in numpy (sorted ids and a binary search): unlike a
    dict lookup this never touches the variable objects themselves, which on large models is
    what costs (cache misses), not the search.
    """

    def __init__(self, variables: list):
        ids = np.fromiter(map(id, variables), np.uint64, len(variables))
        self.order = np.argsort(ids, kind="stable")
        self.ids = ids[self.order]

    def lookup(self, vars_, n: int) -> np.ndarray:
        wanted = np.fromiter(map(id, vars_), np.uint64, n)
        pos = np.searchsorted(self.ids, wanted)
        pos[pos == len(self.ids)] = 0
        if len(wanted) and (not len(self.ids) or (self.ids[pos] != wanted).any()):
            raise _NotFast  # a variable of another block
        return self.order[pos]


def _slots(vars_, slot: _SlotTable, n: int) -> np.ndarray:
    """Position of each variable among the model's variables."""
    return slot.lookup(vars_, n)


def _coefficients(coefs: list) -> np.ndarray:
    if not set(map(type, coefs)) <= native_numeric_types:
        raise _NotFast  # Params or expressions as coefficients: leave them to Pyomo
    return np.fromiter(coefs, float, len(coefs))
