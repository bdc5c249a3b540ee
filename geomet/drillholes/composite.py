"""Downhole compositing: fixed-length composites, or composites that respect category boundaries.

Compositing regularises sample support before statistics, domaining and estimation: every
composite has (nearly) the same length, and grades are averaged by length, or by length × dry
bulk density when density is known, since a grade is a mass fraction and metal content scales
with tonnes (common practice; e.g. Sinclair & Blackwell 2002, ch. 5).

All holes are composited together with numpy (sorted intervals, ``searchsorted`` overlaps and
``bincount`` sums); there is no per-hole Python loop.
"""

from __future__ import annotations

from typing import Literal

import numpy as np
import pandas as pd

from geomet import glossary
from geomet.drillholes.censored import censored_columns
from geomet.drillholes.merge import (
    KEYS,
    _Axis,
    _check_keys,
    _Sorted,
    is_categorical,
    longest_overlap,
    overlap_pairs,
    take_labels,
    weighted_means,
)
from geomet.errors import InputDataError

METHODS = ("fixed_length", "by_category")
REMNANT_RULES = ("merge", "keep", "drop")
# Units that are mass fractions: weighted by length x density when density is present.
MASS_FRACTION_UNITS = frozenset({"%", "ppm", "ppb", "g/t", "kg/t"})
DENSITY_COLUMN = "density_t_m3"
_EPS_M = 1e-9


def is_grade_column(name: str) -> bool:
    """True for a mass-fraction column (``_pct``, ``_ppm``, ``_ppb``, ``_gpt``, ``_kg_t``).

    Examples
    --------
    >>> is_grade_column("cu_pct"), is_grade_column("density_t_m3")
    (True, False)
    """
    return glossary.unit_of(name) in MASS_FRACTION_UNITS and not name.endswith("_frac")


def composite_breaks(
    hole_code: np.ndarray,
    start_m: np.ndarray,
    end_m: np.ndarray,
    *,
    length_m: float,
    remnant: str = "merge",
    min_remnant_frac: float = 0.5,
):
    """Fixed-length composite intervals over runs [start, end) of each hole.

    Parameters
    ----------
    hole_code : numpy.ndarray of int
        Hole code of each run.
    start_m, end_m : numpy.ndarray of float
        Top and bottom of each run [m].
    length_m : float
        Composite length [m]; ``inf`` gives one composite per run.
    remnant : {"merge", "keep", "drop"}
        What to do with a last composite of a run shorter than ``min_remnant_frac × length_m``:
        join it to the previous composite of the run (a run that is all remnant is kept),
        keep it, or drop it.
    min_remnant_frac : float
        Remnant threshold as a fraction of ``length_m`` [-].

    Returns
    -------
    tuple of numpy.ndarray
        (run index, from [m], to [m]) of the composites, in run order.
    """
    span = np.maximum(end_m - start_m, 0.0)
    n = np.maximum(np.ceil(span / length_m - 1e-9), 1).astype(np.int64)
    run = np.repeat(np.arange(len(start_m)), n)
    first = np.cumsum(n) - n
    k = np.arange(int(n.sum())) - np.repeat(first, n)
    with np.errstate(invalid="ignore"):  # 0 x inf: an infinite length makes one composite per run
        f = start_m[run] + np.where(k > 0, k * length_m, 0.0)
    t = np.minimum(f + length_m, end_m[run])
    last = first + n - 1
    short = (t[last] - f[last]) < min_remnant_frac * length_m - _EPS_M
    keep = np.ones(len(f), dtype=bool)
    if remnant == "merge":
        merge = short & (n > 1)
        t[last[merge] - 1] = t[last[merge]]
        keep[last[merge]] = False
    elif remnant == "drop":
        keep[last[short]] = False
    return run[keep], f[keep], t[keep]


