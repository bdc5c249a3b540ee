"""Mill throughput: power-limited rate and the handling penalty of clay-rich feed.

References
----------
.. [1] Bond, F.C. (1952). The third theory of comminution. *Trans. AIME* 193, 484-494
   (specific energy, from which the power-limited rate follows).
.. [2] Zhang, M. & Peng, Y. (2015). Effect of clay minerals on pulp rheology and the flotation of
   copper and gold minerals. *Minerals Engineering* 70, 8-13.
   https://doi.org/10.1016/j.mineng.2014.08.013 (swelling clays raise slurry viscosity most).
"""

from __future__ import annotations

import numpy as np

from geomet.errors import InputDataError

#: Default parameters of :func:`clay_penalty_frac`. No universal published threshold exists for
#: throughput lost to sticky, clay-rich feed (blinded screens, hung-up chutes, viscous slurry):
#: these values are stated assumptions, to be replaced by site calibration against plant data.
DEFAULT_CLAY_PENALTY: dict[str, float] = {
    "max_loss_frac": 0.35,  # assumption: worst case, a third of the power-limited rate lost
    "midpoint_idx": 25.0,  # assumption: half the worst loss at 25 wt%-equivalent weighted clay
    "slope_per_idx": 0.15,  # assumption: steepness of the logistic [1/index unit]
    "swelling_weight": 2.0,  # assumption: 1 % smectite counts as 2 more index units
}


def power_limited_throughput_tph(mill_power_kw, utilisation_frac, specific_energy_kwh_t):
    """Throughput that the installed mill power allows.

    Parameters
    ----------
    mill_power_kw : float or ndarray
        Installed (or available pinion) mill power [kW].
    utilisation_frac : float or ndarray
        Fraction of that power drawn on average [fraction, 0-1].
    specific_energy_kwh_t : float, ndarray or Series
        Specific grinding energy of the ore [kWh/t].

    Returns
    -------
    float, ndarray or Series
        Throughput [t/h]; NaN where the specific energy is missing.

    Notes
    -----
    Q = P u / W (definition of specific energy; Bond 1952).

    Examples
    --------
    >>> float(power_limited_throughput_tph(20_000.0, 0.9, 15.0))
    1200.0
    """
    u = np.asarray(utilisation_frac, dtype=float)
    if np.any((u <= 0) | (u > 1)):
        msg = f"utilisation_frac must be in (0, 1]; got {utilisation_frac!r}"
        raise InputDataError(msg)
    if np.any(np.asarray(mill_power_kw, dtype=float) <= 0):
        msg = f"mill_power_kw must be positive; got {mill_power_kw!r}"
        raise InputDataError(msg)
    return mill_power_kw * utilisation_frac / specific_energy_kwh_t


def clay_penalty_frac(
    clay_severity_idx,
    clay_swelling_pct,
    *,
    max_loss_frac=DEFAULT_CLAY_PENALTY["max_loss_frac"],
    midpoint_idx=DEFAULT_CLAY_PENALTY["midpoint_idx"],
    slope_per_idx=DEFAULT_CLAY_PENALTY["slope_per_idx"],
    swelling_weight=DEFAULT_CLAY_PENALTY["swelling_weight"],
):
    """Fraction of the power-limited throughput lost to handling clay-rich feed.

    Parameters
    ----------
    clay_severity_idx : float, ndarray or Series
        Weighted clay index [wt%-equivalent] (minerals package).
    clay_swelling_pct : float, ndarray or Series
        Swelling clay (smectite) [wt%].
    max_loss_frac, midpoint_idx, slope_per_idx, swelling_weight : float, keyword-only
        Logistic parameters (:data:`DEFAULT_CLAY_PENALTY`, stated assumptions).

    Returns
    -------
    float, ndarray or Series
        Penalty [fraction, 0 to ``max_loss_frac``]; 0 for clay-free ore.

    Notes
    -----
    A logistic in the clay load z = clay_severity_idx + w · clay_swelling_pct, shifted so that
    clay-free ore loses nothing:

        p(z) = p_max (σ(z) − σ(0)) / (1 − σ(0)),  σ(z) = 1 / (1 + exp(−s (z − z50)))

    The form is a modelling choice (no published universal curve exists); calibrate the four
    parameters to plant records. Negative clay values are treated as zero.

    Examples
    --------
    >>> float(clay_penalty_frac(0.0, 0.0))
    0.0
    >>> round(float(clay_penalty_frac(25.0, 0.0)), 4)
    0.1709
    """
    if not 0.0 <= max_loss_frac < 1.0:
        msg = f"clay penalty max_loss_frac must be in [0, 1); got {max_loss_frac!r}"
        raise InputDataError(msg)
    if slope_per_idx <= 0:
        msg = f"clay penalty slope_per_idx must be positive; got {slope_per_idx!r}"
        raise InputDataError(msg)
    z = np.maximum(clay_severity_idx, 0.0) + swelling_weight * np.maximum(clay_swelling_pct, 0.0)
    sigma0 = 1.0 / (1.0 + np.exp(slope_per_idx * midpoint_idx))
    sigma = 1.0 / (1.0 + np.exp(-slope_per_idx * (z - midpoint_idx)))
    return max_loss_frac * (sigma - sigma0) / (1.0 - sigma0)


def clay_limited_throughput(power_limited_tph, penalty_frac):
    """Throughput after the clay handling penalty and the throughput it loses.

    Parameters
    ----------
    power_limited_tph : float, ndarray or Series
        Throughput allowed by mill power for the same ore without clay handling trouble [t/h].
    penalty_frac : float, ndarray or Series
        Clay penalty [fraction] from :func:`clay_penalty_frac`.

    Returns
    -------
    tuple
        (throughput_tph, throughput_clay_loss_tph, energy_factor): the rate achieved, the rate
        lost, and 1/(1 − p), the factor by which the mill's energy per tonne rises when the
        same power is spread over fewer tonnes.

    Notes
    -----
    Q = Q_power (1 − p); loss = Q_power p; equivalent energy W' = W / (1 − p).

    Examples
    --------
    >>> clay_limited_throughput(1000.0, 0.2)
    (800.0, 200.0, 1.25)
    """
    tph = power_limited_tph * (1.0 - penalty_frac)
    return tph, power_limited_tph - tph, 1.0 / (1.0 - penalty_frac)
