"""Reduction of flotation testwork: the two-product formula and per-sample checks.

References
----------
.. [1] Wills, B.A. & Finch, J.A. (2016). *Wills' Mineral Processing Technology*, 8th ed.,
   Butterworth-Heinemann, Oxford, ch. 1 (metallurgical accounting, two-product formula).
   https://doi.org/10.1016/C2010-0-65478-2
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

ON_INVALID = ("nan", "raise")


def _valid_mask(f, c, t):
    f = np.asarray(f, dtype=float)
    c = np.asarray(c, dtype=float)
    t = np.asarray(t, dtype=float)
    return (c > f) & (f > t) & (t >= 0)


def _raise_invalid(f, c, t, valid, what: str) -> None:
    f, c, t = (np.atleast_1d(np.asarray(v, dtype=float)) for v in (f, c, t))
    f, c, t = np.broadcast_arrays(f, c, t)
    bad = np.flatnonzero(~np.atleast_1d(valid))
    rows = ", ".join(f"row {i}: f={f[i]:g}, c={c[i]:g}, t={t[i]:g}" for i in bad[:10])
    more = f" (and {len(bad) - 10} more)" if len(bad) > 10 else ""
    msg = f"{what}: the two-product formula needs c > f > t >= 0; got {rows}{more}"
    raise InputDataError(msg)


def _finish(template, values):
    if isinstance(template, pd.Series):
        return pd.Series(np.asarray(values, dtype=float), index=template.index)
    values = np.asarray(values, dtype=float)
    return float(values) if values.ndim == 0 else values


def two_product_yield_frac(feed, conc, tail, *, on_invalid="nan"):
    """Mass yield to concentrate from three assays of one metal.

    Parameters
    ----------
    feed, conc, tail : float, ndarray or Series
        Assays f, c, t of feed, concentrate and tailings, in one unit (% or g/t).
    on_invalid : {"nan", "raise"}, keyword-only
        Where c > f > t ≥ 0 fails (or an assay is missing): return NaN, or raise
        :class:`~geomet.errors.InputDataError` listing the rows.

    Returns
    -------
    float, ndarray or Series
        Yield Y [fraction of feed mass].

    Notes
    -----
    Y = (f − t) / (c − t)  (Wills & Finch 2016, ch. 1).

    Examples
    --------
    >>> round(two_product_yield_frac(1.0, 10.0, 0.2), 6)
    0.081633
    """
    if on_invalid not in ON_INVALID:
        msg = f"on_invalid must be one of {list(ON_INVALID)}; got {on_invalid!r}"
        raise InputDataError(msg)
    valid = _valid_mask(feed, conc, tail)
    if on_invalid == "raise" and not np.all(valid):
        _raise_invalid(feed, conc, tail, valid, "two_product_yield_frac")
    with np.errstate(invalid="ignore", divide="ignore"):
        y = (np.asarray(feed, float) - np.asarray(tail, float)) / (
            np.asarray(conc, float) - np.asarray(tail, float)
        )
    return _finish(feed, np.where(valid, y, np.nan))


def two_product_recovery_frac(feed, conc, tail, *, on_invalid="nan"):
    """Metal recovery to concentrate from three assays (the two-product formula).

    Parameters
    ----------
    feed, conc, tail : float, ndarray or Series
        Assays f, c, t in one unit (% or g/t).
    on_invalid : {"nan", "raise"}, keyword-only
        As in :func:`two_product_yield_frac`.

    Returns
    -------
    float, ndarray or Series
        Recovery R [fraction, 0-1]; NaN where undefined.

    Notes
    -----
    R = c (f − t) / (f (c − t))  (Wills & Finch 2016, ch. 1). Undefined unless c > f > t:
    otherwise the "recovery" is outside [0, 1] or divides by zero.

    Examples
    --------
    >>> round(two_product_recovery_frac(1.0, 10.0, 0.2), 6)
    0.816327
    """
    y = two_product_yield_frac(feed, conc, tail, on_invalid=on_invalid)
    with np.errstate(invalid="ignore", divide="ignore"):
        r = np.asarray(y, dtype=float) * np.asarray(conc, float) / np.asarray(feed, float)
    return _finish(feed, np.minimum(r, 1.0))  # R ≤ 1 exactly when t = 0; remove rounding


def reduce_flotation_tests(
    testwork: pd.DataFrame, *, tolerance_frac=0.05, on_invalid="nan"
) -> pd.DataFrame:
    """Add two-product recoveries and consistency flags to a ``testwork`` table.

    Parameters
    ----------
    testwork : DataFrame
        The ``testwork`` table (contract columns ``feed_cu_pct``, ``conc_cu_pct``,
        ``tail_cu_pct``, ``rougher_cu_recovery_pct`` and the Au equivalents; missing columns are
        treated as all missing).
    tolerance_frac : float, keyword-only
        Largest accepted difference between reported and calculated recovery [fraction].
    on_invalid : {"nan", "raise"}, keyword-only
        What to do with assay triples that break c > f > t.

    Returns
    -------
    DataFrame
        A copy with, per metal (``cu``, ``au``): ``<m>_recovery_calc_frac`` (two-product),
        ``<m>_recovery_frac`` (the reported rougher recovery as a fraction, falling back to the
        calculated one), ``<m>_assays_invalid`` (bool: a full triple breaking c > f > t) and
        ``<m>_recovery_mismatch`` (bool: reported and calculated differ by more than the
        tolerance).
    """
    out = testwork.copy()
    n = len(out)
    for metal, unit in (("cu", "pct"), ("au", "gpt")):
        cols = [f"feed_{metal}_{unit}", f"conc_{metal}_{unit}", f"tail_{metal}_{unit}"]
        f, c, t = (
            out[col].to_numpy(dtype=float) if col in out.columns else np.full(n, np.nan)
            for col in cols
        )
        complete = ~(np.isnan(f) | np.isnan(c) | np.isnan(t))
        valid = _valid_mask(f, c, t)
        if on_invalid == "raise" and np.any(complete & ~valid):
            bad = np.flatnonzero(complete & ~valid)
            ids = out["sample_id"].iloc[bad].tolist() if "sample_id" in out.columns else bad
            msg = (
                f"testwork: {metal.upper()} assays break c > f > t >= 0 for the two-product "
                f"formula in samples {ids[:20]} (columns {cols})"
            )
            raise InputDataError(msg)
        calc = np.asarray(two_product_recovery_frac(f, c, t), dtype=float)
        rep_col = f"rougher_{metal}_recovery_pct"
        reported = (
            out[rep_col].to_numpy(dtype=float) / 100.0
            if rep_col in out.columns
            else np.full(n, np.nan)
        )
        out[f"{metal}_recovery_calc_frac"] = calc
        out[f"{metal}_recovery_frac"] = np.where(np.isnan(reported), calc, reported)
        out[f"{metal}_assays_invalid"] = complete & ~valid
        with np.errstate(invalid="ignore"):
            out[f"{metal}_recovery_mismatch"] = np.abs(reported - calc) > tolerance_frac
    return out
