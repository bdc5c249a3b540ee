"""Rougher flotation: kinetic recovery models, mineralogy-driven Cu and Au recovery, and the
concentrate Cu grade of the recovered minerals.

Kinetic models (published forms): first order (García-Zúñiga 1935), Klimpel's rectangular
distribution of rate constants (Klimpel 1980) and N equal perfectly mixed cells (reviewed by
Polat & Chander 2000). The mineralogy response (R∞ and k by copper mineral, clay penalties, head
grade) uses stated default coefficients — assumptions in the direction the literature reports,
to be fitted to testwork with :class:`geomet.forecast.calibration.KineticRecoveryModel`.

References
----------
.. [1] García-Zúñiga, H. (1935). La eficiencia de la flotación es una función exponencial del
   tiempo. *Boletín Minero de la Sociedad Nacional de Minería* (Chile) 47, 83-86.
.. [2] Klimpel, R.R. (1980). Selection of chemical reagents for flotation. In Mular, A.L. &
   Bhappu, R.B. (eds), *Mineral Processing Plant Design*, 2nd ed., SME-AIME, 907-934.
.. [3] Polat, M. & Chander, S. (2000). First-order flotation kinetics models and methods for
   estimation of the true distribution of flotation rate constants. *International Journal of
   Mineral Processing* 58, 145-166. https://doi.org/10.1016/S0301-7516(99)00069-1
.. [4] Zhang, M. & Peng, Y. (2015). Effect of clay minerals on pulp rheology and the flotation of
   copper and gold minerals. *Minerals Engineering* 70, 8-13.
   https://doi.org/10.1016/j.mineng.2014.08.013
.. [5] Ndlovu, B., Farrokhpay, S. & Bradshaw, D. (2013). The effect of phyllosilicate minerals on
   mineral processing industry. *International Journal of Mineral Processing* 125, 149-156.
   https://doi.org/10.1016/j.minpro.2013.09.011
"""

from __future__ import annotations

from collections.abc import Mapping
from functools import cache

import numpy as np
import pandas as pd

from geomet.errors import InputDataError
from geomet.minerals.formula import element_mass_fractions

KINETIC_MODELS = ("first_order", "klimpel", "n_cell")

#: Formulas of the copper minerals (ideal end members) and pyrite used for concentrate mass.
COPPER_MINERAL_FORMULAS: dict[str, str] = {
    "chalcopyrite": "CuFeS2",
    "bornite": "Cu5FeS4",
    "chalcocite": "Cu2S",
    "covellite": "CuS",
}
OXIDE_COPPER_FORMULA = "Cu2CO3(OH)2"  # malachite stands for the acid-soluble Cu minerals
PYRITE_FORMULA = "FeS2"

#: Default Cu flotation response (rougher, laboratory scale). Assumptions, not published values:
#: supergene sulfides float faster than chalcopyrite; swelling clay (smectite) cuts recovery
#: most, kaolinite less, illite least (Zhang & Peng 2015; Ndlovu et al. 2013); viscous
#: clay-rich pulp slows flotation; low-grade feed loses recovery to a near-constant tail grade.
DEFAULT_CU_FLOTATION: dict = {
    "r_inf": {"chalcopyrite": 0.95, "bornite": 0.94, "chalcocite": 0.92, "covellite": 0.93},
    "k_per_min": {"chalcopyrite": 0.8, "bornite": 1.0, "chalcocite": 1.2, "covellite": 1.1},
    "r_inf_scale": 1.0,  # calibrated multiplier on every R∞
    "k_scale": 1.0,  # calibrated multiplier on every k
    "swelling_per_pct": 0.015,  # R∞ × exp(−Σ a_c clay_c)
    "kaolin_per_pct": 0.004,
    "illite_per_pct": 0.001,
    # Pulp viscosity slows flotation: k × exp(−(b_s S + b_k K + b_i I) − b · clay_severity_idx).
    # Each clay group has its own rate effect (smectite thickens a pulp far more than kaolinite,
    # illite/white mica least; Zhang & Peng 2015; Ndlovu et al. 2013), so a calibration does not
    # depend on the weights chosen for the severity index; the index term (default off) is for
    # sites whose index weights were calibrated on their own rheology.
    "k_swelling_per_pct": 0.02,
    "k_kaolin_per_pct": 0.006,
    "k_illite_per_pct": 0.0,
    "k_severity_per_idx": 0.0,
    "head_half_pct": 0.01,  # R∞ × g/(g + g½), g the Cu head grade
    "oxide_recovery_frac": 0.15,  # acid-soluble Cu floats poorly without sulfidisation
}

