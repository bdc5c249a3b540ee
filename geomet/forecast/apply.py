"""Apply the process forecasts to composites, blocks and domains (vectorised, chunked).

Chain per row: hardness (Bond Wi, A×b, Mia) → specific energy (Morrell coarse stage on Mia plus
Bond ball-mill fine stage with Rowland's factors, or Bond alone) → power-limited throughput →
clay handling penalty → throughput and the tonnes lost to clay; Cu and Au rougher recovery and
concentrate Cu grade; leach acid (gangue plus oxide Cu). Each calibrated response carries a
P10-P90 interval (``_p10`` / ``_p90``); derived quantities take the interval of their driver
(energy from the hardness interval ends, throughput from the energy ends), which treats the
hardness errors as fully correlated — a conservative, stated simplification.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from geomet.errors import InputDataError
from geomet.forecast import comminution as comm
from geomet.forecast import flotation as flot
from geomet.forecast import throughput as thr
from geomet.forecast.calibration import (
    AcidReactivityModel,
    ConcentrateModel,
    KineticRecoveryModel,
    conformal_quantile,
    make_model,
)
from geomet.forecast.inputs import copper_minerals, resolve_inputs

ENERGY_METHODS = ("smc_bond", "bond")


HARDNESS_RESPONSES = ("bond_bwi_kwh_t", "smc_axb", "smc_mia_kwh_t")
INTERVAL_COLUMNS = (
    "bond_bwi_kwh_t",
    "smc_axb",
    "smc_mia_kwh_t",
    "specific_energy_kwh_t",
    "mill_energy_kwh_t",
    "throughput_tph",
    "cu_recovery_frac",
    "au_recovery_frac",
    "acid_kg_t",
)
FORECAST_COLUMNS = (
    "bond_bwi_kwh_t",
    "smc_axb",
    "smc_mia_kwh_t",
    "specific_energy_kwh_t",
    "clay_penalty_frac",
    "throughput_tph",
    "throughput_clay_loss_tph",
    "mill_energy_kwh_t",
    "cu_recovery_frac",
    "au_recovery_frac",
    "conc_cu_pct",
    "conc_mass_pull_frac",
    "acid_kg_t",
    "acid_gangue_kg_t",
    "acid_oxide_kg_t",
    *(f"{c}_{s}" for c in INTERVAL_COLUMNS for s in ("p10", "p90")),
)


@dataclass(frozen=True)
class PlantSettings:
    """Plant and forecast settings (defaults: a SAG-ball mill porphyry concentrator; the numbers
    are typical values, stated assumptions).

    Attributes
    ----------
    f80_um : float
        Primary (SAG) mill feed 80 % passing size [µm].
    p80_um : float
        Flotation feed (cyclone overflow) 80 % passing size [µm].
    mill_power_kw : float
        Installed grinding power, SAG plus ball mills [kW].
    utilisation_frac : float
        Fraction of installed power drawn on average [fraction].
    ball_mill_diameter_m : float or None
        Ball mill diameter inside liners [m], for Rowland's EF3 (None: EF3 = 1).
    energy_method : {"smc_bond", "bond"}
        ``smc_bond``: Morrell coarse stage (Mia, F80 → 750 µm) plus Bond ball mill
        (750 µm → P80); ``bond``: Bond with Rowland's factors from F80 to P80.
    pebble_crusher : bool
        Morrell's K = 0.95 with a recycle pebble crusher, else 1.0.
    flotation_time_min : float
        Laboratory-equivalent rougher flotation time of the forecast [min].
    kinetic_model : str
        ``first_order``, ``klimpel`` or ``n_cell``.
    n_cells : int
        Cells for ``n_cell``.
    clay_penalty : mapping
        Parameters of :func:`geomet.forecast.throughput.clay_penalty_frac`.
    coverage : float
        Interval coverage (0.8 gives P10-P90).
    """

    f80_um: float = 100_000.0
    p80_um: float = 150.0
    mill_power_kw: float = 32_000.0
    utilisation_frac: float = 0.92
    ball_mill_diameter_m: float | None = 7.3
    energy_method: str = "smc_bond"
    pebble_crusher: bool = True
    flotation_time_min: float = 10.0
    kinetic_model: str = "first_order"
    n_cells: int = 6
    clay_penalty: Mapping = field(default_factory=lambda: dict(thr.DEFAULT_CLAY_PENALTY))
    coverage: float = 0.8

    def __post_init__(self):
        if self.energy_method not in ENERGY_METHODS:
            msg = (
                f"unknown energy_method {self.energy_method!r}; valid names are "
                f"{list(ENERGY_METHODS)}"
            )
            raise InputDataError(msg)
        if self.energy_method == "smc_bond" and not (
            self.f80_um > comm.MORRELL_STAGE_BOUNDARY_UM > self.p80_um
        ):
            msg = (
                "energy_method 'smc_bond' needs f80_um > 750 > p80_um; got "
                f"f80_um={self.f80_um}, p80_um={self.p80_um}"
            )
            raise InputDataError(msg)
        unknown = sorted(set(self.clay_penalty) - set(thr.DEFAULT_CLAY_PENALTY))
        if unknown:
            msg = (
                f"unknown clay penalty parameter(s) {unknown}; valid names are "
                f"{sorted(thr.DEFAULT_CLAY_PENALTY)}"
            )
            raise InputDataError(msg)


def specific_energy_kwh_t(bwi_kwh_t, mia_kwh_t, settings: PlantSettings):
    """Grinding specific energy [kWh/t] of the circuit in ``settings`` (see :class:`PlantSettings`).

    Notes
    -----
    ``smc_bond``: W = K Mia 4 (750^f(750) − F80^f(F80)) + 10 Wi (1/√P80 − 1/√750) EF3 EF4 EF5
    (Morrell 2009 coarse stage; Bond 1952 with Rowland & Kjos 1980 factors for the ball mill).
    """
    if settings.energy_method == "bond":
        return comm.bond_ball_mill_energy(
            bwi_kwh_t,
            settings.f80_um,
            settings.p80_um,
            mill_diameter_m=settings.ball_mill_diameter_m,
        )
    k = comm.MORRELL_K["pebble_crusher" if settings.pebble_crusher else "no_pebble_crusher"]
    coarse = comm.morrell_stage_energy(
        mia_kwh_t, settings.f80_um, comm.MORRELL_STAGE_BOUNDARY_UM, k=k
    )
    fine = comm.bond_ball_mill_energy(
        bwi_kwh_t,
        comm.MORRELL_STAGE_BOUNDARY_UM,
        settings.p80_um,
        mill_diameter_m=settings.ball_mill_diameter_m,
    )
    return coarse + fine


def _ensure_models(models: Mapping | None, settings: PlantSettings) -> dict:
    out = dict(models or {})
    for response in (*HARDNESS_RESPONSES, "cu_recovery_frac", "au_recovery_frac", "acid_kg_t"):
        if response not in out:
            kwargs = {}
            if response in ("cu_recovery_frac", "au_recovery_frac"):
                kwargs = {
                    "time_min": settings.flotation_time_min,
                    "kinetic": settings.kinetic_model,
                    "n_cells": settings.n_cells,
                }
            out[response] = make_model(response, "none", **kwargs).fit(None, None)
    return out


def _interval(model, pred, coverage, lo_bound, hi_bound):
    q = conformal_quantile(getattr(model, "residuals_", []), coverage)
    return np.clip(pred - q, lo_bound, hi_bound), np.clip(pred + q, lo_bound, hi_bound)


def _forecast_chunk(x: Mapping, models: Mapping, s: PlantSettings) -> dict[str, np.ndarray]:
    out: dict[str, np.ndarray] = {}
    cov = s.coverage
    # Hardness and its interval.
    for response in HARDNESS_RESPONSES:
        m = models[response]
        pred = m.predict(x)
        lo, hi = _interval(m, pred, cov, *m._bounds())
        out[response], out[f"{response}_p10"], out[f"{response}_p90"] = pred, lo, hi
    # Energy, throughput and the clay penalty.
    penalty = thr.clay_penalty_frac(
        x["clay_severity_idx"], x["clay_swelling_pct"], **s.clay_penalty
    )
    out["clay_penalty_frac"] = penalty
    keep = 1.0 - penalty
    power = s.mill_power_kw * s.utilisation_frac
    for suffix in ("", "_p10", "_p90"):
        energy = specific_energy_kwh_t(
            out[f"bond_bwi_kwh_t{suffix}"], out[f"smc_mia_kwh_t{suffix}"], s
        )
        out[f"specific_energy_kwh_t{suffix}"] = energy
        out[f"mill_energy_kwh_t{suffix}"] = energy / keep
    free = power / out["specific_energy_kwh_t"]
    out["throughput_tph"] = free * keep
    out["throughput_clay_loss_tph"] = free - out["throughput_tph"]
    # Harder ore (P90 energy) gives the low (P10) throughput.
    out["throughput_tph_p10"] = power / out["mill_energy_kwh_t_p90"]
    out["throughput_tph_p90"] = power / out["mill_energy_kwh_t_p10"]
    # Flotation.
    cu_model = models["cu_recovery_frac"]
    params = cu_model.full_params() if isinstance(cu_model, KineticRecoveryModel) else None
    conc_model = models.get("conc_cu_pct")
    rough = flot.rougher_copper(
        x["cu_pct"],
        x["cu_asol_pct"],
        x["clay_swelling_pct"],
        x["clay_kaolin_pct"],
        x["white_mica_illite_pct"],
        x["clay_severity_idx"],
        cu_mineral_pct=copper_minerals(x),
        pyrite_pct=x["pyrite_pct"],
        time_min=s.flotation_time_min,
        model=s.kinetic_model,
        n_cells=s.n_cells,
        params=params,
    )
    cu_rec = rough["cu_recovery_frac"] if params is not None else cu_model.predict(x)
    out["cu_recovery_frac"] = cu_rec
    out["cu_recovery_frac_p10"], out["cu_recovery_frac_p90"] = _interval(
        cu_model, cu_rec, cov, 0.0, 1.0
    )
    if conc_model is None:
        out["conc_cu_pct"] = rough["conc_cu_pct"]
    elif isinstance(conc_model, ConcentrateModel):
        out["conc_cu_pct"] = conc_model.adjust(rough["conc_cu_pct"])
    else:
        out["conc_cu_pct"] = conc_model.predict(x)
    out["conc_mass_pull_frac"] = rough["mass_pull_frac"]
    au_model = models["au_recovery_frac"]
    if isinstance(au_model, KineticRecoveryModel):
        au_rec = np.asarray(
            flot.au_recovery_frac(
                x["au_gpt"],
                x["clay_swelling_pct"],
                x["clay_kaolin_pct"],
                x["white_mica_illite_pct"],
                x["clay_severity_idx"],
                x["oxide_ratio_frac"],
                time_min=s.flotation_time_min,
                model=s.kinetic_model,
                n_cells=s.n_cells,
                params=au_model.full_params(),
            )
        )
    else:
        au_rec = au_model.predict(x)
    out["au_recovery_frac"] = au_rec
    out["au_recovery_frac_p10"], out["au_recovery_frac_p90"] = _interval(
        au_model, au_rec, cov, 0.0, 1.0
    )
    # Acid.
    acid_model = models["acid_kg_t"]
    if isinstance(acid_model, AcidReactivityModel):
        gangue, oxide = acid_model.components(x)
        total = np.maximum(gangue + oxide, 0.0)
    else:
        g0, o0 = AcidReactivityModel(calibrate=False).fit(None, None).components(x)
        total = acid_model.predict(x)
        with np.errstate(invalid="ignore", divide="ignore"):
            share = np.where(g0 + o0 > 0, g0 / (g0 + o0), 1.0)
        gangue, oxide = total * share, total * (1.0 - share)
    out["acid_kg_t"], out["acid_gangue_kg_t"], out["acid_oxide_kg_t"] = total, gangue, oxide
    out["acid_kg_t_p10"], out["acid_kg_t_p90"] = _interval(acid_model, total, cov, 0.0, np.inf)
    return out


def forecast_columns(
    table: pd.DataFrame | Mapping,
    models: Mapping | None = None,
    settings: PlantSettings | None = None,
    *,
    where: str = "table",
    chunk_rows: int = 131_072,
) -> dict[str, np.ndarray]:
    """Every forecast column for every row of ``table``.

    Parameters
    ----------
    table : DataFrame or mapping
        Composites or blocks with the mineralogy columns (see
        :func:`geomet.forecast.inputs.resolve_inputs`).
    models : mapping, optional
        Response -> fitted model (from :func:`geomet.forecast.calibration.fit_all`); missing
        responses use the uncalibrated defaults, without intervals (NaN ``_p10`` / ``_p90``).
    settings : PlantSettings, optional
        Plant and forecast settings.
    where : str, keyword-only
        Table name for error messages.
    chunk_rows : int, keyword-only
        Rows evaluated at a time (keeps temporaries in cache; the result does not depend on it).

    Returns
    -------
    dict
        Column name (:data:`FORECAST_COLUMNS`) -> float ndarray.
    """
    s = settings or PlantSettings()
    inputs = resolve_inputs(table, where=where)
    models = _ensure_models(models, s)
    n = len(inputs["cu_pct"])

    result = {c: np.empty(n) for c in FORECAST_COLUMNS}
    for start in range(0, n, max(int(chunk_rows), 1)):
        stop = min(start + chunk_rows, n)
        chunk = {k: v[start:stop] for k, v in inputs.items()}
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            part = _forecast_chunk(chunk, models, s)
        for c in FORECAST_COLUMNS:
            result[c][start:stop] = part[c]
    return result


def add_forecasts(
    table: pd.DataFrame,
    models: Mapping | None = None,
    settings: PlantSettings | None = None,
    *,
    where: str = "table",
) -> pd.DataFrame:
    """A copy of ``table`` with the forecast columns added (replacing any of the same name)."""
    cols = forecast_columns(table, models, settings, where=where)
    base = table.drop(columns=[c for c in cols if c in table.columns])
    return pd.concat([base, pd.DataFrame(cols, index=table.index)], axis=1)


def domain_forecasts(
    table: pd.DataFrame, *, by: str = "domain", weight: str | None = None
) -> pd.DataFrame:
    """Forecasts aggregated by domain, each averaged the way it adds up.

    Parameters
    ----------
    table : DataFrame
        ``block_forecasts`` (weights ``tonnes_t``) or ``composite_forecasts`` (``length_m``).
    by : str, keyword-only
        Grouping column.
    weight : str, keyword-only
        Weight column; default ``tonnes_t`` when present, else ``length_m``, else equal.

    Returns
    -------
    DataFrame
        One row per domain: ``n_rows``, the weight total, weighted head grades, throughput as
        total weight over total hours (Σw / Σ(w/Q), the harmonic mean that the mill sees),
        energies, penalty and acid as weighted means, recoveries metal-weighted
        (Σ w g R / Σ w g) and concentrate grade as recovered metal over concentrate mass. The
        ``_p10`` / ``_p90`` columns aggregate the row interval ends the same way: a conservative
        range (row errors taken as fully correlated), not an interval of the domain mean.

    Notes
    -----
    Throughput: Q_d = Σ w_i / Σ (w_i / Q_i). Recovery: R_d = Σ w_i g_i R_i / Σ w_i g_i.
    Concentrate grade: c_d = Σ w_i g_i R_i / Σ (w_i g_i R_i / c_i).
    """
    if by not in table.columns:
        msg = f"domain_forecasts: grouping column {by!r} is missing from the table"
        raise InputDataError(msg)
    if weight is None:
        weight = next((c for c in ("tonnes_t", "length_m") if c in table.columns), None)
    w = table[weight].to_numpy(dtype=float) if weight else np.ones(len(table))
    cols: dict[str, np.ndarray] = {"_w": np.nan_to_num(w)}
    df = cols  # the per-row terms, assembled into one frame at the end

    def add(name, values):
        cols[name] = np.asarray(values, dtype=float)

    weighted_means = [
        c
        for c in (
            "cu_pct",
            "au_gpt",
            "cu_asol_pct",
            "clay_total_pct",
            "clay_swelling_pct",
            "sulfate_pct",
            "bond_bwi_kwh_t",
            "smc_axb",
            "smc_mia_kwh_t",
            "specific_energy_kwh_t",
            "mill_energy_kwh_t",
            "clay_penalty_frac",
            "acid_kg_t",
            "acid_gangue_kg_t",
            "acid_oxide_kg_t",
        )
        if c in table.columns
    ]
    weighted_means += [
        f"{c}_{s}"
        for c in (
            "bond_bwi_kwh_t",
            "smc_axb",
            "smc_mia_kwh_t",
            "specific_energy_kwh_t",
            "mill_energy_kwh_t",
            "acid_kg_t",
        )
        for s in ("p10", "p90")
        if f"{c}_{s}" in table.columns
    ]
    for c in weighted_means:
        v = table[c].to_numpy(dtype=float)
        add(f"_num_{c}", np.where(np.isnan(v), 0.0, v * df["_w"]))
        add(f"_den_{c}", np.where(np.isnan(v), 0.0, df["_w"]))
    hours = [
        c
        for c in ("throughput_tph", "throughput_tph_p10", "throughput_tph_p90")
        if c in table.columns
    ]
    for c in hours:
        q = table[c].to_numpy(dtype=float)
        ok = (q > 0) & ~np.isnan(q)
        add(f"_hours_{c}", np.where(ok, df["_w"] / np.where(ok, q, 1.0), 0.0))
        add(f"_hw_{c}", np.where(ok, df["_w"], 0.0))
    metal = {"cu_recovery_frac": "cu_pct", "au_recovery_frac": "au_gpt"}
    for rec, grade in metal.items():
        if rec not in table.columns or grade not in table.columns:
            continue
        g = np.nan_to_num(table[grade].to_numpy(dtype=float))
        for s in ("", "_p10", "_p90"):
            col = f"{rec}{s}"
            if col not in table.columns:
                continue
            r = table[col].to_numpy(dtype=float)
            ok = ~np.isnan(r)
            add(f"_rm_{col}", np.where(ok, df["_w"] * g * np.where(ok, r, 0.0), 0.0))
            add(f"_m_{col}", np.where(ok, df["_w"] * g, 0.0))
    if {"conc_cu_pct", "cu_recovery_frac", "cu_pct"} <= set(table.columns):
        rec_metal = (
            df["_w"]
            * np.nan_to_num(table["cu_pct"].to_numpy(float))
            * np.nan_to_num(table["cu_recovery_frac"].to_numpy(float))
        )
        c = table["conc_cu_pct"].to_numpy(dtype=float)
        ok = (c > 0) & ~np.isnan(c)
        add("_cm", np.where(ok, rec_metal, 0.0))
        add("_cmass", np.where(ok, rec_metal / np.where(ok, c, 1.0), 0.0))
    frame = pd.DataFrame(cols)
    frame.insert(0, by, table[by].to_numpy())
    sums = frame.groupby(by, sort=True, dropna=False).sum(numeric_only=True)
    counts = frame.groupby(by, sort=True, dropna=False).size()
    result = pd.DataFrame(index=sums.index)
    result["n_rows"] = counts
    if weight:
        result[weight] = sums["_w"]
    with np.errstate(invalid="ignore", divide="ignore"):
        for c in weighted_means:
            result[c] = sums[f"_num_{c}"] / sums[f"_den_{c}"].replace(0.0, np.nan)
        for c in hours:
            result[c] = sums[f"_hw_{c}"] / sums[f"_hours_{c}"].replace(0.0, np.nan)
        for rec in metal:
            for s in ("", "_p10", "_p90"):
                col = f"{rec}{s}"
                if f"_rm_{col}" in sums:
                    result[col] = sums[f"_rm_{col}"] / sums[f"_m_{col}"].replace(0.0, np.nan)
        if "_cm" in sums:
            result["conc_cu_pct"] = sums["_cm"] / sums["_cmass"].replace(0.0, np.nan)
    return result.reset_index()
