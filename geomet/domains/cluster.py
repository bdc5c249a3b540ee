"""Clustering of feature vectors into domains, with the number of domains chosen by a
stated criterion, seeded, and scalable by fitting on a seeded subsample.

:class:`DomainClusterer` is a scikit-learn clusterer (``fit`` / ``predict`` /
``fit_predict``) so that it can be the last step of the domaining ``Pipeline``:

- ``method="kmeans"``: k-means (Lloyd, k-means++ start) for each k in ``[k_min, k_max]``;
  k chosen by the mean silhouette (Rousseeuw 1987, largest wins), the Calinski-Harabasz
  index (Caliński & Harabasz 1974, largest wins) or the Davies-Bouldin index (Davies &
  Bouldin 1979, smallest wins), each computed on a seeded subsample.
- ``method="gmm"``: Gaussian mixtures (full covariance) with k chosen by the smallest
  Bayesian information criterion (Schwarz 1978).
- ``method="density"``: HDBSCAN (Campello, Moulavi & Sander 2013); the number of domains
  follows from the density. Each cluster is summarised by up to ``prototypes`` k-means
  centres of its members; noise points and new rows join the cluster of the nearest
  prototype (1-nearest-neighbour), which keeps prediction of a million rows fast.

Scaling: every model is fitted on at most ``max_fit_rows`` rows drawn with the seed
(with replacement when ``bootstrap`` is set) and then predicts all rows, so that a million
composites cost one fit on the subsample plus a linear-time prediction.

References
----------
Rousseeuw, P.J. (1987). Silhouettes: a graphical aid to the interpretation and validation of
cluster analysis. *Journal of Computational and Applied Mathematics* 20, 53-65.
DOI 10.1016/0377-0427(87)90125-7.

Caliński, T. and Harabasz, J. (1974). A dendrite method for cluster analysis.
*Communications in Statistics* 3(1), 1-27. DOI 10.1080/03610927408827101.

Davies, D.L. and Bouldin, D.W. (1979). A cluster separation measure. *IEEE Transactions on
Pattern Analysis and Machine Intelligence* PAMI-1(2), 224-227. DOI 10.1109/TPAMI.1979.4766909.

Schwarz, G. (1978). Estimating the dimension of a model. *Annals of Statistics* 6(2),
461-464. DOI 10.1214/aos/1176344136.

Campello, R.J.G.B., Moulavi, D. and Sander, J. (2013). Density-based clustering based on
hierarchical density estimates. *PAKDD 2013*, LNCS 7819, 160-172.
DOI 10.1007/978-3-642-37456-2_14.

Hubert, L. and Arabie, P. (1985). Comparing partitions. *Journal of Classification* 2,
193-218. DOI 10.1007/BF01908075 (adjusted Rand index).
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
from sklearn.base import BaseEstimator, ClusterMixin, clone
from sklearn.cluster import HDBSCAN, KMeans
from sklearn.metrics import (
    adjusted_rand_score,
    calinski_harabasz_score,
    davies_bouldin_score,
    silhouette_score,
)
from sklearn.mixture import GaussianMixture
from sklearn.neighbors import KNeighborsClassifier
from threadpoolctl import threadpool_limits

from geomet.errors import InputDataError

__all__ = ["METHODS", "CRITERIA", "DomainClusterer", "cluster_jaccard", "clustering_stability"]

METHODS = ("kmeans", "gmm", "density")
# criterion -> (function, larger is better)
CRITERIA = {
    "silhouette": (silhouette_score, True),
    "calinski_harabasz": (calinski_harabasz_score, True),
    "davies_bouldin": (davies_bouldin_score, False),
}


class DomainClusterer(ClusterMixin, BaseEstimator):
    """Seeded clustering of feature rows into domains, fitted on a subsample.

    Parameters
    ----------
    method : {"kmeans", "gmm", "density"}
    n_domains : int or "auto"
        Fixed number of domains, or "auto" to choose it in ``[k_min, k_max]``
        (ignored by ``"density"``).
    k_min, k_max : int
        Range of k tried when ``n_domains="auto"``.
    criterion : {"silhouette", "calinski_harabasz", "davies_bouldin"}
        k-means selection rule (GMM always uses BIC).
    max_fit_rows : int
        Largest number of rows a model is fitted on (seeded subsample beyond that).
    score_rows : int
        Rows of the subsample on which the k-means criterion is computed (silhouette is
        quadratic in rows).
    min_cluster_size : int, optional
        HDBSCAN smallest cluster [rows]; default 1 % of the fitted rows, at least 10.
    n_init : int
        Restarts of k-means per k (best kept); Gaussian mixtures start once from k-means.
    prototypes : int
        Density method: prototypes per cluster (k-means centres of its members) used to
        assign noise and new rows to the nearest cluster.
    bootstrap : bool
        Draw the fit subsample with replacement (for stability checks).
    seed : int
        Seed of every random choice.
    n_threads : int or None
        BLAS / OpenMP threads while fitting and predicting (None: the libraries' default).
        One thread is the default because on a small shared machine the threaded k-means
        and GMM ran over ten times slower than single-threaded (measured on 2 busy cores).

    Attributes
    ----------
    model_ : fitted KMeans, GaussianMixture or KNeighborsClassifier (density)
    n_domains_ : int
    cluster_centers_ : numpy.ndarray, shape (n_domains_, n_features)
        Centres (k-means), component means (GMM) or cluster means (density).
    selection_ : pandas.DataFrame
        The selection curve: ``k`` and ``score`` with the criterion's name in
        ``criterion``, ``chosen`` True on the chosen k (empty for a fixed k or density).
    labels_ : numpy.ndarray of int
        Cluster of every row given to ``fit`` (0 … n_domains_ - 1).
    fit_rows_ : int
        Rows the model was fitted on.
    noise_frac_ : float
        Density method: share of fitted rows HDBSCAN called noise [fraction].
    """

    def __init__(
        self,
        method: str = "kmeans",
        n_domains: int | str = "auto",
        k_min: int = 3,
        k_max: int = 10,
        criterion: str = "silhouette",
        max_fit_rows: int = 50_000,
        score_rows: int = 5_000,
        min_cluster_size: int | None = None,
        n_init: int = 4,
        prototypes: int = 50,
        bootstrap: bool = False,
        seed: int = 0,
        n_threads: int | None = 1,
    ):
        self.method = method
        self.n_domains = n_domains
        self.k_min = k_min
        self.k_max = k_max
        self.criterion = criterion
        self.max_fit_rows = max_fit_rows
        self.score_rows = score_rows
        self.min_cluster_size = min_cluster_size
        self.n_init = n_init
        self.prototypes = prototypes
        self.bootstrap = bootstrap
        self.seed = seed
        self.n_threads = n_threads

    # -- validation ---------------------------------------------------------------------------
    def _validate(self, n_rows: int) -> list[int]:
        if self.method not in METHODS:
            msg = f"clustering method must be one of {METHODS}; got {self.method!r}"
            raise InputDataError(msg)
        if self.criterion not in CRITERIA:
            msg = f"k-means criterion must be one of {tuple(CRITERIA)}; got {self.criterion!r}"
            raise InputDataError(msg)
        if self.method == "density":
            return []
        if self.n_domains == "auto":
            if not 2 <= self.k_min <= self.k_max:
                msg = (
                    f"the k range needs 2 <= k_min <= k_max; got k_min={self.k_min}, "
                    f"k_max={self.k_max}"
                )
                raise InputDataError(msg)
            ks = list(range(self.k_min, self.k_max + 1))
        elif isinstance(self.n_domains, int | np.integer) and self.n_domains >= 1:
            ks = [int(self.n_domains)]
        else:
            msg = f"n_domains must be 'auto' or a positive integer; got {self.n_domains!r}"
            raise InputDataError(msg)
        if ks[-1] > n_rows:
            msg = f"cannot make {ks[-1]} domains from {n_rows} rows; lower n_domains or k_max"
            raise InputDataError(msg)
        return ks

    def _subsample(self, n_rows: int, rng: np.random.Generator) -> np.ndarray:
        if self.bootstrap:
            return rng.integers(0, n_rows, size=min(n_rows, self.max_fit_rows))
        if n_rows <= self.max_fit_rows:
            return np.arange(n_rows)
        return np.sort(rng.choice(n_rows, size=self.max_fit_rows, replace=False))

    # -- fitting ------------------------------------------------------------------------------
    def fit(self, X, y=None):
        with threadpool_limits(limits=self.n_threads):
            return self._fit(X)

    def _fit(self, X):
        X = np.asarray(X, dtype=float)
        if X.ndim != 2 or not np.isfinite(X).all():
            msg = "domain features must be a finite 2-D array (impute or drop missing rows first)"
            raise InputDataError(msg)
        ks = self._validate(len(X))
        rng = np.random.default_rng(self.seed)
        idx = self._subsample(len(X), rng)
        Xf = X[idx]
        self.fit_rows_ = len(idx)
        self.n_features_in_ = X.shape[1]
        self.noise_frac_ = 0.0
        if self.method == "density":
            self._fit_density(Xf)
        else:
            self._fit_partition(Xf, ks, rng)
            self.cluster_centers_ = (
                self.model_.cluster_centers_ if self.method == "kmeans" else self.model_.means_
            )
        self.labels_ = self.predict(X)
        return self

    def _make(self, k: int, seed: int):
        if self.method == "kmeans":
            return KMeans(n_clusters=k, n_init=self.n_init, random_state=seed)
        return GaussianMixture(
            n_components=k, covariance_type="full", n_init=1,
            reg_covar=1e-5, random_state=seed,
        )

    def _fit_partition(self, Xf: np.ndarray, ks: Sequence[int], rng: np.random.Generator):
        model_seed = int(rng.integers(0, 2**31 - 1))
        if len(ks) == 1:
            self.model_ = self._make(ks[0], model_seed).fit(Xf)
            self.n_domains_ = ks[0]
            self.selection_ = pd.DataFrame(columns=["k", "criterion", "score", "chosen"])
            return
        score_idx = (
            np.arange(len(Xf))
            if len(Xf) <= self.score_rows
            else rng.choice(len(Xf), size=self.score_rows, replace=False)
        )
        rows, models = [], {}
        for k in ks:
            model = self._make(k, model_seed).fit(Xf)
            models[k] = model
            if self.method == "gmm":
                rows.append((k, "bic", float(model.bic(Xf))))
            else:
                labels = model.labels_[score_idx]
                func, _ = CRITERIA[self.criterion]
                score = func(Xf[score_idx], labels) if np.unique(labels).size > 1 else np.nan
                rows.append((k, self.criterion, float(score)))
        sel = pd.DataFrame(rows, columns=["k", "criterion", "score"])
        larger_better = self.method == "kmeans" and CRITERIA[self.criterion][1]
        scores = sel["score"].to_numpy()
        if np.isnan(scores).all():
            best = ks[0]
        else:
            pos = np.nanargmax(scores) if larger_better else np.nanargmin(scores)
            best = int(sel["k"].iloc[pos])  # first (smallest) k wins ties
        sel["chosen"] = sel["k"] == best
        self.selection_ = sel
        self.model_ = models[best]
        self.n_domains_ = best

    def _fit_density(self, Xf: np.ndarray):
        mcs = self.min_cluster_size or max(10, len(Xf) // 100)
        if not 2 <= mcs <= len(Xf):
            msg = (
                f"min_cluster_size must be between 2 and the {len(Xf)} fitted rows; got {mcs}"
            )
            raise InputDataError(msg)
        labels = HDBSCAN(min_cluster_size=int(mcs), copy=True).fit_predict(Xf)
        clustered = labels >= 0
        if not clustered.any():
            msg = (
                f"density clustering found no cluster in {len(Xf)} rows with "
                f"min_cluster_size={mcs}; lower min_cluster_size or use kmeans/gmm"
            )
            raise InputDataError(msg)
        self.noise_frac_ = float(1 - clustered.mean())
        uniq, labels_c = np.unique(labels[clustered], return_inverse=True)
        Xc = Xf[clustered]
        self.n_domains_ = int(uniq.size)
        self.cluster_centers_ = np.vstack(
            [Xc[labels_c == k].mean(axis=0) for k in range(self.n_domains_)]
        )
        # prototypes: each cluster summarised by up to `prototypes` k-means centres of its own
        # members, so that the nearest-prototype rule follows non-convex cluster shapes and
        # still predicts a million rows quickly
        protos, proto_labels = [], []
        for k in range(self.n_domains_):
            members = Xc[labels_c == k]
            m = min(self.prototypes, len(members))
            if m == len(members):
                centres = members
            else:
                centres = KMeans(n_clusters=m, n_init=1, random_state=self.seed).fit(
                    members).cluster_centers_
            protos.append(centres)
            proto_labels.append(np.full(len(centres), k))
        self.prototypes_ = np.vstack(protos)
        self.model_ = KNeighborsClassifier(n_neighbors=1, algorithm="brute").fit(
            self.prototypes_, np.concatenate(proto_labels))
        self.selection_ = pd.DataFrame(columns=["k", "criterion", "score", "chosen"])

    def predict(self, X) -> np.ndarray:
        """Domain (0 … n_domains_ - 1) of every row of X."""
        if not hasattr(self, "model_"):
            msg = "DomainClusterer is not fitted yet; call fit first"
            raise InputDataError(msg)
        X = np.asarray(X, dtype=float)
        if X.ndim != 2 or X.shape[1] != self.n_features_in_:
            msg = (
                f"expected {self.n_features_in_} feature columns to predict domains; "
                f"got shape {X.shape}"
            )
            raise InputDataError(msg)
        out = np.empty(len(X), dtype=int)
        step = 200_000
        with threadpool_limits(limits=self.n_threads):
            for start in range(0, len(X), step):
                out[start : start + step] = self.model_.predict(X[start : start + step])
        return out

    def centroids(self) -> np.ndarray:
        """Cluster centres in feature space, shape (n_domains_, n_features)."""
        if not hasattr(self, "cluster_centers_"):
            msg = "DomainClusterer is not fitted yet; call fit first"
            raise InputDataError(msg)
        return self.cluster_centers_


def clustering_stability(
    X,
    clusterer: DomainClusterer,
    reference_labels,
    *,
    seed_offsets: Sequence[int] = (1, 2, 3),
    bootstrap: bool = True,
    eval_rows: int = 20_000,
    seed: int = 0,
) -> pd.DataFrame:
    """Agreement of re-fitted clusterings with a reference, by adjusted Rand index.

    Parameters
    ----------
    X : array_like, shape (n_rows, n_features)
        Features the reference was fitted on.
    clusterer : DomainClusterer
        The fitted (or configured) reference clusterer; each repeat is a clone with seed
        ``clusterer.seed + offset``, the reference's number of domains fixed, and a bootstrap
        fit sample when ``bootstrap``.
    reference_labels : array_like of int, shape (n_rows,)
    seed_offsets : sequence of int
    bootstrap : bool
    eval_rows : int
        Rows (seeded subsample) on which the labels are compared.
    seed : int

    Returns
    -------
    pandas.DataFrame
        One row per re-fit: ``seed``, ``bootstrap``, ``n_domains``, ``adjusted_rand_idx``,
        and ``jaccard_<k>_frac``, the best Jaccard match of reference cluster k
        (:func:`cluster_jaccard`; cluster-wise stability, Hennig 2007).

    Notes
    -----
    ARI = (RI - E[RI]) / (max RI - E[RI]) (Hubert & Arabie 1985): 1 for identical partitions
    up to label names, about 0 for chance agreement. Computed with
    ``sklearn.metrics.adjusted_rand_score``.
    """
    X = np.asarray(X, dtype=float)
    ref = np.asarray(reference_labels)
    if len(ref) != len(X):
        msg = f"reference labels ({len(ref)}) and feature rows ({len(X)}) differ in length"
        raise InputDataError(msg)
    rng = np.random.default_rng(seed)
    ev = np.arange(len(X)) if len(X) <= eval_rows else rng.choice(len(X), eval_rows, replace=False)
    rows = []
    k_fixed = getattr(clusterer, "n_domains_", clusterer.n_domains)
    for off in seed_offsets:
        c = clone(clusterer).set_params(seed=int(clusterer.seed) + int(off), bootstrap=bootstrap)
        if c.method != "density":
            c.set_params(n_domains=int(k_fixed))
        c.fit(X)
        labels = c.predict(X[ev])
        row = {
            "seed": int(c.seed),
            "bootstrap": bool(bootstrap),
            "n_domains": int(c.n_domains_),
            "adjusted_rand_idx": float(adjusted_rand_score(ref[ev], labels)),
        }
        for k, jac in cluster_jaccard(ref[ev], labels).items():
            row[f"jaccard_{k}_frac"] = jac
        rows.append(row)
    return pd.DataFrame(rows)


def cluster_jaccard(reference_labels, labels) -> dict:
    """Best Jaccard similarity of each reference cluster with any cluster of ``labels``.

    Parameters
    ----------
    reference_labels, labels : array_like
        Two labellings of the same rows.

    Returns
    -------
    dict
        reference cluster -> max_B |A ∩ B| / |A ∪ B| [fraction 0-1].

    Notes
    -----
    The cluster-wise stability of Hennig (2007) averages this over bootstrap re-fits; a
    cluster below about 0.6 is usually not reproducible (Hennig's rule of thumb, from
    memory).

    References
    ----------
    Hennig, C. (2007). Cluster-wise assessment of cluster stability. *Computational
    Statistics & Data Analysis* 52(1), 258-271. DOI 10.1016/j.csda.2006.11.025.
    """
    ref = pd.Series(np.asarray(reference_labels))
    lab = pd.Series(np.asarray(labels))
    if len(ref) != len(lab):
        msg = f"the two labellings differ in length ({len(ref)} and {len(lab)})"
        raise InputDataError(msg)
    table = pd.crosstab(ref, lab)
    inter = table.to_numpy(dtype=float)
    size_a = inter.sum(axis=1, keepdims=True)
    size_b = inter.sum(axis=0, keepdims=True)
    jac = inter / (size_a + size_b - inter)
    return {int(k) if isinstance(k, int | np.integer) else k: float(v)
            for k, v in zip(table.index, jac.max(axis=1), strict=True)}
