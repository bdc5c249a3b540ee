"""Downhole smoothing of domain labels to a mining-scale minimum run length.

A domain flickering every few metres down a hole cannot be mined selectively; mine
planners want domain runs at least about a bench height or a mining unit long (common
practice: 10 m by default here). :func:`smooth_downhole` merges every run shorter than
the minimum into a neighbouring run, for all holes at once with numpy.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

__all__ = ["downhole_runs", "smooth_downhole"]


def _hole_codes(hole_id) -> np.ndarray:
    codes, _ = pd.factorize(pd.Series(hole_id, copy=False), sort=False)
    return np.asarray(codes)


def _check(hole_id, from_m, to_m, labels):
    from_m = np.asarray(from_m, dtype=float)
    to_m = np.asarray(to_m, dtype=float)
    labels = np.asarray(labels)
    n = len(from_m)
    if not (len(to_m) == len(labels) == len(hole_id) == n):
        msg = (
            f"hole_id, from_m, to_m and labels must have the same length; got {len(hole_id)}, "
            f"{n}, {len(to_m)}, {len(labels)}"
        )
        raise InputDataError(msg)
    bad = ~(to_m > from_m)
    if bad.any():
        pos = np.flatnonzero(bad)[:10].tolist()
        msg = f"from_m must be less than to_m for smoothing; bad row position(s) {pos}"
        raise InputDataError(msg)
    if not np.issubdtype(labels.dtype, np.integer):
        msg = f"domain labels must be integers; got dtype {labels.dtype}"
        raise InputDataError(msg)
    return from_m, to_m, labels


def downhole_runs(hole_id, from_m, to_m, labels) -> pd.DataFrame:
    """Contiguous runs of equal label down each hole.

    Parameters
    ----------
    hole_id : array_like
    from_m, to_m : array_like of float
        Interval depths [m].
    labels : array_like of int

    Returns
    -------
    pandas.DataFrame
        One row per run: ``hole_id``, ``from_m``, ``to_m``, ``length_m`` (sum of the interval
        lengths in the run, so gaps are not counted) [m], ``label``, ``intervals``.
    """
    from_m, to_m, labels = _check(hole_id, from_m, to_m, labels)
    holes = np.asarray(hole_id)
    codes = _hole_codes(holes)
    order = np.lexsort((from_m, codes))
    h, lab = codes[order], labels[order]
    length = (to_m - from_m)[order]
    new = np.r_[True, (h[1:] != h[:-1]) | (lab[1:] != lab[:-1])]
    starts = np.flatnonzero(new)
    ends = np.r_[starts[1:], len(h)] - 1
    return pd.DataFrame(
        {
            "hole_id": holes[order][starts],
            "from_m": from_m[order][starts],
            "to_m": to_m[order][ends],
            "length_m": np.add.reduceat(length, starts) if len(h) else np.empty(0),
            "label": lab[starts],
            "intervals": ends - starts + 1,
        }
    )


def smooth_downhole(
    hole_id,
    from_m,
    to_m,
    labels,
    min_run_m: float = 10.0,
    *,
    features=None,
    merge_to: str = "similar",
    max_gap_m: float | None = None,
    max_passes: int = 100_000,
) -> np.ndarray:
    """Merge domain runs shorter than ``min_run_m`` into a neighbouring run, hole by hole.

    Parameters
    ----------
    hole_id : array_like
        Hole of each interval (rows in any order).
    from_m, to_m : array_like of float
        Interval depths [m].
    labels : array_like of int
        Domain of each interval. Negative labels (unclassified) are left as they are and
        act as barriers: no run merges into them.
    min_run_m : float
        Shortest run to keep [m] (the sum of its interval lengths).
    features : array_like, shape (n_rows, n_features), optional
        Feature vectors (e.g. principal components) for ``merge_to="similar"``.
    merge_to : {"similar", "longer"}
        Which neighbour absorbs a short run with a neighbour on both sides: the one whose
        length-weighted mean feature vector is nearer (Euclidean), ties and missing features
        falling back to the longer neighbour; or the longer one (the upper one on a tie).
    max_gap_m : float, optional
        Intervals of a hole separated by more than this gap [m] (missing core, unsampled
        stretches) are not neighbours, so no run merges across the gap. Default: consecutive
        intervals are neighbours whatever the gap.
    max_passes : int
        Safety limit on merge passes.

    Returns
    -------
    numpy.ndarray of int
        Smoothed labels in the input row order.

    Notes
    -----
    Each pass finds the short runs (length < ``min_run_m``) that have a mergeable
    neighbour, and merges those that are shorter than their adjacent short runs (ties broken
    by position), so that no two adjacent runs change in the same pass and the outcome is
    independent of processing order. Passes repeat until no short run with a neighbour is
    left, so afterwards every run is at least ``min_run_m`` long unless it is a whole hole
    (or a stretch between unclassified intervals or gaps wider than ``max_gap_m``) shorter
    than that. Labels change, rows
    and lengths do not, so the metres of each hole are conserved.
    """
    from_m, to_m, labels = _check(hole_id, from_m, to_m, labels)
    if not np.isfinite(min_run_m) or min_run_m < 0:
        msg = f"min_run_m must be a non-negative number of metres; got {min_run_m}"
        raise InputDataError(msg)
    if max_gap_m is not None and not max_gap_m >= 0:
        msg = f"max_gap_m must be a non-negative number of metres; got {max_gap_m}"
        raise InputDataError(msg)
    if merge_to not in ("similar", "longer"):
        msg = f"merge_to must be 'similar' or 'longer'; got {merge_to!r}"
        raise InputDataError(msg)
    n = len(labels)
    if n == 0 or min_run_m == 0:
        return labels.astype(int, copy=True)
    codes = _hole_codes(hole_id)
    order = np.lexsort((from_m, codes))
    h = codes[order]
    if max_gap_m is not None:
        # a gap wider than max_gap_m separates two stretches of a hole: they never merge
        f_s, t_s = from_m[order], to_m[order]
        gap = np.r_[0.0, f_s[1:] - t_s[:-1]]
        brk = np.r_[True, h[1:] != h[:-1]] | (gap > max_gap_m)
        h = np.cumsum(brk)
    lab = labels[order].astype(int, copy=True)
    length = (to_m - from_m)[order]
    F = None
    if features is not None and merge_to == "similar":
        F = np.asarray(features, dtype=float)
        if F.ndim != 2 or len(F) != n:
            msg = f"features must have one row per interval ({n}); got shape {F.shape}"
            raise InputDataError(msg)
        F = F[order]
        F = np.where(np.isfinite(F), F, 0.0)
        FL = F * length[:, None]
    tol = 1e-9 * max(1.0, min_run_m)
    for _ in range(max_passes):
        new = np.r_[True, (h[1:] != h[:-1]) | (lab[1:] != lab[:-1])]
        run_id = np.cumsum(new) - 1
        starts = np.flatnonzero(new)
        run_len = np.add.reduceat(length, starts)
        run_lab = lab[starts]
        run_hole = h[starts]
        nr = len(starts)
        same_prev = np.r_[False, run_hole[1:] == run_hole[:-1]]
        same_next = np.r_[run_hole[:-1] == run_hole[1:], False]
        lab_prev = np.r_[-1, run_lab[:-1]]
        lab_next = np.r_[run_lab[1:], -1]
        prev_ok = same_prev & (lab_prev >= 0)
        next_ok = same_next & (lab_next >= 0)
        short = (run_len < min_run_m - tol) & (run_lab >= 0) & (prev_ok | next_ok)
        if not short.any():
            break
        len_prev = np.r_[np.inf, run_len[:-1]]
        len_next = np.r_[run_len[1:], np.inf]
        short_prev = np.r_[False, short[:-1]] & same_prev
        short_next = np.r_[short[1:], False] & same_next
        sel = short & (~short_prev | (run_len < len_prev)) & (~short_next | (run_len <= len_next))
        idx = np.flatnonzero(sel)
        both = prev_ok[idx] & next_ok[idx]
        # default: the only mergeable neighbour, or the longer one (upper on a tie)
        take_next = ~prev_ok[idx] | (both & (len_next[idx] > len_prev[idx]))
        if F is not None and both.any():
            run_mean = np.add.reduceat(FL, starts, axis=0) / run_len[:, None]
            b = idx[both]
            d_prev = np.linalg.norm(run_mean[b] - run_mean[b - 1], axis=1)
            d_next = np.linalg.norm(run_mean[b] - run_mean[np.minimum(b + 1, nr - 1)], axis=1)
            decided = np.abs(d_prev - d_next) > 1e-12
            choice = take_next[both]
            choice[decided] = d_next[decided] < d_prev[decided]
            take_next[both] = choice
        new_lab = run_lab.copy()
        new_lab[idx] = np.where(take_next, run_lab[np.minimum(idx + 1, nr - 1)],
                                run_lab[np.maximum(idx - 1, 0)])
        lab = new_lab[run_id]
    else:
        msg = f"downhole smoothing did not converge in {max_passes} passes"
        raise InputDataError(msg)
    out = np.empty(n, dtype=int)
    out[order] = lab
    return out
