"""Tests of the normative speciation and the batched NNLS solver.

Reference values: element mass fractions from molmass (an independent molar-mass library), the
hand arithmetic in the comments, and ``scipy.optimize.nnls`` solved row by row. Tolerances:
rtol 3e-4 where geomet's IUPAC 2021 abridged weights meet molmass's (S differs by 1.5e-4).
"""

from __future__ import annotations

import hypothesis.strategies as st
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from molmass import Formula
from scipy.optimize import nnls

from geomet.errors import InputDataError, RecipeError
from geomet.minerals.nnls import nnls_batched
from geomet.minerals.reference import MINERALS
from geomet.minerals.speciation import (
    CU_SULFIDES,
    NORM_COLUMNS,
    flag_counts,
    normative_speciation,
    speciation_nnls_system,
    validate_cu_sulfide_proportions,
)

RTOL = 3e-4


def frac(formula: str, element: str) -> float:
    """Mass fraction from molmass (reference library)."""
    return Formula(formula).composition()[element].fraction


CP_CU, CP_S, CP_FE = frac("CuFeS2", "Cu"), frac("CuFeS2", "S"), frac("CuFeS2", "Fe")
PY_S, PY_FE = frac("FeS2", "S"), frac("FeS2", "Fe")
CC_CU, CC_S = frac("Cu2S", "Cu"), frac("Cu2S", "S")
BN_CU, BN_S = frac("Cu5FeS4", "Cu"), frac("Cu5FeS4", "S")
GYP_S, ANH_S = frac("CaSO4(H2O)2", "S"), frac("CaSO4", "S")
GYP_CA = frac("CaSO4(H2O)2", "Ca")
MOS2_MO, MOS2_S = frac("MoS2", "Mo"), frac("MoS2", "S")
CHRYS_CU = frac("CuSiO3(H2O)2", "Cu")

NONE = {"sulfate_source": "none", "sulfide_hint": "fixed"}


def gfrac(mineral: str, element: str) -> float:
    """geomet's own mass fraction: algorithm tests build assays with it so that a consistent
    assemblage is consistent to rounding (molmass differs by up to 1.5e-4 relative)."""
    return MINERALS[mineral].fraction(element)


def test_chalcopyrite_plus_pyrite_worked_example():
    # 1 % chalcopyrite + 1 % pyrite: Cu = 0.3463, S = 0.3494 + 0.5345 = 0.8839,
    # Fe = 0.3043 + 0.4655 = 0.7698 (molmass fractions) -> both minerals 1.000 %, Fe residual 0
    t = pd.DataFrame({"cu_pct": [CP_CU], "s_pct": [CP_S + PY_S], "fe_pct": [CP_FE + PY_FE]})
    out = normative_speciation(t, **NONE).iloc[0]
    assert out["norm_chalcopyrite_pct"] == pytest.approx(1.0, rel=RTOL)
    assert out["norm_pyrite_pct"] == pytest.approx(1.0, rel=RTOL)
    assert out["norm_bornite_pct"] == 0.0
    assert out["resid_fe_pct"] == pytest.approx(0.0, abs=1e-3)
    assert out["resid_cu_pct"] == pytest.approx(0.0, abs=1e-12)
    assert out["resid_s_pct"] == pytest.approx(0.0, abs=1e-12)
    assert out["balance_ok"]
    assert out["balance_flag"] == (
        "no cu_asol_pct: all Cu taken as sulfide; no mo_ppm: no molybdenite"
    )


