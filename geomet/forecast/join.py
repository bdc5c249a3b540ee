"""Give testwork samples the mineralogy of the composites their intervals overlap."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

KEYS = ("hole_id", "from_m", "to_m")


def overlap_join(
    samples: pd.DataFrame,
    composites: pd.DataFrame,
    columns: Sequence[str],
    *,
    min_overlap_frac: float = 0.5,
) -> pd.DataFrame:
    """Length-weighted means of composite ``columns`` over each sample interval.

    Parameters
    ----------
    samples : DataFrame
        Intervals to fill (``hole_id``, ``from_m``, ``to_m``; e.g. the ``testwork`` table).
    composites : DataFrame
        Intervals carrying the values (e.g. ``domained``).
    columns : sequence of str
        Numeric columns of ``composites`` to average; a non-numeric column (such as ``domain``)
        takes the value of the composite with the longest overlap.
    min_overlap_frac : float, keyword-only
        Samples whose interval is covered less than this fraction by composites get NaN.

    Returns
    -------
    DataFrame
        ``samples`` (same index and order) plus the columns and ``overlap_frac`` (covered
        length / sample length). Composite columns already in ``samples`` are replaced.

    Notes
    -----
    v_s = Σ_c L_sc v_c / Σ_c L_sc with L_sc = max(0, min(to_s, to_c) − max(from_s, from_c)),
    summing over composites with a value (missing values do not dilute the mean).
    """
    for name, table in (("samples", samples), ("composites", composites)):
        missing = [k for k in KEYS if k not in table.columns]
        if missing:
            msg = f"overlap_join: {name} table lacks key columns {missing}"
            raise InputDataError(msg)
    absent = [c for c in columns if c not in composites.columns]
    if absent:
        msg = f"overlap_join: composites lack columns {absent}"
        raise InputDataError(msg)
    left = samples[list(KEYS)].reset_index(drop=True).assign(_row=lambda d: np.arange(len(d)))
    right = composites[[*KEYS, *columns]].rename(columns={"from_m": "_cf", "to_m": "_ct"})
    pairs = left.merge(right, on="hole_id", how="inner")
    overlap = np.minimum(pairs["to_m"], pairs["_ct"]) - np.maximum(pairs["from_m"], pairs["_cf"])
    pairs = pairs.assign(_len=overlap.clip(lower=0.0))
    pairs = pairs[pairs["_len"] > 0]
    out = samples.drop(columns=[c for c in columns if c in samples.columns]).copy()
    n = len(samples)
    length = (samples["to_m"] - samples["from_m"]).to_numpy(dtype=float)
    covered = np.bincount(pairs["_row"], weights=pairs["_len"], minlength=n)
    with np.errstate(invalid="ignore", divide="ignore"):
        frac = np.where(length > 0, covered / length, np.nan)
    ok = frac >= min_overlap_frac
    rows = pairs["_row"].to_numpy()
    weights = pairs["_len"].to_numpy(dtype=float)
    for col in columns:
        values = pairs[col]
        if pd.api.types.is_numeric_dtype(values) and not pd.api.types.is_bool_dtype(values):
            v = values.to_numpy(dtype=float)
            has = ~np.isnan(v)
            num = np.bincount(rows[has], weights=weights[has] * v[has], minlength=n)
            den = np.bincount(rows[has], weights=weights[has], minlength=n)
            with np.errstate(invalid="ignore", divide="ignore"):
                mean = np.where(den > 0, num / den, np.nan)
            out[col] = np.where(ok, mean, np.nan)
        else:
            best = pairs.sort_values("_len", ascending=False).drop_duplicates("_row")
            mapped = pd.Series(best[col].to_numpy(), index=best["_row"].to_numpy())
            full = mapped.reindex(np.arange(n))
            full[~ok] = None
            out[col] = full.to_numpy()
    out["overlap_frac"] = frac
    return out
