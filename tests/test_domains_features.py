"""Feature assembly (log-ratio transformer and PCA pipeline)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from skbio.stats.composition import clr as sk_clr
from skbio.stats.composition import ilr as sk_ilr
from skbio.stats.composition import multi_replace as sk_multi_replace
from sklearn.base import clone
from sklearn.decomposition import PCA
from sklearn.preprocessing import StandardScaler
from test_domains_synthetic import make_mineralogy

from geomet.domains.features import (
    GROUP_COLUMNS,
    LogRatioFeatures,
    build_feature_pipeline,
    composition_columns,
    has_composition,
)
from geomet.domains.logratio import pivot_basis
from geomet.errors import InputDataError
from geomet.glossary import SCANNED_MINERAL_COLUMNS


@pytest.fixture(scope="module")
def table():
    return make_mineralogy(n_holes=3, seed=11)


def test_estimator_api(table):
    est = LogRatioFeatures(parts=("quartz_feldspar_pct", "white_mica_pct"), delta_pct=0.1)
    assert est.get_params()["delta_pct"] == 0.1
    twin = clone(est)
    assert twin.get_params() == est.get_params()
    assert est.fit(table) is est
    assert est.n_features_out_ == 2
    assert list(est.get_feature_names_out()) == ["clr_quartz_feldspar_pct", "clr_white_mica_pct"]


def test_clr_features_match_scikit_bio(table):
    parts = composition_columns(table, "minerals")
    est = LogRatioFeatures(parts=parts, delta_pct=0.065).fit(table)
    out = est.transform(table)
    x = table[parts].to_numpy(float) / 100.0
    # reference: scikit-bio multi_replace (delta as a fraction of the closed total) then clr
    ref = sk_clr(sk_multi_replace(x, delta=0.065 / 100))
    assert np.allclose(out, ref, atol=1e-10)


def test_ilr_features_match_scikit_bio(table):
    parts = list(GROUP_COLUMNS)
    est = LogRatioFeatures(parts=parts, logratio="ilr", delta_pct=0.05).fit(table)
    out = est.transform(table)
    x = table[parts].to_numpy(float)
    ref = sk_ilr(sk_multi_replace(x / x.sum(axis=1, keepdims=True), delta=0.05 / 100),
                 basis=pivot_basis(len(parts)))
    assert out.shape == (len(table), len(parts) - 1)
    assert np.allclose(out, ref, atol=1e-10)


def test_chemistry_columns_and_missing_rows(table):
    df = table.head(5).copy()
    df.loc[df.index[0], list(SCANNED_MINERAL_COLUMNS)] = np.nan  # no scan data at all
    df.loc[df.index[1], "cu_pct"] = 0.0  # floored before log10
    est = LogRatioFeatures(parts=SCANNED_MINERAL_COLUMNS, log_columns=("cu_pct",),
                           linear_columns=("white_mica_aloh_nm",)).fit(df)
    out = est.transform(df)
    assert np.isnan(out[0, :35]).all()
    positive = df["cu_pct"][df["cu_pct"] > 0]
    assert np.isclose(out[1, 35], np.log10(positive.min() / 2))
    assert np.allclose(out[2:, 35], np.log10(df["cu_pct"].iloc[2:]))
    assert np.allclose(out[:, 36], df["white_mica_aloh_nm"])
    assert has_composition(df, SCANNED_MINERAL_COLUMNS).tolist() == [False] + [True] * 4


def test_pipeline_pca_keeps_variance_share(table):
    parts = composition_columns(table)
    pipe = build_feature_pipeline(parts, log_columns=["cu_pct"], pca_variance_frac=0.8)
    z = pipe.fit_transform(table)
    pca = pipe.named_steps["pca"]
    assert pca.explained_variance_ratio_.sum() >= 0.8
    # reference: scikit-learn PCA on the standardised features gives the same spectrum
    feats = pipe.named_steps["logratio"].transform(table)
    ref = PCA().fit(StandardScaler().fit_transform(feats))
    k = z.shape[1]
    assert np.allclose(pca.explained_variance_ratio_, ref.explained_variance_ratio_[:k])
    fixed = build_feature_pipeline(parts, pca_components=3).fit(table)
    assert fixed.transform(table).shape == (len(table), 3)


def test_composition_columns_choices(table):
    assert len(composition_columns(table, "minerals")) == 35
    assert composition_columns(table, "groups") == list(GROUP_COLUMNS)
    assert composition_columns(table, ["biotite_pct", "chlorite_pct"]) == [
        "biotite_pct", "chlorite_pct"]


def test_errors(table):
    with pytest.raises(InputDataError, match="'minerals', 'groups' or a list"):
        composition_columns(table, "everything")
    with pytest.raises(InputDataError, match="not in the table"):
        composition_columns(table, ["biotite_pct", "unobtainium_pct"])
    with pytest.raises(InputDataError, match="at least 2 composition columns"):
        composition_columns(pd.DataFrame({"biotite_pct": [1.0]}), "minerals")
    with pytest.raises(InputDataError, match="needs a pandas DataFrame"):
        LogRatioFeatures().fit(np.ones((3, 35)))
    with pytest.raises(InputDataError, match="'clr' or 'ilr'"):
        LogRatioFeatures(logratio="alr").fit(table)
    with pytest.raises(InputDataError, match="are missing"):
        LogRatioFeatures(log_columns=("zn_ppm",)).fit(table)
    with pytest.raises(InputDataError, match="at least 2 parts"):
        LogRatioFeatures(parts=("biotite_pct",)).fit(table)
    with pytest.raises(InputDataError, match="not fitted"):
        LogRatioFeatures().transform(table)
    bad = table.head(3).copy()
    bad.loc[bad.index[0], "biotite_pct"] = -1.0
    est = LogRatioFeatures().fit(table)
    with pytest.raises(InputDataError, match="non-negative"):
        est.transform(bad)
    with pytest.raises(InputDataError, match="pca_variance_frac"):
        build_feature_pipeline(["a", "b"], pca_variance_frac=1.5)
    with pytest.raises(InputDataError, match="pca_components"):
        build_feature_pipeline(["a", "b"], pca_components=0)