def test_oxide_copper_and_molybdenite_worked_example():
    # Cu 1.0 %, acid-soluble 0.2 %: chrysocolla = 0.2 / 0.3618 = 0.5529 %;
    # sulfide Cu 0.8 % -> chalcopyrite 0.8 / 0.3463 = 2.3103 %, using 2.3103 * 0.3494 = 0.8072 % S;
    # Mo 600 ppm = 0.06 % -> molybdenite 0.06 / 0.5994 = 0.1001 %, using 0.0401 % S;
    # S 1.5 % -> pyrite (1.5 - 0.8072 - 0.0401) / 0.5345 = 0.6527 / 0.5345 = 1.2211 %
    t = pd.DataFrame({"cu_pct": [1.0], "cu_asol_pct": [0.2], "mo_ppm": [600.0], "s_pct": [1.5]})
    out = normative_speciation(t, **NONE).iloc[0]
    cp = 0.8 / CP_CU
    mos2 = 0.06 / MOS2_MO
    assert out["norm_cu_oxide_pct"] == pytest.approx(0.2 / CHRYS_CU, rel=RTOL)
    assert out["norm_chalcopyrite_pct"] == pytest.approx(cp, rel=RTOL)
    assert out["norm_molybdenite_pct"] == pytest.approx(mos2, rel=RTOL)
    assert out["norm_pyrite_pct"] == pytest.approx(
        (1.5 - cp * CP_S - mos2 * MOS2_S) / PY_S, rel=RTOL
    )
    assert out["norm_pyrite_pct"] == pytest.approx(1.2211, abs=2e-4)


@pytest.mark.parametrize(("mineral", "s_frac"), [("gypsum", GYP_S), ("anhydrite", ANH_S)])
def test_scanned_sulfate_removed_first(mineral, s_frac):
    # 2 % scanned sulfate holds 2 * 0.1862 = 0.3724 % S as gypsum (0.4710 % as anhydrite);
    # the rest of S (0.5345 %) is 1 % pyrite
    t = pd.DataFrame({"cu_pct": [0.0], "s_pct": [2 * s_frac + PY_S], "gypsum_anhydrite_pct": [2.0]})
    out = normative_speciation(t, sulfate_source="scan", sulfate_mineral=mineral).iloc[0]
    assert out["norm_gypsum_anhydrite_pct"] == pytest.approx(2.0)
    assert out["s_sulfate_pct"] == pytest.approx(2 * s_frac, rel=RTOL)
    assert out["norm_pyrite_pct"] == pytest.approx(1.0, rel=RTOL)


def test_ca_rule_is_an_upper_bound_after_sulfides():
    # Ca 0.5 % could hold 0.5 * 32.06/40.08 = 0.400 % S as sulfate; with 0.3 % S left after
    # chalcopyrite, sulfate takes only those 0.3 % and pyrite gets none (priority: Cu sulfides,
    # then sulfate, then pyrite).
    cu = 0.3463  # 1 % chalcopyrite (SCIENCE.md check value), S 0.3494
    t = pd.DataFrame(
        {"cu_pct": [cu, cu], "s_pct": [0.3494 + 0.3, 0.3494 + 0.3], "ca_pct": [0.5, 0.1]}
    )
    out = normative_speciation(t, sulfate_source="ca", sulfide_hint="fixed")
    assert out["norm_chalcopyrite_pct"].iloc[0] == pytest.approx(1.0, rel=1e-3)
    assert out["s_sulfate_pct"].iloc[0] == pytest.approx(0.3, rel=1e-3)
    assert out["norm_pyrite_pct"].iloc[0] == pytest.approx(0.0, abs=1e-9)
    # Ca 0.1 % binds 0.1 * 0.1862/0.2328 = 0.0800 % S; the other 0.2200 % S is pyrite
    assert out["s_sulfate_pct"].iloc[1] == pytest.approx(0.1 * GYP_S / GYP_CA, rel=RTOL)
    assert out["norm_pyrite_pct"].iloc[1] == pytest.approx(
        (0.3 - 0.1 * GYP_S / GYP_CA) / PY_S, rel=1e-3
    )
    assert out["resid_ca_pct"].iloc[1] == pytest.approx(0.0, abs=1e-9)
    half = normative_speciation(t, sulfate_source="ca", ca_sulfate_frac=0.5, sulfide_hint="fixed")
    assert half["s_sulfate_pct"].iloc[1] == pytest.approx(0.05 * GYP_S / GYP_CA, rel=RTOL)


