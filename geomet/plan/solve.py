"""Hand a built blend model to HiGHS and read the answer back.

One-shot solves compile the Pyomo model to sparse standard-form matrices with
:func:`geomet.plan.standard_form.compile_linear` (the output of Pyomo's
``LinearStandardFormCompiler``, read straight off the model's ``LinearExpression`` rows) and pass
them to ``highspy.Highs.passModel`` (much cheaper than walking every constraint through a solver
interface). Integrality is always passed as an explicit int32 array (zeros for an
LP): an empty array is not a safe way to say "no integers" in highspy's array interface.

Scenario re-solves that change limit values only keep the rows and columns: they can start dual
simplex from the earlier basis (:class:`WarmStart`) instead of solving from scratch. Blend limits
sit in matrix coefficients (sum of t (a - L)), so a persistent solver interface would have to
update coefficients row by row; re-compiling and passing a basis is simpler.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace

import numpy as np
import scipy.sparse as sp
from pyomo.common.errors import InfeasibleConstraintException

from geomet.errors import SolverError
from geomet.plan.highs import quiet_highs
from geomet.plan.model import BlendModel
from geomet.plan.standard_form import compile_linear

ALGORITHMS = ("ipm", "simplex", "choose", "ipx", "pdlp")
_KCOLWISE = 1
_KMINIMIZE = 1


@dataclass(frozen=True)
class SolveOptions:
    """How HiGHS solves the model.

    Attributes
    ----------
    algorithm : str
        ``ipm`` (interior point, default: fastest for large LPs; crossover then gives a vertex and
        exact duals), ``simplex`` (dual simplex: a basis, best for small LPs and re-solves),
        ``choose`` (HiGHS decides), ``ipx``, ``pdlp`` (first order, least accurate).
    time_limit_s : float or None
        Wall-clock limit [s]; a MILP then returns its best plan and the gap.
    mip_rel_gap : float
        Relative MIP gap at which branch and bound stops [fraction].
    threads : int or None
        Solver threads (None = HiGHS default).
    crossover : bool
        Run crossover after interior point (needed for vertex duals).
    ranging : bool
        Ask HiGHS for the range of each row bound over which its dual holds (needs a basis).
    """

    algorithm: str = "ipm"
    time_limit_s: float | None = None
    mip_rel_gap: float = 1e-4
    threads: int | None = None
    crossover: bool = True
    ranging: bool = True


@dataclass
class CompiledModel:
    """A blend model as matrices: minimise ``cost @ x`` s.t. ``row_lower <= A x <= row_upper``."""

    A: sp.csc_array
    cost: np.ndarray
    offset: float
    col_lower: np.ndarray
    col_upper: np.ndarray
    integrality: np.ndarray
    row_lower: np.ndarray
    row_upper: np.ndarray
    row_family: list[str]
    row_index: np.ndarray
    col_of: dict[str, np.ndarray] = field(
        default_factory=dict
    )  # var component -> column (-1 = dropped)
    sign: float = -1.0  # solver objective = sign × model objective
    compile_s: float = 0.0

    @property
    def n_integer(self) -> int:
        return int(self.integrality.sum())


@dataclass
class HighsOutcome:
    """What HiGHS returned."""

    status: str  # 'optimal' | 'time_limit' | 'infeasible' | 'other'
    model_status: str
    objective: float  # in the model's own sense (value for the blend, slack for elastic)
    x: np.ndarray
    row_value: np.ndarray
    row_dual: np.ndarray
    col_dual: np.ndarray
    mip_gap: float
    handover_s: float
    solve_s: float
    has_duals: bool
    row_range: tuple[np.ndarray, np.ndarray] | None = None  # rhs values where the dual holds
    ranging_s: float = 0.0
    simplex_iterations: int = 0
    warm_start: WarmStart | None = None  # basis of this solve, to start related solves from
    warm_started: bool = False  # this solve started from a given basis


@dataclass(frozen=True)
class WarmStart:
    """A simplex basis and the structure of the model it belongs to."""

    signature: tuple
    basis: object  # highspy.HighsBasis


def signature(cm: CompiledModel) -> tuple:
    """Rows, columns and non-zero pattern of a compiled model (equal = a basis carries over)."""
    return (
        cm.A.shape,
        cm.A.nnz,
        hash(cm.A.indptr.tobytes()),
        hash(cm.A.indices.tobytes()),
        hash(tuple(cm.row_family)),
        hash(cm.row_index.tobytes()),
    )


def compile_blend_model(bm: BlendModel) -> CompiledModel:
    """Compile a built model to sparse standard-form matrices (no solver involved).

    Returns
    -------
    CompiledModel

    Raises
    ------
    InfeasibleConstraintException
        (from Pyomo) when a row has no variables and cannot hold, e.g. a minimum feed with no
        route into the processor; :func:`geomet.plan.solve_blend` reports it as infeasible.
    """
    start = time.perf_counter()
    m = bm.model
    form = compile_linear(m)
    info, col_of = form.info, form.col_of
    n_col = len(info.columns)
    col_lower = np.zeros(n_col)
    col_upper = np.full(n_col, np.inf)
    integrality = np.zeros(n_col, dtype=np.int32)
    if "fed" in col_of:
        cols = col_of["fed"][col_of["fed"] >= 0]
        col_upper[cols] = 1.0
        if len(m.fed) and m.fed[0].is_integer():
            integrality[cols] = 1
    mult = form.row_mult
    rhs = np.asarray(info.rhs, float)
    row_lower = np.where(mult == 1, -np.inf, rhs)
    row_upper = np.where(mult == -1, np.inf, rhs)
    family, index = form.row_family, form.row_index
    c = np.asarray(info.c.todense()).ravel() if info.c.shape[0] else np.zeros(n_col)
    offset = float(info.c_offset[0]) if len(info.c_offset) else 0.0
    sign = 1.0 if bm.elastic else -1.0  # the value objective is a maximum, compiled as a minimum
    return CompiledModel(
        A=info.A.tocsc(),
        cost=c,
        offset=offset,
        col_lower=col_lower,
        col_upper=col_upper,
        integrality=integrality,
        row_lower=row_lower,
        row_upper=row_upper,
        row_family=family,
        row_index=index,
        col_of=col_of,
        sign=sign,
        compile_s=time.perf_counter() - start,
    )


def solve_compiled(
    cm: CompiledModel, options: SolveOptions | None = None, *, warm_start=None
) -> HighsOutcome:
    """Pass the matrices to HiGHS, solve, and return values and duals.

    For a MILP the duals come from the LP with the binaries fixed at their solution (the usual
    convention for prices around an integer plan).

    Parameters
    ----------
    cm : CompiledModel
    options : SolveOptions, optional
    warm_start : WarmStart, optional
        Basis of an earlier solve of a model with the same rows and columns (a scenario that
        changes limit values only). An LP then starts dual simplex from it instead of solving
        from scratch; ignored for a MILP or when the structure differs.
    """
    import highspy

    options = options or SolveOptions()
    if options.algorithm not in ALGORITHMS:
        message = f"solver algorithm must be one of {ALGORITHMS}; got {options.algorithm!r}"
        raise SolverError(message)
    start = time.perf_counter()
    warm = warm_start is not None and not cm.n_integer and warm_start.signature == signature(cm)
    if warm:
        options = replace(options, algorithm="simplex")
    h = _highs(cm, cm.integrality, cm.col_lower, cm.col_upper, options)
    if warm:
        h.setBasis(warm_start.basis)
    handover = time.perf_counter() - start
    start = time.perf_counter()
    h.run()
    solve_s = time.perf_counter() - start
    model_status = h.getModelStatus()
    status_text = h.modelStatusToString(model_status)
    ms = highspy.HighsModelStatus
    info = h.getInfo()
    n = cm.A.shape[1]
    has_solution = info.primal_solution_status == 2  # kSolutionStatusFeasible
    if model_status == ms.kOptimal:
        status = "optimal"
    elif model_status in (ms.kInfeasible, ms.kUnboundedOrInfeasible):
        status = "infeasible"
    elif (
        model_status in (ms.kTimeLimit, ms.kIterationLimit, ms.kSolutionLimit, ms.kInterrupt)
        and has_solution
    ):
        status = "time_limit"
    else:
        message = f"HiGHS stopped without a usable plan: {status_text}"
        raise SolverError(message)
    if status == "infeasible":
        empty = np.zeros(0)
        return HighsOutcome(
            status,
            status_text,
            np.nan,
            np.zeros(n),
            empty,
            empty,
            empty,
            np.nan,
            handover,
            solve_s,
            False,
        )
    sol = h.getSolution()
    x = np.asarray(sol.col_value, float)
    row_value = np.asarray(sol.row_value, float)
    mip_gap = float(info.mip_gap) if cm.n_integer else 0.0
    objective = cm.sign * (float(info.objective_function_value) + cm.offset)
    if cm.n_integer:
        fixed = np.round(x[cm.integrality == 1])
        lower, upper = cm.col_lower.copy(), cm.col_upper.copy()
        lower[cm.integrality == 1] = fixed
        upper[cm.integrality == 1] = fixed
        lp_options = SolveOptions(
            algorithm="simplex", time_limit_s=options.time_limit_s, threads=options.threads
        )
        h2 = _highs(cm, np.zeros(n, dtype=np.int32), lower, upper, lp_options)
        start = time.perf_counter()
        h2.run()
        solve_s += time.perf_counter() - start
        sol2 = h2.getSolution()
        has_duals = h2.getModelStatus() == ms.kOptimal and sol2.dual_valid
        row_dual = np.asarray(sol2.row_dual, float)
        col_dual = np.asarray(sol2.col_dual, float)
        ranged = h2
    else:
        has_duals = bool(sol.dual_valid)
        row_dual = np.asarray(sol.row_dual, float)
        col_dual = np.asarray(sol.col_dual, float)
        ranged = h
    basis = ranged.getBasis()
    start_next = WarmStart(signature(cm), basis) if basis.valid and not cm.n_integer else None
    start = time.perf_counter()
    row_range = _row_ranging(ranged) if options.ranging and has_duals else None
    ranging_s = time.perf_counter() - start
    return HighsOutcome(
        status,
        status_text,
        objective,
        x,
        row_value,
        row_dual,
        col_dual,
        mip_gap,
        handover,
        solve_s,
        has_duals,
        row_range,
        ranging_s,
        int(info.simplex_iteration_count),
        start_next,
        warm,
    )


def _row_ranging(h) -> tuple[np.ndarray, np.ndarray] | None:
    """Lowest and highest value of each row's active bound for which its dual stays valid."""
    import highspy

    if not h.getBasis().valid:
        return None
    status, ranging = h.getRanging()
    if status != highspy.HighsStatus.kOk or not ranging.valid:
        return None
    return (
        np.asarray(ranging.row_bound_dn.value_, float),
        np.asarray(ranging.row_bound_up.value_, float),
    )


