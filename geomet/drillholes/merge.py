"""Merge interval tables with different breaks onto common intervals, by overlap length.

Assays, scans, logging and density are sampled on different intervals. :func:`merge_intervals`
puts them on one set of intervals: numeric columns become the length-weighted mean of the part
of each target interval that has a value, categorical columns take the code with the longest
overlap, and coverage columns say how much of each target interval had data.

The overlap search is vectorised over all holes: intervals are placed on one axis per hole
(hole offset + depth), sorted, and the overlapping pairs found with ``numpy.searchsorted``;
sums use ``numpy.bincount``. There is no per-hole Python loop.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from geomet.drillholes.censored import censored_columns
from geomet.errors import InputDataError

KEYS = ("hole_id", "from_m", "to_m")
BREAK_TOLERANCE_M = 1e-6  # union breaks closer than this are merged (floating-point slivers)


def is_categorical(series: pd.Series) -> bool:
    """True for a column merged by longest overlap (text, categories, booleans)."""
    return not pd.api.types.is_numeric_dtype(series.dtype) or pd.api.types.is_bool_dtype(
        series.dtype
    )


def _check_keys(frame: pd.DataFrame, name: str) -> None:
    missing = [c for c in KEYS if c not in frame.columns]
    if missing:
        message = (
            f"interval table '{name}' lacks column(s) {', '.join(missing)}; columns: "
            f"{', '.join(map(str, frame.columns))}"
        )
        raise InputDataError(message)


class _Axis:
    """Maps (hole, depth) to one sorted axis: hole code × span + depth (holes never share it)."""

    def __init__(self, frames: Sequence[pd.DataFrame]):
        self._codes: dict[int, np.ndarray] = {}
        locals_ = []
        for frame in frames:
            codes, uniques = pd.factorize(frame["hole_id"], sort=False)
            locals_.append((codes, np.asarray(uniques, dtype=object).astype(str)))
        every = np.concatenate([u for _, u in locals_]) if locals_ else np.array([], dtype=object)
        self.holes = pd.Index(np.unique(every.astype(str)) if len(every) else [], dtype=object)
        self.hole_labels = pd.array(self.holes.to_numpy(dtype=object), dtype="str")
        for frame, (codes, uniques) in zip(frames, locals_, strict=True):
            mapping = self.holes.get_indexer(uniques).astype(np.int64)
            self._codes[id(frame)] = np.where(
                codes >= 0, mapping[codes] if len(mapping) else -1, -1
            )
        top = max(
            (float(np.nanmax(f["to_m"].to_numpy(dtype=float))) for f in frames if len(f)),
            default=0.0,
        )
        self.span = 2.0 * max(top, 1.0) + 10.0

    def codes(self, frame: pd.DataFrame) -> np.ndarray:
        """Hole code of each row of a frame given to the constructor (else computed)."""
        cached = self._codes.get(id(frame))
        if cached is not None and len(cached) == len(frame):
            return cached
        return self.holes.get_indexer(frame["hole_id"].astype(str)).astype(np.int64)


class _Sorted:
    """A table's valid intervals in (hole, from) order, without copying its columns."""

    def __init__(self, frame: pd.DataFrame, axis: _Axis):
        code = axis.codes(frame)
        f = frame["from_m"].to_numpy(dtype=float)
        t = frame["to_m"].to_numpy(dtype=float)
        valid = (code >= 0) & (t > f)  # False for NaN depths
        pos = np.flatnonzero(valid)
        key = code[pos] * axis.span + f[pos]
        if len(key) > 1 and not np.all(key[1:] >= key[:-1]):
            pos = pos[np.argsort(key, kind="stable")]
        self.frame = frame
        self.pos = pos
        self.code = code[pos]
        self.f = f[pos]
        self.t = t[pos]
        self.span = axis.span

    def __len__(self) -> int:
        return len(self.pos)

    def numeric(self, column: str) -> np.ndarray:
        return self.frame[column].to_numpy(dtype=float, na_value=np.nan)[self.pos]

    def categorical(self, column: str):
        codes, uniques = pd.factorize(self.frame[column], sort=True)
        return np.asarray(codes, dtype=np.int64)[self.pos], np.asarray(uniques, dtype=object)