def test_auto_rule_uses_scan_then_ca():
    t = pd.DataFrame({"cu_pct": [0.0, 0.0], "s_pct": [1.0, 1.0], "ca_pct": [0.1, 0.1],
                      "gypsum_anhydrite_pct": [1.0, np.nan]})  # fmt: skip
    out = normative_speciation(t, sulfate_source="auto")
    assert out["s_sulfate_pct"].iloc[0] == pytest.approx(ANH_S, rel=RTOL)
    assert out["s_sulfate_pct"].iloc[1] == pytest.approx(0.1 * GYP_S / GYP_CA, rel=RTOL)
    scan_only = normative_speciation(t, sulfate_source="scan")
    assert np.isnan(scan_only["norm_gypsum_anhydrite_pct"].iloc[1])
    assert "no sulfate value" in scan_only["balance_flag"].iloc[1]


def test_scanned_hints_set_cu_sulfide_proportions():
    # scan says chalcopyrite 3 : bornite 1 (mass). Mixture Cu fraction = 0.75*0.3463 + 0.25*0.6332
    # = 0.4180; Cu 0.8 % -> 1.9139 % of Cu sulfides: chalcopyrite 1.4354 %, bornite 0.4785 %.
    t = pd.DataFrame(
        {
            "cu_pct": [0.8],
            "s_pct": [3.0],
            "chalcopyrite_pct": [3.0],
            "bornite_pct": [1.0],
            "chalcocite_pct": [0.0],
            "covellite_pct": [np.nan],
        }
    )
    out = normative_speciation(t, sulfate_source="none").iloc[0]
    mix = 0.8 / (0.75 * CP_CU + 0.25 * BN_CU)
    assert out["norm_chalcopyrite_pct"] == pytest.approx(0.75 * mix, rel=RTOL)
    assert out["norm_bornite_pct"] == pytest.approx(0.25 * mix, rel=RTOL)
    fixed = normative_speciation(t, sulfate_source="none", sulfide_hint="fixed").iloc[0]
    assert fixed["norm_bornite_pct"] == 0.0
    assert fixed["norm_chalcopyrite_pct"] == pytest.approx(0.8 / CP_CU, rel=RTOL)


def test_sulfur_deficit_shifts_to_chalcocite():
    # assays of 1 % chalcocite (Cu 0.7986, S 0.2014): S/Cu 0.252 is chalcocite's, the lowest of
    # the four Cu sulfides, so the only exact answer is 1 % chalcocite, far from the chalcopyrite
    # hint. The hint rows (weight 0.01) pull it off by a fraction of a percent; the exact
    # optimum of the same problem comes from scipy.optimize.nnls.
    cu, s = gfrac("chalcocite", "Cu"), gfrac("chalcocite", "S")
    t = pd.DataFrame({"cu_pct": [cu], "s_pct": [s]})
    out = normative_speciation(t, **NONE).iloc[0]
    a, b = speciation_nnls_system(np.array([cu]), np.array([s]), np.array([[1.0, 0, 0, 0]]),
                                  np.array([0.005 + 0.02 * cu]), np.array([0.005 + 0.02 * s]),
                                  0.01)  # fmt: skip
    ref = nnls(a[0], b[0])[0]
    assert out["norm_chalcocite_pct"] == pytest.approx(ref[2], abs=1e-9)
    assert out["norm_chalcocite_pct"] == pytest.approx(1.0, abs=5e-3)
    assert out["norm_pyrite_pct"] == pytest.approx(0.0, abs=1e-9)
    assert abs(out["resid_cu_pct"]) < 0.005
    assert "shifted to S-poorer ones" in out["balance_flag"]
    assert out["balance_ok"]


