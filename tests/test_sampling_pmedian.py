"""p-median with spread rules: MILP against brute force, heuristic against MILP, structure."""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial.distance import cdist

from geomet.errors import InputDataError
from geomet.sampling.pmedian import (
    PMedianProblem,
    brute_force_pmedian,
    build_pmedian_model,
    is_feasible,
    max_feasible_count,
    objective_value,
    separation_cliques,
    solve_pmedian,
    solve_pmedian_heuristic,
    solve_pmedian_milp,
)


def _problem(seed, n_dem=12, n_cand=9, p=3, spread=True, base=False):
    rng = np.random.default_rng(seed)
    d = cdist(rng.normal(size=(n_dem, 3)), rng.normal(size=(n_cand, 3)))
    hole = rng.integers(0, 3, n_cand)
    frm = rng.integers(0, 40, n_cand).astype(float)
    to = frm + rng.integers(2, 9, n_cand)
    return PMedianProblem(
        d,
        rng.uniform(1, 5, n_dem),
        p,
        base_distance=rng.uniform(0.5, 2.5, n_dem) if base else None,
        hole=hole,
        from_m=frm,
        to_m=to,
        max_per_hole=2 if spread else None,
        min_separation_m=4.0 if spread else None,
    )


def test_objective_value_by_hand():
    # Two demand points (weights 2 and 3), candidates at distances [[1, 4], [5, 2]].
    # Choosing both: 2*1 + 3*2 = 8; choosing the first: 2*1 + 3*5 = 17 (hand arithmetic).
    pr = PMedianProblem(np.array([[1.0, 4.0], [5.0, 2.0]]), [2.0, 3.0], 1)
    assert objective_value(pr, [0, 1]) == 8.0
    assert objective_value(pr, [0]) == 17.0
    with_base = PMedianProblem(
        np.array([[1.0, 4.0], [5.0, 2.0]]), [2.0, 3.0], 1, base_distance=[0.5, 3.0]
    )
    assert objective_value(with_base, [0]) == 2 * 0.5 + 3 * 3.0


@pytest.mark.solver
@pytest.mark.parametrize("seed", range(6))
@pytest.mark.parametrize(("spread", "base"), [(False, False), (True, False), (True, True)])
def test_milp_matches_brute_force(seed, spread, base):
    pr = _problem(seed, spread=spread, base=base)
    exact = brute_force_pmedian(pr)  # every combination of C(9, 3) = 84
    milp = solve_pmedian_milp(pr)
    assert milp.status == "optimal"
    assert milp.objective == pytest.approx(exact.objective, abs=1e-6)
    assert is_feasible(pr, milp.chosen)
    assert len(milp.chosen) == len(exact.chosen)


@pytest.mark.solver
@pytest.mark.parametrize("seed", range(4))
def test_hole_capacity_per_hole_matches_brute_force(seed):
    pr = _problem(seed, spread=True)
    pr = PMedianProblem(
        pr.distance,
        pr.demand_weight,
        3,
        hole=pr.hole,
        from_m=pr.from_m,
        to_m=pr.to_m,
        hole_capacity=np.array([1, 0, 2]),
        min_separation_m=4.0,
    )
    exact = brute_force_pmedian(pr)
    milp = solve_pmedian_milp(pr)
    heur = solve_pmedian_heuristic(pr)
    assert milp.objective == pytest.approx(exact.objective, abs=1e-6)
    for res in (milp, heur):
        assert not np.any(pr.hole[res.chosen] == 1)  # hole 1 has no allowance left
        assert np.sum(pr.hole[res.chosen] == 0) <= 1


