"""The ``domains`` run step, called with a hand-built StepContext."""

from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest
from pydantic import ValidationError
from sklearn.metrics import adjusted_rand_score
from test_domains_synthetic import make_blocks, make_mineralogy

from geomet.errors import InputDataError
from geomet.run.registry import STEPS, StepContext
from geomet.run.steps.domains import DomainsOptions, domains_step

FAST = {"k_min": 3, "k_max": 6, "stability_seed_offsets": [1]}


@pytest.fixture(scope="module")
def tables():
    return {"mineralogy": make_mineralogy(n_holes=6, seed=3), "blocks_mineralogy": make_blocks()}


@pytest.fixture(scope="module")
def kmeans_run(tables):
    ctx = StepContext(tables=tables, seed=4)
    return ctx, domains_step(ctx, DomainsOptions(**FAST))


def test_registered():
    step = STEPS["domains"]
    assert step.needs == ("mineralogy",)
    assert set(step.produces) == {"domained", "domain_summary", "domain_crosstab",
                                  "blocks_domained"}
    assert "blocks_mineralogy" in step.optional_needs


def test_kmeans_domains_recover_the_zones(tables, kmeans_run):
    ctx, out = kmeans_run
    d = out["domained"]
    src = tables["mineralogy"]
    assert len(d) == len(src)
    assert list(d.columns[: len(src.columns)]) == list(src.columns)
    assert (d["domain_id"] >= 1).all()
    assert d["domain"].nunique() == d["domain_id"].nunique() == 4
    assert adjusted_rand_score(d["true_zone"], d["domain_id"]) > 0.8
    # domain 1 is the domain with most metres
    metres = d.groupby("domain_id")["length_m"].sum()
    assert metres.idxmax() == 1
    b = out["blocks_domained"]
    assert len(b) == len(tables["blocks_mineralogy"])
    assert adjusted_rand_score(b["true_zone"], b["domain_id"]) > 0.8
    assert set(b["domain"]) <= set(d["domain"])


def test_smoothing_applied_in_step(kmeans_run):
    from geomet.domains.smoothing import downhole_runs

    _, out = kmeans_run
    d = out["domained"]
    runs = downhole_runs(d["hole_id"], d["from_m"], d["to_m"], d["domain_id"].to_numpy())
    assert (runs["length_m"] >= 10.0 - 1e-9).all()


def test_summary_crosstab_notes_and_model(kmeans_run):
    ctx, out = kmeans_run
    s = out["domain_summary"]
    assert set(s["zone"]) == {"all", "inside envelope", "outside envelope"}
    assert np.isclose(s.loc[s["zone"] == "all", "length_share_frac"].sum(), 1.0)
    assert s["stability_jaccard_frac"].between(0.9, 1.0).all()
    ct = out["domain_crosstab"]
    assert ct.empty
    assert "No site domains, domain rules" in ct.attrs["note"]
    text = "\n".join(ctx.notes)
    assert "principal components keep" in text
    assert "adjusted Rand index mean" in text
    assert "chosen by silhouette" in text
    info = ctx.extras["json_files"]["domains"]
    json.dumps(info)  # plain JSON
    assert info["n_domains"] == 4
    assert info["selection_curve"]["k"] == [3, 4, 5, 6]
    pipe = ctx.extras["domains_pipeline"]
    blocks = out["blocks_domained"]
    raw = pipe.predict(blocks)
    assert len(raw) == len(blocks)


def test_rules_and_site_domains_compared(tables):
    m = tables["mineralogy"]
    site = m[["hole_id", "from_m", "to_m"]].assign(site_domain=m["true_zone"].str.upper())
    ctx = StepContext(tables={"mineralogy": m, "site_domains": site}, seed=1)
    opts = DomainsOptions(**FAST, rules=["clay_swelling_pct >= 10 -> Swelling clay",
                                         {"domain": "Higher grade", "when": "cu_pct >= 0.4"}])
    out = domains_step(ctx, opts)
    ct = out["domain_crosstab"]
    assert set(ct["reference"]) == {"site_domain", "rule_domain"}
    site_rows = ct[ct["reference"] == "site_domain"]
    assert np.isclose(site_rows["length_m"].sum(), m["length_m"].sum())
    assert site_rows["adjusted_rand_idx"].iloc[0] > 0.8
    assert "blocks_domained" not in out
    assert "rule_domain" in out["domained"].columns


