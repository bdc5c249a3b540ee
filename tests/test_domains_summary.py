"""Domain names and the domain table."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from test_domains_synthetic import make_mineralogy

from geomet.domains.naming import name_domains, theme_scores
from geomet.domains.summary import domain_summary, summary_attributes, weighted_quantiles
from geomet.errors import InputDataError


@pytest.fixture(scope="module")
def zoned():
    df = make_mineralogy(n_holes=4, seed=21, flicker=0.0)
    ids = df["true_zone"].map({"leached": 1, "argillic": 2, "phyllic": 3, "potassic": 4})
    return df.assign(domain_id=ids.to_numpy())


def test_names_follow_the_dominant_assemblage(zoned):
    names = name_domains(zoned, zoned["domain_id"])
    assert names[1].startswith("Leached iron-oxide")
    assert names[2].startswith("Swelling-clay argillic")
    assert names[4].startswith("Potassic biotite")
    assert names[4].endswith("high Cu-Au")
    assert names[1].endswith("low Cu-Au")
    assert len(set(names.values())) == 4
    assert name_domains(zoned, zoned["domain_id"]) == names  # deterministic


def test_theme_score_is_log_ratio_of_medians(zoned):
    scores = theme_scores(zoned, zoned["domain_id"], offset_pct=2.0)
    v = zoned["clay_swelling_pct"]
    expected = np.log((v[zoned["domain_id"] == 2].median() + 2) / (v.median() + 2))
    assert np.isclose(scores.loc[2, "Swelling-clay argillic"], expected)


def test_names_are_unique_when_domains_look_alike(zoned):
    # split the potassic zone in two arbitrary halves: the names must still differ
    ids = zoned["domain_id"].to_numpy().copy()
    pot = np.flatnonzero(ids == 4)
    ids[pot[::2]] = 5
    names = name_domains(zoned, ids)
    assert len(set(names.values())) == 5


def test_grade_only_and_no_grade_names():
    df = pd.DataFrame({"smectite_pct": [10.0, 10.0, 0.0, 0.0], "quartz_feldspar_pct": [50.0] * 4})
    names = name_domains(df, [1, 1, 2, 2])
    assert names[1] == "Swelling-clay argillic"
    assert names[2] == "Background"


def test_weighted_quantiles_equal_weights_match_numpy_hazen():
    rng = np.random.default_rng(0)
    v = rng.normal(size=101)
    q = [0.1, 0.5, 0.9]
    # reference: numpy percentile, Hyndman & Fan (1996) definition 5 ("hazen")
    assert np.allclose(weighted_quantiles(v, np.ones_like(v), q),
                       np.quantile(v, q, method="hazen"))


def test_weighted_quantiles_integer_weights_equal_repetition():
    v = np.array([1.0, 2.0, 3.0])
    w = np.array([1.0, 2.0, 1.0])
    assert np.isclose(weighted_quantiles(v, w, [0.5])[0], 2.0)
    assert np.isnan(weighted_quantiles([np.nan], [1.0], [0.5])[0])


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(-100, 100), min_size=1, max_size=30), st.floats(0, 1))
def test_weighted_quantile_within_range(values, q):
    w = np.linspace(1, 2, len(values))
    out = weighted_quantiles(values, w, [q])[0]
    assert min(values) - 1e-9 <= out <= max(values) + 1e-9


def test_domain_summary_metres_and_envelope(zoned):
    df = zoned.assign(domain="D" + zoned["domain_id"].astype(str))
    out = domain_summary(df, envelope_cutoff=0.2)
    allz = out[out["zone"] == "all"]
    assert np.isclose(allz["length_m"].sum(), df["length_m"].sum())
    assert np.isclose(allz["length_share_frac"].sum(), 1.0)
    d4 = df[df["domain_id"] == 4]
    row = allz.set_index("domain_id").loc[4]
    assert np.isclose(row["cu_pct_mean"], np.average(d4["cu_pct"], weights=d4["length_m"]))
    assert np.isclose(row["cu_pct_p50"], np.quantile(d4["cu_pct"], 0.5, method="hazen"))
    inside = out[(out["zone"] == "inside envelope") & (out["domain_id"] == 4)].iloc[0]
    outside = out[(out["zone"] == "outside envelope") & (out["domain_id"] == 4)].iloc[0]
    assert np.isclose(inside["length_m"], d4.loc[d4["cu_pct"] >= 0.2, "length_m"].sum())
    assert np.isclose(inside["length_m"] + outside["length_m"], row["length_m"])
    assert inside["cu_pct_p10"] >= 0.2
    assert "norm_chalcopyrite_pct_p90" in out.columns
    assert "clay_severity_idx_mean" in out.columns
    no_env = domain_summary(df, envelope_cutoff=None)
    assert set(no_env["zone"]) == {"all"}


def test_summary_attributes_and_errors(zoned):
    attrs = summary_attributes(zoned)
    assert attrs[0] == "clay_swelling_pct"
    assert "norm_chalcopyrite_pct" in attrs
    with pytest.raises(InputDataError, match=r"needs columns \['domain'\]"):
        domain_summary(zoned)
    with pytest.raises(InputDataError, match="attributes not in the table"):
        domain_summary(zoned.assign(domain="x"), attributes=["zn_ppm"])


@settings(max_examples=25, deadline=None)
@given(st.integers(2, 12), st.integers(0, 10_000))
def test_names_always_unique(k, seed):
    df = make_mineralogy(n_holes=2, seed=5)
    labels = np.random.default_rng(seed).integers(0, k, len(df))
    names = name_domains(df, labels)
    assert len(set(names.values())) == len(names) == len(np.unique(labels))


@settings(max_examples=40, deadline=None)
@given(st.lists(st.floats(-50, 50), min_size=2, max_size=40))
def test_weighted_quantiles_monotone_in_q(values):
    w = np.linspace(2, 1, len(values))
    out = weighted_quantiles(values, w, np.linspace(0, 1, 11))
    assert (np.diff(out) >= -1e-12).all()
