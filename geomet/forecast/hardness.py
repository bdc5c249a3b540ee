"""Ore hardness from mineralogy: default linear models that calibration to testwork replaces.

The default coefficients below are stated assumptions, not published values: they encode the
usual direction of each effect in porphyry ores (clays and carbonates soften the ore, quartz-
feldspar rich "featureless" rock is hard) at magnitudes picked to give typical porphyry hardness
(Bond ball work index 10-20 kWh/t, A×b 25-90, Mia 10-30 kWh/t). Fit them to the site's testwork
with :class:`geomet.forecast.calibration.LinearResponseModel` before trusting the numbers.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

#: Default linear hardness models: response -> {"intercept": value, feature column: coefficient}.
#: Coefficients per wt% of the group (per index unit for ``_idx``). Assumptions; calibrate.
#: A×b uses a log link (its coefficients act on ln A×b): A×b is positive and spreads
#: multiplicatively between soft and hard ore.
DEFAULT_HARDNESS_COEFFICIENTS: dict[str, dict[str, float]] = {
    "bond_bwi_kwh_t": {
        "intercept": 11.0,
        "featureless_pct": 0.05,  # quartz-feldspar (no SWIR features) raises Wi
        "clay_total_pct": -0.12,  # clays are soft
        "advanced_argillic_pct": 0.05,  # silicified lithocap with pyrophyllite/alunite
        "femg_silicate_pct": 0.03,
        "carbonate_pct": -0.08,
        "sulfate_pct": -0.06,
        "iron_oxide_pct": -0.05,  # oxidised, fractured rock
    },
    "smc_axb": {
        "intercept": 3.75,  # ln A×b; about 42 for clay-free rock of 40 % featureless
        "featureless_pct": -0.004,
        "clay_total_pct": 0.025,  # clay-rich rock breaks easily (high A×b = soft)
        "advanced_argillic_pct": -0.005,
        "femg_silicate_pct": 0.002,
        "carbonate_pct": 0.008,
        "sulfate_pct": 0.01,
        "iron_oxide_pct": 0.005,
    },
    "smc_mia_kwh_t": {
        "intercept": 19.0,
        "featureless_pct": 0.06,
        "clay_total_pct": -0.30,
        "advanced_argillic_pct": 0.08,
        "femg_silicate_pct": 0.02,
        "carbonate_pct": -0.15,
        "sulfate_pct": -0.15,
        "iron_oxide_pct": -0.08,
    },
}

#: Link of each hardness model: "identity" (linear in the response) or "log" (linear in ln).
HARDNESS_LINKS: dict[str, str] = {
    "bond_bwi_kwh_t": "identity",
    "smc_axb": "log",
    "smc_mia_kwh_t": "identity",
}

#: Physical lower bounds applied to linear hardness predictions (a linear model can go negative).
HARDNESS_FLOORS = {"bond_bwi_kwh_t": 3.0, "smc_axb": 10.0, "smc_mia_kwh_t": 3.0}


def linear_response(table: pd.DataFrame, coefficients: Mapping[str, float]) -> np.ndarray:
    """Evaluate a linear model ``intercept + Σ coef_j · table[j]`` row by row.

    Parameters
    ----------
    table : DataFrame
        Rows to predict, with every feature column named in ``coefficients``.
    coefficients : mapping
        ``{"intercept": b0, column: b_j, ...}`` (units of the response per unit of the column).

    Returns
    -------
    ndarray
        Predictions in the response's unit; NaN where a feature is missing.

    Examples
    --------
    >>> df = pd.DataFrame({"clay_total_pct": [0.0, 10.0]})
    >>> linear_response(df, {"intercept": 13.0, "clay_total_pct": -0.1}).tolist()
    [13.0, 12.0]
    """
    features = [name for name in coefficients if name != "intercept"]
    missing = [name for name in features if name not in table.columns]
    if missing:
        msg = (
            f"linear hardness model needs columns {missing}, missing from the table "
            f"(has {len(table.columns)} columns); run the mineralogy step first"
        )
        raise InputDataError(msg)
    out = np.full(len(table), float(coefficients.get("intercept", 0.0)))
    for name in features:
        out = out + float(coefficients[name]) * table[name].to_numpy(dtype=float)
    return out


def default_hardness(table: pd.DataFrame, response: str) -> np.ndarray:
    """Default (uncalibrated) hardness prediction for ``response``.

    Parameters
    ----------
    table : DataFrame
        Rows with the mineral group columns.
    response : str
        One of :data:`DEFAULT_HARDNESS_COEFFICIENTS` (``bond_bwi_kwh_t``, ``smc_axb``,
        ``smc_mia_kwh_t``).

    Returns
    -------
    ndarray
        Hardness in the response's unit (through the link of :data:`HARDNESS_LINKS`), floored
        at :data:`HARDNESS_FLOORS`.
    """
    if response not in DEFAULT_HARDNESS_COEFFICIENTS:
        msg = (
            f"unknown hardness response {response!r}; valid names are "
            f"{sorted(DEFAULT_HARDNESS_COEFFICIENTS)} (geomet.forecast.hardness)"
        )
        raise InputDataError(msg)
    values = linear_response(table, DEFAULT_HARDNESS_COEFFICIENTS[response])
    if HARDNESS_LINKS[response] == "log":
        values = np.exp(values)
    return np.maximum(values, HARDNESS_FLOORS[response])
