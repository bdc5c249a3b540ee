"""Prices, costs and discounting for the blend objective (plain functions of per-tonne figures)."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

#: Grams per troy ounce (exact by definition of the troy ounce, 31.1034768 g).
GRAMS_PER_TROY_OZ = 31.1034768
#: Pounds per tonne (1 lb = 0.45359237 kg exactly).
LB_PER_T = 1000.0 / 0.45359237
#: Sulfuric acid is priced per tonne of acid; acid_kg_t is per tonne of ore.
KG_PER_T = 1000.0


@dataclass(frozen=True)
class Economics:
    """Prices and unit costs for the blend value (all money in USD).

    Defaults are round figures of the right order for a porphyry Cu-Au operation (common practice,
    not a forecast): copper 9 000 USD/t (about 4.08 USD/lb), gold 2 000 USD/oz, payables 96.5 % Cu
    and 90 % Au in concentrate, 100 % for leach cathode, mining 2.5, milling 8.0, heap leach 4.0
    and stockpile rehandle 1.2 USD per tonne of ore, sulfuric acid 150 USD/t, 8 % a year discount.
    """

    cu_price_usd_t: float = 9000.0
    au_price_usd_oz: float = 2000.0
    cu_payable_frac: float = 0.965
    au_payable_frac: float = 0.90
    cathode_payable_frac: float = 1.0
    mining_cost_usd_t: float = 2.5
    mill_cost_usd_t: float = 8.0
    leach_cost_usd_t: float = 4.0
    rehandle_cost_usd_t: float = 1.2
    acid_cost_usd_t: float = 150.0
    leach_cu_asol_recovery_frac: float = 0.75
    discount_rate_frac: float = 0.08


def mill_value_usd_t(cu_pct, au_gpt, cu_recovery_frac, au_recovery_frac, economics: Economics):
    """Net value of one tonne of ore fed to the concentrator [USD/t].

    Notes
    -----
    :math:`v = \\frac{g_{Cu}}{100} R_{Cu} p_{Cu} P_{Cu} + \\frac{g_{Au}}{31.1035} R_{Au} p_{Au}
    P_{Au} - c_{mill}`, with grades g (% and g/t), recoveries R, payables p and prices P.
    """
    e = economics
    cu = np.asarray(cu_pct, float) / 100.0 * cu_recovery_frac * e.cu_payable_frac * e.cu_price_usd_t
    au = (
        np.asarray(au_gpt, float)
        / GRAMS_PER_TROY_OZ
        * au_recovery_frac
        * e.au_payable_frac
        * e.au_price_usd_oz
    )
    return cu + au - e.mill_cost_usd_t


def leach_value_usd_t(cu_asol_pct, acid_kg_t, economics: Economics):
    """Net value of one tonne of ore placed on the leach pad [USD/t].

    Notes
    -----
    :math:`v = \\frac{g_{asol}}{100} R_{asol} p_{cath} P_{Cu} - \\frac{a}{1000} P_{acid}
    - c_{leach}`: acid-soluble copper g_asol [%] recovered at R_asol, acid consumption a [kg/t].
    """
    e = economics
    cu = (
        np.asarray(cu_asol_pct, float)
        / 100.0
        * e.leach_cu_asol_recovery_frac
        * e.cathode_payable_frac
        * e.cu_price_usd_t
    )
    return cu - np.asarray(acid_kg_t, float) / KG_PER_T * e.acid_cost_usd_t - e.leach_cost_usd_t


def discount_factors(days, rate_frac: float) -> np.ndarray:
    """End-of-period discount factors from period lengths.

    Parameters
    ----------
    days : array of float
        Length of each period, in schedule order [d].
    rate_frac : float
        Annual discount rate [fraction].

    Returns
    -------
    ndarray
        :math:`d_t = (1 + r)^{-Y_t}` with :math:`Y_t` the years (365.25 d) elapsed at the end of
        period t.

    Examples
    --------
    >>> discount_factors([365.25, 365.25], 0.1).round(6).tolist()
    [0.909091, 0.826446]
    """
    years = np.cumsum(np.asarray(days, dtype=float)) / 365.25
    return (1.0 + rate_frac) ** (-years)
