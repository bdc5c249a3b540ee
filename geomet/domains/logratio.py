"""Log-ratio transforms of compositional data (rows = samples, columns = parts).

Mineral abundances are compositions: they carry only relative information and are
closed to a constant sum, so distances and clustering must be computed on log-ratios
(Aitchison 1986). Zeros are replaced first, since a log-ratio of zero is undefined.

All functions take 2-D numpy arrays (a 1-D array is treated as one composition) and
return arrays of float64. They never modify their input.

References
----------
Aitchison, J. (1986). *The Statistical Analysis of Compositional Data*. Chapman and Hall,
London. DOI 10.1007/978-94-009-4109-0.

Egozcue, J.J., Pawlowsky-Glahn, V., Mateu-Figueras, G. and Barceló-Vidal, C. (2003).
Isometric logratio transformations for compositional data analysis. *Mathematical Geology*
35(3), 279-300. DOI 10.1023/A:1023818214614.

Martín-Fernández, J.A., Barceló-Vidal, C. and Pawlowsky-Glahn, V. (2003). Dealing with
zeros and missing values in compositional data sets using nonparametric imputation.
*Mathematical Geology* 35(3), 253-278. DOI 10.1023/A:1023866030544.

Hron, K., Filzmoser, P. and Thompson, K. (2012). Linear regression with compositional
explanatory variables. *Journal of Applied Statistics* 39(5), 1115-1128 (pivot coordinates).
DOI 10.1080/02664763.2011.644268.
"""

from __future__ import annotations

import numpy as np

from geomet.errors import InputDataError

__all__ = [
    "closure",
    "multiplicative_replacement",
    "clr",
    "clr_inverse",
    "pivot_basis",
    "ilr",
    "ilr_inverse",
]


def _as_2d(mat, name: str = "composition") -> tuple[np.ndarray, bool]:
    arr = np.asarray(mat, dtype=float)
    one_d = arr.ndim == 1
    if one_d:
        arr = arr[np.newaxis, :]
    if arr.ndim != 2:
        msg = f"{name} must be a 1-D or 2-D array (rows = samples); got {arr.ndim} dimensions"
        raise InputDataError(msg)
    return arr, one_d


def _check_finite_nonneg(arr: np.ndarray, name: str) -> None:
    bad = ~np.isfinite(arr) | (arr < 0)
    if bad.any():
        rows = np.unique(np.nonzero(bad)[0])
        msg = (
            f"{name} must be finite and non-negative; got {int(bad.sum())} bad value(s) "
            f"in row(s) {rows[:10].tolist()}{' ...' if rows.size > 10 else ''}"
        )
        raise InputDataError(msg)


def closure(mat, total: float = 1.0) -> np.ndarray:
    """Rescale every row to sum to ``total`` (the closure operation C).

    Parameters
    ----------
    mat : array_like, shape (n_samples, n_parts)
        Non-negative parts (any unit).
    total : float
        Constant sum after closure [same unit as the output, e.g. 1 or 100 wt%].

    Returns
    -------
    numpy.ndarray
        Closed compositions, same shape as ``mat``.

    Notes
    -----
    C(x)_i = total · x_i / Σ_j x_j (Aitchison 1986).

    Examples
    --------
    >>> closure([1.0, 1.0, 2.0]).round(3).tolist()
    [0.25, 0.25, 0.5]
    """
    arr, one_d = _as_2d(mat)
    _check_finite_nonneg(arr, "composition")
    sums = arr.sum(axis=1, keepdims=True)
    if (sums <= 0).any():
        rows = np.nonzero(sums[:, 0] <= 0)[0]
        msg = (
            f"every composition needs a positive sum to be closed; rows {rows[:10].tolist()} "
            "sum to zero"
        )
        raise InputDataError(msg)
    out = arr * (total / sums)
    return out[0] if one_d else out


