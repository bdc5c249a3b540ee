"""How well a set of testwork samples spans the ore to be mined, domain by domain.

For each domain and attribute: the 1-D Wasserstein (earth mover's) distance between the samples'
values and the tonnage-weighted distribution of the blocks, the share of tonnes within a stated
standardised distance of a sample, and the tonnes above the highest or below the lowest sample,
stated in words with whether any candidate could have covered them.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from scipy.stats import wasserstein_distance

from geomet.glossary import unit_of
from geomet.sampling.selection import Standardiser, attribute_words, format_tonnes


def weighted_quantile(values, weights, q):
    """Weighted quantiles (midpoint rule on the cumulative weight), NaN ignored.

    Parameters
    ----------
    values, weights : array-like
    q : float or array-like
        Probabilities in [0, 1].

    Returns
    -------
    float or ndarray
    """
    v = np.asarray(values, dtype=float)
    w = np.asarray(weights, dtype=float)
    ok = np.isfinite(v) & (w > 0)
    v, w = v[ok], w[ok]
    if v.size == 0:
        return np.full(np.shape(q), np.nan) if np.ndim(q) else float("nan")
    order = np.argsort(v)
    v, w = v[order], w[order]
    cum = (np.cumsum(w) - 0.5 * w) / w.sum()
    return np.interp(q, cum, v)


def coverage_table(
    blocks: pd.DataFrame,
    samples: pd.DataFrame,
    candidates: pd.DataFrame,
    attributes: Sequence[str],
    standardiser: Standardiser,
    *,
    block_weight=None,
    within_std: float = 0.5,
    gap_share_frac: float = 0.05,
) -> pd.DataFrame:
    """Coverage of each domain's scheduled ore by the chosen and existing samples.

    Parameters
    ----------
    blocks : DataFrame
        Scheduled blocks: ``domain``, ``tonnes_t`` [t], the attributes.
    samples : DataFrame
        Chosen and existing samples: ``domain``, ``source`` ("new"/"existing"), the attributes.
    candidates : DataFrame
        The whole candidate pool (to tell "not chosen" from "not available").
    attributes : sequence of str
    standardiser : Standardiser
        The centre and scale used by the selection.
    block_weight : array-like, optional
        Weight of each block in the distributions (default ``tonnes_t``) [t].
    within_std : float, optional
        A block is covered in an attribute when a sample lies within this many standard units
        of it; for the row ``all attributes`` the root-mean-square distance over the attributes
        is used [standard units].
    gap_share_frac : float, optional
        Uncovered tails smaller than this share of the domain's tonnes are not reported as gaps.

    Returns
    -------
    DataFrame
        One row per domain and attribute (plus ``all attributes``): ``domain``, ``attribute``,
        ``unit``, ``scheduled_tonnes_t``, ``samples_new``, ``samples_existing``, ``ore_p10``,
        ``ore_p50``, ``ore_p90``, ``samples_min``, ``samples_max``, ``wasserstein``,
        ``wasserstein_std``, ``covered_tonnes_frac``, ``gap``.

    Notes
    -----
    The 1-D Wasserstein distance between the sample distribution :math:`u` (equal weights) and
    the tonnage-weighted block distribution :math:`v` is
    :math:`W_1 = \\int |F_u(x) - F_v(x)| dx` (``scipy.stats.wasserstein_distance``); it is given
    in the attribute's unit and in standard units (divided by the ore's overall standard
    deviation).

    References
    ----------
    .. [1] Villani, C. (2009). Optimal Transport: Old and New. Springer, Berlin (ch. 6).
    """
    attributes = list(attributes)
    weight = (
        blocks["tonnes_t"].to_numpy(dtype=float)
        if block_weight is None
        else np.asarray(block_weight, dtype=float)
    )
    tonnes = blocks["tonnes_t"].to_numpy(dtype=float)
    bz = standardiser.z(blocks)
    sz = standardiser.z(samples) if len(samples) else np.empty((0, len(attributes)))
    cz = standardiser.z(candidates) if len(candidates) else np.empty((0, len(attributes)))
    bdom = blocks["domain"].astype(str).to_numpy()
    sdom = samples["domain"].astype(str).to_numpy() if len(samples) else np.array([])
    cdom = candidates["domain"].astype(str).to_numpy() if len(candidates) else np.array([])
    src = samples["source"].to_numpy() if len(samples) else np.array([])
    rows = []
    for dom in sorted(set(bdom)):
        bi = bdom == dom
        si = sdom == dom
        ci = cdom == dom
        t_dom = float(tonnes[bi].sum())
        n_new = int(np.sum(src[si] == "new"))
        n_old = int(np.sum(src[si] == "existing"))
        zb, zs, zc = bz[bi], sz[si], cz[ci]
        wb, tb = weight[bi], tonnes[bi]
        for k, att in enumerate(attributes):
            xb = blocks[att].to_numpy(dtype=float)[bi]
            xs = samples[att].to_numpy(dtype=float)[si] if len(samples) else np.array([])
            okb = np.isfinite(xb) & (wb > 0)
            oks = np.isfinite(xs)
            row = {
                "domain": dom,
                "attribute": att,
                "unit": unit_of(att),
                "scheduled_tonnes_t": t_dom,
                "samples_new": n_new,
                "samples_existing": n_old,
            }
            p10, p50, p90 = weighted_quantile(xb, wb, [0.1, 0.5, 0.9])
            row.update(ore_p10=p10, ore_p50=p50, ore_p90=p90)
            if oks.any() and okb.any():
                row["samples_min"] = float(xs[oks].min())
                row["samples_max"] = float(xs[oks].max())
                w1 = wasserstein_distance(xs[oks], xb[okb], v_weights=wb[okb])
                row["wasserstein"] = float(w1)
                row["wasserstein_std"] = float(w1 / standardiser.scale[k])
                d = _nearest_1d(zb[okb, k], zs[oks, k])
                row["covered_tonnes_frac"] = float(
                    tb[okb][d <= within_std].sum() / max(tb[okb].sum(), 1e-300)
                )
            else:
                row.update(
                    samples_min=np.nan,
                    samples_max=np.nan,
                    wasserstein=np.nan,
                    wasserstein_std=np.nan,
                    covered_tonnes_frac=0.0 if okb.any() else np.nan,
                )
            row["gap"] = _gap_words(
                dom,
                att,
                k,
                zb[okb, k],
                tb[okb],
                t_dom,
                zs[oks, k],
                zc[:, k][np.isfinite(zc[:, k])],
                standardiser,
                within_std,
                gap_share_frac,
            )
            rows.append(row)
        # All attributes together: RMS standardised distance to the nearest sample.
        row = {
            "domain": dom,
            "attribute": "all attributes",
            "unit": "",
            "scheduled_tonnes_t": t_dom,
            "samples_new": n_new,
            "samples_existing": n_old,
            "ore_p10": np.nan,
            "ore_p50": np.nan,
            "ore_p90": np.nan,
            "samples_min": np.nan,
            "samples_max": np.nan,
            "wasserstein": np.nan,
            "wasserstein_std": np.nan,
        }
        if zs.shape[0]:
            from scipy.spatial import cKDTree

            zb0 = np.where(np.isfinite(zb), zb, 0.0)
            zs0 = np.where(np.isfinite(zs), zs, 0.0)
            dist, _ = cKDTree(zs0).query(zb0)
            rms = dist / np.sqrt(len(attributes))
            row["covered_tonnes_frac"] = float(tb[rms <= within_std].sum() / max(t_dom, 1e-300))
        else:
            row["covered_tonnes_frac"] = 0.0
        uncovered = 1 - row["covered_tonnes_frac"]
        if zs.shape[0] == 0 and zc.shape[0] == 0:
            row["gap"] = (
                f"no candidate core in domain {dom} ({format_tonnes(t_dom)} scheduled): "
                "new drilling is needed to test it"
            )
        elif zs.shape[0] == 0:
            row["gap"] = f"no testwork sample in domain {dom} ({format_tonnes(t_dom)} scheduled)"
        elif uncovered >= gap_share_frac:
            row["gap"] = (
                f"{uncovered:.0%} of domain {dom} is more than {within_std:g} standard units "
                "(RMS over the attributes) from every sample"
            )
        else:
            row["gap"] = ""
        rows.append(row)
    return pd.DataFrame(rows)


def _nearest_1d(values: np.ndarray, targets: np.ndarray) -> np.ndarray:
    """Distance from each value to the nearest target (sorted search, O(n log m))."""
    t = np.sort(targets)
    pos = np.searchsorted(t, values)
    left = t[np.clip(pos - 1, 0, t.size - 1)]
    right = t[np.clip(pos, 0, t.size - 1)]
    return np.minimum(np.abs(values - left), np.abs(values - right))


def _gap_words(dom, att, k, zb, tb, t_dom, zs, zc, std, within, share_min) -> str:
    """The uncovered high and low tails of one attribute in words ('' when none matter)."""
    if zb.size == 0 or t_dom <= 0:
        return ""
    words = attribute_words(att)
    unit = unit_of(att)
    unit_txt = f" {unit}" if unit and unit not in ("index", "fraction") else ""

    def value(z):
        return z * std.scale[k] + std.centre[k]

    if zs.size == 0:
        return f"no sample covers {words} in domain {dom}"
    out = []
    for side, beyond, cand_reach in (
        ("high", zb > zs.max() + within, zc.max() if zc.size else -np.inf),
        ("low", zb < zs.min() - within, zc.min() if zc.size else np.inf),
    ):
        t_gap = float(tb[beyond].sum())
        if t_gap / t_dom < share_min:
            continue
        edge = value(zs.max() + within) if side == "high" else value(zs.min() - within)
        rel = "above" if side == "high" else "below"
        where = f"{format_tonnes(t_gap)} ({t_gap / t_dom:.0%}) {rel} {edge:.3g}{unit_txt}"
        z_gap = zb[beyond]
        if side == "high":
            reach = cand_reach >= z_gap.min() - within
        else:
            reach = cand_reach <= z_gap.max() + within
        if not reach:
            out.append(
                f"no candidate covers {side} {words} in domain {dom}: {where}; "
                "other core or new drilling is needed"
            )
        else:
            out.append(
                f"{side} {words} in domain {dom} is not sampled: {where}; candidates "
                f"reach {value(cand_reach):.3g}{unit_txt}, so more samples would cover it"
            )
    return "; ".join(out)
