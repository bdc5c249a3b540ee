"""Non-negative least squares for many small problems at once (batched Lawson-Hanson).

``scipy.optimize.nnls`` solves one problem per call; geomet needs the same small problem (a few
minerals against a few elements) for up to millions of drill-core intervals. This module runs
the Lawson-Hanson active-set algorithm on all rows together in numpy: every iteration updates
each unfinished row's passive set and solves all their reduced normal equations with one
batched ``numpy.linalg.solve``.
"""

from __future__ import annotations

import numpy as np

from geomet.errors import InputDataError


def _masked_solve(ata: np.ndarray, atb: np.ndarray, passive: np.ndarray) -> np.ndarray:
    """Solve the normal equations restricted to each row's passive set (zeros elsewhere)."""
    k = ata.shape[-1]
    both = passive[:, :, None] & passive[:, None, :]
    eye = np.broadcast_to(np.eye(k, dtype=bool), both.shape)
    m = np.where(both, ata, np.where(eye, 1.0, 0.0))
    rhs = np.where(passive, atb, 0.0)
    return np.linalg.solve(m, rhs[..., None])[..., 0]


def nnls_batched(
    a: np.ndarray,
    b: np.ndarray,
    *,
    tol: float | None = None,
    max_iter: int | None = None,
    passive_init: np.ndarray | None = None,
) -> tuple[np.ndarray, np.ndarray]:
    """Solve min ||A_i x_i − b_i||₂ subject to x_i ≥ 0 for every row i at once.

    Parameters
    ----------
    a : numpy.ndarray
        Design matrices, shape (n, m, k), or one matrix (m, k) shared by all rows.
    b : numpy.ndarray
        Right-hand sides, shape (n, m).
    tol : float, optional
        Tolerance on the dual (gradient) for optimality; default
        ``10 * eps * max(1, max|Aᵀb|) * k``.
    max_iter : int, optional
        Limit on outer iterations; default ``3 * k``, as in ``scipy.optimize.nnls``.
    passive_init : numpy.ndarray of bool, optional
        Guess of the variables that end up positive, shape (k,) or (n, k). The start solves the
        least-squares problem on the guess and drops negative variables until it is feasible
        (as in the fast NNLS of Bro & De Jong 1997), then Lawson-Hanson continues from there:
        the answer is the same, found in fewer iterations when the guess is good.

    Returns
    -------
    x : numpy.ndarray
        Solutions, shape (n, k).
    rnorm : numpy.ndarray
        Residual norms ||A_i x_i − b_i||₂, shape (n,).

    Notes
    -----
    Lawson & Hanson's algorithm NNLS (1974, ch. 23) on the normal equations AᵀA x = Aᵀb: start
    with every variable at its bound (active); repeatedly free the variable with the largest
    dual w = Aᵀ(b − Ax), solve the least-squares problem on the free (passive) set, and step back
    along the segment to the last feasible point whenever a free variable would turn negative.
    Normal equations square the condition number, acceptable for the small, well-scaled problems
    of mineral speciation (k ≤ 10, cond(A) ≲ 10⁴).

    References
    ----------
    .. [1] Lawson, C. L. & Hanson, R. J. (1974). *Solving Least Squares Problems*.
       Prentice-Hall, Englewood Cliffs (reprinted SIAM 1995), chapter 23.
    .. [2] Bro, R. & De Jong, S. (1997). A fast non-negativity-constrained least squares
       algorithm. *Journal of Chemometrics* 11(5), 393-401.

    Examples
    --------
    >>> x, r = nnls_batched(np.array([[1.0, 0.0], [0.0, 1.0]]), np.array([[1.0, -1.0]]))
    >>> x.round(6).tolist(), r.round(6).tolist()
    ([[1.0, 0.0]], [1.0])
    """
    b = np.asarray(b, dtype=float)
    a = np.asarray(a, dtype=float)
    if b.ndim != 2:
        msg = f"b must have shape (n, m); got shape {b.shape}"
        raise InputDataError(msg)
    n, m = b.shape
    if a.ndim == 2:
        a = np.broadcast_to(a, (n, *a.shape))
    if a.ndim != 3 or a.shape[:2] != (n, m):
        msg = f"a must have shape ({n}, {m}, k) or ({m}, k) to match b {b.shape}; got {a.shape}"
        raise InputDataError(msg)
    if not (np.isfinite(a).all() and np.isfinite(b).all()):
        msg = "a and b must be finite (remove or fill NaN rows before nnls_batched)"
        raise InputDataError(msg)
    k = a.shape[2]
    ata = np.einsum("nmi,nmj->nij", a, a)
    atb = np.einsum("nmi,nm->ni", a, b)
    if tol is None:
        tol = 10 * np.finfo(float).eps * max(1.0, float(np.abs(atb).max(initial=0.0))) * k
    if max_iter is None:
        max_iter = 3 * k

    x = np.zeros((n, k))
    passive = np.zeros((n, k), dtype=bool)
    if passive_init is not None:
        passive[:] = np.broadcast_to(np.asarray(passive_init, dtype=bool), (n, k))
        rows = np.flatnonzero(passive.any(axis=1))
        for _ in range(k):
            if rows.size == 0:
                break
            s = _masked_solve(ata[rows], atb[rows], passive[rows])
            negative = passive[rows] & (s <= tol)
            bad = negative.any(axis=1)
            good = rows[~bad]
            x[good] = np.where(passive[good], s[~bad], 0.0)
            passive[rows[bad]] &= ~negative[bad]
            rows = rows[bad]
            rows = rows[passive[rows].any(axis=1)]
        passive[rows] = False  # guess did not settle: start these rows from zero
        x[rows] = 0.0
    w = atb - np.einsum("nij,nj->ni", ata, x)
    todo = np.flatnonzero((np.where(passive, -np.inf, w) > tol).any(axis=1))
    for _ in range(max_iter):
        if todo.size == 0:
            break
        # free the variable with the largest dual in each unfinished row
        j = np.argmax(np.where(passive[todo], -np.inf, w[todo]), axis=1)
        passive[todo, j] = True
        inner = todo
        for _ in range(k + 1):
            s = _masked_solve(ata[inner], atb[inner], passive[inner])
            p = passive[inner]
            feasible = np.all(~p | (s > tol), axis=1)
            done = inner[feasible]
            x[done] = np.where(passive[done], s[feasible], 0.0)
            stuck = ~feasible
            if not stuck.any():
                break
            rows = inner[stuck]
            s_bad, p_bad, x_bad = s[stuck], p[stuck], x[rows]
            # step from x towards s until the first passive variable reaches zero
            with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
                ratio = np.where(p_bad & (s_bad <= tol), x_bad / (x_bad - s_bad), np.inf)
            alpha = np.clip(ratio.min(axis=1), 0.0, 1.0)[:, None]
            x_new = x_bad + alpha * (s_bad - x_bad)
            x_new = np.where(p_bad, x_new, 0.0)
            passive[rows] = p_bad & (x_new > tol)
            x[rows] = np.where(passive[rows], x_new, 0.0)
            inner = rows
        w[todo] = atb[todo] - np.einsum("nij,nj->ni", ata[todo], x[todo])
        dual = np.where(passive[todo], -np.inf, w[todo])
        todo = todo[(dual > tol).any(axis=1)]
    rnorm = np.linalg.norm(np.einsum("nmk,nk->nm", a, x) - b, axis=1)
    return x, rnorm
