"""Clustering into domains: k selection, seeding, subsampling, density noise, stability."""

from __future__ import annotations

import numpy as np
import pytest
from sklearn.cluster import KMeans
from sklearn.datasets import make_blobs
from sklearn.metrics import adjusted_rand_score, silhouette_score
from sklearn.mixture import GaussianMixture

from geomet.domains.cluster import DomainClusterer, clustering_stability
from geomet.errors import InputDataError


@pytest.fixture(scope="module")
def blobs():
    # four well separated clusters (scikit-learn make_blobs): every method should find them
    X, y = make_blobs(n_samples=1200, centers=4, n_features=5, cluster_std=0.6,
                      random_state=7)
    return X, y


def test_estimator_api():
    c = DomainClusterer(method="gmm", n_domains=3, seed=5)
    assert c.get_params()["n_domains"] == 3
    assert c.set_params(seed=6).seed == 6


@pytest.mark.parametrize("criterion", ["silhouette", "calinski_harabasz", "davies_bouldin"])
def test_kmeans_auto_finds_four(blobs, criterion):
    X, y = blobs
    c = DomainClusterer(method="kmeans", k_min=2, k_max=7, criterion=criterion, seed=1).fit(X)
    assert c.n_domains_ == 4
    assert adjusted_rand_score(y, c.labels_) > 0.99
    sel = c.selection_
    assert sel["k"].tolist() == list(range(2, 8))
    assert int(sel.loc[sel["chosen"], "k"].iloc[0]) == 4


def test_silhouette_curve_matches_scikit_learn(blobs):
    X, _ = blobs
    c = DomainClusterer(method="kmeans", k_min=3, k_max=5, score_rows=len(X), seed=2).fit(X)
    for row in c.selection_.itertuples():
        # reference: sklearn KMeans with the same seed stream and sklearn silhouette_score
        model = c.model_ if row.k == c.n_domains_ else None
        if model is not None:
            assert np.isclose(row.score, silhouette_score(X, model.labels_))


def test_gmm_bic_finds_four(blobs):
    X, y = blobs
    c = DomainClusterer(method="gmm", k_min=2, k_max=6, seed=3).fit(X)
    assert c.n_domains_ == 4
    assert c.selection_["criterion"].iloc[0] == "bic"
    # BIC values: scikit-learn GaussianMixture.bic of the chosen model on the fitted rows
    chosen = c.selection_.loc[c.selection_["chosen"], "score"].iloc[0]
    assert np.isclose(chosen, c.model_.bic(X))
    assert adjusted_rand_score(y, c.labels_) > 0.99
    assert isinstance(c.model_, GaussianMixture)


def test_density_assigns_noise_to_nearest_cluster(blobs):
    X, y = blobs
    rng = np.random.default_rng(0)
    Xn = np.vstack([X, rng.uniform(X.min(), X.max(), size=(30, X.shape[1]))])
    c = DomainClusterer(method="density", min_cluster_size=40, seed=0).fit(Xn)
    assert c.n_domains_ == 4
    assert (c.labels_ >= 0).all()
    assert c.noise_frac_ > 0
    assert adjusted_rand_score(y, c.labels_[: len(y)]) > 0.95
    assert c.centroids().shape == (4, X.shape[1])
    assert len(c.prototypes_) == 4 * 50  # 50 prototypes per cluster summarise its members
    # new rows are assigned to the nearest prototype's cluster: the blob centres themselves
    centres = np.vstack([X[y == k].mean(axis=0) for k in range(4)])
    assert sorted(c.predict(centres).tolist()) == [0, 1, 2, 3]


def test_fixed_k_and_seeding(blobs):
    X, _ = blobs
    a = DomainClusterer(n_domains=4, seed=11).fit(X).labels_
    b = DomainClusterer(n_domains=4, seed=11).fit(X).labels_
    assert np.array_equal(a, b)


