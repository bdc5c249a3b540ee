"""Demo metallurgical testwork from a hidden "true" response of each sample's mineralogy.

Each sample is a 10-30 m composite of assay intervals. Its features are the length-weighted
scan mineralogy and assays over the interval; the hidden truth (parameters in
:data:`TRUTH_PARAMETERS`, written to ``truth/parameters.json``) maps them to Bond ball-mill
work index, SMC A x b and Mia, rougher Cu and Au recovery and column-leach acid; measured
values add the stated noise. Feed, concentrate and tail assays are made consistent with the
measured recovery by the two-product formula.

References
----------
.. [1] Wills, B.A. & Finch, J.A. (2016). Wills' Mineral Processing Technology, 8th ed.
   Butterworth-Heinemann. Two-product formula, ch. 3.
.. [2] Garcia-Zuniga, H. (1935). La eficiencia de la flotacion es una funcion exponencial
   del tiempo. Boletin Minero, Sociedad Nacional de Mineria (Chile) 47, 83-86.
   First-order flotation kinetics R = Rinf (1 - exp(-k t)).
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from geomet.demo import chemistry

# The hidden truth (invented for the demo; smooth and physically signed).
TRUTH_PARAMETERS: dict = {
    "clay_severity_weights": {
        "clay_swelling_pct": 3.0,
        "clay_kaolin_pct": 1.0,
        "white_mica_illite_pct": 0.1,
    },
    "bond_bwi_kwh_t": {
        "intercept": 13.2,
        "featureless_pct_above_55": 0.055,
        "femg_silicate_pct": 0.09,
        "clay_total_pct": -0.14,
        "iron_oxide_pct": -0.10,
        "min": 7.0,
        "max": 22.0,
    },
    "smc_axb": {
        "log_intercept": 3.738,
        "clay_total_pct": 0.022,
        "featureless_pct_above_55": -0.012,
        "iron_oxide_pct": 0.01,
        "min": 20.0,
        "max": 150.0,
    },
    "smc_mia_kwh_t": {"intercept": 8.0, "per_inverse_axb": 560.0, "bond_bwi_above_13": 0.25},
    "rougher_cu": {
        "time_min": 12.0,
        "rinf_intercept": 0.955,
        "oxide_ratio_frac": -0.85,
        "clay_swelling_pct": -0.011,
        "clay_kaolin_pct": -0.0035,
        "rinf_min": 0.05,
        "rinf_max": 0.97,
        "k_per_min": 0.38,
        "k_clay_severity_decay": 0.035,
    },
    "rougher_au": {
        "time_min": 12.0,
        "rinf_intercept": 0.86,
        "oxide_ratio_frac": -0.55,
        "clay_swelling_pct": -0.007,
        "clay_kaolin_pct": -0.002,
        "rinf_min": 0.05,
        "rinf_max": 0.92,
        "k_per_min": 0.26,
        "k_clay_severity_decay": 0.025,
    },
    "leach_acid_kg_t": {
        "base_kg_t": 4.0,
        "reactivity_frac": {
            "calcite": 0.95,
            "dolomite": 0.9,
            "ankerite": 0.85,
            "siderite": 0.6,
            "chlorite": 0.10,
            "biotite": 0.06,
            "actinolite": 0.04,
        },
        "oxide_cu_dissolved_frac": 0.95,
    },
    "rougher_conc_cu_pct": {
        "intercept": 12.0,
        "high_grade_cu_mineral_share": 6.0,
        "clay_kaolin_pct": -0.25,
        "clay_swelling_pct": -0.35,
        "pyrite_pct": -0.05,
        "min": 4.0,
        "max": 25.0,
    },
    "noise": {
        "bond_bwi_kwh_t_sd": 0.5,
        "smc_axb_rel_sd": 0.07,
        "smc_mia_kwh_t_rel_sd": 0.04,
        "rougher_cu_recovery_pct_sd": 1.5,
        "rougher_au_recovery_pct_sd": 3.0,
        "leach_acid_kg_t_rel_sd": 0.08,
        "head_assay_rel_sd": 0.03,
        "conc_cu_pct_sd": 1.0,
    },
}

_DATE0 = np.datetime64("2021-06-01")
_DATE1 = np.datetime64("2025-09-30")


def mineral_groups(df: pd.DataFrame) -> pd.DataFrame:
    """Group sums [wt%] used by the demo truth, named as in ``docs/contracts.md``."""
    g = pd.DataFrame(index=df.index)
    g["clay_swelling_pct"] = df["smectite_pct"]
    g["clay_kaolin_pct"] = df["kaolinite_pct"] + df["dickite_pct"] + df["halloysite_pct"]
    g["white_mica_illite_pct"] = df["white_mica_pct"] + df["illite_pct"]
    g["sulfate_pct"] = df["gypsum_anhydrite_pct"]
    g["carbonate_pct"] = df[["calcite_pct", "dolomite_pct", "ankerite_pct", "siderite_pct"]].sum(
        axis=1
    )
    g["femg_silicate_pct"] = df[["chlorite_pct", "biotite_pct", "actinolite_pct"]].sum(axis=1)
    g["iron_oxide_pct"] = df[["magnetite_pct", "hematite_pct", "goethite_pct"]].sum(axis=1)
    g["featureless_pct"] = df["quartz_feldspar_pct"]
    g["clay_total_pct"] = g["clay_swelling_pct"] + g["clay_kaolin_pct"] + df["illite_pct"]
    w = TRUTH_PARAMETERS["clay_severity_weights"]
    g["clay_severity_idx"] = sum(g[k] * v for k, v in w.items())
    return g


def true_responses(features: pd.DataFrame) -> pd.DataFrame:
    """Noise-free testwork responses of samples from their features.

    Parameters
    ----------
    features : DataFrame
        The mineral columns (``<mineral>_pct``), ``cu_pct`` and ``cu_asol_pct`` of each sample
        (length-weighted over the sample interval).

    Returns
    -------
    DataFrame
        bond_bwi_kwh_t, smc_axb, smc_mia_kwh_t, rougher_cu_recovery_pct,
        rougher_au_recovery_pct, leach_acid_kg_t, plus the group columns and oxide_ratio_frac.

    Notes
    -----
    Rougher recovery is first order, R = Rinf (1 - exp(-k t)) at t = 12 min (ref. [2]),
    with Rinf linear in the oxide ratio and clays and k = k0 exp(-a clay_severity_idx).
    Acid = base + sum_i 10 m_i f_i r_i + 10 cu_asol (M(H2SO4)/M(Cu)) e, with f_i the
    stoichiometric factor of mineral i (:func:`geomet.demo.chemistry.acid_factor_kg_kg`),
    r_i its reactivity and e the share of oxide Cu dissolved.
    """
    p = TRUTH_PARAMETERS
    g = mineral_groups(features)
    ox = np.clip(features["cu_asol_pct"] / np.maximum(features["cu_pct"], 1e-6), 0.0, 1.0)
    g["oxide_ratio_frac"] = ox
    q = g["featureless_pct"] - 55.0
    b = p["bond_bwi_kwh_t"]
    bwi = (
        b["intercept"]
        + b["featureless_pct_above_55"] * q
        + b["femg_silicate_pct"] * g["femg_silicate_pct"]
        + b["clay_total_pct"] * g["clay_total_pct"]
        + b["iron_oxide_pct"] * g["iron_oxide_pct"]
    )
    g["bond_bwi_kwh_t"] = bwi.clip(b["min"], b["max"])
    a = p["smc_axb"]
    axb = np.exp(
        a["log_intercept"]
        + a["clay_total_pct"] * g["clay_total_pct"]
        + a["featureless_pct_above_55"] * q
        + a["iron_oxide_pct"] * g["iron_oxide_pct"]
    )
    g["smc_axb"] = axb.clip(a["min"], a["max"])
    mi = p["smc_mia_kwh_t"]
    g["smc_mia_kwh_t"] = (
        mi["intercept"]
        + mi["per_inverse_axb"] / g["smc_axb"]
        + mi["bond_bwi_above_13"] * (g["bond_bwi_kwh_t"] - 13.0)
    )
    for metal in ("cu", "au"):
        r = p[f"rougher_{metal}"]
        rinf = (
            r["rinf_intercept"]
            + r["oxide_ratio_frac"] * ox
            + r["clay_swelling_pct"] * g["clay_swelling_pct"]
            + r["clay_kaolin_pct"] * g["clay_kaolin_pct"]
        ).clip(r["rinf_min"], r["rinf_max"])
        k = r["k_per_min"] * np.exp(-r["k_clay_severity_decay"] * g["clay_severity_idx"])
        g[f"rougher_{metal}_recovery_pct"] = 100.0 * rinf * (1.0 - np.exp(-k * r["time_min"]))
    ac = p["leach_acid_kg_t"]
    acid = np.full(len(features), ac["base_kg_t"])
    for mineral, react in ac["reactivity_frac"].items():
        acid = (
            acid + 10.0 * features[f"{mineral}_pct"] * chemistry.acid_factor_kg_kg(mineral) * react
        )
    acid = (
        acid
        + 10.0
        * features["cu_asol_pct"]
        * chemistry.acid_per_cu_kg_kg()
        * ac["oxide_cu_dissolved_frac"]
    )
    g["leach_acid_kg_t"] = acid
    return g


def two_product_recovery_frac(feed, conc, tail):
    """Two-product recovery R = c (f - t) / (f (c - t)) [fraction] (ref. [1])."""
    feed, conc, tail = (np.asarray(v, dtype=float) for v in (feed, conc, tail))
    return conc * (feed - tail) / (feed * (conc - tail))


def _by_hole(table: pd.DataFrame, cols: list[str]) -> dict[str, tuple[np.ndarray, ...]]:
    out = {}
    for hole, sub in table.groupby("hole_id", sort=False):
        out[hole] = (
            sub["from_m"].to_numpy(float),
            sub["to_m"].to_numpy(float),
            sub[cols].to_numpy(dtype=float),
        )
    return out


def _weighted_over(by_hole, hole: str, frm: float, to: float):
    f, t, vals = by_hole[hole]
    ov = np.clip(np.minimum(t, to) - np.maximum(f, frm), 0.0, None)
    ok = ~np.isnan(vals)
    wsum = (ov[:, None] * ok).sum(axis=0)
    return np.where(
        wsum > 0,
        (np.nan_to_num(vals) * ov[:, None]).sum(axis=0) / np.where(wsum > 0, wsum, 1),
        np.nan,
    )


def choose_samples(assays: pd.DataFrame, n_samples: int, rng: np.random.Generator) -> pd.DataFrame:
    """Pick non-overlapping 10-30 m composites on assay breaks, favouring mineralised core."""
    chosen: dict[str, list[tuple[float, float]]] = {}
    rows = []
    weights = 1.0 + 3.0 * (assays["cu_pct"].to_numpy() > 0.2)
    weights = weights / weights.sum()
    tries = 0
    while len(rows) < n_samples and tries < 50 * n_samples:
        tries += 1
        i = int(rng.choice(len(assays), p=weights))
        hole = assays["hole_id"].iloc[i]
        frm = float(assays["from_m"].iloc[i])
        length = float(rng.uniform(10.0, 30.0))
        same = assays[(assays["hole_id"] == hole) & (assays["from_m"] >= frm)]
        ends = same["to_m"].to_numpy()
        k = np.flatnonzero(ends - frm >= length)
        if len(k) == 0 or ends[k[0]] - frm > 30.0:
            continue
        to = float(ends[k[0]])
        sampled = (same["to_m"] - same["from_m"]).to_numpy()[: k[0] + 1].sum()
        if sampled < (to - frm) - 1e-6:  # an unsampled gap inside: not a usable composite
            continue
        if any(frm < b and to > a for a, b in chosen.get(hole, [])):
            continue
        chosen.setdefault(hole, []).append((frm, to))
        rows.append((hole, round(frm, 2), round(to, 2)))
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m"])


def make_testwork(
    scan: pd.DataFrame, assays: pd.DataFrame, n_samples: int, rng: np.random.Generator
) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Testwork results (measured) and the noise-free truth per sample.

    Returns
    -------
    testwork : DataFrame
        sample_id, hole_id, from_m, to_m and the testwork columns of ``docs/contracts.md``.
    truth : DataFrame
        sample_id, the noise-free responses and the features they were computed from.
    """
    p = TRUTH_PARAMETERS
    noise = p["noise"]
    samples = choose_samples(assays, n_samples, rng)
    mineral_cols = [c for c in scan.columns if c.endswith("_pct")]
    feats = []
    scan_by_hole = _by_hole(scan, mineral_cols)
    assay_by_hole = _by_hole(assays, ["cu_pct", "au_gpt", "cu_asol_pct"])
    for hole, frm, to in samples.itertuples(index=False):
        mvals = _weighted_over(scan_by_hole, hole, frm, to)
        avals = _weighted_over(assay_by_hole, hole, frm, to)
        feats.append(np.r_[mvals, avals])
    features = pd.DataFrame(feats, columns=[*mineral_cols, "cu_pct", "au_gpt", "cu_asol_pct"])
    truth = true_responses(features)
    n = len(samples)
    days = int((_DATE1 - _DATE0) / np.timedelta64(1, "D"))
    dates = np.sort(_DATE0 + rng.integers(0, days, n).astype("timedelta64[D]"))
    order = rng.permutation(n)  # samples were not tested in hole order
    samples = samples.iloc[order].reset_index(drop=True)
    features = features.iloc[order].reset_index(drop=True)
    truth = truth.iloc[order].reset_index(drop=True)
    sample_id = [f"OVM-{i + 1:04d}" for i in range(n)]

    bwi = truth["bond_bwi_kwh_t"] + rng.normal(0.0, noise["bond_bwi_kwh_t_sd"], n)
    axb = truth["smc_axb"] * np.exp(rng.normal(0.0, noise["smc_axb_rel_sd"], n))
    mia = truth["smc_mia_kwh_t"] * np.exp(rng.normal(0.0, noise["smc_mia_kwh_t_rel_sd"], n))
    acid = truth["leach_acid_kg_t"] * np.exp(rng.normal(0.0, noise["leach_acid_kg_t_rel_sd"], n))
    r_cu = (
        np.clip(
            truth["rougher_cu_recovery_pct"]
            + rng.normal(0.0, noise["rougher_cu_recovery_pct_sd"], n),
            3.0,
            99.0,
        )
        / 100.0
    )
    r_au = (
        np.clip(
            truth["rougher_au_recovery_pct"]
            + rng.normal(0.0, noise["rougher_au_recovery_pct_sd"], n),
            3.0,
            99.0,
        )
        / 100.0
    )
    feed_cu = np.round(
        np.maximum(features["cu_pct"].to_numpy(), 0.01)
        * np.exp(rng.normal(0.0, noise["head_assay_rel_sd"], n)),
        3,
    )
    feed_au = np.round(
        np.maximum(features["au_gpt"].to_numpy(), 0.01)
        * np.exp(rng.normal(0.0, noise["head_assay_rel_sd"], n)),
        3,
    )
    c = p["rougher_conc_cu_pct"]
    cu_minerals = features[["chalcopyrite_pct", "bornite_pct", "chalcocite_pct", "covellite_pct"]]
    hi_cu = (
        features["bornite_pct"] * chemistry.element_fractions("bornite")["Cu"]
        + features["chalcocite_pct"] * chemistry.element_fractions("chalcocite")["Cu"]
    )
    all_cu = hi_cu + (
        cu_minerals["chalcopyrite_pct"] * chemistry.element_fractions("chalcopyrite")["Cu"]
        + cu_minerals["covellite_pct"] * chemistry.element_fractions("covellite")["Cu"]
    )
    share = (hi_cu / all_cu.where(all_cu > 0)).fillna(0.0)
    conc_cu = (
        c["intercept"]
        + c["high_grade_cu_mineral_share"] * share
        + c["clay_kaolin_pct"] * truth["clay_kaolin_pct"]
        + c["clay_swelling_pct"] * truth["clay_swelling_pct"]
        + c["pyrite_pct"] * features["pyrite_pct"]
    ).clip(c["min"], c["max"])
    conc_cu = np.round(
        np.maximum(conc_cu.to_numpy() + rng.normal(0.0, noise["conc_cu_pct_sd"], n), 3.0 * feed_cu),
        2,
    )
    # tail from the two-product formula solved for t: t = c f (1 - R) / (c - R f)
    tail_cu = np.round(conc_cu * feed_cu * (1.0 - r_cu) / (conc_cu - r_cu * feed_cu), 3)
    tail_cu = np.clip(tail_cu, 0.001, feed_cu - 0.001)
    rec_cu = two_product_recovery_frac(feed_cu, conc_cu, tail_cu)
    yield_frac = (feed_cu - tail_cu) / (conc_cu - tail_cu)
    conc_au = np.round(r_au * feed_au / yield_frac, 2)
    tail_au = np.clip(
        np.round((1.0 - r_au) * feed_au / (1.0 - yield_frac), 3), 0.001, feed_au - 0.001
    )
    rec_au = two_product_recovery_frac(feed_au, conc_au, tail_au)

    testwork = pd.DataFrame(
        {
            "sample_id": sample_id,
            "hole_id": samples["hole_id"],
            "from_m": samples["from_m"],
            "to_m": samples["to_m"],
            "bond_bwi_kwh_t": np.round(bwi, 2),
            "smc_axb": np.round(axb, 1),
            "smc_mia_kwh_t": np.round(mia, 1),
            "feed_cu_pct": feed_cu,
            "conc_cu_pct": conc_cu,
            "tail_cu_pct": tail_cu,
            "feed_au_gpt": feed_au,
            "conc_au_gpt": conc_au,
            "tail_au_gpt": tail_au,
            "rougher_cu_recovery_pct": np.round(100.0 * rec_cu, 2),
            "rougher_au_recovery_pct": np.round(100.0 * rec_au, 2),
            "leach_acid_kg_t": np.round(acid, 1),
            "test_date": [str(d) for d in dates],
        }
    )
    resp = [
        "bond_bwi_kwh_t",
        "smc_axb",
        "smc_mia_kwh_t",
        "rougher_cu_recovery_pct",
        "rougher_au_recovery_pct",
        "leach_acid_kg_t",
    ]
    feat_cols = [
        "clay_swelling_pct",
        "clay_kaolin_pct",
        "white_mica_illite_pct",
        "sulfate_pct",
        "carbonate_pct",
        "femg_silicate_pct",
        "iron_oxide_pct",
        "featureless_pct",
        "clay_total_pct",
        "clay_severity_idx",
        "oxide_ratio_frac",
    ]
    out_truth = pd.concat(
        [
            pd.DataFrame({"sample_id": sample_id}),
            truth[resp].round(4),
            truth[feat_cols].round(4),
            features[["cu_pct", "au_gpt", "cu_asol_pct"]].round(4),
        ],
        axis=1,
    )
    testwork = testwork.sort_values("sample_id", kind="stable").reset_index(drop=True)
    return testwork, out_truth
