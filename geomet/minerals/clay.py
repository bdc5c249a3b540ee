"""Clay severity index: one number for how much trouble the clays in a feed will cause the plant.

Swelling smectite raises pulp viscosity and lowers flotation recovery far more than kaolinite,
and illite has the least effect [1]_ [2]_ [3]_. The index weights each clay mineral's abundance
by its relative severity, so that 1 wt% smectite counts as 1 unit and 1 wt% kaolinite as 0.3:
the result reads as "wt% smectite-equivalent".

The default weights (smectite 1.0; kaolinite, dickite and halloysite 0.3; illite 0.1) are
assumptions that rank the clays as the cited studies do; the ratios themselves are not published
constants. Problem concentrations are site-specific: calibrate the weights against the site's
rheology or throughput data (:class:`ClaySeverityRegressor`, :func:`fit_severity_weights`).

References
----------
.. [1] Zhang, M. & Peng, Y. (2015). Effect of clay minerals on pulp rheology and the flotation of
   copper and gold minerals. *Minerals Engineering* 70, 8-13.
.. [2] Ndlovu, B., Farrokhpay, S. & Bradshaw, D. (2013). The effect of phyllosilicate minerals on
   mineral processing industry. *International Journal of Mineral Processing* 125, 149-156.
.. [3] Farrokhpay, S., Ndlovu, B. & Bradshaw, D. (2016). Behaviour of swelling clays versus
   non-swelling clays in flotation. *Minerals Engineering* 96-97, 59-66. (Titles and pages
   of [1]-[3] from memory.)
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np
import pandas as pd
from scipy.optimize import nnls
from sklearn.base import BaseEstimator, RegressorMixin
from sklearn.utils.validation import check_is_fitted

from geomet.errors import InputDataError, RecipeError
from geomet.minerals._frame import numeric_columns
from geomet.minerals.reference import MINERALS, unknown_mineral_message

DEFAULT_SEVERITY_WEIGHTS: dict[str, float] = {
    "smectite": 1.0,  # swelling clay: the worst for viscosity and recovery (Zhang & Peng 2015)
    "kaolinite": 0.3,  # non-swelling; raises viscosity less (Ndlovu et al. 2013)
    "dickite": 0.3,  # kaolin polymorph, treated as kaolinite (assumption)
    "halloysite": 0.3,  # kaolin-group, treated as kaolinite (assumption)
    "illite": 0.1,  # least effect of the three (Farrokhpay et al. 2016)
}
"""Relative severity per wt% of each clay mineral [index per wt%]; assumptions, see module notes."""


def validate_severity_weights(weights: Mapping[str, float] | None) -> dict[str, float]:
    """Check a severity-weight mapping: known mineral keys, finite non-negative weights.

    Parameters
    ----------
    weights : mapping or None
        Mineral key (or ``<key>_pct`` column name) -> weight [index per wt%]. ``None`` returns
        :data:`DEFAULT_SEVERITY_WEIGHTS`.

    Returns
    -------
    dict[str, float]
        Mineral key -> weight.

    Raises
    ------
    geomet.errors.RecipeError
        On an unknown mineral (with the closest names), a negative or non-finite weight, or an
        empty mapping.
    """
    if weights is None:
        return dict(DEFAULT_SEVERITY_WEIGHTS)
    if not weights:
        msg = "clay severity weights must name at least one mineral; got an empty mapping"
        raise RecipeError(msg)
    out: dict[str, float] = {}
    problems = []
    for raw_key, value in weights.items():
        key = raw_key.removesuffix("_pct")
        if key not in MINERALS:
            problems.append(unknown_mineral_message(raw_key, where="mineral in severity weights"))
            continue
        try:
            weight = float(value)
        except (TypeError, ValueError):
            problems.append(f"severity weight of {raw_key!r} must be a number; got {value!r}")
            continue
        if not math.isfinite(weight) or weight < 0:
            problems.append(
                f"severity weight of {raw_key!r} must be finite and >= 0; got {value!r}"
            )
            continue
        out[key] = weight
    if problems:
        msg = "; ".join(problems)
        raise RecipeError(msg)
    return out


def clay_severity_index(df: pd.DataFrame, weights: Mapping[str, float] | None = None) -> pd.Series:
    """Weighted clay abundance ``clay_severity_idx`` [wt% smectite-equivalent].

    Parameters
    ----------
    df : pandas.DataFrame
        Table with ``<mineral>_pct`` columns [wt%].
    weights : mapping, optional
        Mineral key -> weight [index per wt%]; default :data:`DEFAULT_SEVERITY_WEIGHTS`.
        Weighted minerals whose column is absent from ``df`` are left out of the sum.

    Returns
    -------
    pandas.Series
        ``clay_severity_idx``, indexed like ``df``; NaN in a row where every weighted mineral is
        missing (NaN or absent).

    Notes
    -----
    I = Σ_i w_i c_i, with c_i the abundance of clay mineral i [wt%] and w_i its weight. Missing
    abundances are skipped in a row where at least one weighted mineral has a value.

    Examples
    --------
    >>> t = pd.DataFrame({"smectite_pct": [2.0], "kaolinite_pct": [10.0], "illite_pct": [5.0]})
    >>> float(clay_severity_index(t).iloc[0])  # 1.0*2 + 0.3*10 + 0.1*5
    5.5
    """
    w = validate_severity_weights(weights)
    cols = [f"{k}_pct" for k in w if f"{k}_pct" in df.columns]
    if not cols:
        return pd.Series(np.nan, index=df.index, name="clay_severity_idx", dtype=float)
    values = numeric_columns(df, cols)
    coef = np.array([w[c.removesuffix("_pct")] for c in cols])
    present = ~np.isnan(values)
    total = np.where(present, values, 0.0) @ coef
    total[~present.any(axis=1)] = np.nan
    return pd.Series(total, index=df.index, name="clay_severity_idx")


class ClaySeverityRegressor(RegressorMixin, BaseEstimator):
    """Calibrate clay severity weights against a measured clay effect (scikit-learn estimator).

    Fits y ≈ Σ_i b_i c_i with b ≥ 0 by non-negative least squares (Lawson & Hanson 1974), c_i
    the clay abundances [wt%] and y a measured clay effect that is zero for clay-free ore
    (throughput loss [t/h], pulp yield stress [Pa], ...). ``weights_`` are b scaled so that the
    reference mineral has weight 1, ready for the ``severity_weights`` option. Cross-validate by
    drill hole (``GroupKFold`` with hole ids as groups), not by row.

    Parameters
    ----------
    reference : str, default "smectite"
        Mineral whose weight is scaled to 1.

    Attributes
    ----------
    coef_ : numpy.ndarray
        Fitted b [response unit per wt%], one per column of X.
    weights_ : dict[str, float]
        Mineral key -> weight relative to the reference [index per wt%].
    feature_names_in_ : numpy.ndarray
        Column names of X (``<mineral>_pct``).

    References
    ----------
    .. [1] Lawson, C. L. & Hanson, R. J. (1974). *Solving Least Squares Problems*. Prentice-Hall.

    Examples
    --------
    >>> x = pd.DataFrame({"smectite_pct": [1.0, 0.0, 2.0], "kaolinite_pct": [0.0, 1.0, 1.0]})
    >>> model = ClaySeverityRegressor().fit(x, [2.0, 0.6, 4.6])
    >>> {k: round(v, 6) for k, v in model.weights_.items()}
    {'smectite': 1.0, 'kaolinite': 0.3}
    """

    def __init__(self, reference: str = "smectite"):
        self.reference = reference

    def fit(self, X, y):
        """Fit the non-negative coefficients; X a DataFrame of ``<mineral>_pct`` columns."""
        if not isinstance(X, pd.DataFrame):
            msg = "ClaySeverityRegressor.fit needs a DataFrame with <mineral>_pct columns"
            raise InputDataError(msg)
        cols = list(X.columns)
        keys = [str(c).removesuffix("_pct") for c in cols]
        validate_severity_weights(dict.fromkeys(keys, 1.0))
        target = np.asarray(y, dtype=float)
        c = numeric_columns(X, cols)
        if target.shape != (len(c),):
            msg = f"y must have one value per row of X ({len(c)}); got shape {target.shape}"
            raise InputDataError(msg)
        if np.isnan(c).any() or np.isnan(target).any():
            msg = "clay severity calibration needs complete data; drop rows with missing values"
            raise InputDataError(msg)
        if self.reference not in keys:
            msg = f"reference mineral {self.reference!r} is not among the clay columns {cols}"
            raise InputDataError(msg)
        coef, _ = nnls(c, target)
        ref = coef[keys.index(self.reference)]
        if ref <= 0:
            msg = (
                f"the fitted weight of the reference mineral {self.reference!r} is zero: its "
                "effect cannot be told from this data; choose another reference or more samples"
            )
            raise InputDataError(msg)
        self.coef_ = coef
        self.feature_names_in_ = np.asarray(cols, dtype=object)
        self.weights_ = {k: float(v / ref) for k, v in zip(keys, coef, strict=True)}
        return self

    def predict(self, X):
        """Predicted clay effect [response unit] for clay abundances X [wt%]."""
        check_is_fitted(self, "coef_")
        if isinstance(X, pd.DataFrame):
            X = X[list(self.feature_names_in_)]
        return np.asarray(X, dtype=float) @ self.coef_


def fit_severity_weights(
    clay_pct: pd.DataFrame, response, *, reference: str = "smectite"
) -> dict[str, float]:
    """Calibrate clay severity weights; shortcut for :class:`ClaySeverityRegressor`.

    Parameters
    ----------
    clay_pct : pandas.DataFrame
        One ``<mineral>_pct`` column per clay mineral [wt%], one row per sample.
    response : array-like
        Measured clay effect per sample (zero for clay-free ore).
    reference : str, default "smectite"
        Mineral whose weight is scaled to 1.

    Returns
    -------
    dict[str, float]
        Mineral key -> weight, the reference at 1.

    Notes
    -----
    min ||C b − y||₂ subject to b ≥ 0, then w_i = b_i / b_ref.
    """
    return ClaySeverityRegressor(reference=reference).fit(clay_pct, response).weights_
