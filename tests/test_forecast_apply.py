"""Applying forecasts to tables; domain aggregation; overlap join of testwork."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from geomet.errors import InputDataError
from geomet.forecast import apply as ap
from geomet.forecast import calibration as cal
from geomet.forecast import comminution as comm
from geomet.forecast.inputs import resolve_inputs
from geomet.forecast.join import overlap_join
from geomet.forecast.synthetic import synthetic_mineralogy


@pytest.fixture(scope="module")
def fitted():
    df = synthetic_mineralogy(300, seed=21, n_holes=15)
    X = pd.DataFrame(resolve_inputs(df))
    rng = np.random.default_rng(4)
    targets = {
        name: cal.make_model(name, "none").fit(None, None).predict(X) * 1.05
        + rng.normal(0, scale, len(X))
        for name, scale in (
            ("bond_bwi_kwh_t", 0.5),
            ("smc_axb", 3.0),
            ("smc_mia_kwh_t", 1.0),
            ("cu_recovery_frac", 0.02),
            ("au_recovery_frac", 0.03),
            ("acid_kg_t", 1.5),
        )
    }
    models, _ = cal.fit_all(X, targets, df["hole_id"], n_splits=3)
    return models


def test_all_columns_and_intervals_ordered(fitted):
    blocks = synthetic_mineralogy(2000, seed=5)
    out = ap.add_forecasts(blocks, fitted)
    assert set(ap.FORECAST_COLUMNS) <= set(out.columns)
    for col in ap.INTERVAL_COLUMNS:
        lo, mid, hi = (out[f"{col}_p10"], out[col], out[f"{col}_p90"])
        ok = lo.notna()
        assert ok.all(), col
        assert (lo <= mid + 1e-9).all(), col
        assert (mid <= hi + 1e-9).all(), col
    assert out["cu_recovery_frac"].between(0, 1).all()
    assert (out["throughput_clay_loss_tph"] >= 0).all()
    np.testing.assert_allclose(out["acid_kg_t"], out["acid_gangue_kg_t"] + out["acid_oxide_kg_t"])
    # mill_energy is the energy the throughput implies: Q = P u / mill_energy.
    s = ap.PlantSettings()
    np.testing.assert_allclose(
        out["throughput_tph"], s.mill_power_kw * s.utilisation_frac / out["mill_energy_kwh_t"]
    )


def test_energy_matches_hand_chain():
    s = ap.PlantSettings(
        f80_um=100_000.0, p80_um=150.0, ball_mill_diameter_m=None, pebble_crusher=False
    )
    w = float(ap.specific_energy_kwh_t(14.0, 20.0, s))
    coarse = float(comm.morrell_stage_energy(20.0, 100_000.0, 750.0))
    fine = float(comm.bond_specific_energy(14.0, 750.0, 150.0))  # EF4 = EF5 = 1 here
    assert w == pytest.approx(coarse + fine)
    bond = ap.PlantSettings(
        energy_method="bond", f80_um=2_000.0, p80_um=150.0, ball_mill_diameter_m=None
    )
    assert float(ap.specific_energy_kwh_t(14.0, 20.0, bond)) == pytest.approx(
        float(comm.bond_specific_energy(14.0, 2_000.0, 150.0))
    )


def test_settings_errors():
    with pytest.raises(InputDataError, match="unknown energy_method 'kick'"):
        ap.PlantSettings(energy_method="kick")
    with pytest.raises(InputDataError, match="needs f80_um > 750 > p80_um"):
        ap.PlantSettings(f80_um=500.0)
    with pytest.raises(InputDataError, match="unknown clay penalty parameter"):
        ap.PlantSettings(clay_penalty={"speed": 1.0})


def test_chunking_does_not_change_results(fitted):
    blocks = synthetic_mineralogy(1000, seed=6)
    a = ap.forecast_columns(blocks, fitted, chunk_rows=97)
    b = ap.forecast_columns(blocks, fitted, chunk_rows=10_000)
    for c in ap.FORECAST_COLUMNS:
        # rtol 1e-13: BLAS may block the acid matrix product differently by chunk size.
        np.testing.assert_allclose(a[c], b[c], rtol=1e-13, atol=0)


def test_defaults_without_models_have_no_intervals():
    out = ap.forecast_columns(synthetic_mineralogy(10, seed=1))
    assert np.isnan(out["cu_recovery_frac_p10"]).all()
    assert np.isfinite(out["cu_recovery_frac"]).all()


def test_missing_mineralogy_columns_named():
    df = synthetic_mineralogy(5).drop(columns=["clay_swelling_pct"])
    with pytest.raises(
        InputDataError, match=r"blocks: forecasts need columns \['clay_swelling_pct'\]"
    ):
        ap.forecast_columns(df, where="blocks")


def test_domain_forecasts_aggregate_by_hand():
    t = pd.DataFrame(
        {
            "domain": ["a", "a", "b"],
            "tonnes_t": [100.0, 300.0, 50.0],
            "cu_pct": [1.0, 0.5, 0.2],
            "throughput_tph": [1000.0, 2000.0, 1500.0],
            "cu_recovery_frac": [0.9, 0.8, 0.7],
            "conc_cu_pct": [20.0, 25.0, 22.0],
            "acid_kg_t": [10.0, 30.0, 5.0],
        }
    )
    out = ap.domain_forecasts(t).set_index("domain")
    # Hours: 100/1000 + 300/2000 = 0.25 h for 400 t -> 1600 t/h (harmonic mean).
    assert out.loc["a", "throughput_tph"] == pytest.approx(1600.0)
    # Metal-weighted recovery: (100×1×0.9 + 300×0.5×0.8)/(100 + 150) = 0.84.
    assert out.loc["a", "cu_recovery_frac"] == pytest.approx(0.84)
    # Concentrate: recovered Cu 90 + 120 = 210 over mass 90/20 + 120/25 = 9.3 -> 22.58 %.
    assert out.loc["a", "conc_cu_pct"] == pytest.approx(210 / 9.3)
    assert out.loc["a", "acid_kg_t"] == pytest.approx(25.0)
    assert out.loc["a", "n_rows"] == 2
    with pytest.raises(InputDataError, match="grouping column 'zone' is missing"):
        ap.domain_forecasts(t, by="zone")


def test_overlap_join_length_weighted():
    comps = pd.DataFrame(
        {
            "hole_id": ["H1", "H1", "H1", "H2"],
            "from_m": [0.0, 2.0, 4.0, 0.0],
            "to_m": [2.0, 4.0, 6.0, 2.0],
            "clay_total_pct": [10.0, 20.0, np.nan, 5.0],
            "domain": ["x", "y", "y", "z"],
        }
    )
    samples = pd.DataFrame(
        {
            "sample_id": ["S1", "S2", "S3"],
            "hole_id": ["H1", "H1", "H3"],
            "from_m": [1.0, 3.0, 0.0],
            "to_m": [4.0, 6.0, 1.0],
        }
    )
    out = overlap_join(samples, comps, ["clay_total_pct", "domain"])
    # S1: 1 m at 10 + 2 m at 20 -> 16.667; S2: 1 m at 20 (the NaN metres do not dilute).
    assert out["clay_total_pct"].iloc[0] == pytest.approx(50 / 3)
    assert out["clay_total_pct"].iloc[1] == pytest.approx(20.0)
    assert out["domain"].tolist()[:2] == ["y", "y"]
    assert np.isnan(out["clay_total_pct"].iloc[2])
    assert out["overlap_frac"].tolist()[:2] == [1.0, 1.0]
    with pytest.raises(InputDataError, match=r"composites lack columns \['smectite_pct'\]"):
        overlap_join(samples, comps, ["smectite_pct"])
    with pytest.raises(InputDataError, match=r"samples table lacks key columns \['to_m'\]"):
        overlap_join(samples.drop(columns="to_m"), comps, ["clay_total_pct"])
