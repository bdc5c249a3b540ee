"""Synthetic Vellantra-style mineralogy tables for the domain tests (and checks of the helper).

Holes pass down through four invented alteration zones of a porphyry system (leached cap with
iron oxides, swelling-clay argillic overprint, phyllic sericite-pyrite, potassic
biotite-K-feldspar-magnetite), each with its own mean mineral composition (Dirichlet noise)
and Cu-Au grade, so that a clustering should find the zones back.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.glossary import SCANNED_MINERAL_COLUMNS, SCANNED_MINERALS

ZONES = {
    "leached": {"quartz_feldspar": 45, "goethite": 12, "hematite": 8, "jarosite": 4,
                "kaolinite": 10, "illite": 6, "white_mica": 5, "alunite": 3},
    "argillic": {"quartz_feldspar": 35, "smectite": 22, "kaolinite": 12, "illite": 10,
                 "white_mica": 8, "gypsum_anhydrite": 3, "pyrite": 2, "chlorite": 3},
    "phyllic": {"quartz_feldspar": 40, "white_mica": 28, "illite": 8, "pyrite": 7,
                "chalcopyrite": 0.8, "gypsum_anhydrite": 2, "chlorite": 2, "rutile": 0.5},
    "potassic": {"quartz_feldspar": 35, "k_feldspar": 18, "biotite": 16, "magnetite": 5,
                 "chalcopyrite": 1.5, "bornite": 0.6, "gypsum_anhydrite": 4, "white_mica": 4,
                 "chlorite": 3, "apatite": 0.5, "molybdenite": 0.05},
}
ZONE_GRADE = {"leached": (0.05, 0.05), "argillic": (0.15, 0.10), "phyllic": (0.35, 0.20),
              "potassic": (0.60, 0.45)}  # (Cu %, Au g/t) medians, invented


def make_mineralogy(n_holes: int = 8, seed: int = 3, step_m: float = 2.0,
                    zone_m: tuple = (30, 40, 50, 60), flicker: float = 0.03) -> pd.DataFrame:
    """A ``mineralogy``-like table (contract column names) with a known zone per row."""
    rng = np.random.default_rng(seed)
    names = list(ZONES)
    rows = []
    for h in range(n_holes):
        hole = f"VL-{h + 1:03d}"
        depth = 0.0
        for z, name in enumerate(names):
            thick = zone_m[z] * rng.uniform(0.8, 1.2)
            n = max(1, int(thick // step_m))
            for _ in range(n):
                zone = name
                if rng.uniform() < flicker:  # short, geologically noisy intervals
                    zone = names[rng.integers(len(names))]
                rows.append((hole, depth, depth + step_m, zone))
                depth += step_m
    df = pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", "true_zone"])
    means = np.array([[ZONES[z].get(m, 0.0) for m in SCANNED_MINERALS] for z in names])
    zi = df["true_zone"].map({z: i for i, z in enumerate(names)}).to_numpy()
    conc = 60.0
    comp = np.vstack([rng.dirichlet(np.where(means[k] > 0, means[k] / means[k].sum() * conc,
                                             1e-3)) for k in zi]) * 100
    comp[comp < 0.05] = 0.0  # below a scanner's reporting limit
    mins = pd.DataFrame(comp.round(3), columns=list(SCANNED_MINERAL_COLUMNS))
    df = pd.concat([df, mins], axis=1)
    df["length_m"] = df["to_m"] - df["from_m"]
    cu_med = np.array([ZONE_GRADE[z][0] for z in names])[zi]
    au_med = np.array([ZONE_GRADE[z][1] for z in names])[zi]
    df["cu_pct"] = cu_med * rng.lognormal(0, 0.3, len(df))
    df["au_gpt"] = au_med * rng.lognormal(0, 0.3, len(df))
    df["mo_ppm"] = 50 * rng.lognormal(0, 0.5, len(df))
    df["cu_asol_pct"] = df["cu_pct"] * np.where(df["true_zone"] == "leached", 0.6, 0.05)
    df["oxide_ratio_frac"] = df["cu_asol_pct"] / df["cu_pct"]
    df["white_mica_aloh_nm"] = 2203 + rng.normal(0, 2, len(df)) + (zi == 3) * 4
    m = df
    df["clay_swelling_pct"] = m["smectite_pct"]
    df["clay_kaolin_pct"] = m["kaolinite_pct"] + m["dickite_pct"] + m["halloysite_pct"]
    df["white_mica_illite_pct"] = m["white_mica_pct"] + m["illite_pct"]
    df["advanced_argillic_pct"] = (m["pyrophyllite_pct"] + m["alunite_pct"] + m["diaspore_pct"]
                                   + m["dickite_pct"])
    df["sulfate_pct"] = m["gypsum_anhydrite_pct"]
    df["carbonate_pct"] = m[["calcite_pct", "dolomite_pct", "ankerite_pct",
                             "siderite_pct"]].sum(axis=1)
    df["femg_silicate_pct"] = m["chlorite_pct"] + m["biotite_pct"] + m["actinolite_pct"]
    df["iron_oxide_pct"] = m["magnetite_pct"] + m["hematite_pct"] + m["goethite_pct"]
    df["featureless_pct"] = m["quartz_feldspar_pct"]
    df["clay_total_pct"] = df["clay_swelling_pct"] + df["clay_kaolin_pct"] + m["illite_pct"]
    df["clay_severity_idx"] = (1.0 * df["clay_swelling_pct"] + 0.3 * df["clay_kaolin_pct"]
                               + 0.1 * m["illite_pct"])
    df["norm_chalcopyrite_pct"] = df["cu_pct"] / 0.3463 * 0.8
    return df


def make_blocks(n: int = 300, seed: int = 5) -> pd.DataFrame:
    """A ``blocks_mineralogy``-like table sampled from the same zones."""
    src = make_mineralogy(n_holes=4, seed=seed, flicker=0.0)
    pick = src.sample(n=n, replace=True, random_state=seed).reset_index(drop=True)
    pick = pick.drop(columns=["hole_id", "from_m", "to_m", "length_m", "white_mica_aloh_nm"])
    pick.insert(0, "block_id", np.arange(1, n + 1))
    pick["tonnes_t"] = 15_000.0
    pick["period"] = np.arange(n) % 5 + 1
    return pick


def test_synthetic_table_is_closed_to_100():
    df = make_mineralogy(n_holes=2)
    totals = df[list(SCANNED_MINERAL_COLUMNS)].sum(axis=1)
    # rounding to 0.001 wt% and the 0.05 wt% reporting limit remove at most a few tenths
    assert np.allclose(totals, 100, atol=1.0)
    assert set(df["true_zone"]) == set(ZONES)