def overlap_pairs(t_code, t_from, t_to, s_code, s_from, s_to, span):
    """All (target, source) pairs of intervals that overlap, with the overlap length.

    Parameters
    ----------
    t_code, t_from, t_to : numpy.ndarray
        Target intervals: integer hole codes and depths [m], sorted by (code, from).
    s_code, s_from, s_to : numpy.ndarray
        Source intervals, sorted by (code, from); they may overlap each other.
    span : float
        A depth larger than any interval bottom, so that holes never share the axis.

    Returns
    -------
    tuple of numpy.ndarray
        (target index, source index, overlap length [m]), pairs with positive overlap only,
        grouped by target in order.
    """
    t_lo = t_code * span + t_from
    t_hi = t_code * span + t_to
    s_lo = s_code * span + s_from
    s_hi_max = np.maximum.accumulate(s_code * span + s_to) if len(s_to) else s_to
    start = np.searchsorted(s_hi_max, t_lo, side="right")
    stop = np.searchsorted(s_lo, t_hi, side="left")
    count = np.maximum(stop - start, 0)
    total = int(count.sum())
    ti = np.repeat(np.arange(len(t_lo)), count)
    offsets = np.arange(total) - np.repeat(np.cumsum(count) - count, count)
    si = start[ti] + offsets
    ov = np.minimum(t_to[ti], s_to[si]) - np.maximum(t_from[ti], s_from[si])
    keep = ov > 0
    return ti[keep], si[keep], ov[keep]


def weighted_means(ti: np.ndarray, weights: np.ndarray, values: np.ndarray, n: int):
    """Weighted mean per target of a source column, ignoring NaN values.

    Returns
    -------
    tuple of numpy.ndarray
        (mean, weight sum) per target; the mean is NaN where no weight has a value.
    """
    ok = ~np.isnan(values)
    w = np.where(ok, weights, 0.0)
    wsum = np.bincount(ti, weights=w, minlength=n)
    vsum = np.bincount(ti, weights=np.where(ok, values, 0.0) * w, minlength=n)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(wsum > 0, vsum / np.where(wsum > 0, wsum, 1.0), np.nan)
    return mean, wsum


def longest_overlap(ti: np.ndarray, weights: np.ndarray, codes: np.ndarray, uniques, n: int):
    """Per target, the category with the longest total overlap (ties: first in sorted order).

    Parameters
    ----------
    ti, weights : numpy.ndarray
        Target index and overlap length [m] of each pair.
    codes : numpy.ndarray of int
        Category code of each pair's source (-1 = missing); ``uniques[code]`` is the category.
    uniques : array-like
        The categories.
    n : int
        Number of targets.

    Returns
    -------
    tuple
        (the winning category per target, missing where no value, as a string array when the
        categories are strings; weight of the winner per target).
    """
    win = np.full(n, -1, dtype=np.int64)
    win_w = np.zeros(n)
    ok = codes >= 0
    if not ok.any():
        return take_labels(uniques, win), win_w
    m = len(uniques) + 1
    t, c, w = ti[ok], codes[ok], weights[ok]
    # a target with one pair needs no sorting (the common case for a finer target set)
    count = np.bincount(t, minlength=n)
    single = count[t] == 1
    win[t[single]] = c[single]
    win_w[t[single]] = w[single]
    t, c, w = t[~single], c[~single], w[~single]
    if not len(t):
        return take_labels(uniques, win), win_w
    ukey, inv = np.unique(t * m + c, return_inverse=True)
    sums = np.bincount(inv, weights=w)
    ut = ukey // m
    uc = ukey % m
    order = np.lexsort((-sums, ut))
    first = np.ones(len(order), dtype=bool)
    first[1:] = ut[order][1:] != ut[order][:-1]
    best = order[first]
    win[ut[best]] = uc[best]
    win_w[ut[best]] = sums[best]
    return take_labels(uniques, win), win_w


def take_labels(uniques, codes: np.ndarray):
    """``uniques[codes]`` with -1 as missing: a string array for strings, else objects/None."""
    uniques = np.asarray(uniques, dtype=object)
    if len(uniques) and all(isinstance(u, str) for u in uniques):
        return pd.array(uniques, dtype="str").take(codes, allow_fill=True)
    out = np.full(len(codes), None, dtype=object)
    ok = codes >= 0
    out[ok] = uniques[codes[ok]]
    return out