def test_unbalanceable_rows_are_flagged():
    t = pd.DataFrame(
        {
            "cu_pct": [0.5, 0.2, 0.1, np.nan, 0.0],
            "s_pct": [0.0, 0.2, 5.0, 1.0, 1.0],
            "cu_asol_pct": [0.0, 0.5, 0.0, 0.0, 0.0],
            "fe_pct": [2.0, 2.0, 1.0, 2.0, 2.0],
            "gypsum_anhydrite_pct": [0.0, 0.0, 0.0, 0.0, 10.0],
        }
    )
    out = normative_speciation(t)
    flags = out["balance_flag"].tolist()
    assert "Cu without enough sulfide S" in flags[0]  # Cu 0.5 % but no S at all
    assert out["resid_cu_pct"].iloc[0] > 0.1
    assert "acid-soluble Cu exceeds total Cu" in flags[1]
    # 5 % S as pyrite needs 5/0.5345*0.4655 = 4.35 % Fe > 1 % assayed
    assert "more S than the Fe allows" in flags[2]
    assert flags[3].startswith("missing cu_pct or s_pct")
    assert out.loc[3, list(NORM_COLUMNS)].isna().all()
    # 10 % anhydrite holds 2.355 % S > 1 % assayed
    assert "sulfate S exceeds total S" in flags[4]
    assert out["balance_ok"].tolist() == [False, False, False, False, False]
    counts = flag_counts(out["balance_flag"])
    assert counts["missing cu_pct or s_pct assay"] == 1


def test_missing_optional_assays_are_noted_not_failed():
    t = pd.DataFrame({"cu_pct": [0.3], "s_pct": [1.0]})
    out = normative_speciation(t).iloc[0]
    assert out["balance_ok"]
    assert np.isnan(out["norm_molybdenite_pct"])
    assert np.isnan(out["norm_cu_oxide_pct"])
    assert "no fe_pct" in out["balance_flag"]


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"sulfate_source": "xrf"}, "sulfate_source must be one of"),
        ({"sulfate_mineral": "bassanite"}, "sulfate_mineral must be one of"),
        ({"sulfide_hint": "guess"}, "sulfide_hint must be one of"),
        ({"cu_oxide_mineral": "azurite"}, "cu_oxide_mineral must be one of"),
        ({"ca_sulfate_frac": 1.5}, "ca_sulfate_frac must be between 0 and 1"),
        ({"hint_weight": 0.0}, "hint_weight must be positive"),
        ({"abs_tol_pct": -1.0}, "abs_tol_pct must be finite and >= 0"),
        ({"rel_tol_frac": float("inf")}, "rel_tol_frac must be finite and >= 0"),
        ({"cu_sulfide_proportions": {"pyrite": 1.0}}, "may name only"),
        ({"cu_sulfide_proportions": {"bornitee": 1.0}}, "did you mean 'bornite'"),
        ({"cu_sulfide_proportions": {"bornite": -1.0}}, "finite and >= 0"),
        ({"cu_sulfide_proportions": {"bornite": 0.0}}, "positive total"),
    ],
)
def test_option_errors(kwargs, match):
    t = pd.DataFrame({"cu_pct": [0.3], "s_pct": [1.0]})
    with pytest.raises(RecipeError, match=match):
        normative_speciation(t, **kwargs)


def test_missing_required_columns():
    with pytest.raises(InputDataError, match=r"needs columns \['s_pct'\]"):
        normative_speciation(pd.DataFrame({"cu_pct": [0.3]}))


def test_proportions_normalised():
    assert validate_cu_sulfide_proportions({"chalcopyrite_pct": 3, "bornite": 1}).tolist() == [
        0.75,
        0.25,
        0.0,
        0.0,
    ]


# --- reference: scipy.optimize.nnls row by row -------------------------------------------------