#: Default Au flotation response (gold carried with the sulfides). Assumptions; calibrate.
DEFAULT_AU_FLOTATION: dict = {
    "r_inf": 0.85,
    "k_per_min": 0.7,
    "r_inf_scale": 1.0,
    "k_scale": 1.0,
    "swelling_per_pct": 0.02,
    "kaolin_per_pct": 0.005,
    "illite_per_pct": 0.001,
    "k_swelling_per_pct": 0.02,
    "k_kaolin_per_pct": 0.006,
    "k_illite_per_pct": 0.0,
    "k_severity_per_idx": 0.0,
    "head_half_gpt": 0.01,
    "oxide_loss_per_frac": 0.3,  # R∞ × (1 − c · oxide_ratio_frac): Au locked in iron oxides
}

#: Default concentrate mass model. Assumptions; calibrate on rougher concentrate grades.
DEFAULT_CONCENTRATE: dict = {
    "pyrite_recovery_frac": 0.25,  # rougher pyrite recovery, scaled by the clay factor
    "gangue_entrainment_frac": 0.03,  # fraction of non-sulfide gangue reporting by entrainment
    "kaolin_entrainment_per_pct": 0.03,  # kaolinite stabilises froth: more entrainment
}


def _check_model(model: str, n_cells: int) -> None:
    if model not in KINETIC_MODELS:
        msg = f"unknown flotation kinetic model {model!r}; valid names are {list(KINETIC_MODELS)}"
        raise InputDataError(msg)
    if model == "n_cell" and n_cells < 1:
        msg = f"n_cell flotation model needs n_cells >= 1; got {n_cells!r}"
        raise InputDataError(msg)


def first_order_recovery(r_inf_frac, k_per_min, time_min):
    """Batch first-order flotation recovery.

    Parameters
    ----------
    r_inf_frac : float, ndarray or Series
        Ultimate recovery R∞ [fraction].
    k_per_min : float, ndarray or Series
        Rate constant k [1/min].
    time_min : float or ndarray
        Flotation time t [min].

    Returns
    -------
    float, ndarray or Series
        Recovery R [fraction].

    Notes
    -----
    R = R∞ (1 − e^(−k t))  (García-Zúñiga 1935).

    Examples
    --------
    >>> round(float(first_order_recovery(0.9, 0.5, 2.0)), 6)
    0.568909
    """
    return r_inf_frac * -np.expm1(-k_per_min * time_min)  # 1 − e^(−kt), accurate at small kt


def klimpel_recovery(r_inf_frac, k_per_min, time_min):
    """Batch flotation recovery with Klimpel's rectangular distribution of rate constants.

    Parameters
    ----------
    r_inf_frac : float, ndarray or Series
        Ultimate recovery R∞ [fraction].
    k_per_min : float, ndarray or Series
        Maximum rate constant k of the rectangular distribution on [0, k] [1/min].
    time_min : float or ndarray
        Flotation time t [min] (positive).

    Returns
    -------
    float, ndarray or Series
        Recovery R [fraction].

    Notes
    -----
    R = R∞ [1 − (1 − e^(−k t)) / (k t)]  (Klimpel 1980). The limit k t → 0 is 0.

    Examples
    --------
    >>> round(float(klimpel_recovery(0.9, 0.5, 2.0)), 6)
    0.331091
    """
    kt = np.asarray(k_per_min * time_min, dtype=float)
    safe = np.where(kt > 1e-12, kt, 1.0)
    limit = np.where(np.isnan(kt), np.nan, 0.0)  # kt -> 0 gives 0; missing stays missing
    frac = np.where(kt > 1e-12, 1.0 - (-np.expm1(-safe)) / safe, limit)
    out = r_inf_frac * frac
    series = next((a for a in (r_inf_frac, k_per_min, time_min) if isinstance(a, pd.Series)), None)
    if series is not None:
        return pd.Series(np.asarray(out, dtype=float), index=series.index)
    return float(out) if np.ndim(out) == 0 else out