def union_breaks(tables: Sequence[_Sorted], axis: _Axis) -> tuple[pd.DataFrame, np.ndarray]:
    """Intervals between consecutive distinct from/to depths of all tables, per hole.

    Returns the intervals (hole_id, from_m, to_m) and their hole codes on ``axis``.
    """
    # each table gives two (nearly) sorted runs of keys; a stable sort (timsort) merges runs fast
    runs = []
    for s in tables:
        base = s.code * axis.span
        runs.append(base + s.f)
        runs.append(base + s.t)
    key = np.sort(np.concatenate(runs), kind="stable")
    if len(key):
        key = key[np.concatenate([[True], key[1:] != key[:-1]])]
    code = np.floor(key / axis.span).astype(np.int64)
    depth = key - code * axis.span
    # breaks closer than BREAK_TOLERANCE_M are one break (float slivers, not intervals)
    distinct = np.ones(len(key), dtype=bool)
    distinct[1:] = (code[1:] != code[:-1]) | (np.diff(depth) > BREAK_TOLERANCE_M)
    code, depth = code[distinct], depth[distinct]
    pair = code[1:] == code[:-1]
    t_code = code[:-1][pair]
    frame = pd.DataFrame(
        {
            "hole_id": axis.hole_labels.take(t_code),
            "from_m": depth[:-1][pair],
            "to_m": depth[1:][pair],
        }
    )
    return frame, t_code


def interval_union(code, f, t, span: float | None = None):
    """Union of possibly overlapping intervals per hole code: disjoint (code, from, to) pieces."""
    if len(code) == 0:
        return code, f, t
    if span is None:
        span = 2.0 * float(max(np.nanmax(np.abs(t)), np.nanmax(np.abs(f)), 1.0)) + 10.0
    lo = code * span + f
    order = np.argsort(lo, kind="stable")
    lo, code, f = lo[order], code[order], f[order]
    hi = np.maximum.accumulate(code * span + t[order])
    new = np.ones(len(lo), dtype=bool)
    new[1:] = lo[1:] > hi[:-1]
    idx = np.flatnonzero(new)
    ends = np.append(idx[1:], len(lo)) - 1
    return code[idx], f[idx], hi[ends] - code[idx] * span


