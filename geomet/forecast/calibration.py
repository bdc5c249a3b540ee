"""Calibration of the forecast models to metallurgical testwork.

Estimators follow the scikit-learn API (``fit(X, y)`` returns ``self``, fitted state ends in
``_``, hyper-parameters stored unchanged by ``__init__``). ``X`` is a DataFrame (or a mapping of
column -> array for prediction) with the canonical input columns of
:func:`geomet.forecast.inputs.resolve_inputs`.

- :class:`LinearResponseModel` — hardness (Bond Wi, A×b, Mia) linear in the mineral groups,
  fitted by ridge regression shrunk towards the stated default coefficients.
- :class:`KineticRecoveryModel` — the kinetic Cu or Au recovery model of
  :mod:`geomet.forecast.flotation`, its coefficients fitted by bounded nonlinear least squares
  (``scipy.optimize.least_squares``) with a weak prior at the defaults.
- :class:`AcidReactivityModel` — leach acid as stoichiometric mineral acid times reactivity
  factors in [0, 1], fitted by bounded linear least squares (``scipy.optimize.lsq_linear``).
- :class:`ConcentrateModel` — the mechanistic rougher concentrate grade, calibrated as
  c = exp(a) ĉ^b on measured grades (fitted after the Cu recovery model, on its coefficients).
- :class:`MonotoneBoostingModel` — gradient boosting of the residual from the default physics
  model, with monotone constraints where physics fixes the sign
  (``HistGradientBoostingRegressor(monotonic_cst=...)``).

Every model gives ``predict_interval(X, coverage)`` by split-conformal absolute-residual
quantiles of out-of-fold residuals (cross-validation by drill hole, :func:`calibrate_response`).
Saved forms are plain JSON (:func:`model_to_json` / :func:`model_from_json`): parametric models
save their coefficients; the boosting model saves its training data, parameters and seed and is
refitted on load (deterministic for a given scikit-learn version).

References
----------
.. [1] Vovk, V., Gammerman, A. & Shafer, G. (2005). *Algorithmic Learning in a Random World*.
   Springer (conformal prediction).
.. [2] Lei, J., G'Sell, M., Rinaldo, A., Tibshirani, R.J. & Wasserman, L. (2018).
   Distribution-free predictive inference for regression. *Journal of the American Statistical
   Association* 113(523), 1094-1111. https://doi.org/10.1080/01621459.2017.1307116
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd
from scipy.optimize import least_squares, lsq_linear
from sklearn.base import BaseEstimator, RegressorMixin, clone
from sklearn.ensemble import HistGradientBoostingRegressor
from sklearn.model_selection import GroupKFold
from threadpoolctl import threadpool_limits

from geomet.errors import InputDataError
from geomet.forecast import acid as acid_mod
from geomet.forecast import flotation as flot
from geomet.forecast.hardness import (
    DEFAULT_HARDNESS_COEFFICIENTS,
    HARDNESS_FLOORS,
    HARDNESS_LINKS,
)
from geomet.forecast.inputs import COPPER_MINERALS, acid_minerals, copper_minerals

CALIBRATION_METHODS = ("parametric", "monotone_gbm", "none")

#: Responses that testwork calibrates: name -> (testwork target column, kind, bounds).
RESPONSES: dict[str, tuple[str, str, tuple[float, float]]] = {
    "bond_bwi_kwh_t": ("bond_bwi_kwh_t", "hardness", (HARDNESS_FLOORS["bond_bwi_kwh_t"], np.inf)),
    "smc_axb": ("smc_axb", "hardness", (HARDNESS_FLOORS["smc_axb"], np.inf)),
    "smc_mia_kwh_t": ("smc_mia_kwh_t", "hardness", (HARDNESS_FLOORS["smc_mia_kwh_t"], np.inf)),
    "cu_recovery_frac": ("cu_recovery_frac", "cu", (0.0, 1.0)),
    "au_recovery_frac": ("au_recovery_frac", "au", (0.0, 1.0)),
    "acid_kg_t": ("leach_acid_kg_t", "acid", (0.0, np.inf)),
    "conc_cu_pct": ("conc_cu_pct", "conc", (0.0, 100.0)),
}

_CLAYS = ("clay_swelling_pct", "clay_kaolin_pct", "white_mica_illite_pct", "clay_severity_idx")

#: Monotone signs physics fixes (+1 rising, −1 falling, 0 free), per response and feature.
MONOTONE_SIGNS: dict[str, dict[str, int]] = {
    "bond_bwi_kwh_t": {"clay_total_pct": -1, "featureless_pct": 1},
    "smc_axb": {"clay_total_pct": 1, "featureless_pct": -1},
    "smc_mia_kwh_t": {"clay_total_pct": -1, "featureless_pct": 1},
    "cu_recovery_frac": {"cu_asol_pct": -1, "clay_swelling_pct": -1, "clay_kaolin_pct": -1,
                         "clay_severity_idx": -1},
    "au_recovery_frac": {"au_gpt": 1, "clay_swelling_pct": -1, "clay_kaolin_pct": -1,
                         "oxide_ratio_frac": -1},
    "acid_kg_t": {f"{m}_pct": 1 for m in acid_mod.GANGUE_ACID_MINERALS} | {"cu_asol_pct": 1},
    "conc_cu_pct": {"clay_kaolin_pct": -1, "clay_swelling_pct": -1},
}  # fmt: skip


def _col(X, name: str) -> np.ndarray:
    return np.asarray(X[name], dtype=float)


def _numeric_rows(X, rows) -> dict[str, np.ndarray]:
    """The numeric columns of ``X`` as float arrays, restricted to ``rows`` (boolean mask)."""
    items = X.items() if isinstance(X, pd.DataFrame | Mapping) else ()
    out = {}
    for name, values in items:
        arr = np.asarray(values)
        if arr.dtype.kind in "fiub":
            out[name] = arr.astype(float)[rows]
    return out


def _nrows(X) -> int:
    if isinstance(X, pd.DataFrame):
        return len(X)
    return len(next(iter(X.values())))


def conformal_quantile(abs_residuals, coverage: float) -> float:
    """Split-conformal quantile: the ⌈(n + 1) c⌉-th smallest absolute residual.

    Parameters
    ----------
    abs_residuals : array-like
        Absolute out-of-sample residuals |y − ŷ| (NaN ignored).
    coverage : float
        Target coverage c of the interval ŷ ± q [fraction, 0-1].

    Returns
    -------
    float
        q (the largest residual when (n + 1) c > n; NaN with no residuals).

    Notes
    -----
    With exchangeable residuals, P(|y − ŷ| ≤ q) ≥ c (Lei et al. 2018, split conformal).

    Examples
    --------
    >>> conformal_quantile([1.0, 2.0, 3.0, 4.0], 0.5)
    3.0
    """
    if not 0.0 < coverage < 1.0:
        msg = f"interval coverage must be strictly between 0 and 1; got {coverage!r}"
        raise InputDataError(msg)
    r = np.sort(np.abs(np.asarray(abs_residuals, dtype=float)))
    r = r[~np.isnan(r)]
    if r.size == 0:
        return math.nan
    k = min(math.ceil((r.size + 1) * coverage), r.size)
    return float(r[k - 1])


class _ForecastModel(RegressorMixin, BaseEstimator):
    """Shared behaviour: default prediction, bounds, conformal intervals, JSON state."""

    response = ""

    def _bounds(self):
        return RESPONSES[self.response][2]

    def _clip(self, values):
        lo, hi = self._bounds()
        return np.clip(values, lo, hi)

    def set_residuals(self, residuals) -> _ForecastModel:
        """Store out-of-sample residuals (y − ŷ) that :meth:`predict_interval` uses."""
        self.residuals_ = np.asarray(residuals, dtype=float)
        return self

    def predict_interval(self, X, coverage: float = 0.8):
        """Prediction interval (lo, hi) of central ``coverage`` (split conformal).

        Parameters
        ----------
        X : DataFrame or mapping
            Rows to predict.
        coverage : float
            Interval coverage [fraction]; 0.8 gives the P10-P90 range.

        Returns
        -------
        tuple of ndarray
            (lo, hi), clipped to the response's physical bounds; NaN when the model has no
            out-of-sample residuals.
        """
        pred = self.predict(X)
        q = conformal_quantile(getattr(self, "residuals_", []), coverage)
        return self._clip(pred - q), self._clip(pred + q)

    def _state(self) -> dict:
        return {}

    def _load_state(self, state: dict) -> None:
        return None


class LinearResponseModel(_ForecastModel):
    """Linear hardness model, ridge-shrunk towards stated default coefficients.

    Parameters
    ----------
    response : str
        ``bond_bwi_kwh_t``, ``smc_axb`` or ``smc_mia_kwh_t``.
    alpha : float
        Ridge penalty on departures from the default slopes [response² per coefficient²],
        in the raw units of the features.
    calibrate : bool
        False keeps the default coefficients (fit stores them only).

    Notes
    -----
    b̂ = argmin_b ||g(y) − b0 − X b||² + α ||b − b_default||² (the intercept is free), g the
    link of :data:`geomet.forecast.hardness.HARDNESS_LINKS` (identity, or ln for A×b); solved
    as ordinary least squares on the data stacked with √α-weighted pseudo-observations.
    """

    def __init__(self, response="bond_bwi_kwh_t", alpha=1.0, calibrate=True):
        self.response = response
        self.alpha = alpha
        self.calibrate = calibrate

    def _defaults(self) -> dict[str, float]:
        if self.response not in DEFAULT_HARDNESS_COEFFICIENTS:
            msg = (
                f"LinearResponseModel: unknown response {self.response!r}; valid names are "
                f"{sorted(DEFAULT_HARDNESS_COEFFICIENTS)}"
            )
            raise InputDataError(msg)
        return dict(DEFAULT_HARDNESS_COEFFICIENTS[self.response])

    @property
    def features(self) -> list[str]:
        return [k for k in self._defaults() if k != "intercept"]

    def fit(self, X, y):
        """Fit the coefficients to hardness tests ``y`` (response unit) on rows ``X``."""
        default = self._defaults()
        feats = self.features
        if not self.calibrate:
            self.coefficients_ = default
            return self
        A = np.column_stack([np.ones(_nrows(X))] + [_col(X, f) for f in feats])
        y = np.asarray(y, dtype=float)
        if self._link() == "log":
            with np.errstate(invalid="ignore", divide="ignore"):
                y = np.where(y > 0, np.log(y), np.nan)
        ok = ~np.isnan(y) & ~np.isnan(A).any(axis=1)
        if ok.sum() < 2:
            msg = (
                f"LinearResponseModel({self.response}): needs at least 2 complete testwork "
                f"rows, got {int(ok.sum())}"
            )
            raise InputDataError(msg)
        b0 = np.array([default[f] for f in feats])
        sq = math.sqrt(self.alpha)
        prior_A = np.hstack([np.zeros((len(feats), 1)), sq * np.eye(len(feats))])
        AA = np.vstack([A[ok], prior_A])
        yy = np.concatenate([y[ok], sq * b0])
        coef, *_ = np.linalg.lstsq(AA, yy, rcond=None)
        self.coefficients_ = {"intercept": float(coef[0])} | {
            f: float(c) for f, c in zip(feats, coef[1:], strict=True)
        }
        return self

    def _link(self) -> str:
        return HARDNESS_LINKS.get(self.response, "identity")

    def _predict_with(self, X, coefs):
        out = np.full(_nrows(X), coefs["intercept"])
        for f in self.features:
            out = out + coefs[f] * _col(X, f)
        if self._link() == "log":
            out = np.exp(out)
        return self._clip(out)

    def predict(self, X):
        """Hardness [response unit] for rows ``X``."""
        return self._predict_with(X, self.coefficients_)

    def predict_default(self, X):
        """Hardness by the uncalibrated default coefficients."""
        return self._predict_with(X, self._defaults())

    def _state(self):
        return {"coefficients_": self.coefficients_}

    def _load_state(self, state):
        self.coefficients_ = dict(state["coefficients_"])


#: Coefficients a :class:`KineticRecoveryModel` fits by default, with their bounds.
KINETIC_FIT_BOUNDS: dict[str, dict[str, tuple[float, float]]] = {
    "cu": {
        "r_inf_scale": (0.3, 1.1),
        "k_scale": (0.02, 20.0),
        "swelling_per_pct": (0.0, 0.5),
        "kaolin_per_pct": (0.0, 0.2),
        "illite_per_pct": (0.0, 0.1),
        "k_swelling_per_pct": (0.0, 0.5),
        "k_kaolin_per_pct": (0.0, 0.2),
        "k_illite_per_pct": (0.0, 0.1),
        "k_severity_per_idx": (0.0, 0.5),
        "oxide_recovery_frac": (0.0, 1.0),
        "head_half_pct": (1e-4, 0.3),
    },
    "au": {
        "r_inf_scale": (0.3, 1.2),
        "k_scale": (0.02, 20.0),
        "swelling_per_pct": (0.0, 0.5),
        "kaolin_per_pct": (0.0, 0.2),
        "illite_per_pct": (0.0, 0.1),
        "k_swelling_per_pct": (0.0, 0.5),
        "k_kaolin_per_pct": (0.0, 0.2),
        "k_illite_per_pct": (0.0, 0.1),
        "k_severity_per_idx": (0.0, 0.5),
        "oxide_loss_per_frac": (0.0, 1.0),
        "head_half_gpt": (1e-3, 2.0),
    },
}


class KineticRecoveryModel(_ForecastModel):
    """Kinetic rougher recovery (Cu or Au) with coefficients fitted to flotation tests.

    Parameters
    ----------
    metal : {"cu", "au"}
        Which recovery.
    time_min : float
        Flotation time of the tests and of the forecast [min] (laboratory-equivalent).
    kinetic : str
        Kinetic form, one of :data:`geomet.forecast.flotation.KINETIC_MODELS`.
    n_cells : int
        Cells for the ``"n_cell"`` form.
    fit_params : sequence of str or None
        Coefficients to fit (keys of :data:`KINETIC_FIT_BOUNDS`); None fits them all.
    noise_frac : float
        Expected test-to-test scatter of recovery [fraction]; scales the data residuals.
    prior_strength : float
        Weight λ of the pull towards the default coefficients (0 = none). The default 0.2
        makes the prior 1σ five times the default coefficient (or 0.05 for a zero default)
        in units of ``noise_frac``: the defaults are order-of-magnitude assumptions. On the
        demo testwork, cross-validation by hole favoured λ between 0.1 and 0.5 over λ = 1 (Cu
        CV RMSE 0.026 against 0.034).
    calibrate : bool
        False keeps the defaults.

    Notes
    -----
    θ̂ = argmin Σ_i ((y_i − R(x_i; θ)) / σ)² + λ² Σ_j ((θ_j − θ⁰_j) / s_j)², θ within bounds,
    s_j = max(|θ⁰_j|, 0.01); trust-region reflective least squares (scipy).
    """

    def __init__(
        self,
        metal="cu",
        time_min=10.0,
        kinetic="first_order",
        n_cells=6,
        fit_params=None,
        noise_frac=0.03,
        prior_strength=0.2,
        calibrate=True,
    ):
        self.metal = metal
        self.time_min = time_min
        self.kinetic = kinetic
        self.n_cells = n_cells
        self.fit_params = fit_params
        self.noise_frac = noise_frac
        self.prior_strength = prior_strength
        self.calibrate = calibrate

    @property
    def response(self):  # type: ignore[override]
        return f"{self.metal}_recovery_frac"

    def _defaults(self) -> dict:
        if self.metal not in KINETIC_FIT_BOUNDS:
            msg = f"KineticRecoveryModel: metal must be 'cu' or 'au'; got {self.metal!r}"
            raise InputDataError(msg)
        base = flot.DEFAULT_CU_FLOTATION if self.metal == "cu" else flot.DEFAULT_AU_FLOTATION
        return dict(base)

    def _names(self) -> list[str]:
        bounds = KINETIC_FIT_BOUNDS[self.metal]
        names = list(self.fit_params) if self.fit_params is not None else list(bounds)
        unknown = [n for n in names if n not in bounds]
        if unknown:
            msg = f"KineticRecoveryModel: cannot fit {unknown}; valid names are {list(bounds)}"
            raise InputDataError(msg)
        return names

    def _recovery(self, X, params: Mapping) -> np.ndarray:
        kw = {"time_min": self.time_min, "model": self.kinetic, "n_cells": self.n_cells}
        if self.metal == "cu":
            return flot.rougher_copper(
                _col(X, "cu_pct"),
                _col(X, "cu_asol_pct"),
                *(_col(X, c) for c in _CLAYS),
                cu_mineral_pct=copper_minerals(X),
                pyrite_pct=_col(X, "pyrite_pct"),
                params=dict(params),
                **kw,
            )["cu_recovery_frac"]
        return np.asarray(
            flot.au_recovery_frac(
                _col(X, "au_gpt"),
                *(_col(X, c) for c in _CLAYS),
                _col(X, "oxide_ratio_frac"),
                params=dict(params),
                **kw,
            )
        )

    def fit(self, X, y):
        """Fit the kinetic coefficients to measured recoveries ``y`` [fraction]."""
        default = self._defaults()
        names = self._names()
        if not self.calibrate:
            self.params_ = {n: float(default[n]) for n in names}
            return self
        y = np.asarray(y, dtype=float)
        ok = ~np.isnan(y)
        # With a prior the problem stays determined below one test per coefficient (the prior
        # rows pin what the data leave free); without one it needs as many tests.
        need = 2 if self.prior_strength > 0 else len(names)
        if ok.sum() < need:
            msg = (
                f"KineticRecoveryModel({self.metal}): {int(ok.sum())} tests with a recovery "
                f"cannot fit {len(names)} coefficients {names} (need at least {need} tests "
                f"with prior_strength={self.prior_strength})"
            )
            raise InputDataError(msg)
        Xok = _numeric_rows(X, ok)  # plain arrays: the objective is evaluated many times
        bounds = KINETIC_FIT_BOUNDS[self.metal]
        theta0 = np.array([float(default[n]) for n in names])
        lo = np.array([bounds[n][0] for n in names])
        hi = np.array([bounds[n][1] for n in names])
        scale = np.maximum(np.abs(theta0), 0.01)

        def residuals(theta):
            params = {**default, **dict(zip(names, theta, strict=True))}
            pred = np.nan_to_num(self._recovery(Xok, params), nan=0.0)
            data = (y[ok] - pred) / self.noise_frac
            prior = self.prior_strength * (theta - theta0) / scale
            return np.concatenate([data, prior])

        sol = least_squares(residuals, np.clip(theta0, lo, hi), bounds=(lo, hi), x_scale=scale)
        self.params_ = {n: float(v) for n, v in zip(names, sol.x, strict=True)}
        self.fit_cost_ = float(sol.cost)
        return self

    def full_params(self) -> dict:
        """Default coefficients with the fitted ones substituted (for the flotation functions)."""
        return {**self._defaults(), **getattr(self, "params_", {})}

    def predict(self, X):
        """Recovery [fraction] for rows ``X``."""
        return self._clip(self._recovery(X, self.full_params()))

    def predict_default(self, X):
        """Recovery by the default coefficients."""
        return self._clip(self._recovery(X, self._defaults()))

    def _state(self):
        return {"params_": self.params_}

    def _load_state(self, state):
        self.params_ = {k: float(v) for k, v in state["params_"].items()}


class AcidReactivityModel(_ForecastModel):
    """Leach acid consumption: stoichiometric mineral acid times fitted reactivity factors.

    Parameters
    ----------
    extraction_frac : float
        Default fraction of the acid-soluble Cu dissolved [fraction].
    fit_intercept : bool
        Fit a non-negative constant [kg/t] for consumers the model does not list.
    relative_errors : bool
        Weight each test by 1 / (default prediction), for scatter proportional to the acid
        level (weighted least squares).
    weight_floor_kg_t : float
        Smallest default prediction used in those weights [kg/t].
    calibrate : bool
        False keeps the default reactivities (:data:`geomet.forecast.acid.ACID_REACTIONS`).

    Notes
    -----
    A_i = b0 + Σ_m ρ_m a_im + e · o_i, with a_im = 10 x_im ν_m M(H2SO4)/M_m the full-dissolution
    acid of mineral m [kg/t] and o_i = 10 cu_asol_i · 98.08/63.55 the oxide Cu acid;
    0 ≤ ρ_m ≤ 1, 0 ≤ e ≤ 1, b0 ≥ 0 (bounded least squares, scipy ``lsq_linear``).
    """

    response = "acid_kg_t"

    def __init__(
        self,
        extraction_frac=1.0,
        fit_intercept=True,
        relative_errors=True,
        weight_floor_kg_t=2.0,
        calibrate=True,
    ):
        self.extraction_frac = extraction_frac
        self.fit_intercept = fit_intercept
        self.relative_errors = relative_errors
        self.weight_floor_kg_t = weight_floor_kg_t
        self.calibrate = calibrate

    def _design(self, X):
        minerals = acid_minerals(X)
        cols = [
            acid_mod.gangue_acid_kg_t({m: minerals[m]}, reactivity={m: 1.0})
            for m in acid_mod.GANGUE_ACID_MINERALS
        ]
        oxide = acid_mod.oxide_cu_acid_kg_t(_col(X, "cu_asol_pct"))
        return np.column_stack(cols), oxide

    def _default_state(self):
        return {
            "reactivity_": {
                m: acid_mod.ACID_REACTIONS[m].reactivity_frac for m in acid_mod.GANGUE_ACID_MINERALS
            },
            "extraction_": float(self.extraction_frac),
            "intercept_": 0.0,
        }

    def fit(self, X, y):
        """Fit reactivities to measured leach acid ``y`` [kg/t]."""
        state = self._default_state()
        if self.calibrate:
            y = np.asarray(y, dtype=float)
            ok = ~np.isnan(y)
            if ok.sum() < 3:
                msg = f"AcidReactivityModel: needs at least 3 leach tests, got {int(ok.sum())}"
                raise InputDataError(msg)
            gangue, oxide = self._design(X)
            A = np.column_stack([gangue, oxide, np.ones(len(y))])
            ok &= ~np.isnan(A).any(axis=1)
            A = A[ok]
            hi = np.r_[np.ones(gangue.shape[1] + 1), np.inf if self.fit_intercept else 1e-12]
            # Columns with no mineral in the tests cannot be fitted: keep their defaults.
            used = np.abs(A).sum(axis=0) > 0
            fixed = np.r_[list(state["reactivity_"].values()), state["extraction_"], 0.0]
            target = y[ok] - A[:, ~used] @ fixed[~used]
            # Leach acid scatters in proportion to its level: weight rows by 1/(default
            # prediction) so that every test counts by its relative error.
            w = (
                1.0 / np.maximum(A @ fixed, self.weight_floor_kg_t)
                if self.relative_errors
                else np.ones(len(target))
            )
            sol = lsq_linear(
                A[:, used] * w[:, None], target * w, bounds=(np.zeros(used.sum()), hi[used])
            )
            theta = fixed.copy()
            theta[used] = sol.x
            names = list(acid_mod.GANGUE_ACID_MINERALS)
            state = {
                "reactivity_": {
                    m: float(v) for m, v in zip(names, theta[: len(names)], strict=True)
                },
                "extraction_": float(theta[len(names)]),
                "intercept_": float(theta[-1]),
            }
        for k, v in state.items():
            setattr(self, k, v)
        return self

    def components(self, X, state: Mapping | None = None) -> tuple[np.ndarray, np.ndarray]:
        """(gangue acid, oxide Cu acid) [kg/t] with fitted (or given) factors."""
        s = state or {
            "reactivity_": self.reactivity_,
            "extraction_": self.extraction_,
            "intercept_": self.intercept_,
        }
        gangue = acid_mod.gangue_acid_kg_t(acid_minerals(X), reactivity=s["reactivity_"])
        oxide = acid_mod.oxide_cu_acid_kg_t(
            _col(X, "cu_asol_pct"), extraction_frac=min(max(s["extraction_"], 0.0), 1.0)
        )
        return gangue + s["intercept_"], oxide

    def predict(self, X):
        """Total acid [kg/t] for rows ``X``."""
        g, o = self.components(X)
        return self._clip(g + o)

    def predict_default(self, X):
        """Total acid [kg/t] by default reactivities."""
        g, o = self.components(X, self._default_state())
        return self._clip(g + o)

    def _state(self):
        return {
            "reactivity_": self.reactivity_,
            "extraction_": self.extraction_,
            "intercept_": self.intercept_,
        }

    def _load_state(self, state):
        self.reactivity_ = {k: float(v) for k, v in state["reactivity_"].items()}
        self.extraction_ = float(state["extraction_"])
        self.intercept_ = float(state["intercept_"])


class ConcentrateModel(_ForecastModel):
    """Rougher concentrate Cu grade: the mechanistic estimate of
    :func:`geomet.forecast.flotation.rougher_copper` calibrated to measured grades.

    Parameters
    ----------
    cu_params : dict or None
        Cu flotation coefficients (e.g. the fitted Cu recovery model's ``full_params()``);
        None uses the defaults.
    time_min, kinetic, n_cells :
        As in :class:`KineticRecoveryModel`.
    calibrate : bool
        False keeps the mechanistic estimate unchanged (a = 0, b = 1).

    Notes
    -----
    c = exp(a) · ĉ^b, ĉ the grade of the recovered minerals plus entrained gangue; a and b
    (0 ≤ b ≤ 1.5) by bounded least squares on ln c (grade scatter is roughly proportional to
    grade). b < 1 says the measured grades vary less with the ore than the mass model.
    """

    response = "conc_cu_pct"

    def __init__(
        self, cu_params=None, time_min=10.0, kinetic="first_order", n_cells=6, calibrate=True
    ):
        self.cu_params = cu_params
        self.time_min = time_min
        self.kinetic = kinetic
        self.n_cells = n_cells
        self.calibrate = calibrate

    def mechanistic(self, X):
        """The uncalibrated concentrate grade ĉ [% Cu]."""
        return flot.rougher_copper(
            _col(X, "cu_pct"),
            _col(X, "cu_asol_pct"),
            *(_col(X, c) for c in _CLAYS),
            cu_mineral_pct=copper_minerals(X),
            pyrite_pct=_col(X, "pyrite_pct"),
            time_min=self.time_min,
            model=self.kinetic,
            n_cells=self.n_cells,
            params=self.cu_params,
        )["conc_cu_pct"]

    def fit(self, X, y):
        """Fit a and b to measured concentrate grades ``y`` [% Cu]."""
        self.log_scale_, self.exponent_ = 0.0, 1.0
        if not self.calibrate:
            return self
        y = np.asarray(y, dtype=float)
        c = self.mechanistic(X)
        ok = ~np.isnan(y) & (y > 0) & (c > 0)
        if ok.sum() < 3:
            msg = f"ConcentrateModel: needs at least 3 concentrate grades, got {int(ok.sum())}"
            raise InputDataError(msg)
        A = np.column_stack([np.ones(int(ok.sum())), np.log(c[ok])])
        sol = lsq_linear(A, np.log(y[ok]), bounds=([-np.inf, 0.0], [np.inf, 1.5]))
        self.log_scale_, self.exponent_ = float(sol.x[0]), float(sol.x[1])
        return self

    def adjust(self, mechanistic_pct):
        """Calibrated grade from mechanistic grades [% Cu]."""
        with np.errstate(invalid="ignore", divide="ignore"):
            return self._clip(
                np.exp(self.log_scale_) * np.asarray(mechanistic_pct, float) ** self.exponent_
            )

    def predict(self, X):
        """Concentrate grade [% Cu] for rows ``X``."""
        return self.adjust(self.mechanistic(X))

    def predict_default(self, X):
        """The mechanistic concentrate grade."""
        return self._clip(self.mechanistic(X))

    def _state(self):
        return {"log_scale_": self.log_scale_, "exponent_": self.exponent_}

    def _load_state(self, state):
        self.log_scale_ = float(state["log_scale_"])
        self.exponent_ = float(state["exponent_"])


def default_model(response: str, **kwargs) -> _ForecastModel:
    """The parametric model of ``response`` (keys of :data:`RESPONSES`)."""
    if response not in RESPONSES:
        msg = f"unknown forecast response {response!r}; valid names are {sorted(RESPONSES)}"
        raise InputDataError(msg)
    kind = RESPONSES[response][1]
    if kind == "hardness":
        return LinearResponseModel(response=response, **kwargs)
    if kind in ("cu", "au"):
        return KineticRecoveryModel(metal=kind, **kwargs)
    if kind == "conc":
        return ConcentrateModel(**kwargs)
    return AcidReactivityModel(**kwargs)


def model_features(response: str) -> list[str]:
    """Input columns the data-driven model of ``response`` uses."""
    kind = RESPONSES[response][1]
    if kind == "hardness":
        return [k for k in DEFAULT_HARDNESS_COEFFICIENTS[response] if k != "intercept"]
    if kind == "cu":
        return [
            "cu_pct",
            "cu_asol_pct",
            *_CLAYS,
            *(f"{m}_pct" for m in COPPER_MINERALS),
            "pyrite_pct",
        ]
    if kind == "au":
        return ["au_gpt", *_CLAYS, "oxide_ratio_frac"]
    if kind == "conc":
        return [
            "cu_pct",
            "cu_asol_pct",
            *_CLAYS,
            *(f"{m}_pct" for m in COPPER_MINERALS),
            "pyrite_pct",
        ]
    return [*(f"{m}_pct" for m in acid_mod.GANGUE_ACID_MINERALS), "cu_asol_pct"]


class MonotoneBoostingModel(_ForecastModel):
    """Gradient boosting of the residual from the default physics model, monotone where physics
    fixes the sign.

    Parameters
    ----------
    response : str
        A key of :data:`RESPONSES`.
    base_params : dict or None
        Keyword arguments of the default physics model (:func:`default_model`).
    max_iter, learning_rate, max_depth, min_samples_leaf, l2_regularization :
        Passed to ``HistGradientBoostingRegressor``.
    random_state : int
        Seed.

    Notes
    -----
    ŷ = f_default(x) + g(x), g boosted trees with ``monotonic_cst`` from
    :data:`MONOTONE_SIGNS` (Friedman 2001, Annals of Statistics 29(5) 1189-1232). The default
    model is monotone in the same directions, so the sum keeps the constraint.
    """

    def __init__(
        self,
        response="cu_recovery_frac",
        base_params=None,
        max_iter=150,
        learning_rate=0.05,
        max_depth=3,
        min_samples_leaf=10,
        l2_regularization=1.0,
        random_state=0,
    ):
        self.response = response
        self.base_params = base_params
        self.max_iter = max_iter
        self.learning_rate = learning_rate
        self.max_depth = max_depth
        self.min_samples_leaf = min_samples_leaf
        self.l2_regularization = l2_regularization
        self.random_state = random_state

    def _base(self):
        return _fit_base(default_model(self.response, **(self.base_params or {})))

    def _matrix(self, X):
        return np.column_stack([_col(X, f) for f in model_features(self.response)])

    def fit(self, X, y):
        """Fit the boosted residual model to testwork ``y`` (response unit)."""
        y = np.asarray(y, dtype=float)
        ok = ~np.isnan(y)
        Xok = X[ok] if isinstance(X, pd.DataFrame) else {k: np.asarray(v)[ok] for k, v in X.items()}
        self.base_ = self._base()
        signs = MONOTONE_SIGNS.get(self.response, {})
        cst = [signs.get(f, 0) for f in model_features(self.response)]
        self.booster_ = HistGradientBoostingRegressor(
            max_iter=self.max_iter,
            learning_rate=self.learning_rate,
            max_depth=self.max_depth,
            min_samples_leaf=self.min_samples_leaf,
            l2_regularization=self.l2_regularization,
            monotonic_cst=cst,
            early_stopping=False,
            random_state=self.random_state,
        )
        resid = y[ok] - self.base_.predict(Xok)
        # One OpenMP thread: on a few hundred tests, thread start-up costs more than the fit.
        with threadpool_limits(limits=1, user_api="openmp"):
            self.booster_.fit(self._matrix(Xok), resid)
        self.train_ = {
            "X": {
                f: np.asarray(Xok[f], dtype=float).tolist() for f in model_features(self.response)
            },
            "y": y[ok].tolist(),
        }
        return self

    def predict(self, X):
        """Prediction [response unit]."""
        matrix = self._matrix(X)
        if len(matrix) < 200_000:
            with threadpool_limits(limits=1, user_api="openmp"):
                boost = self.booster_.predict(matrix)
        else:
            boost = self.booster_.predict(matrix)
        return self._clip(self.base_.predict(X) + boost)

    def predict_default(self, X):
        """Prediction of the default physics model alone."""
        return self._base().predict(X)

    def _state(self):
        return {"train_": self.train_}

    def _load_state(self, state):
        X = pd.DataFrame(state["train_"]["X"])
        self.fit(X, np.asarray(state["train_"]["y"], dtype=float))


def _fit_base(model):
    """Put a physics model into its default fitted state (no calibration, no data)."""
    model.set_params(calibrate=False)
    return model.fit(None, None)


def make_model(response: str, method: str = "parametric", *, seed: int = 0, **kwargs):
    """The estimator for ``response`` by calibration ``method`` (:data:`CALIBRATION_METHODS`).

    ``"none"`` is the parametric model with ``calibrate=False``; ``kwargs`` go to the
    parametric model (for ``"monotone_gbm"``, to its physics base).
    """
    if method not in CALIBRATION_METHODS:
        msg = f"unknown calibration method {method!r}; valid names are {list(CALIBRATION_METHODS)}"
        raise InputDataError(msg)
    if method == "monotone_gbm":
        return MonotoneBoostingModel(
            response=response, base_params=kwargs or None, random_state=seed
        )
    model = default_model(response, **kwargs)
    if method == "none":
        model.set_params(calibrate=False)
    return model


def calibrate_response(
    model: _ForecastModel,
    X: pd.DataFrame,
    y,
    groups,
    *,
    n_splits: int = 5,
    coverage: float = 0.8,
) -> tuple[_ForecastModel, dict]:
    """Cross-validate ``model`` by drill hole, then fit it on all rows.

    Parameters
    ----------
    model : estimator
        An unfitted forecast model.
    X : DataFrame
        Resolved inputs of the testwork samples (:func:`~geomet.forecast.inputs.resolve_inputs`).
    y : array-like
        Measured response (NaN rows are left out).
    groups : array-like
        Drill hole of each row: folds never split a hole (``GroupKFold``).
    n_splits : int, keyword-only
        Folds (reduced to the number of holes when fewer).
    coverage : float, keyword-only
        Interval coverage whose out-of-fold hit rate is reported.

    Returns
    -------
    tuple
        (model fitted on all rows with out-of-fold residuals stored, report dict with ``n``,
        ``n_holes``, ``rmse_default``, ``mae_default``, ``rmse_cv``, ``mae_cv``,
        ``interval_coverage_frac``).

    Notes
    -----
    The default model is not fitted, so its errors on all rows are already out-of-sample.
    Interval coverage is cross-conformal: each fold's residuals are scored against the
    conformal quantile of the other folds' residuals.
    """
    y = np.asarray(y, dtype=float)
    groups = np.asarray(groups)
    ok = ~np.isnan(y)
    X = X.loc[ok].reset_index(drop=True)
    y = y[ok]
    groups = groups[ok]
    n_holes = len(np.unique(groups))
    report = {"n": int(ok.sum()), "n_holes": int(n_holes)}
    base = clone(model)
    default_pred = model.predict_default(X) if len(y) else np.array([])
    report["rmse_default"] = _rmse(y, default_pred)
    report["mae_default"] = _mae(y, default_pred)
    oof = np.full(len(y), np.nan)
    folds = np.full(len(y), -1)
    if n_holes >= 2 and len(y) >= 4:
        splitter = GroupKFold(n_splits=min(n_splits, n_holes))
        for k, (train, test) in enumerate(splitter.split(X, y, groups)):
            est = clone(base).fit(X.iloc[train].reset_index(drop=True), y[train])
            oof[test] = est.predict(X.iloc[test].reset_index(drop=True))
            folds[test] = k
    elif getattr(model, "calibrate", True) is False:
        oof = default_pred
    report["rmse_cv"] = _rmse(y, oof)
    report["mae_cv"] = _mae(y, oof)
    resid = y - oof
    report["interval_coverage_frac"] = _cross_conformal_coverage(resid, folds, coverage)
    fitted = clone(base).fit(X, y) if len(y) else clone(base)
    fitted.set_residuals(resid)
    # Kept for plots and checks (not saved): measured, default and out-of-fold predictions.
    fitted.cv_measured_, fitted.cv_default_, fitted.cv_predicted_ = y, default_pred, oof
    return fitted, report


def _rmse(y, p) -> float:
    d = np.asarray(y, float) - np.asarray(p, float)
    d = d[~np.isnan(d)]
    return float(np.sqrt(np.mean(d**2))) if d.size else math.nan


def _mae(y, p) -> float:
    d = np.asarray(y, float) - np.asarray(p, float)
    d = d[~np.isnan(d)]
    return float(np.mean(np.abs(d))) if d.size else math.nan


def _cross_conformal_coverage(resid, folds, coverage) -> float:
    if np.all(folds < 0) or np.all(np.isnan(resid)):
        return math.nan
    hits = []
    for k in np.unique(folds[folds >= 0]):
        q = conformal_quantile(resid[folds != k], coverage)
        r = np.abs(resid[folds == k])
        hits.extend((r <= q)[~np.isnan(r)].tolist())
    return float(np.mean(hits)) if hits else math.nan


MODEL_CLASSES = {
    cls.__name__: cls
    for cls in (
        LinearResponseModel,
        KineticRecoveryModel,
        AcidReactivityModel,
        ConcentrateModel,
        MonotoneBoostingModel,
    )
}


def model_to_json(model: _ForecastModel) -> dict:
    """Plain-JSON form of a fitted forecast model (no pickle; no code runs on load)."""
    params = {k: (list(v) if isinstance(v, tuple) else v) for k, v in model.get_params().items()}
    return {
        "class": type(model).__name__,
        "params": params,
        "state": model._state(),
        "residuals": [None if np.isnan(r) else float(r) for r in getattr(model, "residuals_", [])],
    }


def model_from_json(data: Mapping) -> _ForecastModel:
    """Rebuild a model saved by :func:`model_to_json` (boosting models are refitted)."""
    name = data.get("class")
    if name not in MODEL_CLASSES:
        msg = f"unknown saved model class {name!r}; valid names are {sorted(MODEL_CLASSES)}"
        raise InputDataError(msg)
    model = MODEL_CLASSES[name](**dict(data["params"]))
    model._load_state(dict(data["state"]))
    model.set_residuals([math.nan if r is None else r for r in data.get("residuals", [])])
    return model


def fit_all(
    X: pd.DataFrame,
    targets: Mapping[str, Sequence[float]],
    groups,
    *,
    method: str = "parametric",
    seed: int = 0,
    n_splits: int = 5,
    coverage: float = 0.8,
    model_kwargs: Mapping[str, Mapping] | None = None,
) -> tuple[dict[str, _ForecastModel], pd.DataFrame]:
    """Calibrate every response with testwork values: models and a calibration report.

    Parameters
    ----------
    X : DataFrame
        Resolved inputs of the testwork samples.
    targets : mapping
        Response name (keys of :data:`RESPONSES`) -> measured values (NaN where not tested).
    groups : array-like
        Drill hole of each sample.
    method : str, keyword-only
        ``"parametric"``, ``"monotone_gbm"`` or ``"none"``.
    seed, n_splits, coverage : keyword-only
        Seed of random steps, cross-validation folds, interval coverage.
    model_kwargs : mapping, keyword-only
        Response -> keyword arguments of its parametric model (e.g. flotation time).

    Returns
    -------
    tuple
        (response -> fitted model, report DataFrame with one row per response).
    """
    models: dict[str, _ForecastModel] = {}
    rows = []
    # Copper recovery first: the concentrate model builds on it.
    order = sorted(targets, key=lambda r: r == "conc_cu_pct")
    for response in order:
        y = targets[response]
        y = np.asarray(y, dtype=float)
        kwargs = dict((model_kwargs or {}).get(response, {}))
        cu_model = models.get("cu_recovery_frac")
        if response == "conc_cu_pct" and isinstance(cu_model, KineticRecoveryModel):
            # The concentrate mass is fitted with the copper recoveries already calibrated.
            kwargs.setdefault("cu_params", cu_model.full_params())
            for key in ("time_min", "kinetic", "n_cells"):
                kwargs.setdefault(key, cu_model.get_params()[key])
        model = make_model(response, method, seed=seed, **kwargs)
        n = int((~np.isnan(y)).sum())
        if n == 0:
            continue  # no tests of this response: the caller keeps the stated default
        min_n = 8 if method == "monotone_gbm" else 4
        if n < min_n and method != "none":
            model = make_model(response, "none", seed=seed, **kwargs)
        fitted, report = calibrate_response(
            model, X, y, groups, n_splits=n_splits, coverage=coverage
        )
        models[response] = fitted
        used = method if (n >= min_n or method == "none") else "none"
        rows.append({"response": response, "method": used, **report})
    return models, pd.DataFrame(rows)