def test_subsample_fit_predicts_every_row(blobs):
    X, y = blobs
    c = DomainClusterer(n_domains=4, max_fit_rows=200, seed=4).fit(X)
    assert c.fit_rows_ == 200
    assert len(c.labels_) == len(X)
    assert adjusted_rand_score(y, c.labels_) > 0.99
    # predict equals a KMeans predict on the same fitted model (scikit-learn reference)
    assert isinstance(c.model_, KMeans)
    assert np.array_equal(c.predict(X), c.model_.predict(X))


def test_stability_high_for_separated_clusters(blobs):
    X, _ = blobs
    c = DomainClusterer(n_domains="auto", k_min=2, k_max=6, seed=0).fit(X)
    st = clustering_stability(X, c, c.labels_, seed_offsets=(1, 2), bootstrap=True)
    assert st["adjusted_rand_idx"].min() > 0.99
    assert st["n_domains"].tolist() == [4, 4]
    assert st["seed"].tolist() == [1, 2]
    assert (st[[f"jaccard_{k}_frac" for k in range(4)]] > 0.99).all().all()


def test_stability_low_for_structureless_data():
    X = np.random.default_rng(1).normal(size=(600, 3))
    c = DomainClusterer(n_domains=6, n_init=1, seed=0).fit(X)
    st = clustering_stability(X, c, c.labels_, seed_offsets=(1, 2, 3), bootstrap=True)
    assert st["adjusted_rand_idx"].mean() < 0.95  # k-means on noise is not reproducible


def test_errors(blobs):
    X, _ = blobs
    with pytest.raises(InputDataError, match="clustering method must be one of"):
        DomainClusterer(method="spectral").fit(X)
    with pytest.raises(InputDataError, match="criterion must be one of"):
        DomainClusterer(criterion="gap").fit(X)
    with pytest.raises(InputDataError, match="2 <= k_min <= k_max"):
        DomainClusterer(k_min=5, k_max=3).fit(X)
    with pytest.raises(InputDataError, match="'auto' or a positive integer"):
        DomainClusterer(n_domains=0).fit(X)
    with pytest.raises(InputDataError, match="cannot make 5 domains from 3 rows"):
        DomainClusterer(n_domains=5).fit(X[:3])
    with pytest.raises(InputDataError, match="finite 2-D array"):
        DomainClusterer().fit(np.full((5, 2), np.nan))
    with pytest.raises(InputDataError, match="not fitted"):
        DomainClusterer().predict(X)
    with pytest.raises(InputDataError, match="not fitted"):
        DomainClusterer().centroids()
    c = DomainClusterer(n_domains=2).fit(X)
    with pytest.raises(InputDataError, match="expected 5 feature columns"):
        c.predict(X[:, :2])
    with pytest.raises(InputDataError, match="between 2 and the 1200 fitted rows"):
        DomainClusterer(method="density", min_cluster_size=5000).fit(X)
    flat = np.random.default_rng(0).uniform(size=(60, 2))
    with pytest.raises(InputDataError, match="found no cluster"):
        DomainClusterer(method="density", min_cluster_size=59).fit(flat)
    with pytest.raises(InputDataError, match="differ in length"):
        clustering_stability(X, c, c.labels_[:10])


def test_cluster_jaccard_hand_worked():
    from geomet.domains.cluster import cluster_jaccard

    # reference A = rows {0,1,2}, B = {3,4}; other labelling X = {0,1}, Y = {2,3,4}
    # A: best |A∩X|/|A∪X| = 2/3; B: best |B∩Y|/|B∪Y| = 2/3 (Jaccard 1901 index, by hand)
    out = cluster_jaccard([0, 0, 0, 1, 1], [5, 5, 6, 6, 6])
    assert np.allclose([out[0], out[1]], [2 / 3, 2 / 3])
    assert cluster_jaccard([0, 1], [1, 0]) == {0: 1.0, 1: 1.0}
    with pytest.raises(InputDataError, match="differ in length"):
        cluster_jaccard([0, 1], [0])