@pytest.mark.solver
def test_milp_structure_counts():
    pr = _problem(3, n_dem=5, n_cand=7, p=2, spread=True, base=True)
    import pyomo.environ as pyo

    m = build_pmedian_model(pr)
    n_holes_limited = sum(np.sum(pr.hole == h) > 2 for h in np.unique(pr.hole))
    cliques = separation_cliques(pr)
    assert len(m.x) == 7
    assert len(m.y) == 5 * 7
    assert len(m.y0) == 5
    assert len(m.served) == 5
    assert len(m.link) == 5 * 7
    assert len(m.hole_limit) == n_holes_limited
    assert len(m.separation) == len(cliques)
    n_cons = sum(1 for _ in m.component_data_objects(pyo.Constraint, active=True))
    assert n_cons == 5 + 5 * 7 + 1 + n_holes_limited + len(cliques)


@settings(max_examples=60, deadline=None)
@given(
    intervals=st.lists(
        st.tuples(st.integers(0, 3), st.integers(0, 60), st.integers(1, 10)),
        min_size=1,
        max_size=12,
    ),
    sep=st.sampled_from([0.0, 2.0, 5.0]),
)
def test_separation_cliques_are_exactly_the_conflicts(intervals, sep):
    hole = np.array([h for h, _, _ in intervals])
    frm = np.array([float(f) for _, f, _ in intervals])
    to = frm + np.array([float(n) for _, _, n in intervals])
    pr = PMedianProblem(
        np.ones((1, len(intervals))), [1.0], 1, hole=hole, from_m=frm, to_m=to, min_separation_m=sep
    )
    cliques = separation_cliques(pr)
    together = {frozenset(pair) for c in cliques for pair in itertools.combinations(c.tolist(), 2)}
    for a, b in itertools.combinations(range(len(intervals)), 2):
        gap = max(frm[b] - to[a], frm[a] - to[b])
        conflict = hole[a] == hole[b] and gap < sep
        assert (frozenset((a, b)) in together) == conflict
        assert bool(pr.conflicts(a, np.array([b]))[0]) == conflict


@pytest.mark.parametrize("seed", range(8))
def test_max_feasible_count_matches_enumeration(seed):
    pr = _problem(seed, n_cand=8, spread=True)
    best = 0
    for k in range(1, 9):
        if any(is_feasible(pr, np.array(c)) for c in itertools.combinations(range(8), k)):
            best = k
    assert max_feasible_count(pr) == best


@pytest.mark.solver
def test_heuristic_against_milp_on_small_cases():
    # Teitz & Bart's swap is a local search and may stop at a local optimum. Measured on these
    # seeded cases: without spread rules 9 of 10 optimal, worst 1.0101 x the MILP; with spread
    # rules and 5 starts 9 of 10 optimal, worst 1.0014 x. The bounds leave a little room.
    ratios_free, ratios_spread = [], []
    for seed in range(10):
        free = _problem(seed, n_dem=30, n_cand=20, p=4, spread=False)
        ratios_free.append(
            solve_pmedian_heuristic(free).objective / solve_pmedian_milp(free).objective
        )
        tight = _problem(seed, n_dem=30, n_cand=20, p=4, spread=True)
        heur = solve_pmedian_heuristic(tight, n_starts=5, seed=seed)
        assert is_feasible(tight, heur.chosen)
        ratios_spread.append(heur.objective / solve_pmedian_milp(tight).objective)
    assert min(ratios_free + ratios_spread) >= 1 - 1e-9  # never better than the optimum
    assert max(ratios_free) <= 1.02
    assert max(ratios_spread) <= 1.03
    assert np.median(ratios_free) == pytest.approx(1.0, abs=1e-9)


@pytest.mark.solver
def test_solve_pmedian_uses_milp_when_small_and_heuristic_when_large():
    pr = _problem(1, n_dem=10, n_cand=8, p=2)
    assert solve_pmedian(pr, milp_max_pairs=80).method == "milp"
    assert solve_pmedian(pr, milp_max_pairs=79).method == "heuristic"


