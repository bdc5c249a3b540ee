"""Candidate core intervals for metallurgical testwork.

A candidate is a run of consecutive composites of one drill hole and one domain, long enough that
the core still in the tray weighs what a test program needs. Core already consumed by earlier tests,
or excluded by the user (lost core, reserved for QA/QC, kept for a later program), is not a
candidate.

All functions take and return numpy arrays or pandas objects; none reads files or prints.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

#: Nominal core diameters of the wireline core sizes [mm] (from memory: standard wireline
#: diamond-drilling sizes; a site with a different barrel passes ``core_diameter_mm`` instead).
CORE_DIAMETERS_MM: dict[str, float] = {
    "BQ": 36.5,
    "NQ": 47.6,
    "NQ2": 50.6,
    "HQ": 63.5,
    "HQ3": 61.1,
    "PQ": 85.0,
    "PQ3": 83.0,
}

#: Columns every candidate table carries (the attribute means follow them).
CANDIDATE_KEY_COLUMNS = (
    "candidate_id",
    "hole_id",
    "from_m",
    "to_m",
    "length_m",
    "domain",
    "n_composites",
    "density_t_m3",
    "mass_kg",
)

_TOUCH_TOL_M = 1e-6  # composites closer than this are contiguous [m]


def core_diameter_mm(core_size: str) -> float:
    """Return the nominal core diameter of a wireline core size.

    Parameters
    ----------
    core_size : str
        A key of :data:`CORE_DIAMETERS_MM` (``"NQ"``, ``"HQ"``, ``"PQ"``, ...); case-insensitive.

    Returns
    -------
    float
        Core diameter [mm].

    Examples
    --------
    >>> core_diameter_mm("hq")
    63.5
    """
    key = str(core_size).strip().upper()
    if key not in CORE_DIAMETERS_MM:
        valid = ", ".join(CORE_DIAMETERS_MM)
        msg = (
            f"unknown core size {core_size!r}; valid sizes are {valid} "
            "(geomet.sampling.candidates.CORE_DIAMETERS_MM), or give core_diameter_mm"
        )
        raise InputDataError(msg)
    return CORE_DIAMETERS_MM[key]


def core_mass_kg(length_m, core_diameter_mm, density_t_m3, *, core_fraction=1.0):
    """Mass of a length of drill core.

    Parameters
    ----------
    length_m : float, array or Series
        Core length along the hole [m].
    core_diameter_mm : float or array
        Core diameter [mm].
    density_t_m3 : float, array or Series
        Dry bulk density [t/m³].
    core_fraction : float or array, optional
        Fraction of the core's cross-section still available (1.0 whole core, 0.5 half core,
        0.25 quarter core) [fraction].

    Returns
    -------
    float, array or Series
        Core mass [kg], of the same type as ``length_m``.

    Notes
    -----
    The core is a cylinder:

    .. math:: m = L \\cdot \\frac{\\pi d^2}{4} \\cdot \\rho \\cdot 1000 \\cdot f

    with :math:`L` [m], :math:`d` [m], :math:`\\rho` [t/m³] (×1000 gives kg/m³) and :math:`f`
    the available fraction.

    Examples
    --------
    >>> round(core_mass_kg(1.0, 63.5, 2.7, core_fraction=0.5), 3)
    4.275
    """
    if np.ndim(core_diameter_mm) == 0:
        d_m = float(core_diameter_mm) / 1000.0
    else:
        d_m = np.asarray(core_diameter_mm, dtype=float) / 1000.0
    area_m2 = np.pi * d_m**2 / 4.0
    return length_m * area_m2 * density_t_m3 * 1000.0 * core_fraction


def core_length_for_mass_m(mass_kg, core_diameter_mm, density_t_m3, *, core_fraction=1.0):
    """Length of core that weighs ``mass_kg`` (the inverse of :func:`core_mass_kg`).

    Parameters
    ----------
    mass_kg : float or array
        Required sample mass [kg].
    core_diameter_mm : float or array
        Core diameter [mm].
    density_t_m3 : float, array or Series
        Dry bulk density [t/m³].
    core_fraction : float, optional
        Available fraction of the core cross-section [fraction].

    Returns
    -------
    float, array or Series
        Core length [m].

    Notes
    -----
    :math:`L = m / (\\frac{\\pi d^2}{4} \\rho \\cdot 1000 f)`.
    """
    per_metre = core_mass_kg(1.0, core_diameter_mm, density_t_m3, core_fraction=core_fraction)
    return mass_kg / per_metre


def _interval_arrays(table: pd.DataFrame, name: str):
    missing = [c for c in ("hole_id", "from_m", "to_m") if c not in table.columns]
    if missing:
        msg = f"{name} table needs columns hole_id, from_m, to_m; missing {', '.join(missing)}"
        raise InputDataError(msg)
    return (
        table["hole_id"].astype(str).to_numpy(),
        table["from_m"].to_numpy(dtype=float),
        table["to_m"].to_numpy(dtype=float),
    )


def overlap_length_m(intervals: pd.DataFrame, others: pd.DataFrame) -> pd.DataFrame:
    """Every overlapping pair of intervals of two interval tables, with the overlap length.

    Parameters
    ----------
    intervals, others : DataFrame
        Interval tables with ``hole_id``, ``from_m``, ``to_m`` [m].

    Returns
    -------
    DataFrame
        Columns ``left`` (row position in ``intervals``), ``right`` (row position in ``others``)
        and ``overlap_m`` (> 0) [m], one row per overlapping pair.
    """
    lh, lf, lt = _interval_arrays(intervals, "interval")
    rh, rf, rt = _interval_arrays(others, "interval")
    rows_l, rows_r, lens = [], [], []
    if len(lh) and len(rh):
        order_r = np.lexsort((rf, rh))
        rh_s, rf_s, rt_s = rh[order_r], rf[order_r], rt[order_r]
        holes, starts = np.unique(rh_s, return_index=True)
        ends = np.append(starts[1:], len(rh_s))
        pos = np.searchsorted(holes, lh)
        pos_ok = (pos < len(holes)) & (holes[np.minimum(pos, len(holes) - 1)] == lh)
        for i in np.flatnonzero(pos_ok):
            a, b = starts[pos[i]], ends[pos[i]]
            ov = np.minimum(lt[i], rt_s[a:b]) - np.maximum(lf[i], rf_s[a:b])
            hit = np.flatnonzero(ov > _TOUCH_TOL_M)
            if hit.size:
                rows_l.append(np.full(hit.size, i))
                rows_r.append(order_r[a + hit])
                lens.append(ov[hit])
    if not rows_l:
        return pd.DataFrame(
            {
                "left": np.array([], dtype=int),
                "right": np.array([], dtype=int),
                "overlap_m": np.array([], dtype=float),
            }
        )
    return pd.DataFrame(
        {
            "left": np.concatenate(rows_l),
            "right": np.concatenate(rows_r),
            "overlap_m": np.concatenate(lens),
        }
    )


def unavailable_mask(composites: pd.DataFrame, *consumed: pd.DataFrame | None) -> np.ndarray:
    """True for composites that overlap any interval of the ``consumed`` tables.

    Parameters
    ----------
    composites : DataFrame
        Interval table (``hole_id``, ``from_m``, ``to_m`` [m]).
    *consumed : DataFrame or None
        Interval tables of core no longer available: earlier testwork samples, user exclusions.

    Returns
    -------
    ndarray of bool
        One flag per composite row.
    """
    mask = np.zeros(len(composites), dtype=bool)
    for table in consumed:
        if table is None or len(table) == 0:
            continue
        pairs = overlap_length_m(composites, table)
        mask[pairs["left"].to_numpy()] = True
    return mask


def build_candidates(
    composites: pd.DataFrame,
    *,
    mass_kg: float,
    core_diameter_mm: float,
    core_fraction: float = 0.5,
    attributes: Sequence[str] = (),
    unavailable: np.ndarray | None = None,
    domain_column: str = "domain",
    max_length_m: float | None = None,
) -> pd.DataFrame:
    """Candidate testwork intervals: the shortest runs of consecutive composites that weigh enough.

    A window starts at every available composite and takes the following composites of the same
    hole and domain, without a gap and without unavailable core, until the core weighs at least
    ``mass_kg``. Windows that reach the end of their run first are dropped. Windows overlap each
    other; the selection keeps chosen intervals apart.

    Parameters
    ----------
    composites : DataFrame
        ``hole_id``, ``from_m``, ``to_m`` [m], ``density_t_m3`` [t/m³], the domain column and the
        ``attributes``.
    mass_kg : float
        Mass a test program needs from one sample [kg].
    core_diameter_mm : float
        Core diameter [mm].
    core_fraction : float, optional
        Fraction of the core cross-section available (0.5 for half core) [fraction].
    attributes : sequence of str, optional
        Columns averaged over each window, weighted by mass (length × density); NaN values are
        left out of the mean.
    unavailable : ndarray of bool, optional
        Composites that may not be used (see :func:`unavailable_mask`).
    domain_column : str, optional
        Column naming each composite's domain.
    max_length_m : float, optional
        Longest interval accepted [m] (a window needing more core is dropped).

    Returns
    -------
    DataFrame
        One row per candidate: ``candidate_id``, ``hole_id``, ``from_m``, ``to_m``, ``length_m``,
        ``domain``, ``n_composites``, ``density_t_m3`` (mass-weighted mean), ``mass_kg``
        [kg], then the attribute means.

    Notes
    -----
    Vectorised: with :math:`c_k` the cumulative core mass over composites sorted by hole and
    depth, the window starting at :math:`i` ends at the first :math:`j` with
    :math:`c_j - c_{i-1} \\ge m` (a binary search), and is kept when :math:`j` lies in the same
    contiguous single-domain run as :math:`i`.
    """
    need = ["hole_id", "from_m", "to_m", "density_t_m3", domain_column, *attributes]
    missing = [c for c in need if c not in composites.columns]
    if missing:
        msg = f"composites table lacks column(s) {', '.join(missing)} needed for candidates"
        raise InputDataError(msg)
    if not mass_kg > 0:
        msg = f"mass_kg must be positive; got {mass_kg}"
        raise InputDataError(msg)
    if not 0 < core_fraction <= 1:
        msg = f"core_fraction must be in (0, 1]; got {core_fraction}"
        raise InputDataError(msg)
    if not core_diameter_mm > 0:
        msg = f"core_diameter_mm must be positive; got {core_diameter_mm}"
        raise InputDataError(msg)
    attributes = list(attributes)
    n = len(composites)
    if unavailable is None:
        unavailable = np.zeros(n, dtype=bool)
    unavailable = np.asarray(unavailable, dtype=bool)

    hole = composites["hole_id"].astype(str).to_numpy()
    frm = composites["from_m"].to_numpy(dtype=float)
    order = np.lexsort((frm, hole))
    comp = composites.iloc[order]
    hole, frm = hole[order], frm[order]
    to = comp["to_m"].to_numpy(dtype=float)
    dens = comp["density_t_m3"].to_numpy(dtype=float)
    dom = comp[domain_column].astype(str).to_numpy()
    dom_na = comp[domain_column].isna().to_numpy()
    unav = unavailable[order]
    length = to - frm
    mass = core_mass_kg(length, core_diameter_mm, dens, core_fraction=core_fraction)
    usable = ~unav & ~dom_na & np.isfinite(mass) & (mass > 0)

    # Break a run wherever hole or domain changes, a gap opens, or unusable core sits.
    brk = np.ones(n, dtype=bool)
    if n > 1:
        same = (hole[1:] == hole[:-1]) & (dom[1:] == dom[:-1])
        touch = np.abs(frm[1:] - to[:-1]) <= _TOUCH_TOL_M
        brk[1:] = ~(same & touch & usable[1:] & usable[:-1])
    run_id = np.cumsum(brk)

    m_use = np.where(usable, mass, 0.0)
    cum = np.concatenate([[0.0], np.cumsum(m_use)])  # cum[k] = mass of rows < k
    start = np.flatnonzero(usable)
    target = cum[start] + mass_kg * (1 - 1e-12)
    end_excl = np.searchsorted(cum, target, side="left")  # cum[end_excl] >= target
    end = end_excl - 1  # last row included
    ok = end < n
    end_c = np.minimum(end, n - 1)
    ok &= run_id[end_c] == run_id[start]
    if max_length_m is not None:
        ok &= (to[end_c] - frm[start]) <= max_length_m + _TOUCH_TOL_M
    start, end = start[ok], end_c[ok]

    out = pd.DataFrame(
        {
            "hole_id": hole[start],
            "from_m": frm[start],
            "to_m": to[end],
            "length_m": to[end] - frm[start],
            "domain": comp[domain_column].to_numpy()[start],
            "n_composites": end - start + 1,
        }
    )
    csum_mass = cum[end + 1] - cum[start]
    wt = length * dens  # mass weight per metre-of-core basis (t/m² × m)
    wt = np.where(usable, wt, 0.0)
    cw = np.concatenate([[0.0], np.cumsum(wt)])
    cwl = np.concatenate([[0.0], np.cumsum(np.where(usable, length, 0.0))])
    out["density_t_m3"] = (cw[end + 1] - cw[start]) / (cwl[end + 1] - cwl[start])
    out["mass_kg"] = csum_mass
    for col in attributes:
        v = comp[col].to_numpy(dtype=float)
        good = np.isfinite(v)
        cv = np.concatenate([[0.0], np.cumsum(np.where(good, v * wt, 0.0))])
        cg = np.concatenate([[0.0], np.cumsum(np.where(good, wt, 0.0))])
        den = cg[end + 1] - cg[start]
        with np.errstate(invalid="ignore", divide="ignore"):
            out[col] = np.where(den > 0, (cv[end + 1] - cv[start]) / den, np.nan)
    out.insert(0, "candidate_id", np.arange(len(out), dtype=np.int64))
    return out.reset_index(drop=True)


def exclusions_frame(exclusions: Sequence[Mapping] | pd.DataFrame | None) -> pd.DataFrame:
    """Turn a list of ``{hole_id, from_m, to_m}`` records (or a table) into an interval table.

    Parameters
    ----------
    exclusions : sequence of mappings, DataFrame or None
        Intervals the user keeps out of selection [m].

    Returns
    -------
    DataFrame
        ``hole_id`` (str), ``from_m``, ``to_m`` [m].
    """
    if exclusions is None:
        return pd.DataFrame(
            {
                "hole_id": pd.Series(dtype=str),
                "from_m": pd.Series(dtype=float),
                "to_m": pd.Series(dtype=float),
            }
        )
    frame = pd.DataFrame(exclusions) if not isinstance(exclusions, pd.DataFrame) else exclusions
    if len(frame) == 0:
        return exclusions_frame(None)
    hole, frm, to = _interval_arrays(frame, "exclusions")
    bad = np.flatnonzero(~(frm < to))
    if bad.size:
        shown = "; ".join(f"hole {hole[i]} from_m={frm[i]} to_m={to[i]}" for i in bad[:10])
        msg = f"exclusion intervals need from_m < to_m; got {shown}"
        raise InputDataError(msg)
    return pd.DataFrame({"hole_id": hole, "from_m": frm, "to_m": to})
