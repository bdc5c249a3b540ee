"""Specific grinding energy: Bond's third law with Rowland's efficiency factors, and Morrell's
SMC-based method.

Every function takes floats, numpy arrays or pandas Series (same shape out as in; a Series keeps
its index). Sizes are 80 % passing sizes in micrometres, energies in kWh per metric tonne.

References
----------
.. [1] Bond, F.C. (1952). The third theory of comminution. *Transactions of the American
   Institute of Mining Engineers* 193, 484-494.
.. [2] Rowland, C.A. & Kjos, D.M. (1980). Rod and ball mills. In Mular, A.L. & Bhappu, R.B.
   (eds), *Mineral Processing Plant Design*, 2nd ed., SME-AIME, New York, 239-278.
.. [3] Morrell, S. (2004). Predicting the specific energy of autogenous and semi-autogenous mills
   from small diameter drill core samples. *Minerals Engineering* 17(3), 447-451.
   https://doi.org/10.1016/j.mineng.2003.10.019
.. [4] Morrell, S. (2009). Predicting the overall specific energy requirement of crushing, high
   pressure grinding roll and tumbling mill circuits. *Minerals Engineering* 22(6), 544-549.
   https://doi.org/10.1016/j.mineng.2008.12.003
"""

from __future__ import annotations

import numpy as np

from geomet.errors import InputDataError

#: Size separating Morrell's coarse (Mia) and fine (Mib) grinding stages [µm] (Morrell 2009).
MORRELL_STAGE_BOUNDARY_UM = 750.0

#: Factor K of Morrell (2009): 1.0 for circuits without a recycle pebble crusher, 0.95 with one.
MORRELL_K = {"no_pebble_crusher": 1.0, "pebble_crusher": 0.95}


def _check_sizes(f80_um, p80_um, where: str) -> None:
    f = np.asarray(f80_um, dtype=float)
    p = np.asarray(p80_um, dtype=float)
    bad = (p <= 0) | (f <= p)
    if np.any(bad):
        msg = f"{where}: sizes must satisfy f80_um > p80_um > 0; got f80_um={f!r}, p80_um={p!r}"
        raise InputDataError(msg)


def bond_specific_energy(work_index_kwh_t, f80_um, p80_um):
    """Specific grinding energy by Bond's third law.

    Parameters
    ----------
    work_index_kwh_t : float, ndarray or Series
        Bond work index Wi [kWh/t].
    f80_um : float or ndarray
        80 % passing size of the feed [µm].
    p80_um : float or ndarray
        80 % passing size of the product [µm].

    Returns
    -------
    float, ndarray or Series
        Specific energy W [kWh/t].

    Notes
    -----
    W = 10 Wi (1/√P80 − 1/√F80)  (Bond 1952 [1]_, the third theory).

    References
    ----------
    .. [1] Bond, F.C. (1952). The third theory of comminution. *Trans. AIME* 193, 484-494.

    Examples
    --------
    >>> round(float(bond_specific_energy(14.0, 10_000.0, 100.0)), 3)
    12.6
    """
    _check_sizes(f80_um, p80_um, "bond_specific_energy")
    return 10.0 * work_index_kwh_t * (1.0 / np.sqrt(p80_um) - 1.0 / np.sqrt(f80_um))


def rowland_ef3_diameter(mill_diameter_m):
    """Rowland's efficiency factor EF3 for mill diameter.

    Parameters
    ----------
    mill_diameter_m : float or ndarray
        Mill diameter inside the liners [m].

    Returns
    -------
    float or ndarray
        EF3 [dimensionless]; multiply Bond's energy by it.

    Notes
    -----
    EF3 = (2.44 / D)^0.2 for D < 3.81 m and 0.914 for larger mills (Rowland & Kjos 1980 [1]_;
    formula from memory, not re-checked against the chapter). The base diameter 2.44 m (8 ft)
    is that of Bond's reference mill.

    References
    ----------
    .. [1] Rowland, C.A. & Kjos, D.M. (1980). Rod and ball mills. In *Mineral Processing Plant
       Design*, 2nd ed., SME-AIME.

    Examples
    --------
    >>> round(rowland_ef3_diameter(3.0), 4), rowland_ef3_diameter(5.5)
    (0.9595, 0.914)
    """
    d = np.asarray(mill_diameter_m, dtype=float)
    if np.any(d <= 0):
        msg = f"rowland_ef3_diameter: mill_diameter_m must be positive; got {d!r}"
        raise InputDataError(msg)
    out = np.where(d < 3.81, (2.44 / d) ** 0.2, 0.914)
    return float(out) if out.ndim == 0 else out


