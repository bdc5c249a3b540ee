"""Demo interval tables as they arrive: scan, assays (lab style), lithology and density.

Each table has its own breaks, as on a real project: 1 m scanner intervals from the first
core, assays of about 2 m from a different start with some 1.5 / 2.5 m samples and some
unsampled gaps, logged lithology of variable length, and density intervals of 5-10 m.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.demo.deposit import (
    MINERALS,
    DepositModel,
    bulk_density_t_m3,
    element_grades,
    lithology_at,
    sample_geology,
)
from geomet.demo.drilling import positions_at
from geomet.glossary import ASSAY_COLUMNS, SCANNED_MINERAL_COLUMNS

# Lab-style assay headers, in file order, with the canonical column each maps to and
# the lab's unit.
LAB_ASSAY_HEADERS: dict[str, tuple[str, str]] = {
    "Cu_%": ("cu_pct", "%"),
    "Au_ppb": ("au_gpt", "ppb"),
    "Mo_ppm": ("mo_ppm", "ppm"),
    "Fe_%": ("fe_pct", "%"),
    "S_%": ("s_pct", "%"),
    "Ca_%": ("ca_pct", "%"),
    "CuAS_%": ("cu_asol_pct", "%"),
    "Ag_ppm": ("ag_gpt", "ppm"),
    "As_ppm": ("as_ppm", "ppm"),
    "Zn_ppm": ("zn_ppm", "ppm"),
    "Pb_ppm": ("pb_ppm", "ppm"),
    "Mg_%": ("mg_pct", "%"),
    "Al_%": ("al_pct", "%"),
    "K_%": ("k_pct", "%"),
}
# Lab detection limits (in the lab's unit) and decimals reported.
LAB_DETECTION_LIMITS = {
    "Cu_%": 0.001,
    "Au_ppb": 5.0,
    "Mo_ppm": 1.0,
    "Fe_%": 0.01,
    "S_%": 0.01,
    "Ca_%": 0.01,
    "CuAS_%": 0.01,
    "Ag_ppm": 0.5,
    "As_ppm": 5.0,
    "Zn_ppm": 2.0,
    "Pb_ppm": 2.0,
    "Mg_%": 0.01,
    "Al_%": 0.01,
    "K_%": 0.01,
}
LAB_DECIMALS = {
    "Cu_%": 3,
    "Au_ppb": 0,
    "Mo_ppm": 0,
    "Fe_%": 2,
    "S_%": 2,
    "Ca_%": 2,
    "CuAS_%": 3,
    "Ag_ppm": 1,
    "As_ppm": 0,
    "Zn_ppm": 0,
    "Pb_ppm": 0,
    "Mg_%": 2,
    "Al_%": 2,
    "K_%": 2,
}
# Relative analytical precision (1 sigma, lognormal) by canonical column (common practice
# orders of magnitude for four-acid ICP and fire assay; invented for the demo).
ASSAY_PRECISION_FRAC = {
    "cu_pct": 0.04,
    "au_gpt": 0.15,
    "mo_ppm": 0.10,
    "fe_pct": 0.03,
    "s_pct": 0.04,
    "ca_pct": 0.04,
    "cu_asol_pct": 0.06,
    "ag_gpt": 0.12,
    "as_ppm": 0.10,
    "zn_ppm": 0.08,
    "pb_ppm": 0.08,
    "mg_pct": 0.03,
    "al_pct": 0.03,
    "k_pct": 0.03,
}
# Scanner noise: multiplicative (rel_sd) and additive (abs_sd_pct, wt%) on each mineral,
# multiplicative only on the fine-grained Cu minerals and molybdenite; unexplained_sd_pct is
# the part of each row left unassigned (rows sum to a little under 100 %).
SCAN_NOISE = {
    "rel_sd": 0.10,
    "abs_sd_pct": 0.12,
    "fine_rel_sd": 0.12,
    "unexplained_sd_pct": 0.6,
    "aloh_sd_nm": 1.0,
    "feoh_sd_nm": 1.2,
}
DENSITY_REL_SD = 0.015  # precision of a water-immersion density on one billet (demo value)
# Below this reported wt% the scanner returns 0 (sulfides are quantified lower).
SCAN_QUANTIFICATION_PCT = 0.2
SCAN_SULFIDE_QUANTIFICATION_PCT = 0.02
_FINE = {
    "chalcopyrite",
    "bornite",
    "chalcocite",
    "covellite",
    "molybdenite",
    "malachite",
    "chrysocolla",
}


def first_core_depths(collars: pd.DataFrame, rng: np.random.Generator) -> np.ndarray:
    """Depth of the first core below each hole's precollar (1.5-9 m) [m]."""
    return np.round(rng.uniform(1.5, 9.0, len(collars)), 1)