def _random_assays(rng: np.random.Generator, n: int) -> pd.DataFrame:
    df = pd.DataFrame(
        {
            "cu_pct": rng.gamma(2, 0.3, n),
            "s_pct": rng.gamma(2, 0.6, n),
            "fe_pct": rng.uniform(1, 8, n),
            "mo_ppm": rng.gamma(1, 60, n),
            "cu_asol_pct": rng.gamma(1, 0.03, n),
            "ca_pct": rng.uniform(0, 4, n),
            "gypsum_anhydrite_pct": rng.gamma(0.5, 1, n),
        }
    )
    for m in CU_SULFIDES:
        df[f"{m}_pct"] = rng.gamma(0.5, 0.5, n) * (rng.random(n) < 0.7)
    return df


def test_speciation_matches_scipy_nnls_row_by_row():
    rng = np.random.default_rng(20261201)
    df = _random_assays(rng, 400)
    out = normative_speciation(df)
    # rebuild each row's problem (same sequential steps) and solve it with scipy
    cu_sulf = df["cu_pct"] - np.minimum(df["cu_asol_pct"], df["cu_pct"])
    s_sulfate = np.minimum(df["gypsum_anhydrite_pct"] * gfrac("anhydrite", "S"), df["s_pct"])
    s_mo = df["mo_ppm"] * 1e-4 / gfrac("molybdenite", "Mo") * gfrac("molybdenite", "S")
    s_avail = np.maximum(df["s_pct"] - s_sulfate - s_mo, 0.0)
    scan = df[[f"{m}_pct" for m in CU_SULFIDES]].to_numpy()
    total = scan.sum(axis=1)
    shares = np.where(total[:, None] > 0, scan / np.where(total > 0, total, 1)[:, None],
                      [1.0, 0.0, 0.0, 0.0])  # fmt: skip
    sig_cu = 0.005 + 0.02 * df["cu_pct"].to_numpy()
    sig_s = 0.005 + 0.02 * df["s_pct"].to_numpy()
    a, b = speciation_nnls_system(
        cu_sulf.to_numpy(), s_avail.to_numpy(), shares, sig_cu, sig_s, 0.01
    )
    expected = np.array([nnls(a[i], b[i])[0] for i in range(len(df))])
    cols = [f"norm_{m}_pct" for m in CU_SULFIDES] + ["norm_pyrite_pct"]
    got = out[cols].to_numpy()
    # atol 1e-9 wt%: normal equations vs scipy's QR-based solver
    np.testing.assert_allclose(got, expected, atol=1e-9, rtol=1e-7)
    assert (out["balance_flag"].str.contains("shifted")).sum() > 20  # both paths exercised


def test_nnls_batched_matches_scipy_on_random_problems():
    rng = np.random.default_rng(3)
    for n, m, k in [(300, 6, 5), (300, 8, 8), (200, 4, 2), (50, 10, 3)]:
        a = rng.normal(size=(n, m, k))
        b = rng.normal(size=(n, m))
        x, r = nnls_batched(a, b)
        ref = [nnls(a[i], b[i]) for i in range(n)]
        np.testing.assert_allclose(x, np.array([s for s, _ in ref]), atol=1e-9)
        np.testing.assert_allclose(r, np.array([rn for _, rn in ref]), atol=1e-9)
        guess = rng.random((n, k)) < 0.5  # any warm start gives the same answer
        xw, _ = nnls_batched(a, b, passive_init=guess)
        np.testing.assert_allclose(xw, x, atol=1e-9)
    shared = rng.normal(size=(5, 3))
    bs = rng.normal(size=(20, 5))
    x, _ = nnls_batched(shared, bs)
    np.testing.assert_allclose(x, np.array([nnls(shared, bb)[0] for bb in bs]), atol=1e-9)


def test_nnls_batched_errors():
    with pytest.raises(InputDataError, match=r"b must have shape \(n, m\)"):
        nnls_batched(np.eye(2), np.ones(2))
    with pytest.raises(InputDataError, match="a must have shape"):
        nnls_batched(np.ones((3, 2)), np.ones((4, 2)))
    with pytest.raises(InputDataError, match="must be finite"):
        nnls_batched(np.eye(2), np.array([[np.nan, 1.0]]))