def n_cell_recovery(r_inf_frac, k_per_min, time_min, *, n_cells=6):
    """Continuous recovery in a bank of N equal perfectly mixed cells.

    Parameters
    ----------
    r_inf_frac : float, ndarray or Series
        Ultimate recovery R∞ [fraction].
    k_per_min : float, ndarray or Series
        First-order rate constant k [1/min].
    time_min : float or ndarray
        Total mean residence time of the bank [min]; each cell holds τ = t/N.
    n_cells : int, keyword-only
        Number of cells N.

    Returns
    -------
    float, ndarray or Series
        Recovery R [fraction].

    Notes
    -----
    R = R∞ [1 − (1 + k τ)^(−N)] (perfect mixing in each cell; Polat & Chander 2000). As
    N → ∞ it tends to the batch first-order form.

    Examples
    --------
    >>> round(float(n_cell_recovery(0.9, 0.5, 2.0, n_cells=1)), 6)
    0.45
    """
    _check_model("n_cell", n_cells)
    tau = time_min / n_cells
    return r_inf_frac * (1.0 - (1.0 + k_per_min * tau) ** (-n_cells))


def kinetic_recovery(r_inf_frac, k_per_min, time_min, *, model="first_order", n_cells=6):
    """Recovery by the kinetic ``model`` named (one of :data:`KINETIC_MODELS`)."""
    _check_model(model, n_cells)
    if model == "first_order":
        return first_order_recovery(r_inf_frac, k_per_min, time_min)
    if model == "klimpel":
        return klimpel_recovery(r_inf_frac, k_per_min, time_min)
    return n_cell_recovery(r_inf_frac, k_per_min, time_min, n_cells=n_cells)


def clay_recovery_factor(
    clay_swelling_pct,
    clay_kaolin_pct,
    white_mica_illite_pct,
    *,
    swelling_per_pct,
    kaolin_per_pct,
    illite_per_pct,
):
    """Multiplier on R∞ for clay in the feed: exp(−(a_s S + a_k K + a_i I)), in (0, 1].

    Parameters
    ----------
    clay_swelling_pct, clay_kaolin_pct, white_mica_illite_pct : float, ndarray or Series
        Smectite, kaolin-group and illite / white mica [wt%]; negative values count as 0.
    swelling_per_pct, kaolin_per_pct, illite_per_pct : float, keyword-only
        Sensitivities a_s ≥ a_k ≥ a_i [1/wt%] (defaults in :data:`DEFAULT_CU_FLOTATION`).

    Returns
    -------
    float, ndarray or Series
        Factor [fraction].
    """
    load = (
        swelling_per_pct * np.maximum(clay_swelling_pct, 0.0)
        + kaolin_per_pct * np.maximum(clay_kaolin_pct, 0.0)
        + illite_per_pct * np.maximum(white_mica_illite_pct, 0.0)
    )
    return np.exp(-load)


def clay_rate_factor(
    clay_swelling_pct,
    clay_kaolin_pct,
    white_mica_illite_pct,
    clay_severity_idx,
    params: Mapping,
):
    """Multiplier on the flotation rate constant for clay in the pulp, in (0, 1].

    Parameters
    ----------
    clay_swelling_pct, clay_kaolin_pct, white_mica_illite_pct : float, ndarray or Series
        Smectite, kaolin-group and illite / white mica [wt%]; negative values count as 0.
    clay_severity_idx : float, ndarray or Series
        Weighted clay index [wt%-equivalent].
    params : mapping
        ``k_swelling_per_pct``, ``k_kaolin_per_pct``, ``k_illite_per_pct`` [1/wt%] and
        ``k_severity_per_idx`` [1/index unit] (missing keys count as 0).

    Returns
    -------
    float or ndarray
        exp(−(b_s S + b_k K + b_i I + b C)).

    Notes
    -----
    Clay-rich pulps are viscous and slow bubble-particle collection (Zhang & Peng 2015;
    Ndlovu et al. 2013); the exponential keeps the factor positive and equals 1 without clay.
    """
    load = (
        params.get("k_swelling_per_pct", 0.0) * np.maximum(clay_swelling_pct, 0.0)
        + params.get("k_kaolin_per_pct", 0.0) * np.maximum(clay_kaolin_pct, 0.0)
        + params.get("k_illite_per_pct", 0.0) * np.maximum(white_mica_illite_pct, 0.0)
        + params.get("k_severity_per_idx", 0.0) * np.maximum(clay_severity_idx, 0.0)
    )
    return np.exp(-load)


@cache
def copper_fraction(formula: str) -> float:
    """Cu mass fraction of a formula [fraction] (from :mod:`geomet.minerals.formula`)."""
    return element_mass_fractions(formula).get("Cu", 0.0)