def _regular_breaks(start, total, step):
    """from/to arrays of `step` m intervals from start to total (last one shorter)."""
    edges = np.arange(start, total, step)
    tos = np.minimum(edges + step, total)
    keep = (tos - edges) >= 0.3
    return edges[keep], tos[keep]


def _mid_geology(model, collars, surveys, hole, frm, to):
    mid = (frm + to) / 2.0
    x, y, z = positions_at(collars, surveys, hole, mid)
    return sample_geology(model, x, y, z)


def make_scan(
    model: DepositModel,
    collars: pd.DataFrame,
    surveys: pd.DataFrame,
    first_core_m: np.ndarray,
    rng: np.random.Generator,
) -> pd.DataFrame:
    """Core-scanner mineral abundances at 1 m (wt%, rounded to 0.01) with absorption features.

    The scanner sees the true mineralogy with multiplicative (10 %) and additive (0.12 wt%)
    noise, reports 0 below its quantification limit, and gives the featureless
    quartz-feldspar the remainder less a small unexplained fraction (rows sum to 98-100 %).
    """
    holes, frm, to = [], [], []
    for h, c0, td in zip(collars["hole_id"], first_core_m, collars["total_depth_m"], strict=True):
        f, t = _regular_breaks(c0, td, 1.0)
        holes.append(np.full(len(f), h, dtype=object))
        frm.append(f)
        to.append(t)
    hole = np.concatenate(holes).astype(str)
    frm = np.round(np.concatenate(frm), 2)
    to = np.round(np.concatenate(to), 2)
    g = _mid_geology(model, collars, surveys, hole, frm, to)
    n = len(hole)
    m = g.minerals_pct * np.exp(rng.normal(0.0, SCAN_NOISE["rel_sd"], g.minerals_pct.shape))
    m += rng.normal(0.0, SCAN_NOISE["abs_sd_pct"], m.shape)
    limit = np.array(
        [
            SCAN_SULFIDE_QUANTIFICATION_PCT if k in _FINE else SCAN_QUANTIFICATION_PCT
            for k in MINERALS
        ]
    )
    fine = np.array([k in _FINE for k in MINERALS])
    m[:, fine] = g.minerals_pct[:, fine] * np.exp(
        rng.normal(0.0, SCAN_NOISE["fine_rel_sd"], (n, fine.sum()))
    )
    m = np.where(m < limit, 0.0, m)
    qf = MINERALS.index("quartz_feldspar")
    m[:, qf] = 0.0
    m = np.round(m, 2)
    m[:, qf] = np.round(
        np.maximum(
            100.0 - m.sum(axis=1) - np.abs(rng.normal(0.0, SCAN_NOISE["unexplained_sd_pct"], n)),
            0.0,
        ),
        2,
    )
    scan = pd.DataFrame(m, columns=list(SCANNED_MINERAL_COLUMNS))
    wm = scan["white_mica_pct"].to_numpy() + scan["illite_pct"].to_numpy()
    aloh = np.clip(
        g.white_mica_aloh_nm + rng.normal(0.0, SCAN_NOISE["aloh_sd_nm"], n), 2193.0, 2217.0
    )
    chl = scan["chlorite_pct"].to_numpy()
    feoh = np.clip(
        g.chlorite_feoh_nm + rng.normal(0.0, SCAN_NOISE["feoh_sd_nm"], n), 2240.0, 2262.0
    )
    scan["white_mica_aloh_nm"] = np.where(wm >= 1.0, np.round(aloh, 1), np.nan)
    scan["chlorite_feoh_nm"] = np.where(chl >= 1.0, np.round(feoh, 1), np.nan)
    scan.insert(0, "to_m", to)
    scan.insert(0, "from_m", frm)
    scan.insert(0, "hole_id", hole)
    return scan


