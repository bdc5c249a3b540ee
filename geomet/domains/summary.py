"""Domain table: metres, shares and length-weighted statistics of each domain, overall and
inside versus outside a grade envelope."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from geomet.domains.features import GROUP_COLUMNS
from geomet.errors import InputDataError

__all__ = ["SUMMARY_ATTRIBUTES", "summary_attributes", "weighted_quantiles", "domain_summary"]

SUMMARY_ATTRIBUTES = (
    *GROUP_COLUMNS,
    "clay_total_pct",
    "clay_severity_idx",
    "sulfide_pct",
    "cu_oxide_pct",
    "cu_pct",
    "au_gpt",
    "mo_ppm",
    "cu_asol_pct",
    "oxide_ratio_frac",
    "s_pct",
    "white_mica_aloh_nm",
    "density_t_m3",
)
STATISTICS = ("mean", "p10", "p50", "p90")


def summary_attributes(df: pd.DataFrame) -> list[str]:
    """Attributes summarised by default: groups, clay indices, sulfate, grades, then every
    normative mineral (``norm_*_pct``) present in ``df``."""
    cols = [c for c in SUMMARY_ATTRIBUTES if c in df.columns]
    cols += sorted(c for c in df.columns if c.startswith("norm_") and c.endswith("_pct"))
    return cols


def weighted_quantiles(values, weights, q) -> np.ndarray:
    """Weighted quantiles, ignoring missing values.

    Parameters
    ----------
    values : array_like of float
    weights : array_like of float
        Non-negative weights (interval lengths [m]).
    q : array_like of float
        Probabilities in [0, 1].

    Returns
    -------
    numpy.ndarray
        One quantile per ``q`` (NaN when no weighted value is present).

    Notes
    -----
    Sorted values x_(i) with weights w_(i) sit at plotting positions
    p_i = (Σ_{j≤i} w_j − w_i / 2) / Σ w; the quantile is linearly interpolated between
    them (Hazen positions; with equal weights this equals numpy's ``method="hazen"``,
    Hyndman & Fan 1996 definition 5).

    References
    ----------
    Hyndman, R.J. and Fan, Y. (1996). Sample quantiles in statistical packages. *The American
    Statistician* 50(4), 361-365. DOI 10.1080/00031305.1996.10473566.
    """
    v = np.asarray(values, dtype=float)
    w = np.asarray(weights, dtype=float)
    q = np.atleast_1d(np.asarray(q, dtype=float))
    ok = np.isfinite(v) & np.isfinite(w) & (w > 0)
    if not ok.any():
        return np.full(q.shape, np.nan)
    v, w = v[ok], w[ok]
    order = np.argsort(v, kind="stable")
    v, w = v[order], w[order]
    cw = np.cumsum(w)
    pos = (cw - w / 2) / cw[-1]
    return np.interp(q, pos, v)


def _sorted_stats(v: np.ndarray, w: np.ndarray) -> list[float]:
    """Mean, P10, P50, P90 of values already sorted, finite, with positive weights."""
    if v.size == 0:
        return [np.nan] * 4
    cw = np.cumsum(w)
    pos = (cw - w / 2) / cw[-1]
    mean = float(np.dot(v, w) / cw[-1])
    return [mean, *np.interp([0.1, 0.5, 0.9], pos, v).tolist()]


def domain_summary(
    df: pd.DataFrame,
    *,
    attributes: Sequence[str] | None = None,
    envelope_column: str = "cu_pct",
    envelope_cutoff: float | None = 0.2,
    domain_column: str = "domain",
    id_column: str = "domain_id",
    length_column: str = "length_m",
) -> pd.DataFrame:
    """Summarise each domain: metres, share and length-weighted statistics.

    Parameters
    ----------
    df : pandas.DataFrame
        Domained intervals (``domain``, ``domain_id``, ``length_m`` and attributes).
    attributes : sequence of str, optional
        Columns to summarise; default :func:`summary_attributes`.
    envelope_column : str
        Grade defining the envelope.
    envelope_cutoff : float or None
        Envelope cut-off [unit of ``envelope_column``]; ``None`` leaves the comparison out.
        Default 0.2 % Cu (a common copper-shell cut-off; common practice).

    Returns
    -------
    pandas.DataFrame
        One row per domain and zone, ``zone`` being ``"all"``, ``"inside envelope"``
        (``envelope_column >= envelope_cutoff``) or ``"outside envelope"`` (below the cut-off;
        intervals without the grade are in neither). Columns: ``domain_id``, ``domain``,
        ``zone``, ``intervals``, ``length_m``, ``length_share_frac`` (of all domained metres
        for "all", of the domain's metres for the envelope zones), then
        ``<attribute>_mean``, ``_p10``, ``_p50``, ``_p90`` (length-weighted).
    """
    need = [domain_column, id_column, length_column]
    missing = [c for c in need if c not in df.columns]
    if missing:
        msg = f"domain summary needs columns {missing}"
        raise InputDataError(msg)
    attrs = list(attributes) if attributes is not None else summary_attributes(df)
    absent = [c for c in attrs if c not in df.columns]
    if absent:
        msg = f"domain summary attributes not in the table: {absent}"
        raise InputDataError(msg)
    use_env = envelope_cutoff is not None and envelope_column in df.columns
    length = df[length_column].to_numpy(dtype=float, na_value=np.nan)
    length = np.where(np.isfinite(length), length, 0.0)
    total_m = length.sum()
    values = {c: df[c].to_numpy(dtype=float, na_value=np.nan) for c in attrs}
    grade = df[envelope_column].to_numpy(dtype=float, na_value=np.nan) if use_env else None
    ids = df[id_column].to_numpy()
    names = df[domain_column].astype(str).to_numpy()
    rows = []
    for dom_id in np.unique(ids):
        in_dom = ids == dom_id
        name = names[in_dom][0]
        zones = [("all", in_dom)]
        if use_env:
            zones += [
                ("inside envelope", in_dom & (grade >= envelope_cutoff)),
                ("outside envelope", in_dom & (grade < envelope_cutoff)),
            ]
        dom_m = length[in_dom].sum()
        # sort each attribute once per domain; zones are subsets of the sorted rows
        dom_rows = np.flatnonzero(in_dom)
        sorted_attr = {}
        for c in attrs:
            v = values[c][dom_rows]
            ok = np.isfinite(v) & (length[dom_rows] > 0)
            r = dom_rows[ok][np.argsort(v[ok], kind="stable")]
            sorted_attr[c] = (r, values[c][r], length[r])
        for zone, mask in zones:
            metres = length[mask].sum()
            denom = total_m if zone == "all" else dom_m
            row = {
                id_column: dom_id,
                domain_column: name,
                "zone": zone,
                "intervals": int(mask.sum()),
                length_column: float(metres),
                "length_share_frac": float(metres / denom) if denom > 0 else np.nan,
            }
            for c in attrs:
                r, v, w = sorted_attr[c]
                keep = mask[r]
                stats = _sorted_stats(v[keep], w[keep])
                for stat, val in zip(STATISTICS, stats, strict=True):
                    row[f"{c}_{stat}"] = val
            rows.append(row)
    out = pd.DataFrame(rows)
    if not out.empty:
        zone_order = {"all": 0, "inside envelope": 1, "outside envelope": 2}
        out = out.sort_values(
            ["zone", id_column], key=lambda s: s.map(zone_order) if s.name == "zone" else s
        ).reset_index(drop=True)
    return out