def copper_mineral_shares(cu_mineral_pct: Mapping[str, object] | None, n: int) -> dict:
    """Share of the sulfide Cu carried by each copper mineral [fraction, rows sum to 1].

    Parameters
    ----------
    cu_mineral_pct : mapping or None
        Mineral name (keys of :data:`COPPER_MINERAL_FORMULAS`) -> abundance [wt%].
        Rows with no copper mineral (or ``None``) are taken as all chalcopyrite.
    n : int
        Number of rows.

    Returns
    -------
    dict
        Mineral name -> share of sulfide Cu [fraction].
    """
    cu_mineral_pct = dict(cu_mineral_pct or {})
    unknown = sorted(set(cu_mineral_pct) - set(COPPER_MINERAL_FORMULAS))
    if unknown:
        msg = (
            f"unknown copper mineral(s) {unknown}; valid names are "
            f"{sorted(COPPER_MINERAL_FORMULAS)} (geomet.forecast.flotation)"
        )
        raise InputDataError(msg)
    cu = {
        m: np.fmax(np.asarray(v, dtype=float), 0.0) * copper_fraction(COPPER_MINERAL_FORMULAS[m])
        for m, v in cu_mineral_pct.items()
    }
    total = sum(cu.values()) if cu else np.zeros(n)
    total = np.broadcast_to(np.asarray(total, dtype=float), (n,))
    none = total <= 0
    safe = np.where(none, 1.0, total)
    shares = {m: np.where(none, 0.0, v / safe) for m, v in cu.items()}
    shares["chalcopyrite"] = shares.get("chalcopyrite", np.zeros(n)) + none
    return shares