def _closed_copy(arr: np.ndarray, total: float) -> np.ndarray:
    """Closure into a fresh array, checked, with one allocation (the fast path)."""
    _check_finite_nonneg(arr, "composition")
    sums = arr.sum(axis=1)
    if (sums <= 0).any():
        rows = np.nonzero(sums <= 0)[0]
        msg = (
            f"every composition needs a positive sum to be closed; rows {rows[:10].tolist()} "
            "sum to zero"
        )
        raise InputDataError(msg)
    out = np.array(arr, dtype=float, copy=True)
    out *= (total / sums)[:, np.newaxis]
    return out


def multiplicative_replacement(mat, delta: float | None = None, total: float = 1.0) -> np.ndarray:
    """Replace zeros by ``delta`` and shrink the other parts so the row keeps its total.

    Parameters
    ----------
    mat : array_like, shape (n_samples, n_parts)
        Non-negative parts; rows are closed to ``total`` first.
    delta : float, optional
        Value given to every zero part [same unit as ``total``]. Martín-Fernández et al.
        (2003) found 65 % of the detection limit to distort the covariance structure least.
        Default ``total / n_parts**2`` (the choice of scikit-bio's ``multi_replace``).
    total : float
        Constant sum of the compositions [e.g. 1 or 100 wt%].

    Returns
    -------
    numpy.ndarray
        Compositions without zeros, rows summing to ``total``.

    Notes
    -----
    With Z the number of zeros in row x and c = total (Martín-Fernández et al. 2003;
    equation written from memory of the paper):

        r_j = delta                     if x_j = 0
        r_j = (1 - Z·delta / c) · x_j   if x_j > 0

    The ratios between non-zero parts are unchanged, which is why the method is preferred
    to additive replacement.

    Examples
    --------
    >>> multiplicative_replacement([[0.2, 0.4, 0.4, 0.0]]).tolist()
    [[0.1875, 0.375, 0.375, 0.0625]]
    """
    arr, one_d = _as_2d(mat)
    closed = _closed_copy(arr, total)
    n_parts = closed.shape[1]
    if delta is None:
        delta = total / n_parts**2
    if not np.isfinite(delta) or delta <= 0:
        msg = f"replacement delta must be a positive number; got delta={delta}"
        raise InputDataError(msg)
    zeros = closed == 0
    n_zero = zeros.sum(axis=1, keepdims=True)
    shrink = 1.0 - n_zero * delta / total
    if (shrink <= 0).any():
        rows = np.nonzero(shrink[:, 0] <= 0)[0]
        msg = (
            f"replacement delta={delta} is too large: {int(n_zero.max())} zero parts x delta "
            f"reach the total {total} in rows {rows[:10].tolist()}; use a smaller delta"
        )
        raise InputDataError(msg)
    closed *= shrink
    closed[zeros] = delta
    return closed[0] if one_d else closed


def clr(mat) -> np.ndarray:
    """Centred log-ratio transform.

    Parameters
    ----------
    mat : array_like, shape (n_samples, n_parts)
        Strictly positive parts (replace zeros first).

    Returns
    -------
    numpy.ndarray
        CLR coordinates, same shape; every row sums to zero.

    Notes
    -----
    clr(x)_i = ln(x_i / g(x)), g(x) = (Π_j x_j)^(1/D) the geometric mean of the D parts
    (Aitchison 1986). It does not depend on the closure constant.

    Examples
    --------
    >>> clr([0.1, 0.3, 0.6]).round(6).tolist()
    [-0.963457, 0.135155, 0.828302]
    """
    arr, one_d = _as_2d(mat)
    if not np.isfinite(arr).all() or (arr <= 0).any():
        bad_rows = np.unique(np.nonzero(~np.isfinite(arr) | (arr <= 0))[0])
        msg = (
            "clr needs strictly positive, finite parts (replace zeros first with "
            f"multiplicative_replacement); bad row(s) {bad_rows[:10].tolist()}"
        )
        raise InputDataError(msg)
    out = np.log(arr)
    out -= out.mean(axis=1, keepdims=True)
    return out[0] if one_d else out