def rowland_optimum_feed_um(work_index_kwh_t):
    """Rowland's optimum ball-mill feed size F0 [µm]: F0 = 4000 √(13 / Wi) (from memory)."""
    return 4000.0 * np.sqrt(13.0 / np.asarray(work_index_kwh_t, dtype=float))


def rowland_ef4_oversize(work_index_kwh_t, f80_um, p80_um):
    """Rowland's efficiency factor EF4 for ball-mill feed coarser than the optimum.

    Parameters
    ----------
    work_index_kwh_t : float, ndarray or Series
        Bond ball-mill work index Wi [kWh/t].
    f80_um, p80_um : float or ndarray
        Feed and product 80 % passing sizes [µm].

    Returns
    -------
    float or ndarray
        EF4 [dimensionless] (1 where the feed is not oversize).

    Notes
    -----
    With reduction ratio Rr = F80/P80 and optimum feed size F0 = 4000 √(13/Wi):
    EF4 = (Rr + (Wi − 7)(F80 − F0)/F0) / Rr when F80 > F0, else 1 (Rowland & Kjos 1980;
    from memory). Rowland computes F0 with the rod-mill Wi when one is measured; here the ball
    Wi stands in for it.

    Examples
    --------
    >>> round(float(rowland_ef4_oversize(14.0, 10_000.0, 100.0)), 4)
    1.1116
    """
    _check_sizes(f80_um, p80_um, "rowland_ef4_oversize")
    wi = np.asarray(work_index_kwh_t, dtype=float)
    f = np.asarray(f80_um, dtype=float)
    rr = f / np.asarray(p80_um, dtype=float)
    f0 = rowland_optimum_feed_um(wi)
    ef4 = (rr + (wi - 7.0) * (f - f0) / f0) / rr
    return np.where(f > f0, ef4, 1.0)


def rowland_ef5_fineness(p80_um):
    """Rowland's efficiency factor EF5 for grinding finer than 75 µm.

    Parameters
    ----------
    p80_um : float or ndarray
        Product 80 % passing size [µm].

    Returns
    -------
    float or ndarray
        EF5 [dimensionless] (1 for P80 ≥ 75 µm).

    Notes
    -----
    EF5 = (P80 + 10.3) / (1.145 P80) for P80 < 75 µm (Rowland & Kjos 1980; from memory).
    At 75 µm the formula gives 0.993, so it is applied only below that size.

    Examples
    --------
    >>> round(float(rowland_ef5_fineness(40.0)), 4)
    1.0983
    """
    p = np.asarray(p80_um, dtype=float)
    if np.any(p <= 0):
        msg = f"rowland_ef5_fineness: p80_um must be positive; got {p!r}"
        raise InputDataError(msg)
    return np.where(p < 75.0, (p + 10.3) / (1.145 * p), 1.0)


def bond_ball_mill_energy(work_index_kwh_t, f80_um, p80_um, *, mill_diameter_m=None):
    """Bond specific energy of a wet overflow ball mill in closed circuit, with Rowland's EF3
    (diameter), EF4 (oversize feed) and EF5 (fineness) applied.

    Parameters
    ----------
    work_index_kwh_t : float, ndarray or Series
        Bond ball-mill work index [kWh/t].
    f80_um, p80_um : float
        Feed and product 80 % passing sizes [µm].
    mill_diameter_m : float, optional
        Mill diameter inside liners [m]; EF3 is 1 when not given.

    Returns
    -------
    float, ndarray or Series
        Specific energy [kWh/t] at the mill pinion.

    Notes
    -----
    W = 10 Wi (1/√P80 − 1/√F80) · EF3 · EF4 · EF5 (Bond 1952; Rowland & Kjos 1980).
    Rowland's other factors (EF1 dry grinding, EF2 open circuit, EF6-EF8 rod milling and low
    reduction ratio) do not apply to a wet closed-circuit ball mill and are left out.

    Examples
    --------
    >>> round(float(bond_ball_mill_energy(14.0, 750.0, 150.0)), 3)
    6.319
    """
    w = bond_specific_energy(work_index_kwh_t, f80_um, p80_um)
    # EF4 applies only where F80 > F0 = 4000 √(13/Wi), i.e. Wi > 13 (4000/F80)²: skip the
    # per-row work when no row reaches that.
    wi_max = np.nanmax(np.asarray(work_index_kwh_t, dtype=float), initial=-np.inf)
    oversize = np.any(np.asarray(f80_um) > rowland_optimum_feed_um(max(wi_max, 1e-9)))
    ef4 = rowland_ef4_oversize(work_index_kwh_t, f80_um, p80_um) if oversize else 1.0
    factor = ef4 * rowland_ef5_fineness(p80_um)
    if mill_diameter_m is not None:
        factor = factor * rowland_ef3_diameter(mill_diameter_m)
    return w * factor