def rougher_copper(
    cu_pct,
    cu_asol_pct,
    clay_swelling_pct,
    clay_kaolin_pct,
    white_mica_illite_pct,
    clay_severity_idx,
    *,
    cu_mineral_pct=None,
    pyrite_pct=0.0,
    time_min=10.0,
    model="first_order",
    n_cells=6,
    params=None,
    concentrate=None,
):
    """Rougher Cu recovery and concentrate grade from mineralogy and head grade.

    Parameters
    ----------
    cu_pct, cu_asol_pct : float, ndarray or Series
        Total and acid-soluble (oxide) Cu head grades [%].
    clay_swelling_pct, clay_kaolin_pct, white_mica_illite_pct : float, ndarray or Series
        Clay groups [wt%].
    clay_severity_idx : float, ndarray or Series
        Weighted clay index [wt%-equivalent]; slows flotation through pulp viscosity.
    cu_mineral_pct : mapping, keyword-only
        Copper sulfide abundances [wt%] by mineral; they set the sulfide mix, the assay sets
        the sulfide Cu grade. Missing: all chalcopyrite.
    pyrite_pct : float or array, keyword-only
        Pyrite [wt%], for the concentrate mass.
    time_min : float, keyword-only
        Flotation time [min] (laboratory-equivalent).
    model, n_cells : keyword-only
        Kinetic model (:data:`KINETIC_MODELS`) and cells for ``"n_cell"``.
    params, concentrate : dict, keyword-only
        Overrides of :data:`DEFAULT_CU_FLOTATION` and :data:`DEFAULT_CONCENTRATE`.

    Returns
    -------
    dict
        ``cu_recovery_frac``, ``conc_cu_pct`` and ``mass_pull_frac`` (arrays).

    Notes
    -----
    For each copper mineral m with Cu share w_m of the sulfide Cu g_s = cu_pct − cu_asol_pct,
    with the clay factor φ = exp(−(a_s S + a_k K + a_i I)) and the head-grade factor
    h = g / (g + g½) on the total Cu grade g (a near-constant tail grade):

        R∞_m = s_R R∞⁰_m φ h,   k_m = s_k k⁰_m ψ,   R_m = kinetic(R∞_m, k_m, t)

    with the clay rate factor ψ = exp(−(b_s S + b_k K + b_i I + b C)) (:func:`clay_rate_factor`)

    and R_Cu = (g_s Σ w_m R_m + g_ox r_ox φ h) / g. The concentrate carries the recovered copper
    minerals (mass g_s w_m / c_m with c_m the mineral's Cu fraction), recovered oxide Cu as
    malachite, pyrite at r_py times the clay factor, and entrained gangue e (1 + a_e K) (1 − Σ):

        conc_cu_pct = 100 · cu_pct · R_Cu / (100 · mass pull)

    Examples
    --------
    >>> out = rougher_copper(0.5, 0.0, 0.0, 0.0, 0.0, 0.0, pyrite_pct=2.0)
    >>> round(float(out["cu_recovery_frac"][0]), 4), round(float(out["conc_cu_pct"][0]), 2)
    (0.9311, 9.82)
    """
    p = {**DEFAULT_CU_FLOTATION, **(params or {})}
    c = {**DEFAULT_CONCENTRATE, **(concentrate or {})}
    cu = np.asarray(cu_pct, dtype=float)
    n = cu.size
    cu = cu.reshape(n)
    asol = np.clip(np.asarray(cu_asol_pct, dtype=float).reshape(-1), 0.0, None)
    asol = np.minimum(np.broadcast_to(asol, (n,)), cu)
    sulf = cu - asol
    clay = clay_recovery_factor(
        np.asarray(clay_swelling_pct, dtype=float).reshape(-1),
        np.asarray(clay_kaolin_pct, dtype=float).reshape(-1),
        np.asarray(white_mica_illite_pct, dtype=float).reshape(-1),
        swelling_per_pct=p["swelling_per_pct"],
        kaolin_per_pct=p["kaolin_per_pct"],
        illite_per_pct=p["illite_per_pct"],
    )
    with np.errstate(invalid="ignore", divide="ignore"):
        head = cu / (cu + p["head_half_pct"])
    slow = clay_rate_factor(
        np.asarray(clay_swelling_pct, dtype=float).reshape(-1),
        np.asarray(clay_kaolin_pct, dtype=float).reshape(-1),
        np.asarray(white_mica_illite_pct, dtype=float).reshape(-1),
        np.asarray(clay_severity_idx, dtype=float).reshape(-1),
        p,
    )
    shares = copper_mineral_shares(cu_mineral_pct, n)
    common = p["r_inf_scale"] * clay * head
    r_sulf = np.zeros(n)
    mineral_mass = np.zeros(n)
    recovered_mass = np.zeros(n)
    _check_model(model, n_cells)
    slow_t = slow * time_min  # k t = s_k k⁰_m · (slowdown · t)
    for mineral, share in shares.items():
        if not share.any():
            continue  # mineral absent from every row: contributes nothing
        r_inf = np.minimum(p["r_inf"][mineral] * common, 1.0)
        if model == "first_order":  # inlined: one pass fewer per mineral on large tables
            r_m = r_inf * -np.expm1(-(p["k_scale"] * p["k_per_min"][mineral]) * slow_t)
        else:
            r_m = kinetic_recovery(
                r_inf,
                p["k_scale"] * p["k_per_min"][mineral] * slow,
                time_min,
                model=model,
                n_cells=n_cells,
            )
        cu_m = sulf * share  # sulfide Cu carried by the mineral [%]
        cu_rec = cu_m * r_m  # of it recovered [%]
        r_sulf += cu_rec
        inv_frac = 1.0 / copper_fraction(COPPER_MINERAL_FORMULAS[mineral])
        mineral_mass += cu_m * inv_frac
        recovered_mass += cu_rec * inv_frac
    r_ox = float(np.clip(p["oxide_recovery_frac"], 0.0, 1.0)) * clay * head
    with np.errstate(invalid="ignore", divide="ignore"):
        recovery = np.where(cu > 0, (r_sulf + asol * r_ox) / cu, np.nan)
    ox_mass = asol / copper_fraction(OXIDE_COPPER_FORMULA)
    py = np.fmax(np.asarray(pyrite_pct, dtype=float).reshape(-1), 0.0)
    gangue = np.maximum(100.0 - mineral_mass - ox_mass - py, 0.0)
    kaolin = np.maximum(np.asarray(clay_kaolin_pct, dtype=float).reshape(-1), 0.0)
    entrainment = c["gangue_entrainment_frac"] * (1.0 + c["kaolin_entrainment_per_pct"] * kaolin)
    entrained = gangue * entrainment
    mass_pct = recovered_mass + ox_mass * r_ox + py * c["pyrite_recovery_frac"] * clay + entrained
    with np.errstate(invalid="ignore", divide="ignore"):
        conc = np.where(mass_pct > 0, 100.0 * cu * recovery / mass_pct, np.nan)
    return {
        "cu_recovery_frac": np.clip(recovery, 0.0, 1.0),
        "conc_cu_pct": conc,
        "mass_pull_frac": mass_pct / 100.0,
    }


