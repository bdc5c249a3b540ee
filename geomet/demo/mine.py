"""Demo block model, schedule and plant limits of the planned Vellantra open pit.

Blocks fill a pit shell (a cone with 47 degree walls from a floor under the system, cut by
the topography). Estimated attributes are the true geology averaged over a volume twice the
block size in each direction (an estimate is smoother than the truth) plus estimation noise.
Four nested pushbacks (P1 starter pit to P4 final pit) are mined bench by bench, top first,
so the clay- and oxide-rich lithocap and leached-cap ore comes early.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.demo.deposit import (
    CENTRE_E_M,
    CENTRE_N_M,
    MINERALS,
    DepositModel,
    bulk_density_t_m3,
    element_grades,
    sample_geology,
)
from geomet.glossary import ASSAY_COLUMNS, SCANNED_MINERAL_COLUMNS

PIT_CENTRE_E_M = CENTRE_E_M + 40.0
PIT_CENTRE_N_M = CENTRE_N_M
PIT_FLOOR_RADIUS_M = 160.0
PIT_WALL_DEG = 45.0
PHASE_FLOORS_Z_M = {"P1": 1190.0, "P2": 1125.0, "P3": 1060.0, "P4": 1000.0}
BENCH_TOP_Z_M = 1420.0
ORE_CUTOFF_CU_PCT = 0.15
ORE_CUTOFF_CU_ASOL_PCT = 0.10
N_PERIODS = 10
# Block estimation error (relative, lognormal) on top of the smoothing (demo values).
ESTIMATION_NOISE = {"minerals_rel_sd": 0.08, "grades_rel_sd": 0.05}
DESIGN_ENERGY_KWH_T = 14.5  # design grinding energy for the installed power [kWh/t]


def _inside_cone(x, y, z, floor_z):
    r = np.hypot(x - PIT_CENTRE_E_M, y - PIT_CENTRE_N_M)
    return (z >= floor_z) & (
        r <= PIT_FLOOR_RADIUS_M + (z - floor_z) / np.tan(np.radians(PIT_WALL_DEG))
    )


def make_blocks(
    model: DepositModel, rng: np.random.Generator, *, dx_m: float = 50.0, dz_m: float = 15.0
) -> pd.DataFrame:
    """Block model inside the final pit shell with estimated grades and minerals.

    Returns
    -------
    DataFrame
        block_id, x_m, y_m, z_m, dx_m, dy_m, dz_m, density_t_m3, tonnes_t, the 14
        ``glossary.ASSAY_COLUMNS`` and the 35 ``<mineral>_pct`` columns.
    """
    half = 900.0
    xs = np.arange(PIT_CENTRE_E_M - half + dx_m / 2, PIT_CENTRE_E_M + half, dx_m)
    ys = np.arange(PIT_CENTRE_N_M - half + dx_m / 2, PIT_CENTRE_N_M + half, dx_m)
    zs = np.arange(BENCH_TOP_Z_M - dz_m / 2, PHASE_FLOORS_Z_M["P4"] - dz_m, -dz_m)
    Z, Y, X = np.meshgrid(zs, ys, xs, indexing="ij")
    x, y, z = X.ravel(), Y.ravel(), Z.ravel()
    keep = _inside_cone(x, y, z, PHASE_FLOORS_Z_M["P4"]) & (
        z + dz_m / 2 <= model.topography_m(x, y) + 5.0
    )
    x, y, z = x[keep], y[keep], z[keep]
    n = len(x)
    # estimate = mean of the truth at 8 points on the corners of the block (the estimate's
    # support is about twice the block size, so it is smoother than the truth)
    offs = np.array([-1.0, 1.0])
    ox, oy, oz = (a.ravel() for a in np.meshgrid(offs, offs, offs, indexing="ij"))
    px = (x[:, None] + ox[None, :] * dx_m / 2).ravel()
    py = (y[:, None] + oy[None, :] * dx_m / 2).ravel()
    pz = (z[:, None] + oz[None, :] * dz_m / 2).ravel()
    g = sample_geology(model, px, py, pz)
    k = len(ox)
    minerals = g.minerals_pct.reshape(n, k, -1).mean(axis=1)
    gyp = g.gypsum_frac.reshape(n, k).mean(axis=1)
    por = g.porosity_frac.reshape(n, k).mean(axis=1)
    trace = {key: v.reshape(n, k).mean(axis=1) for key, v in g.trace.items()}
    qf = MINERALS.index("quartz_feldspar")
    est = minerals * np.exp(rng.normal(0.0, ESTIMATION_NOISE["minerals_rel_sd"], minerals.shape))
    est[:, qf] = 0.0
    est[:, qf] = np.maximum(100.0 - est.sum(axis=1), 0.0)
    grades = element_grades(est, gyp)
    grades.update(trace)
    rho = bulk_density_t_m3(est, gyp, por)
    blocks = pd.DataFrame(
        {
            "block_id": np.arange(1, n + 1),
            "x_m": x,
            "y_m": y,
            "z_m": z,
            "dx_m": dx_m,
            "dy_m": dx_m,
            "dz_m": dz_m,
            "density_t_m3": np.round(rho, 3),
        }
    )
    blocks["tonnes_t"] = np.round(dx_m * dx_m * dz_m * blocks["density_t_m3"], 0)
    decimals = {
        "cu_pct": 3,
        "au_gpt": 3,
        "mo_ppm": 1,
        "cu_asol_pct": 3,
        "ag_gpt": 2,
        "as_ppm": 1,
        "zn_ppm": 1,
        "pb_ppm": 1,
    }
    for col in ASSAY_COLUMNS:
        val = grades[col] * np.exp(rng.normal(0.0, ESTIMATION_NOISE["grades_rel_sd"], n))
        blocks[col] = np.round(val, decimals.get(col, 2))
    blocks["cu_asol_pct"] = np.minimum(blocks["cu_asol_pct"], blocks["cu_pct"])
    mins = pd.DataFrame(np.round(est, 2), columns=list(SCANNED_MINERAL_COLUMNS))
    return pd.concat([blocks, mins], axis=1)


def phase_of(blocks: pd.DataFrame) -> np.ndarray:
    """Pushback of each block: the smallest nested phase pit that contains it."""
    x, y, z = (blocks[c].to_numpy() for c in ("x_m", "y_m", "z_m"))
    phase = np.full(len(blocks), "P4", dtype=object)
    for name in reversed(list(PHASE_FLOORS_Z_M)):
        phase[_inside_cone(x, y, z, PHASE_FLOORS_Z_M[name])] = name
    return phase.astype(str)


def is_ore(blocks: pd.DataFrame) -> np.ndarray:
    """Blocks above the mill (Cu) or leach (acid-soluble Cu) cut-off."""
    return (
        (blocks["cu_pct"] >= ORE_CUTOFF_CU_PCT) | (blocks["cu_asol_pct"] >= ORE_CUTOFF_CU_ASOL_PCT)
    ).to_numpy()


def make_schedule(blocks: pd.DataFrame, n_periods: int = N_PERIODS) -> pd.DataFrame:
    """Mining period and phase of each ore block: phase by phase, bench by bench, top first.

    Ore tonnes are split into ``n_periods`` periods of about equal tonnage in mining order.
    Waste blocks are not scheduled (absent from the table).
    """
    phase = phase_of(blocks)
    ore = is_ore(blocks)
    df = pd.DataFrame(
        {
            "block_id": blocks["block_id"].to_numpy(),
            "phase": phase,
            "z": blocks["z_m"].to_numpy(),
            "y": blocks["y_m"].to_numpy(),
            "x": blocks["x_m"].to_numpy(),
            "t": blocks["tonnes_t"].to_numpy(),
        }
    )[ore]
    df = df.sort_values(
        ["phase", "z", "y", "x"], ascending=[True, False, True, True], kind="stable"
    )
    cum = df["t"].cumsum().to_numpy() - df["t"].to_numpy() / 2.0
    period = np.minimum((cum / df["t"].sum() * n_periods).astype(int) + 1, n_periods)
    out = pd.DataFrame(
        {"block_id": df["block_id"].to_numpy(), "period": period, "phase": df["phase"].to_numpy()}
    )
    return out.sort_values("block_id", kind="stable").reset_index(drop=True)


def make_plant_limits(blocks: pd.DataFrame, schedule: pd.DataFrame) -> pd.DataFrame:
    """Plant limits by period for a concentrator plus an oxide heap leach.

    The concentrator is sized for about 95 % of the mean sulfide ore scheduled per period,
    so capacity binds in the periods that mine more; installed power is set for a design
    specific energy of :data:`DESIGN_ENERGY_KWH_T` (an order of magnitude common for SAG-ball
    circuits on porphyry ore), so periods of hard ore are limited by power instead. The leach
    pad and the acid plant are sized on the mean oxide ore of the periods that have it.
    Clay, sulfate and head-grade limits are design values (invented for the demo,
    plausible for a flotation plant), set so that the clay-rich
    early periods and the anhydrite-rich deep periods press on them. The clay severity
    limit is on the scale of :mod:`geomet.minerals.clay` (1 wt% smectite = 1 unit).
    """
    merged = schedule.merge(
        blocks[["block_id", "tonnes_t", "cu_pct", "cu_asol_pct"]], on="block_id", how="left"
    )
    ox = merged["cu_asol_pct"] / merged["cu_pct"].where(merged["cu_pct"] > 0)
    oxide = (ox >= 0.5) & (merged["cu_asol_pct"] >= ORE_CUTOFF_CU_ASOL_PCT)
    periods = np.arange(1, int(schedule["period"].max()) + 1)
    mill_t = merged[~oxide].groupby("period")["tonnes_t"].sum().reindex(periods, fill_value=0.0)
    leach_t = merged[oxide].groupby("period")["tonnes_t"].sum().reindex(periods, fill_value=0.0)
    days = np.full(len(periods), 365)
    avail = np.where(np.isin(periods, [4, 8]), 0.90, 0.92)
    tph = np.round(0.95 * mill_t.mean() / (24 * 365 * 0.92) / 50.0) * 50.0
    mill_max = np.round(tph * 24 * days * avail, -3)
    power_kw = np.round(tph * DESIGN_ENERGY_KWH_T / 500.0) * 500.0
    leach_mean = leach_t[leach_t > 0].mean() if (leach_t > 0).any() else 1.0e6
    leach_max = np.full(len(periods), np.round(max(leach_mean, 5.0e5), -5))
    acid_t = np.round(leach_max * 18.0 / 1000.0, -3)  # 18 kg/t design acid (demo assumption)
    return pd.DataFrame(
        {
            "period": periods,
            "days": days,
            "mill_power_kw": power_kw,
            "mill_availability_frac": avail,
            "mill_max_t": mill_max,
            "leach_max_t": leach_max,
            "acid_supply_t": acid_t,
            "mill_clay_severity_max_idx": 6.0,
            "mill_swelling_clay_max_pct": 3.5,
            "mill_sulfate_max_pct": 2.5,
            "mill_cu_head_min_pct": 0.25,
            "mill_cu_head_max_pct": 1.2,
        }
    )
