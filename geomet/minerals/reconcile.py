"""Scan-assay reconciliation: element grades implied by the scanned minerals, against the assays.

A core scanner's mineral abundances imply element grades (Σ mineral wt% × element mass
fraction). Comparing them with the laboratory assays of the same intervals is the routine check
of a scanner's calibration: a bias in S or Cu points at a mis-calibrated sulfide or sulfate
estimate before it reaches the domains and the forecasts.

The implied grades use the formulas of :data:`geomet.minerals.reference.MINERALS`. The
featureless class is taken as quartz, so Na, Al and Ca of plagioclase are missing from the
implied grades: Al, Ca and Na come out low by construction; Cu, S, Fe, Mo, K and Mg carry the
information.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERALS
from geomet.minerals._frame import numeric_columns
from geomet.minerals.formula import ATOMIC_WEIGHTS_G_MOL
from geomet.minerals.reference import MINERALS

DEFAULT_ELEMENTS = ("Cu", "S", "Fe", "Mo", "Ca", "K", "Mg")

# Assay column of each element and the factor from % to the column's unit.
_ASSAY_COLUMNS = {
    "Cu": ("cu_pct", 1.0),
    "S": ("s_pct", 1.0),
    "Fe": ("fe_pct", 1.0),
    "Ca": ("ca_pct", 1.0),
    "K": ("k_pct", 1.0),
    "Mg": ("mg_pct", 1.0),
    "Al": ("al_pct", 1.0),
    "Mo": ("mo_ppm", 1e4),
    "As": ("as_ppm", 1e4),
    "Zn": ("zn_ppm", 1e4),
    "Pb": ("pb_ppm", 1e4),
}


def _check_elements(elements: Sequence[str]) -> None:
    bad = [e for e in elements if e not in ATOMIC_WEIGHTS_G_MOL]
    if bad:
        msg = f"unknown element symbol(s) {bad}; symbols are case-sensitive, e.g. 'Cu', 'S', 'Fe'"
        raise InputDataError(msg)


def scan_column_name(element: str) -> str:
    """Column of the scan-implied grade of ``element``, in the unit of its assay column.

    Examples
    --------
    >>> scan_column_name("Cu"), scan_column_name("Mo")
    ('scan_cu_pct', 'scan_mo_ppm')
    """
    assay, _ = _ASSAY_COLUMNS.get(element, (f"{element.lower()}_pct", 1.0))
    return f"scan_{assay}"


def scan_element_grades(
    df: pd.DataFrame, elements: Sequence[str] = DEFAULT_ELEMENTS
) -> pd.DataFrame:
    """Element grades implied by the scanned mineral abundances of each row.

    Parameters
    ----------
    df : pandas.DataFrame
        Table with scanned ``<mineral>_pct`` columns [wt%].
    elements : sequence of str, default ("Cu", "S", "Fe", "Mo", "Ca", "K", "Mg")
        Element symbols.

    Returns
    -------
    pandas.DataFrame
        One ``scan_<assay column>`` per element (e.g. ``scan_cu_pct`` [%], ``scan_mo_ppm``
        [ppm]), indexed like ``df``; NaN in a row where every scanned mineral is missing.

    Notes
    -----
    c_e = Σ_m x_m w_{e,m}, with x_m the abundance of scanned mineral m [wt%] and w_{e,m} its
    mass fraction of element e (from the formula). Missing abundances count as absent.

    Raises
    ------
    geomet.errors.InputDataError
        On an unknown element symbol.
    """
    _check_elements(elements)
    minerals = [m for m in SCANNED_MINERALS if f"{m}_pct" in df.columns]
    out = {}
    if not minerals:
        for e in elements:
            out[scan_column_name(e)] = np.full(len(df), np.nan)
        return pd.DataFrame(out, index=df.index)
    values = numeric_columns(df, [f"{m}_pct" for m in minerals])
    present = ~np.isnan(values)
    filled = np.where(present, values, 0.0)
    none = ~present.any(axis=1)
    for e in elements:
        fractions = np.array([MINERALS[m].fraction(e) for m in minerals])
        _, factor = _ASSAY_COLUMNS.get(e, ("", 1.0))
        grade = filled @ fractions * factor
        grade[none] = np.nan
        out[scan_column_name(e)] = grade
    return pd.DataFrame(out, index=df.index)


def reconcile_scan_assays(
    df: pd.DataFrame, elements: Sequence[str] = DEFAULT_ELEMENTS
) -> pd.DataFrame:
    """Compare scan-implied element grades with the assays, one row per element.

    Parameters
    ----------
    df : pandas.DataFrame
        Intervals with scanned ``<mineral>_pct`` columns and assay columns (``cu_pct``,
        ``s_pct``, ``mo_ppm``...).
    elements : sequence of str
        Element symbols; those without an assay column in ``df`` are left out.

    Returns
    -------
    pandas.DataFrame
        Columns ``element``, ``assay_column``, ``n_pairs``, ``assay_mean``, ``scan_mean`` (in the
        assay's unit), ``bias_frac`` (scan mean / assay mean − 1), ``correlation_r`` (Pearson)
        and ``rma_slope`` (reduced-major-axis slope of scan on assay, sign(r)·s_scan/s_assay,
        which treats both measurements as having error; Sokal & Rohlf 1995).

    References
    ----------
    .. [1] Sokal, R. R. & Rohlf, F. J. (1995). *Biometry*, 3rd ed. W. H. Freeman, New York
       (model II regression, reduced major axis).
    """
    _check_elements(elements)
    scan = scan_element_grades(df, elements)
    rows = []
    for e in elements:
        assay_col = _ASSAY_COLUMNS.get(e, (f"{e.lower()}_pct", 1.0))[0]
        if assay_col not in df.columns:
            continue
        assay = numeric_columns(df, [assay_col])[:, 0]
        implied = scan[scan_column_name(e)].to_numpy(dtype=float)
        ok = np.isfinite(assay) & np.isfinite(implied)
        a, s = assay[ok], implied[ok]
        n = int(ok.sum())
        mean_a = float(a.mean()) if n else np.nan
        mean_s = float(s.mean()) if n else np.nan
        bias = mean_s / mean_a - 1.0 if n and mean_a > 0 else np.nan
        if n > 2 and a.std() > 0 and s.std() > 0:
            r = float(np.corrcoef(a, s)[0, 1])
            slope = float(np.sign(r) * s.std() / a.std())
        else:
            r = slope = np.nan
        rows.append(
            {
                "element": e,
                "assay_column": assay_col,
                "n_pairs": n,
                "assay_mean": mean_a,
                "scan_mean": mean_s,
                "bias_frac": bias,
                "correlation_r": r,
                "rma_slope": slope,
            }
        )
    return pd.DataFrame(
        rows,
        columns=[
            "element",
            "assay_column",
            "n_pairs",
            "assay_mean",
            "scan_mean",
            "bias_frac",
            "correlation_r",
            "rma_slope",
        ],
    )