# --- properties -------------------------------------------------------------------------------

_g = st.floats(0, 5, allow_nan=False)


@settings(max_examples=80, deadline=None)
@given(cp=_g, bn=_g, cc=_g, cv=_g, py=_g, gyp=_g, asol=st.floats(0, 1), mo=st.floats(0, 2000))
def test_property_consistent_assays_are_reproduced(cp, bn, cc, cv, py, gyp, asol, mo):
    # Assays built from a known assemblage balance exactly: Cu and S totals are reproduced and
    # every mineral is non-negative; with the true proportions as hints it comes back.
    g = gfrac
    cu = (cp * g("chalcopyrite", "Cu") + bn * g("bornite", "Cu") + cc * g("chalcocite", "Cu")
          + cv * g("covellite", "Cu") + asol)  # fmt: skip
    s = (cp * g("chalcopyrite", "S") + bn * g("bornite", "S") + cc * g("chalcocite", "S")
         + cv * g("covellite", "S") + py * g("pyrite", "S") + gyp * g("anhydrite", "S")
         + mo * 1e-4 / g("molybdenite", "Mo") * g("molybdenite", "S"))  # fmt: skip
    t = pd.DataFrame({"cu_pct": [cu], "s_pct": [s], "cu_asol_pct": [asol], "mo_ppm": [mo],
                      "gypsum_anhydrite_pct": [gyp], "chalcopyrite_pct": [cp], "bornite_pct": [bn],
                      "chalcocite_pct": [cc], "covellite_pct": [cv]})  # fmt: skip
    out = normative_speciation(t).iloc[0]
    assert all(out[c] >= 0 for c in NORM_COLUMNS)
    assert out["resid_cu_pct"] == pytest.approx(0.0, abs=1e-9)
    assert out["resid_s_pct"] == pytest.approx(0.0, abs=1e-9)
    assert out["balance_ok"]
    # with the true proportions as hints, the built assemblage comes back
    for name, built in (("chalcopyrite", cp), ("bornite", bn), ("chalcocite", cc),
                        ("covellite", cv), ("pyrite", py)):  # fmt: skip
        assert out[f"norm_{name}_pct"] == pytest.approx(built, rel=1e-9, abs=1e-9), name


@settings(max_examples=80, deadline=None)
@given(
    st.lists(
        st.tuples(st.floats(0, 5), st.floats(0, 10), st.floats(0, 2), st.floats(0, 5)),
        min_size=1,
        max_size=30,
    )  # fmt: skip
)
def test_property_conservation_within_residual(rows):
    # Conservation: element in the normative minerals + residual = assay, for Cu, S and Fe.
    t = pd.DataFrame(rows, columns=["cu_pct", "s_pct", "cu_asol_pct", "fe_pct"])
    out = normative_speciation(t, sulfate_source="none", sulfide_hint="fixed")
    norm = out[list(NORM_COLUMNS)].fillna(0.0)
    assert (norm >= 0).all().all()
    cu_in = (norm["norm_chalcopyrite_pct"] * CP_CU + norm["norm_bornite_pct"] * BN_CU
             + norm["norm_chalcocite_pct"] * CC_CU + norm["norm_covellite_pct"] * frac("CuS", "Cu")
             + norm["norm_cu_oxide_pct"] * CHRYS_CU)  # fmt: skip
    scale = RTOL * (t["cu_pct"] + t["s_pct"]) + 1e-9  # molmass vs geomet weights, 1.5e-4 rel.
    np.testing.assert_allclose(cu_in + out["resid_cu_pct"] - t["cu_pct"], 0.0, atol=scale.max())
    s_in = (norm["norm_chalcopyrite_pct"] * CP_S + norm["norm_bornite_pct"] * BN_S
            + norm["norm_chalcocite_pct"] * CC_S + norm["norm_covellite_pct"] * frac("CuS", "S")
            + norm["norm_pyrite_pct"] * PY_S)  # fmt: skip
    np.testing.assert_allclose(s_in + out["resid_s_pct"] - t["s_pct"], 0.0, atol=scale.max())
    # sulfide S never exceeds what the Cu needs at chalcocite's ratio plus the assayed S
    assert (out["s_sulfide_pct"] <= t["s_pct"] + t["cu_pct"] * CC_S / CC_CU + 1e-9).all()


