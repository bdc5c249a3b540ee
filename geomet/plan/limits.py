"""Plant limits of the blend model: what each limit constrains, its unit, and per-period values.

Every limit is linear in the tonnes fed. A *sum* limit bounds Σ tonnes × coefficient (tonnes,
energy, acid); a *blend* limit bounds a tonnage-weighted average and is written
Σ tonnes × (attribute − limit) ≤ 0 (or ≥ 0 for a minimum), which is linear because the limit is a
number, not a variable.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

HOURS_PER_DAY = 24.0


@dataclass(frozen=True)
class LimitSpec:
    """What a plant limit constrains.

    Attributes
    ----------
    name : str
        Limit name (the plant_limits column or derived name).
    processor : str
        Processor node it applies to (``mill`` or ``leach``).
    form : str
        ``"sum"`` (Σ t × coefficient) or ``"blend"`` (tonnage-weighted average).
    sense : str
        ``"max"`` or ``"min"``.
    attribute : str or None
        Parcel attribute used as coefficient (None = tonnes).
    scale : float
        Factor applied to the attribute (1/1000 turns kg/t of acid into t).
    unit : str
        Unit of the limit value.
    description : str
        Plain words for tables.
    """

    name: str
    processor: str
    form: str
    sense: str
    attribute: str | None
    scale: float
    unit: str
    description: str


LIMITS: dict[str, LimitSpec] = {
    s.name: s
    for s in (
        LimitSpec("mill_max_t", "mill", "sum", "max", None, 1.0, "t", "concentrator feed capacity"),
        LimitSpec("mill_min_t", "mill", "sum", "min", None, 1.0, "t", "concentrator minimum feed"),
        LimitSpec(
            "mill_energy_kwh",
            "mill",
            "sum",
            "max",
            "mill_energy_kwh_t",
            1.0,
            "kWh",
            "grinding energy available (power × hours × availability)",
        ),
        LimitSpec(
            "mill_clay_severity_max_idx",
            "mill",
            "blend",
            "max",
            "clay_severity_idx",
            1.0,
            "index",
            "average clay severity of the mill feed",
        ),
        LimitSpec(
            "mill_swelling_clay_max_pct",
            "mill",
            "blend",
            "max",
            "clay_swelling_pct",
            1.0,
            "%",
            "average swelling clay (smectite) in the mill feed",
        ),
        LimitSpec(
            "mill_sulfate_max_pct",
            "mill",
            "blend",
            "max",
            "sulfate_pct",
            1.0,
            "%",
            "average sulfate (gypsum + anhydrite) in the mill feed",
        ),
        LimitSpec(
            "mill_oxide_ratio_max_frac",
            "mill",
            "blend",
            "max",
            "oxide_ratio_frac",
            1.0,
            "fraction",
            "average oxide ratio (acid-soluble / total Cu) of the mill feed",
        ),
        LimitSpec(
            "mill_cu_head_min_pct",
            "mill",
            "blend",
            "min",
            "cu_pct",
            1.0,
            "%",
            "lowest mill head grade",
        ),
        LimitSpec(
            "mill_cu_head_max_pct",
            "mill",
            "blend",
            "max",
            "cu_pct",
            1.0,
            "%",
            "highest mill head grade",
        ),
        LimitSpec(
            "leach_max_t", "leach", "sum", "max", None, 1.0, "t", "leach pad stacking capacity"
        ),
        LimitSpec(
            "leach_min_t", "leach", "sum", "min", None, 1.0, "t", "leach pad minimum stacking"
        ),
        LimitSpec(
            "acid_supply_t",
            "leach",
            "sum",
            "max",
            "acid_kg_t",
            1.0 / 1000.0,
            "t",
            "sulfuric acid supply",
        ),
    )
}

#: plant_limits columns the blend reads directly (energy is derived from the power columns).
PLANT_LIMIT_COLUMNS = (
    "days",
    "mill_power_kw",
    "mill_availability_frac",
    "mill_max_t",
    "leach_max_t",
    "acid_supply_t",
    "mill_clay_severity_max_idx",
    "mill_swelling_clay_max_pct",
    "mill_sulfate_max_pct",
    "mill_cu_head_min_pct",
    "mill_cu_head_max_pct",
)


def mill_energy_available_kwh(days, mill_power_kw, mill_availability_frac):
    """Grinding energy available in a period [kWh].

    Notes
    -----
    :math:`E = P \\cdot 24\\,D \\cdot A`: installed power P [kW], period length D [d] and
    availability A [fraction]. With specific energy :math:`w_i` [kWh/t] per parcel, the mill is
    power-limited when :math:`\\sum_i t_i w_i \\le E` (throughput = power / specific energy).

    Examples
    --------
    >>> float(mill_energy_available_kwh(30.0, 10_000.0, 0.9))
    6480000.0
    """
    return (
        np.asarray(mill_power_kw, float)
        * HOURS_PER_DAY
        * np.asarray(days, float)
        * np.asarray(mill_availability_frac, float)
    )


def period_limits(
    plant_limits: pd.DataFrame,
    periods,
    overrides: Mapping[str, float | None] | None = None,
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """Per-period limit values from the plant_limits table, with scalar overrides.

    Parameters
    ----------
    plant_limits : DataFrame
        One row per period (columns: see :data:`PLANT_LIMIT_COLUMNS`; missing columns or NaN
        mean "no such limit").
    periods : sequence of int
        Periods of the schedule, in order. Every one must be in ``plant_limits``.
    overrides : mapping, optional
        Limit name -> value for every period (None leaves the table value). Also accepts
        ``mill_power_kw``, ``mill_availability_frac`` and ``days``.

    Returns
    -------
    days : ndarray
        Period lengths [d].
    limits : dict of str -> ndarray
        Limit name (keys of :data:`LIMITS`) -> values by period (NaN = no limit), plus
        ``mill_hours_available_h`` (period hours × availability, for reporting).
    """
    if "period" not in plant_limits.columns:
        raise InputDataError("plant_limits has no 'period' column")
    dup = plant_limits["period"][plant_limits["period"].duplicated()]
    if len(dup):
        message = f"plant_limits.period must be unique; repeated: {sorted(set(dup.tolist()))}"
        raise InputDataError(message)
    table = plant_limits.set_index("period")
    missing = [p for p in periods if p not in table.index]
    if missing:
        message = (
            f"plant_limits has no row for schedule period(s) {missing[:10]}; "
            "every period with scheduled blocks needs its limits"
        )
        raise InputDataError(message)
    table = table.loc[list(periods)]
    overrides = {k: v for k, v in (overrides or {}).items() if v is not None}
    allowed = set(LIMITS) | {"days", "mill_power_kw", "mill_availability_frac"}
    unknown = sorted(set(overrides) - allowed)
    if unknown:
        message = f"unknown plant limit(s) {unknown}; valid names: {sorted(allowed)}"
        raise InputDataError(message)

    def column(name: str) -> np.ndarray:
        if name in overrides:
            return np.full(len(periods), float(overrides[name]))
        if name in table.columns:
            return table[name].to_numpy(float)
        return np.full(len(periods), np.nan)

    days = column("days")
    if np.isnan(days).any() or (days <= 0).any():
        bad = [p for p, d in zip(periods, days, strict=True) if not d > 0]
        message = f"plant_limits.days must be > 0 for every period; got bad values in {bad[:10]}"
        raise InputDataError(message)
    limits = {name: column(name) for name in LIMITS if name != "mill_energy_kwh"}
    limits["mill_energy_kwh"] = (
        np.full(len(periods), float(overrides["mill_energy_kwh"]))
        if "mill_energy_kwh" in overrides
        else mill_energy_available_kwh(
            days, column("mill_power_kw"), np.nan_to_num(column("mill_availability_frac"), nan=1.0)
        )
    )
    hours = days * HOURS_PER_DAY * np.nan_to_num(column("mill_availability_frac"), nan=1.0)
    limits["mill_hours_available_h"] = hours  # not a limit: the plant table reports hours used
    for name, values in limits.items():
        if (values[~np.isnan(values)] < 0).any():
            bad = [p for p, v in zip(periods, values, strict=True) if v < 0]
            message = (
                f"plant limit {name} must be >= 0; got negative values in period(s) {bad[:10]}"
            )
            raise InputDataError(message)
    return days, limits