@settings(max_examples=30, deadline=None)
@given(seed=st.integers(0, 10_000), p=st.integers(0, 6))
def test_heuristic_solutions_keep_the_spread_rules(seed, p):
    pr = _problem(seed, n_dem=15, n_cand=15, p=p, spread=True)
    res = solve_pmedian_heuristic(pr)
    assert is_feasible(pr, res.chosen)
    assert len(res.chosen) <= min(p, max_feasible_count(pr))
    assert len(set(res.chosen.tolist())) == len(res.chosen)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 10_000), p=st.integers(1, 4), base=st.booleans())
def test_fast_swap_costs_match_direct_recomputation(seed, p, base):
    from geomet.sampling.pmedian import _swap_costs

    pr = _problem(seed, n_dem=10, n_cand=8, p=p, spread=False, base=base)
    rng = np.random.default_rng(seed)
    selected = rng.choice(8, size=p, replace=False)
    base_f = pr.base_distance if base else np.full(10, 1e6)
    z, ok = _swap_costs(pr, selected, base_f)
    for r in range(p):
        for c in range(8):
            if c in selected:
                assert not ok[r, c]
                continue
            trial = selected.copy()
            trial[r] = c
            direct = (
                objective_value(pr, trial)
                if base
                else float(pr.demand_weight @ pr.distance[:, trial].min(axis=1))
            )
            assert z[r, c] == pytest.approx(direct, rel=1e-12)


def test_more_facilities_never_cost_more():
    pr = _problem(5, n_dem=20, n_cand=10, p=1, spread=False)
    costs = []
    for p in range(1, 6):
        pr.p = p
        costs.append(brute_force_pmedian(pr).objective)
    assert all(b <= a + 1e-12 for a, b in itertools.pairwise(costs))


def test_problem_errors():
    with pytest.raises(InputDataError, match=r"distance must be a 2-D array"):
        PMedianProblem(np.ones(3), [1.0], 1)
    with pytest.raises(InputDataError, match=r"demand_weight must have 2 entries"):
        PMedianProblem(np.ones((2, 2)), [1.0], 1)
    with pytest.raises(InputDataError, match=r"distances must be finite and non-negative"):
        PMedianProblem(-np.ones((1, 2)), [1.0], 1)
    with pytest.raises(InputDataError, match=r"demand weights must be finite and non-negative"):
        PMedianProblem(np.ones((1, 2)), [-1.0], 1)
    with pytest.raises(InputDataError, match=r"p must be non-negative; got -1"):
        PMedianProblem(np.ones((1, 2)), [1.0], -1)
    with pytest.raises(InputDataError, match=r"spread rules need hole, from_m and to_m"):
        PMedianProblem(np.ones((1, 2)), [1.0], 1, max_per_hole=1)
    with pytest.raises(InputDataError, match=r"from_m must have 2 entries"):
        PMedianProblem(np.ones((1, 2)), [1.0], 1, hole=[0, 0], from_m=[0.0], to_m=[1.0, 2.0])
    with pytest.raises(InputDataError, match=r"max_per_hole must be at least 1; got 0"):
        PMedianProblem(
            np.ones((1, 2)), [1.0], 1, hole=[0, 0], from_m=[0, 5], to_m=[1, 6], max_per_hole=0
        )
    with pytest.raises(InputDataError, match=r"hole_capacity needs an entry for every hole code"):
        PMedianProblem(
            np.ones((1, 2)), [1.0], 1, hole=[0, 1], from_m=[0, 5], to_m=[1, 6], hole_capacity=[1]
        )
    with pytest.raises(InputDataError, match=r"hole_capacity must be non-negative"):
        PMedianProblem(
            np.ones((1, 2)),
            [1.0],
            1,
            hole=[0, 1],
            from_m=[0, 5],
            to_m=[1, 6],
            hole_capacity=[1, -1],
        )
    with pytest.raises(InputDataError, match=r"base_distance must have 1 entries"):
        PMedianProblem(np.ones((1, 2)), [1.0], 1, base_distance=[1.0, 2.0])
    big = PMedianProblem(np.ones((1, 40)), [1.0], 10)
    with pytest.raises(InputDataError, match=r"brute force over C\(40, 10\)"):
        brute_force_pmedian(big)