def cu_recovery_frac(
    cu_pct,
    cu_asol_pct,
    clay_swelling_pct,
    clay_kaolin_pct,
    white_mica_illite_pct,
    clay_severity_idx,
    **kwargs,
):
    """Rougher Cu recovery [fraction] (see :func:`rougher_copper` for the model and keywords).

    Returns the same type as ``cu_pct`` (float, ndarray or Series with its index).

    Examples
    --------
    >>> round(cu_recovery_frac(0.5, 0.25, 0.0, 0.0, 0.0, 0.0), 4)
    0.5391
    """
    out = rougher_copper(
        cu_pct,
        cu_asol_pct,
        clay_swelling_pct,
        clay_kaolin_pct,
        white_mica_illite_pct,
        clay_severity_idx,
        **kwargs,
    )["cu_recovery_frac"]
    return _like(cu_pct, out)


def au_recovery_frac(
    au_gpt,
    clay_swelling_pct,
    clay_kaolin_pct,
    white_mica_illite_pct,
    clay_severity_idx,
    oxide_ratio_frac,
    *,
    time_min=10.0,
    model="first_order",
    n_cells=6,
    params=None,
):
    """Rougher Au recovery from head grade, clay and oxidation.

    Parameters
    ----------
    au_gpt : float, ndarray or Series
        Au head grade [g/t].
    clay_swelling_pct, clay_kaolin_pct, white_mica_illite_pct : float, ndarray or Series
        Clay groups [wt%].
    clay_severity_idx : float, ndarray or Series
        Weighted clay index [wt%-equivalent].
    oxide_ratio_frac : float, ndarray or Series
        Acid-soluble to total Cu [fraction]; oxidised ore carries Au in iron oxides.
    time_min, model, n_cells : keyword-only
        As in :func:`rougher_copper`.
    params : dict, keyword-only
        Overrides of :data:`DEFAULT_AU_FLOTATION`.

    Returns
    -------
    float, ndarray or Series
        Recovery [fraction, 0-1], same type as ``au_gpt``.

    Notes
    -----
    R∞ = s_R R∞⁰ exp(−(a_s S + a_k K + a_i I)) (1 − c_ox · oxide_ratio) · g/(g + g½),
    k = s_k k⁰ ψ with ψ = exp(−(b_s S + b_k K + b_i I + b C)) (:func:`clay_rate_factor`),
    R = kinetic(R∞, k, t). Assumed form with stated defaults.

    Examples
    --------
    >>> round(float(au_recovery_frac(0.5, 0.0, 0.0, 0.0, 0.0, 0.0)), 4)
    0.8326
    """
    p = {**DEFAULT_AU_FLOTATION, **(params or {})}
    au = np.maximum(np.asarray(au_gpt, dtype=float), 0.0)
    clay = clay_recovery_factor(
        clay_swelling_pct,
        clay_kaolin_pct,
        white_mica_illite_pct,
        swelling_per_pct=p["swelling_per_pct"],
        kaolin_per_pct=p["kaolin_per_pct"],
        illite_per_pct=p["illite_per_pct"],
    )
    oxide = np.fmin(np.fmax(np.asarray(oxide_ratio_frac, dtype=float), 0.0), 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        head = au / (au + p["head_half_gpt"])
    r_inf = np.clip(
        p["r_inf_scale"] * p["r_inf"] * clay * (1.0 - p["oxide_loss_per_frac"] * oxide) * head,
        0.0,
        1.0,
    )
    k = (
        p["k_scale"]
        * p["k_per_min"]
        * clay_rate_factor(
            clay_swelling_pct, clay_kaolin_pct, white_mica_illite_pct, clay_severity_idx, p
        )
    )
    out = kinetic_recovery(np.asarray(r_inf), np.asarray(k), time_min, model=model, n_cells=n_cells)
    return _like(au_gpt, np.clip(out, 0.0, 1.0))


def _like(template, values):
    """Return ``values`` shaped like ``template``: float, ndarray or Series (same index)."""
    values = np.asarray(values, dtype=float)
    if isinstance(template, pd.Series):
        return pd.Series(values.reshape(len(template)), index=template.index)
    if np.ndim(template) == 0:
        return float(values.reshape(-1)[0])
    return values.reshape(np.shape(template))