def merge_intervals(
    tables: Sequence[pd.DataFrame] | Mapping[str, pd.DataFrame],
    *,
    breaks: str | pd.DataFrame = "union",
    drop_empty: bool = True,
    censored_frac: bool = False,
) -> pd.DataFrame:
    """Put interval tables with different breaks onto one set of intervals.

    Parameters
    ----------
    tables : sequence or mapping of pandas.DataFrame
        Interval tables with hole_id, from_m, to_m [m] and value columns. With a mapping, each
        table's coverage column is named ``<name>_coverage_frac``; with a sequence,
        ``table<i>_coverage_frac``. A value column found in several tables is taken from the
        first table that has a value there. Censored-value helper columns (``_censored``,
        ``_detection_limit``, ``_over_range``) are not merged.
    breaks : "union" or pandas.DataFrame
        ``"union"``: intervals between every distinct from/to depth of all tables in a hole.
        A DataFrame with hole_id, from_m, to_m: merge onto those intervals (its other columns are
        kept).
    drop_empty : bool
        With ``breaks="union"``, drop intervals that no table covers (gaps in every table).
    censored_frac : bool
        Add ``<col>_censored_frac``: the length-weighted fraction of each interval whose
        ``<col>`` value was censored (from the reader's ``<col>_censored`` flags) [-].

    Returns
    -------
    pandas.DataFrame
        hole_id, from_m, to_m, length_m, the merged columns, one ``<name>_coverage_frac`` per
        table and ``coverage_frac`` (fraction of the interval covered by at least one table),
        sorted by hole and depth.

    Notes
    -----
    For target interval :math:`j` and a numeric column :math:`v` of source intervals :math:`i`
    with overlap lengths :math:`\\ell_{ij}`,

    .. math:: v_j = \\sum_i \\ell_{ij} v_i / \\sum_i \\ell_{ij}

    summed over the sources whose value is present (missing stays missing, never zero).
    A categorical column takes the code with the largest :math:`\\sum_i \\ell_{ij}`.

    Examples
    --------
    >>> a = pd.DataFrame({"hole_id": ["V1", "V1"], "from_m": [0.0, 2.0], "to_m": [2.0, 4.0],
    ...                   "cu_pct": [0.2, 0.4]})
    >>> b = pd.DataFrame({"hole_id": ["V1"], "from_m": [1.0], "to_m": [3.0], "lith_code": ["QFP"]})
    >>> merge_intervals({"assays": a, "lith": b})[["from_m", "to_m", "cu_pct", "lith_code"]]
       from_m  to_m  cu_pct lith_code
    0     0.0   1.0     0.2       NaN
    1     1.0   2.0     0.2       QFP
    2     2.0   3.0     0.4       QFP
    3     3.0   4.0     0.4       NaN
    """
    if isinstance(tables, Mapping):
        named = list(tables.items())
    else:
        named = [(f"table{i}", t) for i, t in enumerate(tables)]
    named = [(n, t) for n, t in named if t is not None]
    if not named:
        message = "merge_intervals needs at least one interval table; got none"
        raise InputDataError(message)
    for name, frame in named:
        _check_keys(frame, name)
    frames = [t for _, t in named]
    if isinstance(breaks, pd.DataFrame):
        _check_keys(breaks, "breaks")
        axis = _Axis([*frames, breaks])
    elif isinstance(breaks, str) and breaks == "union":
        axis = _Axis(frames)
    else:
        message = f"breaks must be 'union' or a DataFrame of intervals; got {breaks!r}"
        raise InputDataError(message)
    sources = [(name, _Sorted(frame, axis)) for name, frame in named]
    if isinstance(breaks, pd.DataFrame):
        tgt = _Sorted(breaks, axis)
        target = breaks.iloc[tgt.pos].reset_index(drop=True)
        t_code, t_from, t_to = tgt.code, tgt.f, tgt.t
    else:
        target, t_code = union_breaks([src for _, src in sources], axis)
        t_from = target["from_m"].to_numpy(dtype=float)
        t_to = target["to_m"].to_numpy(dtype=float)
    n = len(target)
    length = t_to - t_from
    safe_length = np.where(length > 0, length, 1.0)
    columns: dict[str, np.ndarray] = {}
    coverage: dict[str, np.ndarray] = {}
    for name, src in sources:
        ti, si, ov = overlap_pairs(t_code, t_from, t_to, src.code, src.f, src.t, axis.span)
        covered = np.bincount(ti, weights=ov, minlength=n)
        coverage[f"{name}_coverage_frac"] = np.minimum(covered / safe_length, 1.0)
        skip = set(KEYS) | {"length_m", "coverage_frac"} | set(censored_columns(src.frame.columns))
        for col in src.frame.columns:
            if censored_frac and str(col).endswith("_censored"):
                flags = src.frame[col].fillna(False).to_numpy(dtype=float)[src.pos]
                merged, _ = weighted_means(ti, ov, flags[si], n)
                columns.setdefault(f"{col}_frac", pd.Series(merged))
                continue
            if col in skip or str(col).endswith("_coverage_frac"):
                continue
            if is_categorical(src.frame[col]):
                codes, uniques = src.categorical(col)
                merged, _ = longest_overlap(ti, ov, codes[si], uniques, n)
            else:
                merged, _ = weighted_means(ti, ov, src.numeric(col)[si], n)
            merged = pd.Series(merged)
            if col in columns:
                prev = columns[col]
                columns[col] = prev.where(prev.notna(), merged)
            else:
                columns[col] = merged
    u_code, u_f, u_t = interval_union(
        np.concatenate([s.code for _, s in sources]),
        np.concatenate([s.f for _, s in sources]),
        np.concatenate([s.t for _, s in sources]),
    )
    ti, _, ov = overlap_pairs(t_code, t_from, t_to, u_code, u_f, u_t, axis.span)
    cov_all = np.minimum(np.bincount(ti, weights=ov, minlength=n) / safe_length, 1.0)
    out = target.drop(columns=[c for c in ("length_m", "coverage_frac") if c in target.columns])
    out.insert(3, "length_m", length)
    extra = {
        col: values.to_numpy() if values.dtype == float else values.array
        for col, values in columns.items()
        if col not in out.columns
    }
    extra.update(coverage)
    extra["coverage_frac"] = cov_all
    out = pd.concat([out, pd.DataFrame(extra)], axis=1)
    if isinstance(breaks, pd.DataFrame):
        out = out.iloc[np.argsort(tgt.pos, kind="stable")].reset_index(drop=True)
    elif drop_empty:
        out = out.loc[cov_all > 0].reset_index(drop=True)
    return out


def values_are_text(values: np.ndarray) -> bool:
    """True when an object array holds strings (and missing values) only."""
    if values.dtype != object:
        return False
    present = [
        v for v in values[:1000] if v is not None and not (isinstance(v, float) and np.isnan(v))
    ]
    return bool(present) and all(isinstance(v, str) for v in present)
