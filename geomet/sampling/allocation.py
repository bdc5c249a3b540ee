"""How many testwork samples each domain gets: Neyman allocation with practical bounds.

The population is the ore to be mined: each domain is a stratum whose size is the tonnes it feeds
to the scheduled plan (optionally weighted towards early periods, which matter more to a mine's
value and to the first years' forecasts), and whose spread is the variability of the attributes
the tests must calibrate.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from geomet.errors import InputDataError


def neyman_allocation(n, stratum_sizes, stratum_std):
    """Neyman (optimum) allocation of a sample of size ``n`` to strata.

    Parameters
    ----------
    n : float
        Total sample size [samples].
    stratum_sizes : array-like
        Stratum sizes :math:`N_h` (here tonnes) [any consistent unit].
    stratum_std : array-like
        Within-stratum standard deviations :math:`S_h` [unit of the variable].

    Returns
    -------
    ndarray
        Fractional sample sizes :math:`n_h` (sum ``n``) [samples].

    Notes
    -----
    Minimising the variance of the stratified mean for a fixed total gives (Cochran 1977, eq. 5.26)

    .. math:: n_h = n \\frac{N_h S_h}{\\sum_j N_j S_j}

    When every :math:`S_h` is equal this is proportional allocation.

    References
    ----------
    .. [1] Neyman, J. (1934). On the two different aspects of the representative method: the
       method of stratified sampling and the method of purposive selection. Journal of the Royal
       Statistical Society 97(4), 558-625. doi:10.2307/2342192
    .. [2] Cochran, W. G. (1977). Sampling Techniques, 3rd ed., ch. 5. Wiley, New York.

    Examples
    --------
    >>> neyman_allocation(100, [400, 300, 200, 100], [10, 15, 20, 30]).round(3)
    array([25.806, 29.032, 25.806, 19.355])
    """
    sizes = np.asarray(stratum_sizes, dtype=float)
    std = np.asarray(stratum_std, dtype=float)
    if sizes.shape != std.shape:
        msg = (
            "stratum_sizes and stratum_std must have the same length; "
            f"got {sizes.shape} and {std.shape}"
        )
        raise InputDataError(msg)
    if (
        np.any(~np.isfinite(sizes))
        or np.any(sizes < 0)
        or np.any(~np.isfinite(std))
        or np.any(std < 0)
    ):
        msg = "stratum sizes and standard deviations must be finite and non-negative"
        raise InputDataError(msg)
    w = sizes * std
    total = w.sum()
    if total <= 0:
        msg = "Neyman allocation needs at least one stratum with positive size and spread"
        raise InputDataError(msg)
    return n * w / total


def bounded_allocation(n, weights, *, existing=None, lower=None, upper=None):
    """Continuous allocation proportional to ``weights``, topped up over existing samples, bounded.

    Parameters
    ----------
    n : float
        New samples to allocate [samples].
    weights : array-like
        Allocation weights :math:`w_h` (for Neyman, :math:`N_h S_h`).
    existing : array-like, optional
        Samples each stratum already has :math:`e_h` [samples].
    lower, upper : array-like, optional
        Bounds :math:`l_h \\le a_h \\le u_h` on the new samples [samples].

    Returns
    -------
    ndarray
        New samples per stratum :math:`a_h` (sum ``n`` unless the upper bounds sum to less).

    Notes
    -----
    The allocation is :math:`a_h = \\min(u_h, \\max(l_h, \\lambda w_h - e_h))` with the one
    :math:`\\lambda` that makes :math:`\\sum a_h = n`; the sum is piecewise linear and
    non-decreasing in :math:`\\lambda`, so :math:`\\lambda` is found exactly between breakpoints.
    With no existing samples and no bounds it is Neyman's allocation; with upper bounds it is
    Cochran's (1977, §5.8) rule of fixing over-allocated strata at their bound and re-allocating
    the rest in proportion; with existing samples the total program
    :math:`e_h + a_h` follows the weights as closely as the new samples allow.
    """
    w = np.asarray(weights, dtype=float)
    k = w.size
    e = np.zeros(k) if existing is None else np.asarray(existing, dtype=float)
    lo = np.zeros(k) if lower is None else np.asarray(lower, dtype=float)
    hi = np.full(k, np.inf) if upper is None else np.asarray(upper, dtype=float)
    if np.any(lo > hi):
        bad = np.flatnonzero(lo > hi)
        msg = f"lower bound above upper bound for stratum positions {bad.tolist()}"
        raise InputDataError(msg)
    if lo.sum() > n + 1e-9:
        msg = (
            f"the minimum samples per domain add up to {lo.sum():g}, "
            f"more than the {n:g} to allocate"
        )
        raise InputDataError(msg)
    if hi.sum() <= n:
        return hi.astype(float).copy()
    if w.max(initial=0.0) > 0:
        w = w / w.max()  # the allocation does not depend on the weights' scale
    with np.errstate(over="ignore", invalid="ignore"):  # lambda * tiny weight may overflow
        return _solve_lambda(n, w, e, lo, hi)


def _solve_lambda(n, w, e, lo, hi):
    def total(lam):
        return np.clip(lam * w - e, lo, hi).sum()

    pos = w > 0
    wp = w[pos]
    bps = np.unique(np.concatenate([[0.0], (e + lo)[pos] / wp, (e + hi)[pos] / wp]))
    bps = bps[np.isfinite(bps)]
    vals = np.array([total(b) for b in bps])
    idx = int(np.searchsorted(vals, n, side="left"))
    if idx >= len(bps):
        last = bps[-1]
        a = np.clip(last * w - e, lo, hi)
        growing = pos & (last * w - e < hi)
        slope = w[growing].sum()
        if slope > 0:  # past the last breakpoint the sum is linear in lambda
            return np.clip((last + (n - vals[-1]) / slope) * w - e, lo, hi)
        # Only strata with zero weight can still take samples: fill them up to their bounds.
        rest = n - a.sum()
        free = np.flatnonzero(~pos)
        for j in free:
            add = min(rest, hi[j] - a[j])
            a[j] += add
            rest -= add
        return a
    if idx == 0:
        lam = bps[0]
    else:
        b0, b1 = bps[idx - 1], bps[idx]
        v0, v1 = vals[idx - 1], vals[idx]
        lam = b1 if v1 == v0 else b0 + (n - v0) * (b1 - b0) / (v1 - v0)
    return np.clip(lam * w - e, lo, hi)


def largest_remainder_round(values, total=None, *, lower=None, upper=None):
    """Round non-negative values to integers that keep their total (Hamilton's method).

    Parameters
    ----------
    values : array-like
        Fractional allocations.
    total : int, optional
        Integer total to keep (default: the rounded sum of ``values``).
    lower, upper : array-like of int, optional
        Integer bounds each result must respect.

    Returns
    -------
    ndarray of int

    Notes
    -----
    Each value is floored; the remaining units go, one each, to the largest fractional parts
    (ties to the earlier position) among values still below their upper bound.

    Examples
    --------
    >>> largest_remainder_round([25.806, 29.032, 25.806, 19.355]).tolist()
    [26, 29, 26, 19]
    """
    v = np.asarray(values, dtype=float)
    if total is None:
        total = int(round(v.sum()))
    lo = np.zeros(v.size, dtype=np.int64) if lower is None else np.asarray(lower, dtype=np.int64)
    hi = (
        np.full(v.size, np.iinfo(np.int64).max)
        if upper is None
        else np.asarray(upper, dtype=np.int64)
    )
    base = np.clip(np.floor(v + 1e-9).astype(np.int64), lo, hi)
    rest = int(total - base.sum())
    frac = v - base
    order = np.lexsort((np.arange(v.size), -frac))
    while rest > 0:
        room = [j for j in order if base[j] < hi[j]]
        if not room:
            break
        for j in room[:rest]:
            base[j] += 1
        rest = int(total - base.sum())
    while rest < 0:
        room = [j for j in order[::-1] if base[j] > lo[j]]
        if not room:
            break
        for j in room[:-rest]:
            base[j] -= 1
        rest = int(total - base.sum())
    return base


def period_weights(periods, *, discount_rate=0.0, weights: Mapping[int, float] | None = None):
    """Weight of each schedule period in the allocation.

    Parameters
    ----------
    periods : array-like of int
        Schedule periods (1 = first).
    discount_rate : float, optional
        Rate per period :math:`r` [fraction]: weight :math:`1/(1+r)^{p-1}`.
    weights : mapping of int to float, optional
        Explicit weight per period; periods not listed get the discounted weight.

    Returns
    -------
    ndarray
        Weight per entry of ``periods`` (NaN periods get 0).

    Examples
    --------
    >>> period_weights([1, 2, 3], discount_rate=0.1).round(4).tolist()
    [1.0, 0.9091, 0.8264]
    """
    p = np.asarray(periods, dtype=float)
    if discount_rate <= -1:
        msg = f"discount_rate must be greater than -1; got {discount_rate}"
        raise InputDataError(msg)
    with np.errstate(invalid="ignore"):
        out = np.where(np.isfinite(p), (1.0 + discount_rate) ** (-(p - 1.0)), 0.0)
    if weights:
        for period, wgt in weights.items():
            if wgt < 0:
                msg = f"period weight must be non-negative; got {wgt} for period {period}"
                raise InputDataError(msg)
            out = np.where(p == float(period), float(wgt), out)
    return out


def allocate_samples(
    n_samples: int,
    domains: Sequence[str],
    tonnes_weighted,
    variability,
    *,
    existing=None,
    available=None,
    min_per_domain: int = 0,
    min_share_frac: float = 0.05,
    tonnes_t=None,
) -> pd.DataFrame:
    """Allocate new testwork samples to domains (Neyman, bounded, rounded to keep the total).

    Parameters
    ----------
    n_samples : int
        New samples to choose [samples].
    domains : sequence of str
        Domain names.
    tonnes_weighted : array-like
        Scheduled tonnes of each domain, after period weights :math:`N_h` [t].
    variability : array-like
        Spread of the standardised attributes in each domain :math:`S_h` [standard units].
    existing : array-like, optional
        Existing testwork samples per domain [samples].
    available : array-like, optional
        Candidates per domain (the cap) [samples].
    min_per_domain : int, optional
        Fewest samples (existing + new) a domain that matters gets [samples].
    min_share_frac : float, optional
        A domain matters when its share of ``tonnes_weighted`` is at least this [fraction].
    tonnes_t : array-like, optional
        Unweighted scheduled tonnes, reported alongside [t].

    Returns
    -------
    DataFrame
        Per domain: ``domain``, ``scheduled_tonnes_t``, ``weighted_tonnes_t``,
        ``tonnes_share_frac``,
        ``variability_idx``, ``neyman_weight_frac``, ``existing_tests``, ``minimum_samples``,
        ``target_total``, ``samples_allocated``, ``candidates_available``.

    Notes
    -----
    The program's total size :math:`n + \\sum e_h` is shared in proportion to :math:`N_h S_h`
    (:func:`neyman_allocation`); each domain gets new samples to make up its share
    (:func:`bounded_allocation`), at least ``min_per_domain`` in total where it matters, never more
    than its candidates, and the fractions are rounded by :func:`largest_remainder_round`.
    """
    names = [str(d) for d in domains]
    k = len(names)
    nw = np.asarray(tonnes_weighted, dtype=float)
    s = np.asarray(variability, dtype=float)
    e = np.zeros(k) if existing is None else np.asarray(existing, dtype=float)
    cap = np.full(k, np.inf) if available is None else np.asarray(available, dtype=float)
    if not (nw.size == s.size == e.size == cap.size == k):
        msg = "domains, tonnes, variability, existing and available must have the same length"
        raise InputDataError(msg)
    if n_samples < 0:
        msg = f"n_samples must be non-negative; got {n_samples}"
        raise InputDataError(msg)
    s = np.where(np.isfinite(s), s, 0.0)
    w = nw * s
    if w.sum() <= 0:
        w = nw.copy()  # no spread measured anywhere: fall back to proportional allocation
    share = nw / nw.sum() if nw.sum() > 0 else np.zeros(k)
    matters = share >= min_share_frac
    lo = np.where(matters, np.maximum(min_per_domain - e, 0.0), 0.0)
    lo = np.minimum(lo, cap)
    n_eff = float(min(n_samples, cap.sum()))
    if lo.sum() > n_eff:
        # Not enough samples for every minimum: the biggest domains keep theirs.
        keep = np.zeros(k)
        left = n_eff
        for j in np.argsort(-nw, kind="stable"):
            take = min(lo[j], left)
            keep[j] = take
            left -= take
        lo = keep
    frac = bounded_allocation(n_eff, w, existing=e, lower=lo, upper=cap)
    alloc = largest_remainder_round(
        frac,
        int(round(n_eff)),
        lower=np.ceil(lo - 1e-9),
        upper=np.where(np.isfinite(cap), cap, 1e12),
    )
    total_prog = n_samples + e.sum()
    target = total_prog * w / w.sum() if w.sum() > 0 else np.zeros(k)
    return pd.DataFrame(
        {
            "domain": names,
            "scheduled_tonnes_t": (nw if tonnes_t is None else np.asarray(tonnes_t, dtype=float)),
            "weighted_tonnes_t": nw,
            "tonnes_share_frac": share,
            "variability_idx": s,
            "neyman_weight_frac": w / w.sum() if w.sum() > 0 else np.zeros(k),
            "existing_tests": e.astype(np.int64),
            "minimum_samples": np.where(matters, min_per_domain, 0).astype(np.int64),
            "target_total": target,
            "samples_allocated": alloc.astype(np.int64),
            "candidates_available": np.where(np.isfinite(cap), cap, -1).astype(np.int64),
        }
    )