def composite_intervals(
    intervals: pd.DataFrame,
    *,
    method: Literal["fixed_length", "by_category"] = "fixed_length",
    length_m: float = 2.0,
    category_column: str | None = None,
    min_coverage_frac: float = 0.5,
    remnant: Literal["merge", "keep", "drop"] = "merge",
    min_remnant_frac: float = 0.5,
    density_weighted: bool = True,
) -> pd.DataFrame:
    """Composite interval data to a fixed length, or within runs of a category.

    Parameters
    ----------
    intervals : pandas.DataFrame
        Non-overlapping intervals (e.g. :func:`geomet.drillholes.merge.merge_intervals` output):
        hole_id, from_m, to_m [m] and value columns.
    method : {"fixed_length", "by_category"}
        ``fixed_length``: composites of ``length_m`` from the first to the last sampled depth of
        each hole. ``by_category``: consecutive intervals with the same value of
        ``category_column`` form a run; each run is cut into composites of ``length_m``, so no
        composite crosses a category boundary.
    length_m : float
        Composite length [m], > 0. ``inf`` gives one composite per hole (``fixed_length``) or
        per category run (``by_category``).
    category_column : str, optional
        Category for ``by_category`` (e.g. ``"lith_code"``, ``"site_domain"``).
    min_coverage_frac : float
        Composites whose sampled fraction of length is below this [-] are dropped, and so are
        composites with no data at all. Sampled
        means at least one numeric column has a value (categorical logs alone do not count,
        unless there are no numeric columns).
    remnant : {"merge", "keep", "drop"}
        Rule for the short last composite of a hole or run (see :func:`composite_breaks`).
    min_remnant_frac : float
        A remnant is a last composite shorter than this fraction of ``length_m`` [-].
    density_weighted : bool
        Weight grade columns by length × density where ``density_t_m3`` is present.

    Returns
    -------
    pandas.DataFrame
        hole_id, from_m, to_m, length_m, the composited columns (numeric: weighted means;
        categorical: longest overlap), coverage_frac. Censored-value helper columns and
        per-table coverage columns are not carried. ``attrs["dropped_low_coverage"]`` counts
        the composites dropped by ``min_coverage_frac``.

    Notes
    -----
    For composite :math:`j` with overlaps :math:`\\ell_{ij}` of sample intervals :math:`i`,
    a grade :math:`g` is

    .. math:: g_j = \\frac{\\sum_i \\ell_{ij} \\rho_i g_i}{\\sum_i \\ell_{ij} \\rho_i}

    with dry bulk density :math:`\\rho_i` (:math:`\\rho_i = 1` without density; a sample with no
    density takes the length-weighted mean density of its hole, else of all holes); other
    numeric columns (density itself, wavelengths, indices) are length-weighted. Sums run over
    samples with a value. Hence metal :math:`\\sum_j g_j \\sum_i \\ell_{ij}\\rho_i` equals
    :math:`\\sum_i g_i L_i \\rho_i` when every composite is kept.

    References
    ----------
    Sinclair, A. J., Blackwell, G. H. (2002). *Applied Mineral Inventory Estimation*. Cambridge
    University Press, ch. 5 (compositing). DOI:10.1017/CBO9780511545993 (chapter and DOI from
    memory)
    """
    _check_keys(intervals, "intervals")
    if method not in METHODS:
        message = f"composite method must be one of {', '.join(METHODS)}; got {method!r}"
        raise InputDataError(message)
    if remnant not in REMNANT_RULES:
        message = f"remnant rule must be one of {', '.join(REMNANT_RULES)}; got {remnant!r}"
        raise InputDataError(message)
    if not (length_m > 0):  # also refuses NaN; inf means one composite per run
        message = f"composite length_m must be > 0; got {length_m!r}"
        raise InputDataError(message)
    if not 0.0 <= min_coverage_frac <= 1.0:
        message = f"min_coverage_frac must be in [0, 1]; got {min_coverage_frac!r}"
        raise InputDataError(message)
    if method == "by_category":
        if not category_column:
            message = "method 'by_category' needs category_column (e.g. 'lith_code')"
            raise InputDataError(message)
        if category_column not in intervals.columns:
            message = (
                f"category_column '{category_column}' is not a column of the intervals; "
                f"columns: {', '.join(map(str, intervals.columns))}"
            )
            raise InputDataError(message)
    axis = _Axis([intervals])
    src = _Sorted(intervals, axis)
    s_code, s_from, s_to = src.code, src.f, src.t
    skip = set(KEYS) | {"length_m", "coverage_frac", "x_m", "y_m", "z_m"}
    skip |= set(censored_columns(intervals.columns))
    value_cols = [
        c for c in intervals.columns if c not in skip and not str(c).endswith("_coverage_frac")
    ]
    if not len(src):
        cols = ["hole_id", "from_m", "to_m", "length_m", *value_cols, "coverage_frac"]
        return pd.DataFrame(columns=cols)

    # runs: whole sampled extent of a hole, or consecutive intervals of one category
    new_run = np.ones(len(src), dtype=bool)
    new_run[1:] = s_code[1:] != s_code[:-1]
    if method == "by_category":
        cat_codes, cat_uniques = src.categorical(category_column)
        new_run[1:] |= cat_codes[1:] != cat_codes[:-1]
    run_id = np.cumsum(new_run) - 1
    starts = np.flatnonzero(new_run)
    r_code = s_code[starts]
    r_start = s_from[starts]
    r_end = np.maximum.reduceat(s_to, starts)
    if method == "by_category":
        run_cat_codes = cat_codes[starts]
    run, c_from, c_to = composite_breaks(
        r_code,
        r_start,
        r_end,
        length_m=float(length_m),
        remnant=remnant,
        min_remnant_frac=float(min_remnant_frac),
    )
    c_code = r_code[run]
    n = len(c_from)
    ti, si, ov = overlap_pairs(c_code, c_from, c_to, s_code, s_from, s_to, axis.span)
    if method == "by_category":
        # a composite takes samples of its own run only (runs of one hole can touch)
        same = run_id[si] == run[ti]
        ti, si, ov = ti[same], si[same], ov[same]

    categorical = {c: is_categorical(intervals[c]) for c in value_cols}
    numeric_cols = [c for c in value_cols if not categorical[c]]
    # sampled = a numeric value is present (a continuous lithology log alone is not a sample)
    has_value = np.zeros(len(src), dtype=bool)
    for col in numeric_cols or value_cols:
        has_value |= intervals[col].notna().to_numpy()[src.pos]
    covered = np.bincount(ti, weights=ov * has_value[si], minlength=n)
    length = c_to - c_from

    rho = None
    if density_weighted and DENSITY_COLUMN in numeric_cols:
        rho = _filled_density(src.numeric(DENSITY_COLUMN), s_code, s_from, s_to)
    out = {
        "hole_id": axis.hole_labels.take(c_code),
        "from_m": c_from,
        "to_m": c_to,
        "length_m": length,
    }
    for col in value_cols:
        if col == category_column and method == "by_category":
            out[col] = take_labels(cat_uniques, run_cat_codes[run])
            continue
        if categorical[col]:
            codes, uniques = src.categorical(col)
            out[col], _ = longest_overlap(ti, ov, codes[si], uniques, n)
            continue
        values = src.numeric(col)[si]
        weights = ov * rho[si] if (rho is not None and is_grade_column(col)) else ov
        out[col], _ = weighted_means(ti, weights, values, n)
    out["coverage_frac"] = np.minimum(covered / np.where(length > 0, length, 1.0), 1.0)
    frame = pd.DataFrame(out)
    keep = frame["coverage_frac"].to_numpy() >= min_coverage_frac - 1e-12
    anything = np.bincount(ti, weights=ov, minlength=n) > 0  # some column has a value
    kept = frame.loc[keep & anything].reset_index(drop=True)
    kept.attrs["dropped_low_coverage"] = int((anything & ~keep).sum())
    return kept


