"""Log-ratio transforms checked against scikit-bio and published values."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from skbio.stats.composition import clr as sk_clr
from skbio.stats.composition import ilr as sk_ilr
from skbio.stats.composition import multi_replace as sk_multi_replace

from geomet.domains.logratio import (
    closure,
    clr,
    clr_inverse,
    ilr,
    ilr_inverse,
    multiplicative_replacement,
    pivot_basis,
)
from geomet.errors import InputDataError


def test_clr_science_check_value():
    # Aitchison (1986) definition worked by hand: g = (0.1 * 0.3 * 0.6) ** (1/3) = 0.262074,
    # ln(0.1/g) = -0.963457, ln(0.3/g) = 0.135155, ln(0.6/g) = 0.828302 (scikit-bio agrees below).
    assert np.allclose(clr([0.1, 0.3, 0.6]), [-0.963457, 0.135155, 0.828302], atol=1e-6)


def test_clr_hand_worked():
    # g(1, 2, 4) = 2, so clr = ln(1/2), ln(1), ln(2) (Aitchison 1986 definition, by hand)
    assert np.allclose(clr(np.array([[1.0, 2.0, 4.0]])), [[-np.log(2), 0.0, np.log(2)]])


def test_clr_matches_scikit_bio():
    rng = np.random.default_rng(0)
    x = rng.dirichlet(np.ones(35), size=50)
    # reference: scikit-bio skbio.stats.composition.clr
    assert np.allclose(clr(x), sk_clr(x), atol=1e-12)


def test_clr_is_scale_invariant():
    x = np.array([[0.1, 0.3, 0.6]])
    assert np.allclose(clr(x * 100), clr(x))


def test_ilr_with_pivot_basis_matches_scikit_bio():
    rng = np.random.default_rng(1)
    x = rng.dirichlet(np.ones(6) * 2, size=40)
    basis = pivot_basis(6)
    # reference: scikit-bio ilr given the same orthonormal basis (rows in clr space)
    assert np.allclose(ilr(x, basis), sk_ilr(x, basis=basis), atol=1e-12)
    assert np.allclose(ilr(x), sk_ilr(x, basis=basis), atol=1e-12)


def test_pivot_coordinate_formula_three_parts():
    # Egozcue et al. (2003) / Hron et al. (2012) pivot coordinates, by hand for D = 3:
    # z1 = sqrt(2/3) ln(x1 / sqrt(x2 x3)), z2 = sqrt(1/2) ln(x2 / x3)
    x = np.array([0.1, 0.3, 0.6])
    z1 = np.sqrt(2 / 3) * np.log(0.1 / np.sqrt(0.3 * 0.6))
    z2 = np.sqrt(1 / 2) * np.log(0.3 / 0.6)
    assert np.allclose(ilr(x), [z1, z2], atol=1e-12)


@pytest.mark.parametrize("d", [2, 3, 7, 35])
def test_pivot_basis_is_orthonormal_and_centred(d):
    v = pivot_basis(d)
    assert v.shape == (d - 1, d)
    assert np.allclose(v @ v.T, np.eye(d - 1), atol=1e-12)
    assert np.allclose(v.sum(axis=1), 0, atol=1e-12)


def test_multiplicative_replacement_matches_scikit_bio():
    # scikit-bio multi_replace docstring example: [[.2,.4,.4,0],[0,.5,.5,0]] ->
    # [[0.1875, 0.375, 0.375, 0.0625], [0.0625, 0.4375, 0.4375, 0.0625]] (delta = 1/D^2)
    x = np.array([[0.2, 0.4, 0.4, 0.0], [0.0, 0.5, 0.5, 0.0]])
    expected = [[0.1875, 0.375, 0.375, 0.0625], [0.0625, 0.4375, 0.4375, 0.0625]]
    assert np.allclose(multiplicative_replacement(x), expected)
    rng = np.random.default_rng(2)
    y = rng.dirichlet(np.ones(10), size=30)
    y[y < 0.05] = 0
    assert np.allclose(multiplicative_replacement(y, delta=0.001),
                       sk_multi_replace(y, delta=0.001), atol=1e-12)


def test_multiplicative_replacement_in_wt_pct():
    # closed to 100 wt%: 2 zeros get 0.065 each; non-zeros shrink by 1 - 2*0.065/100
    x = np.array([50.0, 30.0, 20.0, 0.0, 0.0])
    r = multiplicative_replacement(x, delta=0.065, total=100.0)
    assert np.allclose(r[3:], 0.065)
    assert np.allclose(r[:3], x[:3] * (1 - 0.13 / 100))
    assert np.isclose(r.sum(), 100.0)


def test_inverse_transforms_round_trip():
    rng = np.random.default_rng(3)
    x = rng.dirichlet(np.ones(5), size=20)
    assert np.allclose(clr_inverse(clr(x)), x)
    assert np.allclose(ilr_inverse(ilr(x)), x)
    assert np.allclose(ilr_inverse(ilr(x), total=100), x * 100)


def test_closure_input_types():
    assert np.allclose(closure([1, 1, 2]), [0.25, 0.25, 0.5])  # list, 1-D
    assert closure(np.ones((2, 4)), total=100).tolist() == [[25.0] * 4] * 2  # 2-D array


compositions = arrays(
    np.float64, st.tuples(st.integers(1, 8), st.integers(2, 10)),
    elements=st.floats(0.001, 1000, allow_nan=False),
)


@settings(max_examples=60, deadline=None)
@given(compositions)
def test_clr_rows_sum_to_zero(x):
    assert np.allclose(clr(x).sum(axis=1), 0, atol=1e-9)


@settings(max_examples=60, deadline=None)
@given(compositions, compositions)
def test_ilr_is_an_isometry_of_clr(a, b):
    # Euclidean distances between ILR coordinates equal those between CLR coordinates
    # (Egozcue et al. 2003); compare every row of a with the first row of b (same D)
    d = min(a.shape[1], b.shape[1])
    a, b = a[:, :d], b[:1, :d]
    if d < 2:
        return
    d_clr = np.linalg.norm(clr(a) - clr(b), axis=1)
    d_ilr = np.linalg.norm(ilr(a) - ilr(b), axis=1)
    assert np.allclose(d_clr, d_ilr, atol=1e-8)


@settings(max_examples=60, deadline=None)
@given(arrays(np.float64, st.tuples(st.integers(1, 6), st.integers(3, 12)),
              elements=st.one_of(st.just(0.0), st.floats(0.5, 100))))
def test_replacement_keeps_totals_and_ratios(x):
    x[:, 0] += 1.0  # every row needs a positive total
    r = multiplicative_replacement(x, delta=0.01, total=100.0)
    assert np.allclose(r.sum(axis=1), 100.0)
    assert (r > 0).all()
    nz = x > 0
    closed = closure(x, 100.0)
    # ratios between non-zero parts are unchanged (Martín-Fernández et al. 2003)
    ratio = np.where(nz, r / np.where(nz, closed, 1), np.nan)
    for row in ratio:
        v = row[np.isfinite(row)]
        assert np.allclose(v, v[0])


def test_errors():
    with pytest.raises(InputDataError, match="finite and non-negative"):
        closure([[1.0, -1.0, 2.0]])
    with pytest.raises(InputDataError, match="positive sum"):
        closure([[0.0, 0.0]])
    with pytest.raises(InputDataError, match="positive sum to be closed"):
        multiplicative_replacement([[0.0, 0.0, 0.0], [1.0, 0.0, 0.0]])
    with pytest.raises(InputDataError, match="too large"):
        multiplicative_replacement([[1.0, 0.0, 0.0]], delta=0.6)
    with pytest.raises(InputDataError, match="positive number"):
        multiplicative_replacement([[1.0, 0.0]], delta=0.0)
    with pytest.raises(InputDataError, match="strictly positive"):
        clr([[1.0, 0.0, 2.0]])
    with pytest.raises(InputDataError, match="at least 2 parts"):
        pivot_basis(1)
    with pytest.raises(InputDataError, match=r"shape \(D-1, D\)"):
        ilr([[0.2, 0.3, 0.5]], basis=np.eye(3))
    with pytest.raises(InputDataError, match="1-D or 2-D"):
        clr(np.ones((2, 2, 2)))