def morrell_size_exponent(size_um):
    """Morrell's size-dependent exponent f(x) = −(0.295 + x / 10⁶), x in µm (Morrell 2004)."""
    return -(0.295 + np.asarray(size_um, dtype=float) / 1.0e6)


def morrell_stage_energy(m_index_kwh_t, x1_um, x2_um, *, k=1.0):
    """Specific energy of one grinding stage by Morrell's size-dependent work-index equation.

    Parameters
    ----------
    m_index_kwh_t : float, ndarray or Series
        Work index of the stage: Mia (coarse) or Mib (fine) [kWh/t].
    x1_um : float or ndarray
        Stage feed 80 % passing size [µm].
    x2_um : float or ndarray
        Stage product 80 % passing size [µm].
    k : float, keyword-only
        Circuit factor K (1.0 without, 0.95 with a recycle pebble crusher; Morrell 2009).

    Returns
    -------
    float, ndarray or Series
        Specific energy [kWh/t].

    Notes
    -----
    W = K · M · 4 · (x2^f(x2) − x1^f(x1)), x1 feed and x2 product, f(x) = −(0.295 + x/10⁶)
    (Morrell 2004, eq. 2;
    Morrell 2009, eqs 1-3; equation numbers from memory).

    Examples
    --------
    Coarse stage, Mia 20 kWh/t, F80 100 mm to 750 µm (hand arithmetic):

    >>> round(float(morrell_stage_energy(20.0, 100_000.0, 750.0)), 3)
    10.445
    """
    _check_sizes(x1_um, x2_um, "morrell_stage_energy")
    x1 = np.asarray(x1_um, dtype=float)
    x2 = np.asarray(x2_um, dtype=float)
    size_term = x2 ** morrell_size_exponent(x2) - x1 ** morrell_size_exponent(x1)
    return k * m_index_kwh_t * 4.0 * size_term


def morrell_specific_energy(mia_kwh_t, mib_kwh_t, f80_um, p80_um, *, k=1.0):
    """Tumbling-mill specific energy by Morrell's method: coarse (Mia) plus fine (Mib) stages.

    Parameters
    ----------
    mia_kwh_t : float, ndarray or Series
        Coarse-stage work index Mia from the SMC test [kWh/t].
    mib_kwh_t : float, ndarray or Series
        Fine-stage work index Mib [kWh/t].
    f80_um : float
        Feed 80 % passing size of the primary mill [µm] (greater than 750 µm).
    p80_um : float
        Circuit product 80 % passing size [µm] (less than 750 µm).
    k : float, keyword-only
        Circuit factor K of Morrell (2009).

    Returns
    -------
    float, ndarray or Series
        Wa + Wb [kWh/t].

    Notes
    -----
    Wa = K Mia 4 (750^f(750) − F80^f(F80)), Wb = Mib 4 (P80^f(P80) − 750^f(750))
    (Morrell 2009). K applies to the coarse stage only.

    Examples
    --------
    >>> round(float(morrell_specific_energy(20.0, 18.0, 100_000.0, 150.0)), 3)
    16.69
    """
    boundary = MORRELL_STAGE_BOUNDARY_UM
    if np.any(np.asarray(f80_um) <= boundary) or np.any(np.asarray(p80_um) >= boundary):
        msg = (
            "morrell_specific_energy: needs f80_um > 750 > p80_um (the coarse/fine boundary); "
            f"got f80_um={f80_um!r}, p80_um={p80_um!r}"
        )
        raise InputDataError(msg)
    coarse = morrell_stage_energy(mia_kwh_t, f80_um, boundary, k=k)
    fine = morrell_stage_energy(mib_kwh_t, boundary, p80_um)
    return coarse + fine