def test_scanned_alunite_and_jarosite_sulfate_removed():
    # alunite 2 % holds 2 * 0.1548 = 0.3096 % S; jarosite 1 % holds 0.1280 % S and 0.3345 % Fe
    # (molmass fractions); the remaining 0.5345 % S is 1 % pyrite, whose 0.4655 % Fe plus the
    # jarosite Fe balances the assayed Fe exactly.
    alu_s, jar_s, jar_fe = (
        frac("KAl3(SO4)2(OH)6", "S"),
        frac("KFe3(SO4)2(OH)6", "S"),
        frac("KFe3(SO4)2(OH)6", "Fe"),
    )
    t = pd.DataFrame(
        {
            "cu_pct": [0.0],
            "s_pct": [2 * alu_s + jar_s + PY_S],
            "fe_pct": [jar_fe + PY_FE],
            "alunite_pct": [2.0],
            "jarosite_pct": [1.0],
            "gypsum_anhydrite_pct": [0.0],
        }
    )
    out = normative_speciation(t).iloc[0]
    assert out["norm_pyrite_pct"] == pytest.approx(1.0, rel=1e-3)
    assert out["s_sulfate_pct"] == pytest.approx(2 * alu_s + jar_s, rel=RTOL)
    assert out["resid_fe_pct"] == pytest.approx(0.0, abs=1e-3)
    kept = normative_speciation(t, scanned_sulfates=False).iloc[0]
    assert kept["norm_pyrite_pct"] == pytest.approx((2 * alu_s + jar_s + PY_S) / PY_S, rel=1e-3)


def test_demo_blocks_normative_sulfides_follow_the_scan(demo_dir):
    # Consistency check on the Vellantra demo blocks (assays and scan generated from the same
    # minerals): normative sulfides should track the scanned ones closely.
    path = demo_dir / "blocks.csv"
    if not path.exists():
        pytest.skip("demo data not generated")
    blocks = pd.read_csv(path)
    out = normative_speciation(blocks)
    for mineral in ("pyrite", "chalcopyrite", "bornite", "molybdenite"):
        r = np.corrcoef(blocks[f"{mineral}_pct"], out[f"norm_{mineral}_pct"])[0, 1]
        assert r > 0.95, mineral
    assert out["balance_ok"].mean() > 0.9


def test_flag_counts_failures_only():
    flags = pd.Series(
        ["ok", "S left unbalanced; no fe_pct: Fe not checked", "no fe_pct: Fe not checked"]
    )
    assert flag_counts(flags) == {"S left unbalanced": 1, "no fe_pct: Fe not checked": 2}
    assert flag_counts(flags, failures_only=True) == {"S left unbalanced": 1}