def test_lithology_compared_when_present(tables):
    m = tables["mineralogy"].assign(lith_code=np.where(
        tables["mineralogy"]["from_m"] < 60, "VOLC", "PORPH"))
    ctx = StepContext(tables={"mineralogy": m}, seed=1)
    ct = domains_step(ctx, DomainsOptions(**FAST))["domain_crosstab"]
    assert set(ct["reference"]) == {"lith_code"}
    assert set(ct["reference_domain"]) == {"VOLC", "PORPH"}
    assert np.isclose(ct["length_m"].sum(), m["length_m"].sum())
    none = domains_step(StepContext(tables={"mineralogy": m}),
                        DomainsOptions(**FAST, compare_columns=[]))["domain_crosstab"]
    assert none.empty


def test_rules_method_assigns_blocks_by_rules(tables):
    ctx = StepContext(tables=tables, seed=1)
    opts = DomainsOptions(method="rules", min_run_m=0, rules=[
        "clay_swelling_pct >= 10 -> Swelling clay", "cu_pct >= 0.4 -> Higher grade"])
    out = domains_step(ctx, opts)
    d, b = out["domained"], out["blocks_domained"]
    assert set(d["domain"]) == {"Swelling clay", "Higher grade", "Other"}
    swelling = b["clay_swelling_pct"] >= 10
    assert (b.loc[swelling, "domain"] == "Swelling clay").all()
    assert (b.loc[~swelling & (b["cu_pct"] >= 0.4), "domain"] == "Higher grade").all()


def test_site_method_keeps_codes_and_classifies_blocks(tables):
    m = tables["mineralogy"].assign(site_domain=tables["mineralogy"]["true_zone"])
    ctx = StepContext(tables={"mineralogy": m, "blocks_mineralogy": tables["blocks_mineralogy"]})
    out = domains_step(ctx, DomainsOptions(method="site"))
    d = out["domained"]
    assert (d["domain"] == d["site_domain"]).all()  # codes are not smoothed
    b = out["blocks_domained"]
    assert (b["domain"] == b["true_zone"]).mean() > 0.9


@pytest.mark.parametrize("method", ["gmm", "density"])
def test_other_methods(tables, method):
    ctx = StepContext(tables={"mineralogy": tables["mineralogy"]}, seed=2)
    out = domains_step(ctx, DomainsOptions(method=method, features="groups", logratio="ilr",
                                           **FAST))
    d = out["domained"]
    assert adjusted_rand_score(d["true_zone"], d["domain_id"]) > 0.7


def test_unclassified_rows_and_determinism(tables):
    m = tables["mineralogy"].copy()
    from geomet.glossary import SCANNED_MINERAL_COLUMNS

    m.loc[m.index[:3], list(SCANNED_MINERAL_COLUMNS)] = np.nan
    a = domains_step(StepContext(tables={"mineralogy": m}, seed=9),
                     DomainsOptions(n_domains=4, stability_seed_offsets=[]))
    b = domains_step(StepContext(tables={"mineralogy": m}, seed=9),
                     DomainsOptions(n_domains=4, stability_seed_offsets=[]))
    da = a["domained"]
    assert (da["domain_id"].iloc[:3] == 0).all()
    assert (da["domain"].iloc[:3] == "Unclassified").all()
    pd.testing.assert_frame_equal(da, b["domained"])
    pd.testing.assert_frame_equal(a["domain_summary"], b["domain_summary"])


def test_plots_written(tables, tmp_path):
    ctx = StepContext(tables=tables, seed=4, plot_dir=tmp_path)
    domains_step(ctx, DomainsOptions(**FAST, plot_holes=2))
    names = {p.name for p in ctx.plots}
    assert names == {"domains_strip_logs", "domains_pca", "domains_k_choice"}
    assert all(p.path.exists() and p.table == "domain_summary" for p in ctx.plots)