def assay_breaks(collars: pd.DataFrame, first_core_m: np.ndarray, rng: np.random.Generator):
    """Assay sample breaks: ~2 m (some 1.5 / 2.5 m) from an offset start, with unsampled gaps."""
    holes, frm, to = [], [], []
    for h, c0, td in zip(collars["hole_id"], first_core_m, collars["total_depth_m"], strict=True):
        start = round(c0 + float(rng.uniform(0.0, 1.5)), 1)
        nmax = int((td - start) / 1.5) + 2
        lengths = rng.choice([2.0, 1.5, 2.5], size=nmax, p=[0.84, 0.08, 0.08])
        edges = start + np.r_[0.0, np.cumsum(lengths)]
        edges = edges[edges < td - 0.5]
        tos = np.r_[edges[1:], td]
        # unsampled runs (core loss, not sampled): drop about 3 % of samples in short runs
        drop = np.zeros(len(edges), dtype=bool)
        for _ in range(rng.poisson(len(edges) * 0.01)):
            at = int(rng.integers(0, len(edges)))
            drop[at : at + int(rng.integers(1, 5))] = True
        holes.append(np.full((~drop).sum(), h, dtype=object))
        frm.append(edges[~drop])
        to.append(tos[~drop])
    return (
        np.concatenate(holes).astype(str),
        np.round(np.concatenate(frm), 2),
        np.round(np.concatenate(to), 2),
    )


def make_assays(
    model: DepositModel,
    collars: pd.DataFrame,
    surveys: pd.DataFrame,
    first_core_m: np.ndarray,
    rng: np.random.Generator,
) -> pd.DataFrame:
    """Canonical assays: numeric, canonical units, with analytical noise, not yet censored.

    Element grades come from the true minerals at the sample by stoichiometry
    (:func:`geomet.demo.deposit.element_grades`); Au, Ag, As, Zn and Pb from trace fields.

    Returns
    -------
    DataFrame
        hole_id, from_m, to_m and the 14 ``glossary.ASSAY_COLUMNS``.
    """
    hole, frm, to = assay_breaks(collars, first_core_m, rng)
    g = _mid_geology(model, collars, surveys, hole, frm, to)
    grades = element_grades(g.minerals_pct, g.gypsum_frac)
    grades.update(g.trace)
    out = pd.DataFrame({"hole_id": hole, "from_m": frm, "to_m": to})
    n = len(hole)
    for col in ASSAY_COLUMNS:
        noise = np.exp(rng.normal(0.0, ASSAY_PRECISION_FRAC[col], n))
        out[col] = grades[col] * noise
    out["cu_asol_pct"] = np.minimum(out["cu_asol_pct"], out["cu_pct"])
    return out


def _fmt(values: np.ndarray, decimals: int) -> np.ndarray:
    """Fixed-decimal strings (deterministic; no locale)."""
    return np.array([f"{v:.{decimals}f}" for v in values], dtype=object)