def clr_inverse(coords, total: float = 1.0) -> np.ndarray:
    """Back-transform CLR coordinates to compositions closed to ``total``.

    Notes
    -----
    x = C(exp(clr)) (Aitchison 1986). The row maximum is subtracted before exponentiation
    to avoid overflow; closure removes the constant.
    """
    arr, one_d = _as_2d(coords, "clr coordinates")
    ex = np.exp(arr - arr.max(axis=1, keepdims=True))
    out = ex * (total / ex.sum(axis=1, keepdims=True))
    return out[0] if one_d else out


def pivot_basis(n_parts: int) -> np.ndarray:
    """Orthonormal basis of the CLR plane giving pivot (Helmert-type) ILR coordinates.

    Parameters
    ----------
    n_parts : int
        Number of parts D (>= 2).

    Returns
    -------
    numpy.ndarray, shape (D - 1, D)
        Rows are orthonormal and each sums to zero; ``ilr(x) = clr(x) @ basis.T``.

    Notes
    -----
    Coordinate i (i = 1 … D-1) balances part i against the geometric mean of the parts
    after it (sequential binary partition {x_i} | {x_i+1 … x_D}; Egozcue et al. 2003;
    Hron et al. 2012):

        z_i = sqrt((D - i) / (D - i + 1)) · ln(x_i / g(x_i+1, …, x_D))

    so row i of the basis holds 0 before position i, sqrt((D-i)/(D-i+1)) at i and
    -1 / sqrt((D-i)(D-i+1)) after it.

    Examples
    --------
    >>> pivot_basis(2).round(6).tolist()
    [[0.707107, -0.707107]]
    """
    if int(n_parts) != n_parts or n_parts < 2:
        msg = f"an ILR basis needs at least 2 parts; got n_parts={n_parts}"
        raise InputDataError(msg)
    d = int(n_parts)
    basis = np.zeros((d - 1, d))
    for i in range(1, d):
        rest = d - i
        basis[i - 1, i - 1] = np.sqrt(rest / (rest + 1))
        basis[i - 1, i:] = -1.0 / np.sqrt(rest * (rest + 1))
    return basis


def ilr(mat, basis: np.ndarray | None = None) -> np.ndarray:
    """Isometric log-ratio transform.

    Parameters
    ----------
    mat : array_like, shape (n_samples, n_parts)
        Strictly positive parts.
    basis : numpy.ndarray, shape (D - 1, D), optional
        Orthonormal basis of the CLR plane; default :func:`pivot_basis` (fixed and
        documented so that coordinates are reproducible).

    Returns
    -------
    numpy.ndarray, shape (n_samples, D - 1)

    Notes
    -----
    ilr(x) = clr(x) · Vᵀ with V the basis (Egozcue et al. 2003). Euclidean
    distances between ILR coordinates equal those between CLR coordinates (isometry).
    """
    arr, one_d = _as_2d(mat)
    v = pivot_basis(arr.shape[1]) if basis is None else np.asarray(basis, dtype=float)
    if v.shape != (arr.shape[1] - 1, arr.shape[1]):
        msg = (
            f"ILR basis must have shape (D-1, D) = ({arr.shape[1] - 1}, {arr.shape[1]}); "
            f"got {v.shape}"
        )
        raise InputDataError(msg)
    out = clr(arr) @ v.T
    return out[0] if one_d else out


def ilr_inverse(coords, basis: np.ndarray | None = None, total: float = 1.0) -> np.ndarray:
    """Back-transform ILR coordinates to compositions closed to ``total``.

    Notes
    -----
    x = C(exp(z · V)) (Egozcue et al. 2003), V the same basis as the forward transform.
    """
    arr, one_d = _as_2d(coords, "ilr coordinates")
    v = pivot_basis(arr.shape[1] + 1) if basis is None else np.asarray(basis, dtype=float)
    out = clr_inverse(arr @ v, total)
    return out[0] if one_d else out