def _highs(cm: CompiledModel, integrality, col_lower, col_upper, options: SolveOptions):

    h = quiet_highs()
    h.setOptionValue("output_flag", False)
    A = cm.A
    h.passModel(
        int(A.shape[1]),
        int(A.shape[0]),
        int(A.nnz),
        _KCOLWISE,
        _KMINIMIZE,
        0.0,
        np.ascontiguousarray(cm.cost, float),
        np.ascontiguousarray(col_lower, float),
        np.ascontiguousarray(col_upper, float),
        np.ascontiguousarray(cm.row_lower, float),
        np.ascontiguousarray(cm.row_upper, float),
        A.indptr.astype(np.int32),
        A.indices.astype(np.int32),
        np.ascontiguousarray(A.data, float),
        np.ascontiguousarray(integrality, np.int32),
    )
    h.setOptionValue("solver", options.algorithm)
    if options.algorithm == "ipm":
        h.setOptionValue("run_crossover", "on" if options.crossover else "off")
    if options.time_limit_s is not None:
        h.setOptionValue("time_limit", float(options.time_limit_s))
    h.setOptionValue("mip_rel_gap", float(options.mip_rel_gap))
    if options.threads is not None:
        h.setOptionValue("threads", int(options.threads))
    return h


def compile_or_infeasible(bm: BlendModel) -> CompiledModel | None:
    """Compile, returning None when Pyomo finds a row that can never hold."""
    try:
        return compile_blend_model(bm)
    except InfeasibleConstraintException:
        return None