def format_lab_assays(assays: pd.DataFrame, rng: np.random.Generator) -> pd.DataFrame:
    """Write canonical assays the way the lab delivers them: lab headers, units and codes.

    Au in ppb, Ag in ppm; values below detection as ``<DL``, except copper, which this
    lab reports below detection as a negative number (``-0.001``); a few ``IS``
    (insufficient sample) cells and a few ``NS`` (not sampled) rows.
    """
    out = pd.DataFrame(
        {
            "HoleID": assays["hole_id"].to_numpy(),
            "From": _fmt(assays["from_m"].to_numpy(), 2),
            "To": _fmt(assays["to_m"].to_numpy(), 2),
        }
    )
    n = len(assays)
    for header, (col, unit) in LAB_ASSAY_HEADERS.items():
        v = assays[col].to_numpy(dtype=float)
        if unit == "ppb":
            v = v * 1000.0
        dl = LAB_DETECTION_LIMITS[header]
        dec = LAB_DECIMALS[header]
        v = np.round(v, dec)
        text = _fmt(v, dec)
        below = v < dl
        dl_text = f"{dl:g}"
        code = f"-{dl_text}" if header == "Cu_%" else f"<{dl_text}"
        text[below] = code
        out[header] = text
    n_is = max(1, n // 1500)
    is_rows = rng.choice(n, size=min(n_is * 3, n), replace=False)
    for k, r in enumerate(is_rows):
        out.iloc[r, out.columns.get_loc("Au_ppb" if k % 3 else "CuAS_%")] = "IS"
    ns_rows = rng.choice(n, size=min(max(1, n // 2500), n), replace=False)
    for r in ns_rows:
        out.iloc[r, 3:] = "NS"
    return out


def _merge_equal_neighbours(runs: list[list]) -> list[list]:
    merged: list[list] = []
    for r in runs:
        if merged and merged[-1][2] == r[2]:
            merged[-1][1] = r[1]
        else:
            merged.append(list(r))
    return merged


def _absorb_short_runs(runs: list[list], min_run_m: float) -> list[list]:
    """Merge each run shorter than min_run_m into its longer neighbour, shortest first.

    Runs are ``[from_m, to_m, code]``, contiguous; neighbours with the same code are merged.
    """
    runs = _merge_equal_neighbours(runs)
    while len(runs) > 1:
        lengths = [r[1] - r[0] for r in runs]
        i = int(np.argmin(lengths))
        if lengths[i] >= min_run_m:
            break
        if i == 0:
            j = 1
        elif i == len(runs) - 1:
            j = i - 1
        else:
            j = i - 1 if lengths[i - 1] >= lengths[i + 1] else i + 1
        lo, hi = min(i, j), max(i, j)
        runs[lo : hi + 1] = [[runs[lo][0], runs[hi][1], runs[j][2]]]
        runs = _merge_equal_neighbours(runs)
    return runs


def make_lithology(
    model: DepositModel,
    collars: pd.DataFrame,
    surveys: pd.DataFrame,
    rng: np.random.Generator,
    min_run_m: float = 3.0,
) -> pd.DataFrame:
    """Logged lithology from the collar to the end of hole, runs shorter than 3 m absorbed.

    The model is read every metre; the geologist's contacts are placed to 0.1 m within
    half a metre of the modelled one.
    """
    holes, mids = [], []
    for h, td in zip(collars["hole_id"], collars["total_depth_m"], strict=True):
        edges = np.arange(0.0, td, 1.0)
        holes.append(np.full(len(edges), h, dtype=object))
        mids.append(edges + 0.5)
    hole = np.concatenate(holes).astype(str)
    mid = np.concatenate(mids)
    x, y, z = positions_at(collars, surveys, hole, mid)
    code = lithology_at(model, x, y, z)
    change = np.r_[True, (code[1:] != code[:-1]) | (hole[1:] != hole[:-1])]
    starts = np.flatnonzero(change)
    ends = np.r_[starts[1:], len(code)]
    total = dict(zip(collars["hole_id"], collars["total_depth_m"], strict=True))
    rows = []
    hole_starts = np.flatnonzero(np.r_[True, hole[starts][1:] != hole[starts][:-1]])
    hole_ends = np.r_[hole_starts[1:], len(starts)]
    for a, b in zip(hole_starts, hole_ends, strict=True):
        h = hole[starts[a]]
        runs = [
            [mid[s] - 0.5, mid[e - 1] + 0.5, code[s]]
            for s, e in zip(starts[a:b], ends[a:b], strict=True)
        ]
        runs[-1][1] = total[h]
        runs = _absorb_short_runs(runs, min_run_m)
        for k in range(1, len(runs)):
            contact = round(runs[k][0] + float(rng.uniform(-0.5, 0.5)), 1)
            runs[k - 1][1] = runs[k][0] = contact
        rows.extend((h, round(r[0], 2), round(r[1], 2), r[2]) for r in runs)
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", "lith_code"])


def make_density(
    model: DepositModel,
    collars: pd.DataFrame,
    surveys: pd.DataFrame,
    first_core_m: np.ndarray,
    rng: np.random.Generator,
) -> pd.DataFrame:
    """Dry bulk density intervals of 5-10 m (one billet measured per interval, 1.5 % precision)."""
    holes, frm, to = [], [], []
    for h, c0, td in zip(collars["hole_id"], first_core_m, collars["total_depth_m"], strict=True):
        lengths = np.round(rng.uniform(5.0, 10.0, int(td / 5.0) + 2) * 2.0) / 2.0
        edges = c0 + np.r_[0.0, np.cumsum(lengths)]
        edges = edges[edges < td - 1.0]
        holes.append(np.full(len(edges), h, dtype=object))
        frm.append(edges)
        to.append(np.r_[edges[1:], td])
    hole = np.concatenate(holes).astype(str)
    frm = np.round(np.concatenate(frm), 2)
    to = np.round(np.concatenate(to), 2)
    # the billet is taken somewhere inside the interval
    at = frm + rng.uniform(0.2, 0.8, len(frm)) * (to - frm)
    x, y, z = positions_at(collars, surveys, hole, at)
    g = sample_geology(model, x, y, z)
    rho = bulk_density_t_m3(g.minerals_pct, g.gypsum_frac, g.porosity_frac)
    rho = rho * np.exp(rng.normal(0.0, DENSITY_REL_SD, len(rho)))
    return pd.DataFrame(
        {"hole_id": hole, "from_m": frm, "to_m": to, "density_t_m3": np.round(rho, 2)}
    )