def test_arsenic_to_enargite_worked_example():
    # As 1000 ppm = 0.1 %: enargite Cu3AsS4 (molmass) As 0.1902 -> 0.5258 % enargite, holding
    # 0.2545 % Cu and 0.1713 % S. With Cu 0.6 % and S 1.0 %, chalcopyrite takes the other
    # 0.3455 % Cu (0.9977 %, 0.3486 % S) and pyrite the remaining 0.4801 % S (0.8983 %).
    en_as, en_cu, en_s = (frac("Cu3AsS4", e) for e in ("As", "Cu", "S"))
    t = pd.DataFrame({"cu_pct": [0.6], "s_pct": [1.0], "as_ppm": [1000.0]})
    out = normative_speciation(t, arsenic_mineral="enargite", **NONE).iloc[0]
    en = 0.1 / en_as
    assert out["norm_enargite_pct"] == pytest.approx(en, rel=RTOL)
    assert out["norm_enargite_pct"] == pytest.approx(0.5258, abs=2e-4)
    cp = (0.6 - en * en_cu) / CP_CU
    assert out["norm_chalcopyrite_pct"] == pytest.approx(cp, rel=1e-3)
    assert out["norm_pyrite_pct"] == pytest.approx((1.0 - en * en_s - cp * CP_S) / PY_S, rel=1e-3)
    assert out["resid_cu_pct"] == pytest.approx(0.0, abs=1e-12)
    assert out["resid_s_pct"] == pytest.approx(0.0, abs=1e-12)
    # Cu 0.1 % cannot hold all that As as enargite: capped at 0.1 / 0.4843 = 0.2065 %, noted
    capped = normative_speciation(t.assign(cu_pct=0.1), arsenic_mineral="enargite", **NONE).iloc[0]
    assert capped["norm_enargite_pct"] == pytest.approx(0.1 / en_cu, rel=RTOL)
    assert "As exceeds" in capped["balance_flag"]
    assert "norm_enargite_pct" not in normative_speciation(t, **NONE).columns


def test_arsenopyrite_takes_fe():
    # As 0.1 % as arsenopyrite FeAsS (As 0.4601) = 0.2173 %, holding 0.0746 % Fe and 0.0426 % S
    apy_as, apy_fe = frac("FeAsS", "As"), frac("FeAsS", "Fe")
    t = pd.DataFrame({"cu_pct": [0.0], "s_pct": [1.0], "fe_pct": [3.0], "as_ppm": [1000.0]})
    out = normative_speciation(t, arsenic_mineral="arsenopyrite", **NONE).iloc[0]
    apy = 0.1 / apy_as
    assert out["norm_arsenopyrite_pct"] == pytest.approx(apy, rel=RTOL)
    fe_used = apy * apy_fe + out["norm_pyrite_pct"] * PY_FE
    assert out["resid_fe_pct"] == pytest.approx(3.0 - fe_used, rel=1e-3)
    with pytest.raises(RecipeError, match="arsenic_mineral must be one of"):
        normative_speciation(t, arsenic_mineral="realgar")


@settings(max_examples=40, deadline=None)
@given(st.integers(1, 6), st.integers(1, 8), st.integers(0, 2**32 - 1))
def test_property_nnls_batched_kkt(k, m, seed):
    # Karush-Kuhn-Tucker conditions of NNLS (Lawson & Hanson 1974, ch. 23): x >= 0, gradient
    # w = A^T (b - A x) <= 0 where x = 0 and w = 0 where x > 0; and no worse than scipy's answer.
    rng = np.random.default_rng(seed)
    a = rng.normal(size=(16, m, k))
    b = rng.normal(size=(16, m))
    x, r = nnls_batched(a, b)
    w = np.einsum("nmk,nm->nk", a, b - np.einsum("nmk,nk->nm", a, x))
    assert (x >= 0).all()
    assert (w <= 1e-8).all()
    assert np.abs(np.where(x > 1e-10, w, 0.0)).max() < 1e-8
    ref = np.array([nnls(a[i], b[i])[1] for i in range(16)])
    assert (r <= ref + 1e-9).all()


def test_index_is_kept():
    t = pd.DataFrame({"cu_pct": [0.3, np.nan], "s_pct": [1.0, 1.0]}, index=[10, 4])
    out = normative_speciation(t)
    assert out.index.tolist() == [10, 4]
    assert np.isnan(out.loc[4, "norm_pyrite_pct"])
    assert out.loc[10, "norm_pyrite_pct"] > 0
