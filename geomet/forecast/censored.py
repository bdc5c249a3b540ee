"""Acid-soluble copper below detection: a value for the oxide ratio of flotation forecasts.

Most sulfide ore reports its acid-soluble Cu (CuAS) below the laboratory's detection limit.
Half the limit (the usual substitution for grade statistics) is a poor value for the *oxide
ratio* CuAS / Cu that drives oxide-copper losses in flotation: at 0.05 % Cu and a 0.01 % limit it
reads 10 % oxide copper where sulfide ore typically has about 1 %, and its bias grows as the
grade falls. :func:`oxide_cu_below_detection` replaces each below-detection CuAS with the
background acid-soluble share of sulfide ore times the total Cu, kept below the limit (the assay
says the true value is there). Where the total Cu is itself at or below the limit, the assay
says nothing about the ratio and the midpoint of the possible range (half the Cu) is used.

References
----------
.. [1] Helsel, D.R. (2012). *Statistics for Censored Environmental Data Using Minitab and R*,
   2nd ed. Wiley, Hoboken. (Substitution biases; values below detection are bounded by the
   limit.)
"""

from __future__ import annotations

import numpy as np

from geomet.errors import InputDataError

#: Fallback background acid-soluble share of sulfide Cu [fraction] (common practice: primary
#: chalcopyrite-bornite ore reports roughly 1-3 % of its Cu as acid soluble; from memory).
DEFAULT_BACKGROUND_RATIO_FRAC = 0.01

#: Quantile of the detected CuAS/Cu ratios taken as the sulfide-ore background (assumption:
#: the low tail of the detected population is sulfide ore rich enough in Cu to be detected).
BACKGROUND_QUANTILE = 0.1


def background_ratio_frac(cu_asol_pct, cu_pct, censored, *, quantile=BACKGROUND_QUANTILE):
    """Background CuAS / Cu of sulfide ore from the detected assays [fraction].

    Parameters
    ----------
    cu_asol_pct, cu_pct : array-like
        Acid-soluble and total Cu of assay intervals [%].
    censored : array-like of bool
        True where CuAS was reported below detection.
    quantile : float, keyword-only
        Quantile of the detected ratios used (:data:`BACKGROUND_QUANTILE`).

    Returns
    -------
    float
        The ``quantile`` of CuAS / Cu over detected intervals with Cu > 0, clipped to [0, 1];
        :data:`DEFAULT_BACKGROUND_RATIO_FRAC` when fewer than 10 intervals are detected.

    Examples
    --------
    >>> round(background_ratio_frac([0.02] * 10 + [0.005], [1.0] * 11, [False] * 10 + [True]), 3)
    0.02
    """
    if not 0.0 <= quantile <= 1.0:
        msg = f"background ratio quantile must be in [0, 1]; got {quantile!r}"
        raise InputDataError(msg)
    asol = np.asarray(cu_asol_pct, dtype=float)
    cu = np.asarray(cu_pct, dtype=float)
    det = ~np.asarray(censored, dtype=bool) & (cu > 0) & np.isfinite(asol) & np.isfinite(cu)
    if det.sum() < 10:
        return DEFAULT_BACKGROUND_RATIO_FRAC
    return float(np.clip(np.quantile(asol[det] / cu[det], quantile), 0.0, 1.0))


def oxide_cu_below_detection(
    cu_asol_pct, cu_pct, censored, detection_limit_pct, *, background_ratio_frac
):
    """Acid-soluble Cu with below-detection values replaced for the oxide ratio [%].

    Parameters
    ----------
    cu_asol_pct : array-like
        Acid-soluble Cu as read (below-detection rows hold a substitute) [%].
    cu_pct : array-like
        Total Cu [%].
    censored : array-like of bool
        True where CuAS was reported below detection.
    detection_limit_pct : array-like or float
        CuAS detection limit of each row [%].
    background_ratio_frac : float, keyword-only
        CuAS / Cu of sulfide ore [fraction] (:func:`background_ratio_frac`).

    Returns
    -------
    ndarray
        CuAS [%]: detected rows unchanged; censored rows
        min(r_b · Cu, L) where Cu > L, and Cu / 2 where Cu ≤ L (ratio undetermined).

    Notes
    -----
    A censored value lies in [0, L); so does r_b · Cu capped at L, and the ratio it gives,
    min(r_b, L / Cu), never exceeds what the assay allows. Where Cu ≤ L any ratio in [0, 1] fits
    the assay and its midpoint ½ is taken.

    Examples
    --------
    >>> oxide_cu_below_detection([0.005, 0.02], [0.05, 0.4], [True, False], 0.01,
    ...                          background_ratio_frac=0.01).round(4).tolist()
    [0.0005, 0.02]
    """
    if not 0.0 <= background_ratio_frac <= 1.0:
        msg = f"background acid-soluble ratio must be in [0, 1]; got {background_ratio_frac!r}"
        raise InputDataError(msg)
    asol = np.asarray(cu_asol_pct, dtype=float)
    cu = np.asarray(cu_pct, dtype=float)
    cens = np.asarray(censored, dtype=bool)
    limit = np.broadcast_to(np.asarray(detection_limit_pct, dtype=float), asol.shape)
    sub = np.where(cu > limit, np.minimum(background_ratio_frac * cu, limit), 0.5 * cu)
    return np.where(cens & np.isfinite(cu) & np.isfinite(limit), sub, asol)
