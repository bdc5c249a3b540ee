"""The p-median problem with drill-core spread constraints: a MILP (Pyomo + HiGHS) and a heuristic.

Choose ``p`` of the candidate intervals so that the weighted distance from every demand point (a
block, or a group of similar blocks) to its nearest chosen candidate — or to an existing testwork
sample, which already stands for the ore near it — is smallest. Two spread rules keep a test
program from resting on a few holes: at most ``max_per_hole`` new samples per hole, and chosen
intervals of one hole at least ``min_separation_m`` apart (0 still forbids overlap).

The MILP follows ReVelle & Swain (1970); the heuristic is greedy addition followed by the vertex
substitution (swap) method of Teitz & Bart (1968). Building the model never calls a solver.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field

import numpy as np

from geomet.errors import InputDataError, SolverError
from geomet.plan.highs import quiet_highs

_SEP_TOL_M = 1e-9


@dataclass
class PMedianProblem:
    """Data of one p-median problem.

    Parameters
    ----------
    distance : ndarray, shape (n_demand, n_candidates)
        Distance from each demand point to each candidate [standard units].
    demand_weight : ndarray, shape (n_demand,)
        Weight of each demand point (tonnes, period-weighted) [t].
    p : int
        Candidates to choose.
    base_distance : ndarray, shape (n_demand,), optional
        Distance to the nearest existing sample (inf where there is none) [standard units].
    hole : ndarray of int, shape (n_candidates,), optional
        Hole code of each candidate (needed for the spread rules).
    from_m, to_m : ndarray, shape (n_candidates,), optional
        Candidate interval depths [m].
    max_per_hole : int, optional
        Most new samples from one hole (None: no limit).
    hole_capacity : ndarray of int, optional
        Most new samples from each hole, indexed by hole code (overrides ``max_per_hole``; used
        when earlier choices already took some of a hole's allowance).
    min_separation_m : float, optional
        Least gap between two chosen intervals of one hole [m] (None: overlap allowed).
    """

    distance: np.ndarray
    demand_weight: np.ndarray
    p: int
    base_distance: np.ndarray | None = None
    hole: np.ndarray | None = None
    from_m: np.ndarray | None = None
    to_m: np.ndarray | None = None
    max_per_hole: int | None = None
    hole_capacity: np.ndarray | None = None
    min_separation_m: float | None = 0.0

    def __post_init__(self):
        self.distance = np.asarray(self.distance)
        if self.distance.ndim != 2:
            msg = (
                "distance must be a 2-D array (demand × candidates); "
                f"got shape {self.distance.shape}"
            )
            raise InputDataError(msg)
        n_dem, n_cand = self.distance.shape
        self.demand_weight = np.asarray(self.demand_weight, dtype=float)
        if self.demand_weight.shape != (n_dem,):
            msg = f"demand_weight must have {n_dem} entries; got {self.demand_weight.shape}"
            raise InputDataError(msg)
        if np.any(self.demand_weight < 0) or not np.all(np.isfinite(self.demand_weight)):
            msg = "demand weights must be finite and non-negative"
            raise InputDataError(msg)
        if not np.all(np.isfinite(self.distance)) or np.any(self.distance < 0):
            msg = "distances must be finite and non-negative"
            raise InputDataError(msg)
        if self.p < 0:
            msg = f"p must be non-negative; got {self.p}"
            raise InputDataError(msg)
        if self.base_distance is not None:
            self.base_distance = np.asarray(self.base_distance, dtype=float)
            if self.base_distance.shape != (n_dem,):
                msg = f"base_distance must have {n_dem} entries; got {self.base_distance.shape}"
                raise InputDataError(msg)
        if self.hole is None:
            if (
                self.max_per_hole is not None
                or self.hole_capacity is not None
                or (self.min_separation_m or 0) > 0
            ):
                msg = "spread rules need hole, from_m and to_m for every candidate"
                raise InputDataError(msg)
            self.min_separation_m = None
        if self.hole is not None:
            self.hole = np.asarray(self.hole)
            if not np.issubdtype(self.hole.dtype, np.integer):
                import pandas as pd

                self.hole = pd.factorize(self.hole)[0]
            self.from_m = np.asarray(self.from_m, dtype=float)
            self.to_m = np.asarray(self.to_m, dtype=float)
            for name in ("hole", "from_m", "to_m"):
                if getattr(self, name).shape != (n_cand,):
                    msg = f"{name} must have {n_cand} entries (one per candidate)"
                    raise InputDataError(msg)
        if self.max_per_hole is not None and self.max_per_hole < 1:
            msg = f"max_per_hole must be at least 1; got {self.max_per_hole}"
            raise InputDataError(msg)
        if self.hole_capacity is None and self.max_per_hole is not None:
            n_holes = int(self.hole.max()) + 1 if self.hole.size else 0
            self.hole_capacity = np.full(n_holes, int(self.max_per_hole))
        if self.hole_capacity is not None:
            self.hole_capacity = np.asarray(self.hole_capacity, dtype=np.int64)
            if self.hole.size and self.hole_capacity.size <= int(self.hole.max()):
                msg = "hole_capacity needs an entry for every hole code"
                raise InputDataError(msg)
            if np.any(self.hole_capacity < 0):
                msg = "hole_capacity must be non-negative"
                raise InputDataError(msg)

    def distance_t(self) -> np.ndarray:
        """The distances as a contiguous candidates × demand array (made once, then kept)."""
        cached = getattr(self, "_distance_t", None)
        if cached is None or cached.shape != self.distance.shape[::-1]:
            cached = np.ascontiguousarray(self.distance.T)
            self._distance_t = cached
        return cached

    @property
    def n_demand(self) -> int:
        return self.distance.shape[0]

    @property
    def n_candidates(self) -> int:
        return self.distance.shape[1]

    def conflicts(self, a: int, b: np.ndarray) -> np.ndarray:
        """True where candidates ``b`` may not be chosen together with candidate ``a``."""
        if self.min_separation_m is None or self.hole is None:
            return np.zeros(np.shape(b), dtype=bool)
        sep = self.min_separation_m
        same = self.hole[b] == self.hole[a]
        gap = np.maximum(self.from_m[b] - self.to_m[a], self.from_m[a] - self.to_m[b])
        return same & (gap < sep - _SEP_TOL_M)


@dataclass
class PMedianResult:
    """A solution: chosen candidate positions, objective and how it was found."""

    chosen: np.ndarray
    objective: float
    method: str
    status: str = "optimal"
    gap_frac: float | None = None
    p_requested: int = 0
    details: dict = field(default_factory=dict)


def objective_value(problem: PMedianProblem, chosen) -> float:
    """Weighted sum of nearest distances for a set of chosen candidates.

    Notes
    -----
    :math:`Z = \\sum_i w_i \\min(b_i, \\min_{j \\in S} d_{ij})`, with :math:`b_i` the distance to
    the nearest existing sample.
    """
    chosen = np.asarray(chosen, dtype=int)
    near = np.full(problem.n_demand, np.inf)
    if problem.base_distance is not None:
        near = problem.base_distance.copy()
    if chosen.size:
        near = np.minimum(near, problem.distance[:, chosen].min(axis=1))
    if not np.all(np.isfinite(near)):
        return (
            float("inf")
            if np.any(problem.demand_weight[~np.isfinite(near)] > 0)
            else float(np.sum(problem.demand_weight[np.isfinite(near)] * near[np.isfinite(near)]))
        )
    return float(np.dot(problem.demand_weight, near))


def is_feasible(problem: PMedianProblem, chosen) -> bool:
    """True when ``chosen`` keeps the per-hole limit and the separation rule."""
    chosen = np.asarray(chosen, dtype=int)
    if problem.hole_capacity is not None and chosen.size:
        holes, counts = np.unique(problem.hole[chosen], return_counts=True)
        if np.any(counts > problem.hole_capacity[holes]):
            return False
    for k, a in enumerate(chosen):
        if np.any(problem.conflicts(int(a), chosen[k + 1 :])):
            return False
    return True


def max_feasible_count(problem: PMedianProblem) -> int:
    """Largest number of candidates that can be chosen together under the spread rules.

    Notes
    -----
    Per hole, the candidates with their intervals widened by half the separation on each side form
    an interval graph; earliest-end-first greedy finds its largest independent set (interval
    scheduling), capped at ``max_per_hole``.
    """
    n = problem.n_candidates
    if problem.hole is None or (problem.min_separation_m is None and problem.hole_capacity is None):
        return n
    total = 0
    sep = problem.min_separation_m
    for h in np.unique(problem.hole):
        idx = np.flatnonzero(problem.hole == h)
        if sep is None:
            count = idx.size
        else:
            order = idx[np.argsort(problem.to_m[idx], kind="stable")]
            count, last_end = 0, -np.inf
            for j in order:
                if problem.from_m[j] - last_end >= sep - _SEP_TOL_M:
                    count += 1
                    last_end = problem.to_m[j]
        if problem.hole_capacity is not None:
            count = min(count, int(problem.hole_capacity[h]))
        total += count
    return total


def separation_cliques(problem: PMedianProblem) -> list[np.ndarray]:
    """Sets of candidates of which at most one may be chosen (the separation rule as cliques).

    Notes
    -----
    Widen every interval by half the separation :math:`s` on each side, :math:`[a_j, b_j) =
    [f_j - s/2, t_j + s/2)`. Two candidates conflict exactly when their widened intervals overlap,
    so the conflict graph of one hole is an interval graph, whose maximal cliques are the sets of
    intervals containing some left end :math:`a_j`. One constraint
    :math:`\\sum_{k \\in C} x_k \\le 1`
    per maximal clique replaces every pairwise constraint (and is tighter).
    """
    if problem.min_separation_m is None or problem.hole is None:
        return []
    half = problem.min_separation_m / 2.0
    cliques: list[np.ndarray] = []
    for h in np.unique(problem.hole):
        idx = np.flatnonzero(problem.hole == h)
        a = problem.from_m[idx] - half
        b = problem.to_m[idx] + half
        order = np.argsort(a, kind="stable")
        prev: set | None = None
        for j in order:
            members = idx[(a <= a[j] + _SEP_TOL_M / 2) & (b > a[j] + _SEP_TOL_M / 2)]
            key = set(members.tolist())
            if len(members) > 1 and (prev is None or not key <= prev):
                cliques.append(np.sort(members))
            prev = key
    # Drop cliques contained in another one (left ends that tie produce duplicates).
    cliques.sort(key=len, reverse=True)
    kept: list[np.ndarray] = []
    sets: list[set] = []
    for c in cliques:
        s = set(c.tolist())
        if not any(s <= t for t in sets):
            kept.append(c)
            sets.append(s)
    return kept


# --- MILP (Pyomo) ----------------------------------------------------------------------------


def build_pmedian_model(problem: PMedianProblem, p: int | None = None):
    """The ReVelle & Swain (1970) p-median MILP as a Pyomo model (no solver is called).

    Parameters
    ----------
    problem : PMedianProblem
    p : int, optional
        Facilities to open (default ``problem.p``).

    Returns
    -------
    pyomo.environ.ConcreteModel
        Variables ``x[j]`` (binary: candidate chosen), ``y[i, j]`` (share of demand ``i`` served by
        ``j``) and ``y0[i]`` (served by an existing sample).

    Notes
    -----
    .. math::

        \\min \\sum_i w_i \\Big(\\sum_j d_{ij} y_{ij} + b_i y_{i0}\\Big)
        \\quad \\text{s.t.} \\quad
        \\sum_j y_{ij} + y_{i0} = 1, \\;
        y_{ij} \\le x_j, \\;
        \\sum_j x_j = p, \\;
        \\sum_{j \\in H} x_j \\le m, \\;
        \\sum_{j \\in C} x_j \\le 1

    for every hole :math:`H` and separation clique :math:`C` (:func:`separation_cliques`).

    References
    ----------
    .. [1] ReVelle, C. S., & Swain, R. W. (1970). Central facilities location. Geographical
       Analysis 2(1), 30-42. doi:10.1111/j.1538-4632.1970.tb00142.x
    """
    import pyomo.environ as pyo

    p = problem.p if p is None else p
    m = pyo.ConcreteModel(name="p_median")
    add_facility_variables(m, problem)
    add_assignment(m, problem)
    add_facility_count(m, p)
    add_hole_limits(m, problem)
    add_separation(m, problem)
    add_objective(m, problem)
    return m


def add_facility_variables(m, problem: PMedianProblem) -> None:
    """``x[j]`` binary: candidate ``j`` is chosen."""
    import pyomo.environ as pyo

    m.J = pyo.RangeSet(0, problem.n_candidates - 1)
    m.I = pyo.RangeSet(0, problem.n_demand - 1)
    m.x = pyo.Var(m.J, domain=pyo.Binary)


def add_assignment(m, problem: PMedianProblem) -> None:
    """``y[i, j]``, ``y0[i]`` and the rules: demand fully served, only by chosen candidates."""
    import pyomo.environ as pyo

    has_base = problem.base_distance is not None and np.any(np.isfinite(problem.base_distance))
    base_ok = (
        np.isfinite(problem.base_distance) if has_base else np.zeros(problem.n_demand, dtype=bool)
    )
    m.IB = pyo.Set(initialize=np.flatnonzero(base_ok).tolist())
    m.y = pyo.Var(m.I, m.J, bounds=(0.0, 1.0))
    m.y0 = pyo.Var(m.IB, bounds=(0.0, 1.0))

    def served(mm, i):
        expr = sum(mm.y[i, j] for j in mm.J)
        if i in mm.IB:
            expr += mm.y0[i]
        return expr == 1.0

    m.served = pyo.Constraint(m.I, rule=served)
    m.link = pyo.Constraint(m.I, m.J, rule=lambda mm, i, j: mm.y[i, j] <= mm.x[j])


def add_facility_count(m, p: int) -> None:
    """Exactly ``p`` candidates are chosen."""
    import pyomo.environ as pyo

    m.count = pyo.Constraint(expr=sum(m.x[j] for j in m.J) == p)


def add_hole_limits(m, problem: PMedianProblem) -> None:
    """At most the hole's capacity (``max_per_hole``) of chosen candidates per hole."""
    import pyomo.environ as pyo

    groups = []
    caps = []
    if problem.hole_capacity is not None:
        for h in np.unique(problem.hole):
            idx = np.flatnonzero(problem.hole == h)
            if idx.size > problem.hole_capacity[h]:
                groups.append(idx.tolist())
                caps.append(int(problem.hole_capacity[h]))
    m.H = pyo.RangeSet(0, len(groups) - 1) if groups else pyo.Set(initialize=[])
    m.hole_limit = pyo.Constraint(
        m.H, rule=lambda mm, g: sum(mm.x[j] for j in groups[g]) <= caps[g]
    )


def add_separation(m, problem: PMedianProblem) -> None:
    """At most one chosen candidate per separation clique."""
    import pyomo.environ as pyo

    cliques = [c.tolist() for c in separation_cliques(problem)]
    m.C = pyo.RangeSet(0, len(cliques) - 1) if cliques else pyo.Set(initialize=[])
    m.separation = pyo.Constraint(m.C, rule=lambda mm, c: sum(mm.x[j] for j in cliques[c]) <= 1)


def add_objective(m, problem: PMedianProblem) -> None:
    """Weighted distance to the serving candidate or existing sample."""
    import pyomo.environ as pyo

    w = problem.demand_weight
    d = problem.distance
    b = problem.base_distance
    expr = sum(float(w[i] * d[i, j]) * m.y[i, j] for i in m.I for j in m.J)
    expr += sum(float(w[i] * b[i]) * m.y0[i] for i in m.IB)
    m.objective = pyo.Objective(expr=expr, sense=pyo.minimize)


def solve_pmedian_milp(
    problem: PMedianProblem,
    *,
    time_limit_s: float = 30.0,
    rel_gap: float = 1e-6,
    start: np.ndarray | None = None,
) -> PMedianResult:
    """Solve the p-median MILP with HiGHS: Pyomo builds it, highspy solves the compiled matrices.

    Parameters
    ----------
    problem : PMedianProblem
    time_limit_s : float, optional
        Solver time limit [s]; the best solution found by then is returned with its gap.
    rel_gap : float, optional
        Relative optimality gap at which HiGHS stops [fraction].
    start : ndarray of int, optional
        Chosen candidates of a known feasible solution (e.g. the heuristic's), passed to HiGHS
        as a MIP start.

    Returns
    -------
    PMedianResult
        ``p`` is reduced to :func:`max_feasible_count` when the spread rules allow fewer.

    Notes
    -----
    The model is compiled with Pyomo's ``LinearStandardFormCompiler`` (rows in mixed form) and the
    sparse matrix handed to ``highspy.Highs.passModel`` in one call, which avoids walking every
    constraint through the solver interface.
    """
    import highspy
    from pyomo.common.gc_manager import PauseGC
    from pyomo.repn.plugins.standard_form import LinearStandardFormCompiler

    p_eff = min(problem.p, max_feasible_count(problem))
    if p_eff == 0 or problem.n_candidates == 0:
        return PMedianResult(
            np.array([], dtype=int), objective_value(problem, []), "milp", p_requested=problem.p
        )
    inf = highspy.kHighsInf
    with PauseGC():
        model = build_pmedian_model(problem, p_eff)
        form = LinearStandardFormCompiler().write(model, mixed_form=True)
        a_csr = form.A.tocsr()
        nrow, ncol = a_csr.shape
        kind = np.array([r.bound_type for r in form.rows], dtype=int)
        rhs = np.asarray(form.rhs, dtype=float)
        lp = highspy.HighsLp()
        lp.num_col_, lp.num_row_ = ncol, nrow
        lp.col_cost_ = np.asarray(form.c.toarray(), dtype=float).ravel()
        lp.col_lower_ = np.array([-inf if v.lb is None else v.lb for v in form.columns], float)
        lp.col_upper_ = np.array([inf if v.ub is None else v.ub for v in form.columns], float)
        lp.row_lower_ = np.where(kind == 1, -inf, rhs)
        lp.row_upper_ = np.where(kind == -1, inf, rhs)
        lp.a_matrix_.format_ = highspy.MatrixFormat.kRowwise
        lp.a_matrix_.start_ = a_csr.indptr
        lp.a_matrix_.index_ = a_csr.indices
        lp.a_matrix_.value_ = a_csr.data
        is_int = [v.is_integer() for v in form.columns]
        lp.integrality_ = [
            highspy.HighsVarType.kInteger if t else highspy.HighsVarType.kContinuous for t in is_int
        ]
        col_of = {id(v): k for k, v in enumerate(form.columns)}
        x_cols = np.array([col_of[id(model.x[j])] for j in model.J])

        highs = quiet_highs()
        highs.setOptionValue("output_flag", False)
        highs.setOptionValue("time_limit", float(time_limit_s))
        highs.setOptionValue("mip_rel_gap", float(rel_gap))
        # No "threads" option: HiGHS sizes one scheduler per process at its first run, and a
        # later different thread count makes run() fail with status "Not Set".
        highs.passModel(lp)
        if start is not None and len(start) == p_eff and is_feasible(problem, start):
            highs.setSolution(_start_solution(problem, model, col_of, ncol, np.asarray(start)))
        highs.run()
    status = highs.getModelStatus()
    info = highs.getInfo()
    if status == highspy.HighsModelStatus.kInfeasible:
        msg = f"p-median MILP infeasible with p={p_eff} (spread rules too tight)"
        raise SolverError(msg)
    if info.primal_solution_status != 2:  # 2 = feasible point available
        msg = (
            f"HiGHS stopped without a solution ({highs.modelStatusToString(status)}) "
            "on the p-median MILP"
        )
        raise SolverError(msg)
    x = np.asarray(highs.getSolution().col_value)[x_cols]
    chosen = np.flatnonzero(x > 0.5)
    optimal = status == highspy.HighsModelStatus.kOptimal
    return PMedianResult(
        chosen=chosen,
        objective=objective_value(problem, chosen),
        method="milp",
        status="optimal" if optimal else highs.modelStatusToString(status),
        gap_frac=float(info.mip_gap),
        p_requested=problem.p,
        details={"rows": nrow, "columns": ncol, "nodes": int(info.mip_node_count)},
    )


def _start_solution(problem, model, col_of, ncol, start):
    import highspy

    xs = np.zeros(ncol)
    for j in start:
        xs[col_of[id(model.x[int(j)])]] = 1.0
    d = problem.distance[:, start]
    near = start[np.argmin(d, axis=1)]
    dmin = d.min(axis=1)
    for i in range(problem.n_demand):
        if i in model.IB and problem.base_distance[i] <= dmin[i]:
            xs[col_of[id(model.y0[i])]] = 1.0
        else:
            xs[col_of[id(model.y[i, int(near[i])])]] = 1.0
    sol = highspy.HighsSolution()
    sol.col_value = xs.tolist()
    sol.value_valid = True
    return sol


# --- heuristic -------------------------------------------------------------------------------


def _feasible_mask(problem: PMedianProblem, selected: np.ndarray) -> np.ndarray:
    """Candidates that may be added to ``selected`` without breaking a spread rule."""
    ok = np.ones(problem.n_candidates, dtype=bool)
    ok[selected] = False
    if problem.hole is None:
        return ok
    if problem.hole_capacity is not None:
        counts = np.bincount(problem.hole[selected], minlength=problem.hole_capacity.size)
        full = np.flatnonzero(counts >= problem.hole_capacity)
        if full.size:
            ok &= ~np.isin(problem.hole, full)
    if problem.min_separation_m is not None:
        for s in selected:
            same = np.flatnonzero(problem.hole == problem.hole[s])
            ok[same[problem.conflicts(int(s), same)]] = False
    return ok


def _weighted_cost(problem, cap: np.ndarray, cols: np.ndarray | None = None, chunk: int = 512):
    """``sum_i w_i min(cap_i, d_ij)`` for every candidate ``j`` (or those in ``cols``).

    Works on a contiguous candidates × demand copy of the distances, in blocks of rows, which is
    many times faster than gathering columns of the demand × candidates matrix; the
    matrix-vector product is an ``einsum`` (measured faster here than the BLAS call).
    """
    dt = problem.distance_t()
    w = problem.demand_weight
    n = dt.shape[0]
    out = np.empty(n)
    buf = np.empty((min(chunk, n), dt.shape[1]), dtype=np.result_type(dt.dtype, cap.dtype))
    for a in range(0, n, chunk):
        b = min(a + chunk, n)
        blk = buf[: b - a]
        np.minimum(dt[a:b], cap[None, :], out=blk)
        out[a:b] = np.einsum("ij,j->i", blk, w)
    return out if cols is None else out[cols]


def solve_pmedian_heuristic(
    problem: PMedianProblem, *, max_swaps: int = 1000, n_starts: int = 1, seed: int = 0
) -> PMedianResult:
    """Greedy addition then Teitz & Bart vertex substitution, keeping the spread rules.

    Parameters
    ----------
    problem : PMedianProblem
    max_swaps : int, optional
        Most swaps made.
    n_starts : int, optional
        Starts: the first is greedy, the others random feasible sets; the best local optimum wins.
    seed : int, optional
        Seed of the random starts.

    Returns
    -------
    PMedianResult

    Notes
    -----
    Greedy: add, one at a time, the feasible candidate that lowers
    :math:`Z = \\sum_i w_i \\min_{j \\in S \\cup \\{0\\}} d_{ij}` most (0 stands for the
    existing samples). Swap (Teitz & Bart's vertex substitution): evaluate every exchange of a
    chosen :math:`r` for a feasible :math:`c` at once (:func:`_swap_costs`, Whitaker's fast
    interchange, :math:`O(n_{demand} \\cdot n_{candidates})` for all pairs), make the best one
    while it lowers :math:`Z`, and stop at a local optimum: no single exchange improves.

    References
    ----------
    .. [1] Teitz, M. B., & Bart, P. (1968). Heuristic methods for estimating the generalized
       vertex median of a weighted graph. Operations Research 16(5), 955-961.
       doi:10.1287/opre.16.5.955
    .. [2] Whitaker, R. A. (1983). A fast algorithm for the greedy interchange for large-scale
       clustering and median location problems. INFOR 21(2), 95-108 (from memory).
    """
    n_dem = problem.n_demand
    base = (
        problem.base_distance.copy()
        if problem.base_distance is not None
        else np.full(n_dem, np.inf)
    )
    big = float(np.max(problem.distance, initial=0.0)) * 10 + 1.0
    base_f = np.where(np.isfinite(base), base, big)
    rng = np.random.default_rng(seed)
    best_res = None
    for start in range(max(1, n_starts)):
        res = _greedy_swap(problem, base_f, max_swaps, rng if start else None)
        if best_res is None or res.objective < best_res.objective - 1e-12:
            best_res = res
    best_res.details["starts"] = max(1, n_starts)
    return best_res


def _swap_costs(problem: PMedianProblem, selected: np.ndarray, base_f: np.ndarray):
    """Objective after every swap (remove ``selected[r]``, add ``c``) and whether it is allowed.

    Returns
    -------
    z : ndarray, shape (p, n_candidates)
    ok : ndarray of bool, shape (p, n_candidates)

    Notes
    -----
    With :math:`d^1_i, d^2_i` the nearest and second-nearest distances from demand :math:`i` to
    the chosen set and the existing samples, and :math:`N(r)` the demand points whose nearest is
    :math:`r`,

    .. math::

        Z(S - r + c) = \\sum_i w_i \\min(d^1_i, d_{ic})
        + \\sum_{i \\in N(r)} w_i \\big[\\min(d^2_i, d_{ic}) - \\min(d^1_i, d_{ic})\\big]

    The first sum is shared by every :math:`r` and the sets :math:`N(r)` partition the demand,
    so all swaps cost :math:`O(n_{demand} \\cdot n_{candidates})` together (Whitaker 1983).
    """
    d = problem.distance
    w = problem.demand_weight
    p = selected.size
    both = np.column_stack([d[:, selected], base_f])  # the last column: existing samples
    order = np.argsort(both, axis=1, kind="stable")
    rows = np.arange(both.shape[0])
    d1 = both[rows, order[:, 0]]
    d2 = both[rows, order[:, 1]] if both.shape[1] > 1 else np.full(rows.size, np.inf)
    near = order[:, 0]
    shared = _weighted_cost(problem, d1)
    z = np.tile(shared, (p, 1))
    ok = np.empty((p, problem.n_candidates), dtype=bool)
    for r in range(p):
        mine = near == r
        if mine.any():
            dm = d[mine]
            diff = np.minimum(dm, d2[mine, None]) - np.minimum(dm, d1[mine, None])
            z[r] += np.einsum("i,ij->j", w[mine], diff)
        ok[r] = _feasible_mask(problem, np.delete(selected, r))
        ok[r, selected] = False
    return z, ok


def _greedy_swap(problem, base_f, max_swaps, rng) -> PMedianResult:
    selected = np.array([], dtype=int)
    cur = base_f.copy()
    for _ in range(problem.p):
        ok = _feasible_mask(problem, selected)
        cols = np.flatnonzero(ok)
        if cols.size == 0:
            break
        if rng is None:
            cost = _weighted_cost(problem, cur, cols)
            j = int(cols[np.argmin(cost)])
        else:
            j = int(rng.choice(cols))
        selected = np.append(selected, j)
        cur = np.minimum(cur, problem.distance[:, j])
    best = float(problem.demand_weight @ cur)
    swaps = 0
    improved = selected.size > 0
    while improved and swaps < max_swaps:
        improved = False
        z, ok = _swap_costs(problem, selected, base_f)
        z = np.where(ok, z, np.inf)
        pos, col = np.unravel_index(int(np.argmin(z)), z.shape)
        if z[pos, col] < best * (1 - 1e-12) - 1e-12:
            selected[pos] = col
            best = float(z[pos, col])
            swaps += 1
            improved = True
    return PMedianResult(
        chosen=np.sort(selected),
        objective=objective_value(problem, selected),
        method="heuristic",
        status="local optimum" if not improved else "swap limit",
        p_requested=problem.p,
        details={"swaps": swaps},
    )


def solve_pmedian(
    problem: PMedianProblem,
    *,
    milp_max_pairs: int = 10_000,
    time_limit_s: float = 30.0,
    rel_gap: float = 1e-4,
    n_starts: int = 1,
    seed: int = 0,
) -> PMedianResult:
    """Solve heuristically, then by MILP (started from the heuristic) when the problem is small.

    Parameters
    ----------
    problem : PMedianProblem
    milp_max_pairs : int, optional
        The MILP is used when ``n_demand × n_candidates`` is at most this (0: never).
    time_limit_s : float, optional
        MILP time limit [s].
    rel_gap : float, optional
        MILP relative gap [fraction].
    n_starts, seed : int, optional
        Starts of the heuristic and their seed (:func:`solve_pmedian_heuristic`).

    Returns
    -------
    PMedianResult
        The MILP's answer when it was run (never worse than the heuristic's, which is its start);
        otherwise the heuristic's.
    """
    heur = solve_pmedian_heuristic(problem, n_starts=n_starts, seed=seed)
    pairs = problem.n_demand * problem.n_candidates
    if pairs == 0 or pairs > milp_max_pairs:
        return heur
    res = solve_pmedian_milp(problem, time_limit_s=time_limit_s, rel_gap=rel_gap, start=heur.chosen)
    if heur.objective < res.objective - 1e-9:
        heur.details["milp_status"] = res.status
        return heur
    res.details["heuristic_objective"] = heur.objective
    return res


def brute_force_pmedian(problem: PMedianProblem) -> PMedianResult:
    """Exact p-median by trying every feasible combination (tiny problems only; for checks).

    Raises
    ------
    InputDataError
        When there are more than 200 000 combinations.
    """
    from math import comb

    p_eff = min(problem.p, max_feasible_count(problem))
    n = problem.n_candidates
    if comb(n, p_eff) > 200_000:
        msg = f"brute force over C({n}, {p_eff}) = {comb(n, p_eff)} combinations is too many"
        raise InputDataError(msg)
    best, best_set = float("inf"), ()
    for combo in itertools.combinations(range(n), p_eff):
        if not is_feasible(problem, np.array(combo, dtype=int)):
            continue
        z = objective_value(problem, combo)
        if z < best - 1e-12:
            best, best_set = z, combo
    return PMedianResult(np.array(best_set, dtype=int), best, "brute force", p_requested=problem.p)