def test_option_errors(tables):
    with pytest.raises(ValidationError, match="cannot read rule condition"):
        DomainsOptions(rules=["cu_pct >= 'high' -> X"])
    with pytest.raises(ValidationError, match="Extra inputs are not permitted"):
        DomainsOptions(clusters=5)
    with pytest.raises(ValidationError, match="n_domains must be 'auto' or at least 1"):
        DomainsOptions(n_domains=0)
    with pytest.raises(ValidationError, match="method"):
        DomainsOptions(method="spectral")
    with pytest.raises(ValidationError, match="k_min must not exceed k_max"):
        DomainsOptions(k_min=6, k_max=4)
    with pytest.raises(InputDataError, match="needs at least one rule"):
        domains_step(StepContext(tables=tables), DomainsOptions(method="rules"))
    with pytest.raises(InputDataError, match="needs site domain codes"):
        domains_step(StepContext(tables=tables), DomainsOptions(method="site"))
    with pytest.raises(InputDataError, match="needs column 'hole_id'"):
        domains_step(StepContext(tables={"mineralogy": tables["mineralogy"].drop(
            columns="hole_id")}), DomainsOptions())
    blocks = tables["blocks_mineralogy"].drop(columns="biotite_pct")
    with pytest.raises(InputDataError, match="blocks_mineralogy lacks the composition"):
        domains_step(StepContext(tables={**tables, "blocks_mineralogy": blocks}),
                     DomainsOptions())
    empty = tables["mineralogy"].copy()
    from geomet.glossary import SCANNED_MINERAL_COLUMNS

    empty[list(SCANNED_MINERAL_COLUMNS)] = 0.0
    with pytest.raises(InputDataError, match="domains need at least 2"):
        domains_step(StepContext(tables={"mineralogy": empty}), DomainsOptions())


def test_rules_need_no_mineral_abundances(tables):
    from geomet.glossary import SCANNED_MINERAL_COLUMNS

    m = tables["mineralogy"].copy()
    m.loc[m.index[:5], list(SCANNED_MINERAL_COLUMNS)] = np.nan
    m.loc[m.index[:5], "cu_pct"] = 0.9
    opts = DomainsOptions(method="rules", min_run_m=0, rules=["cu_pct >= 0.4 -> Higher grade"])
    d = domains_step(StepContext(tables={"mineralogy": m}), opts)["domained"]
    assert (d["domain"].iloc[:5] == "Higher grade").all()


def test_saved_model_reproduces_the_components(tables, kmeans_run):
    ctx, out = kmeans_run
    info = ctx.extras["json_files"]["domains"]
    pipe = ctx.extras["domains_pipeline"]
    m = tables["mineralogy"]
    feats = pipe.named_steps["logratio"].transform(m)
    feats = np.where(np.isnan(feats), np.asarray(info["impute_mean"]), feats)
    z = (feats - np.asarray(info["scale_mean"])) / np.asarray(info["scale_std"])
    pcs = (z - np.asarray(info["pca_mean"])) @ np.asarray(info["pca_components"]).T
    assert np.allclose(pcs, pipe[:-1].transform(m))
    # nearest saved centre = the fitted k-means cluster
    cent = np.asarray(info["centroids_pca"])
    nearest = np.argmin(((pcs[:, None, :] - cent[None]) ** 2).sum(axis=2), axis=1)
    assert np.array_equal(nearest, pipe.predict(m))


def test_rules_without_any_mineral_columns(tables):
    from geomet.glossary import SCANNED_MINERAL_COLUMNS

    m = tables["mineralogy"].drop(columns=list(SCANNED_MINERAL_COLUMNS))
    m = m.drop(columns=[c for c in m.columns if c.endswith("_pct") and c != "cu_pct"])
    ctx = StepContext(tables={"mineralogy": m}, seed=1)
    out = domains_step(ctx, DomainsOptions(rules=["cu_pct >= 0.3 -> Higher grade"],
                                           method="rules"))
    d = out["domained"]
    assert set(d["domain"]) == {"Higher grade", "Other"}
    assert "without mineral features" in "\n".join(ctx.notes)
    assert "domains_pipeline" not in ctx.extras


def test_blocks_of_a_cluster_removed_by_smoothing_join_a_surviving_domain(tables):
    # a 1 km minimum run leaves one run per hole: some k-means clusters vanish downhole
    ctx = StepContext(tables=tables, seed=4)
    out = domains_step(ctx, DomainsOptions(n_domains=4, min_run_m=1000.0,
                                           stability_seed_offsets=[]))
    d, b = out["domained"], out["blocks_domained"]
    assert d.groupby("hole_id")["domain_id"].nunique().max() == 1
    assert set(b["domain_id"]) <= set(d["domain_id"])
    assert (b["domain_id"] > 0).all()
