"""Feature assembly for domaining: mineral log-ratios plus optional chemistry and
absorption-feature positions, as scikit-learn transformers.

The pipeline built by :func:`build_feature_pipeline` is

1. :class:`LogRatioFeatures` - take the chosen mineral columns, close them to 100 wt%,
   replace zeros multiplicatively, transform to CLR or ILR coordinates; append
   log10 of grade columns (Cu, Au) and linear columns (oxide ratio, white-mica Al-OH
   wavelength);
2. mean imputation of missing chemistry (on log10 grades) (``SimpleImputer``);
3. standardisation (``StandardScaler``);
4. principal components (``PCA``), by a number of components or a share of variance.

The same fitted pipeline transforms block-model rows, so that blocks are domained with the
composites' fitted model.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from sklearn.base import BaseEstimator, TransformerMixin
from sklearn.decomposition import PCA
from sklearn.impute import SimpleImputer
from sklearn.pipeline import Pipeline
from sklearn.preprocessing import StandardScaler

from geomet.domains.logratio import clr, multiplicative_replacement, pivot_basis
from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERAL_COLUMNS

__all__ = [
    "GROUP_COLUMNS",
    "LogRatioFeatures",
    "build_feature_pipeline",
    "composition_columns",
    "has_composition",
]

# Mineral groups of docs/contracts.md usable as composition parts. They are a sub-composition
# (sulfides, tourmaline etc. are left out) and dickite sits in both the kaolin and the advanced
# argillic groups; log-ratios of a sub-composition are still coherent (Aitchison 1986).
GROUP_COLUMNS = (
    "clay_swelling_pct",
    "clay_kaolin_pct",
    "white_mica_illite_pct",
    "advanced_argillic_pct",
    "sulfate_pct",
    "carbonate_pct",
    "femg_silicate_pct",
    "iron_oxide_pct",
    "featureless_pct",
)

CHEMISTRY_LOG_COLUMNS = ("cu_pct", "au_gpt")
CHEMISTRY_LINEAR_COLUMNS = ("oxide_ratio_frac",)
ABSORPTION_COLUMNS = ("white_mica_aloh_nm",)


def composition_columns(df: pd.DataFrame, features: str | Sequence[str] = "minerals") -> list[str]:
    """Return the composition columns to use from ``df``.

    Parameters
    ----------
    df : pandas.DataFrame
        Table with ``<mineral>_pct`` and/or group columns.
    features : {"minerals", "groups"} or sequence of str
        ``"minerals"``: the 35 scanned minerals of the glossary present in ``df``;
        ``"groups"``: the mineral-group columns (:data:`GROUP_COLUMNS`) present;
        a sequence: exactly those columns.
    """
    if isinstance(features, str):
        if features == "minerals":
            wanted = SCANNED_MINERAL_COLUMNS
        elif features == "groups":
            wanted = GROUP_COLUMNS
        else:
            msg = f"features must be 'minerals', 'groups' or a list of columns; got {features!r}"
            raise InputDataError(msg)
        cols = [c for c in wanted if c in df.columns]
    else:
        cols = list(features)
        missing = [c for c in cols if c not in df.columns]
        if missing:
            msg = f"feature columns not in the table: {missing}"
            raise InputDataError(msg)
    if len(cols) < 2:
        msg = (
            f"domaining needs at least 2 composition columns ({features!r}); found {cols} "
            "in the table"
        )
        raise InputDataError(msg)
    return cols


def has_composition(df: pd.DataFrame, parts: Sequence[str]) -> np.ndarray:
    """Boolean mask of rows with a positive total over ``parts`` (missing counted as zero)."""
    total = np.zeros(len(df))
    for col in parts:  # column by column: no (rows x parts) copy of a large table
        v = df[col].to_numpy(dtype=float, na_value=np.nan)
        total += np.where(v > 0, v, 0.0)
    return total > 0


class LogRatioFeatures(TransformerMixin, BaseEstimator):
    """Mineral log-ratio coordinates plus optional chemistry, from a DataFrame.

    Parameters
    ----------
    parts : sequence of str
        Composition columns [wt%]. Missing parts count as zero; negative values are errors.
    logratio : {"clr", "ilr"}
        Transform of the replaced composition. ILR uses the pivot basis of
        :func:`geomet.domains.logratio.pivot_basis`.
    delta_pct : float
        Value given to zero parts after closure to 100 wt% [wt%] (multiplicative
        replacement, Martín-Fernández et al. 2003). Default 0.065 wt%: 65 % of an assumed
        0.1 wt% reporting limit of scanned abundances (the 65 % is the paper's
        recommendation; the 0.1 wt% limit is an assumption).
    log_columns : sequence of str
        Columns added as log10 (grades); values at or below zero are floored at half the
        smallest positive value seen in ``fit``.
    linear_columns : sequence of str
        Columns added unchanged (ratios, absorption wavelengths).

    Attributes
    ----------
    log_floors_ : dict
        Floor of each log column [column unit].
    feature_names_out_ : numpy.ndarray of str
    n_features_out_ : int

    Notes
    -----
    Rows whose parts sum to zero have no composition; their log-ratio features are NaN
    (mask them with :func:`has_composition` before clustering).
    """

    def __init__(
        self,
        parts: Sequence[str] = SCANNED_MINERAL_COLUMNS,
        logratio: str = "clr",
        delta_pct: float = 0.065,
        log_columns: Sequence[str] = (),
        linear_columns: Sequence[str] = (),
    ):
        self.parts = parts
        self.logratio = logratio
        self.delta_pct = delta_pct
        self.log_columns = log_columns
        self.linear_columns = linear_columns

    def _check_columns(self, X: pd.DataFrame) -> None:
        if not isinstance(X, pd.DataFrame):
            msg = "LogRatioFeatures needs a pandas DataFrame with named columns"
            raise InputDataError(msg)
        if self.logratio not in ("clr", "ilr"):
            msg = f"logratio must be 'clr' or 'ilr'; got {self.logratio!r}"
            raise InputDataError(msg)
        need = [*self.parts, *self.log_columns, *self.linear_columns]
        missing = [c for c in need if c not in X.columns]
        if missing:
            msg = f"columns needed for the domain features are missing: {missing}"
            raise InputDataError(msg)
        if len(self.parts) < 2:
            msg = f"a composition needs at least 2 parts; got parts={list(self.parts)}"
            raise InputDataError(msg)

    def fit(self, X: pd.DataFrame, y=None):
        self._check_columns(X)
        self.log_floors_ = {}
        for col in self.log_columns:
            v = X[col].to_numpy(dtype=float, na_value=np.nan)
            pos = v[np.isfinite(v) & (v > 0)]
            self.log_floors_[col] = float(pos.min() / 2) if pos.size else 1e-6
        names = list(self.parts) if self.logratio == "clr" else [
            f"ilr{i + 1}" for i in range(len(self.parts) - 1)
        ]
        if self.logratio == "clr":
            names = [f"clr_{p}" for p in names]
        names += [f"log10_{c}" for c in self.log_columns] + list(self.linear_columns)
        self.feature_names_out_ = np.asarray(names, dtype=object)
        self.n_features_out_ = len(names)
        self.n_features_in_ = X.shape[1]
        return self

    def transform(self, X: pd.DataFrame) -> np.ndarray:
        if not hasattr(self, "feature_names_out_"):
            msg = "LogRatioFeatures is not fitted yet; call fit first"
            raise InputDataError(msg)
        self._check_columns(X)
        comp = X.loc[:, list(self.parts)].to_numpy(dtype=float, na_value=np.nan, copy=True)
        comp[np.isnan(comp)] = 0.0
        if (comp < 0).any():
            rows = np.unique(np.nonzero(comp < 0)[0])
            msg = (
                "mineral abundances must be non-negative; negative values in row position(s) "
                f"{rows[:10].tolist()}"
            )
            raise InputDataError(msg)
        ok = comp.sum(axis=1) > 0
        n_lr = len(self.parts) if self.logratio == "clr" else len(self.parts) - 1
        out = np.empty((len(X), n_lr + len(self.log_columns) + len(self.linear_columns)))
        out[~ok, :n_lr] = np.nan
        if ok.any():
            sub = comp if ok.all() else comp[ok]
            coords = clr(multiplicative_replacement(sub, delta=self.delta_pct, total=100.0))
            if self.logratio == "ilr":
                coords = coords @ pivot_basis(len(self.parts)).T
            if ok.all():
                out[:, :n_lr] = coords
            else:
                out[ok, :n_lr] = coords
        j = n_lr
        for col in self.log_columns:
            v = X[col].to_numpy(dtype=float, na_value=np.nan)
            out[:, j] = np.log10(np.maximum(v, self.log_floors_[col]))
            j += 1
        for col in self.linear_columns:
            out[:, j] = X[col].to_numpy(dtype=float, na_value=np.nan)
            j += 1
        return out

    def get_feature_names_out(self, input_features=None):
        return self.feature_names_out_


def build_feature_pipeline(
    parts: Sequence[str],
    *,
    logratio: str = "clr",
    delta_pct: float = 0.065,
    log_columns: Sequence[str] = (),
    linear_columns: Sequence[str] = (),
    standardise: bool = True,
    pca_components: int | None = None,
    pca_variance_frac: float = 0.9,
    seed: int = 0,
) -> Pipeline:
    """Build the unfitted feature pipeline (log-ratio -> impute -> scale -> PCA).

    Parameters
    ----------
    parts : sequence of str
        Composition columns [wt%].
    logratio : {"clr", "ilr"}
    delta_pct : float
        Zero replacement value after closure to 100 wt% [wt%].
    log_columns, linear_columns : sequence of str
        Extra chemistry / absorption columns (see :class:`LogRatioFeatures`).
    standardise : bool
        Scale every feature to unit variance before PCA (correlation-matrix PCA); when
        False only centre (covariance PCA).
    pca_components : int, optional
        Number of principal components; when None, the fewest components explaining
        ``pca_variance_frac`` of the variance.
    pca_variance_frac : float
        Share of variance to keep when ``pca_components`` is None [fraction 0-1].
    seed : int
        Random state of the PCA solver.
    """
    if pca_components is None and not 0 < pca_variance_frac <= 1:
        msg = f"pca_variance_frac must be in (0, 1]; got {pca_variance_frac}"
        raise InputDataError(msg)
    if pca_components is not None and pca_components < 1:
        msg = f"pca_components must be at least 1; got {pca_components}"
        raise InputDataError(msg)
    n_comp = pca_components
    if n_comp is None:
        n_comp = pca_variance_frac if pca_variance_frac < 1 else None
    return Pipeline(
        [
            (
                "logratio",
                LogRatioFeatures(
                    parts=tuple(parts),
                    logratio=logratio,
                    delta_pct=delta_pct,
                    log_columns=tuple(log_columns),
                    linear_columns=tuple(linear_columns),
                ),
            ),
            ("impute", SimpleImputer(strategy="mean", keep_empty_features=True)),
            ("scale", StandardScaler(with_std=standardise)),
            ("pca", PCA(n_components=n_comp, svd_solver="covariance_eigh", random_state=seed)),
        ]
    )