def _filled_density(rho, s_code, s_from, s_to) -> np.ndarray:
    """Density of each sample; a missing one takes its hole's length-weighted mean.

    A hole without any density takes the length-weighted mean of all holes.
    """
    rho = np.array(rho, dtype=float)
    miss = np.isnan(rho) | (rho <= 0)
    if not miss.any():
        return rho
    length = s_to - s_from
    ok = ~miss
    n_holes = int(s_code.max()) + 1
    wsum = np.bincount(s_code[ok], weights=length[ok], minlength=n_holes)
    vsum = np.bincount(s_code[ok], weights=(length * np.where(ok, rho, 0.0))[ok], minlength=n_holes)
    overall = vsum.sum() / wsum.sum() if wsum.sum() > 0 else 1.0
    hole_mean = np.where(wsum > 0, vsum / np.where(wsum > 0, wsum, 1.0), overall)
    rho[miss] = hole_mean[s_code[miss]]
    return rho


def metal_content(frame: pd.DataFrame, column: str, *, density_weighted: bool = True) -> float:
    """Sum of grade × length (× density when present) of a table [grade unit × m (× t/m³)].

    Used to check that compositing conserves metal; composites carry ``coverage_frac`` so that
    only their sampled length counts.
    """
    length = (frame["to_m"] - frame["from_m"]).to_numpy(dtype=float)
    if "coverage_frac" in frame.columns:
        length = length * frame["coverage_frac"].to_numpy(dtype=float)
    weight = length
    if density_weighted and DENSITY_COLUMN in frame.columns:
        weight = weight * frame[DENSITY_COLUMN].to_numpy(dtype=float)
    values = frame[column].to_numpy(dtype=float)
    return float(np.nansum(values * weight))
