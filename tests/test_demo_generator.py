"""The demo generator: determinism, sizes, drill-hole geometry, fields and its error messages."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.demo import build_deposit, element_grades, generate_demo, positions_at, sample_geology
from geomet.demo.fields import FourierField
from geomet.errors import InputDataError, RecipeError
from geomet.glossary import SCANNED_MINERAL_COLUMNS

SMALL = {"holes": 5, "scale": 0.1}


@pytest.fixture(scope="module")
def small():
    return generate_demo(seed=11, **SMALL)


def test_same_seed_same_tables(small):
    again = generate_demo(seed=11, **SMALL)
    for name, table in small.files.items():
        pd.testing.assert_frame_equal(table, again.files[name], check_exact=True)
    assert small.planted_errors == again.planted_errors


def test_different_seed_different_tables(small):
    other = generate_demo(seed=12, **SMALL)
    assert not small.files["collars"].equals(other.files["collars"])
    assert not small.files["scan"].equals(other.files["scan"])


def test_holes_and_scale_set_the_size(small):
    assert len(small.files["collars"]) == 5
    bigger = generate_demo(seed=11, holes=9, scale=0.1, tables=("collars", "scan"))
    assert len(bigger.files["collars"]) == 9
    assert len(bigger.files["scan"]) > len(small.files["scan"])
    assert set(bigger.files) == {"collars", "surveys", "scan"}
    assert bigger.planted_errors == []  # not every table the errors touch was made


def test_scan_rows_sum_to_about_100(small):
    scan = small.clean["scan"]
    total = scan[list(SCANNED_MINERAL_COLUMNS)].sum(axis=1)
    assert total.between(96.0, 100.2).all()
    assert (scan[list(SCANNED_MINERAL_COLUMNS)] >= 0).all().all()


def test_feature_wavelengths_in_range_and_missing_without_the_mineral(small):
    scan = small.clean["scan"]
    aloh = scan["white_mica_aloh_nm"].dropna()
    assert aloh.between(2193.0, 2217.0).all()
    no_mica = (scan["white_mica_pct"] + scan["illite_pct"]) < 1.0
    assert scan.loc[no_mica, "white_mica_aloh_nm"].isna().all()
    assert scan.loc[scan["chlorite_pct"] < 1.0, "chlorite_feoh_nm"].isna().all()


def test_intervals_inside_holes_and_ordered(small):
    td = small.clean["collars"].set_index("hole_id")["total_depth_m"]
    for name in ("scan", "assays", "lithology", "density"):
        t = small.clean[name]
        assert (t["from_m"] < t["to_m"]).all(), name
        assert (t["to_m"] <= t["hole_id"].map(td) + 1e-9).all(), name
        nxt = t.groupby("hole_id")["from_m"].shift(-1)
        assert ((nxt.isna()) | (nxt >= t["to_m"] - 1e-9)).all(), name


def test_assay_breaks_differ_from_scan_breaks(small):
    a = small.clean["assays"]
    lengths = (a["to_m"] - a["from_m"]).round(2)
    assert {1.5, 2.0, 2.5} <= set(lengths)
    s = small.clean["scan"]
    first_scan = s.groupby("hole_id")["from_m"].min()
    first_assay = a.groupby("hole_id")["from_m"].min()
    assert (first_assay >= first_scan).all()
    assert (first_assay != first_scan).any()


def test_surveys_curve_and_stay_in_range(small):
    s = small.clean["surveys"]
    assert s["azimuth_deg"].between(0.0, 360.0, inclusive="left").all()
    assert s["dip_deg"].between(-90.0, 0.0).all()
    spacing = s.groupby("hole_id")["depth_m"].diff().dropna()
    assert spacing.max() <= 55.0
    drift = s.groupby("hole_id")["dip_deg"].agg(lambda d: d.max() - d.min())
    assert (drift > 0).all()


def test_lab_assays_use_lab_headers_and_codes():
    data = generate_demo(seed=7, holes=12, scale=0.3, tables=("assays", "scan", "lithology"))
    lab = data.files["assays"]
    assert list(lab.columns) == [
        "HoleID",
        "From",
        "To",
        "Cu_%",
        "Au_ppb",
        "Mo_ppm",
        "Fe_%",
        "S_%",
        "Ca_%",
        "CuAS_%",
        "Ag_ppm",
        "As_ppm",
        "Zn_ppm",
        "Pb_ppm",
        "Mg_%",
        "Al_%",
        "K_%",
    ]
    flat = lab.iloc[:, 3:].to_numpy().ravel()
    assert "<0.01" in flat
    assert "NS" in flat
    assert "IS" in flat
    negative = [v for v in lab["Cu_%"] if v.startswith("-")]
    assert set(negative) <= {"-0.001"}
    # Au reported in ppb: 1000 times the canonical g/t (rounded to whole ppb)
    clean = data.clean["assays"]
    numeric = pd.to_numeric(lab["Au_ppb"], errors="coerce")
    ok = numeric.notna() & (numeric >= 5)
    np.testing.assert_allclose(numeric[ok], np.round(clean["au_gpt"][ok] * 1000.0), atol=0.5)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"scale": 0.0}, "scale must be positive; got scale=0.0"),
        ({"holes": 0}, "holes must be at least 1; got holes=0"),
        ({"tables": ("collars", "drill_logs")}, r"unknown demo table\(s\) \['drill_logs'\]"),
    ],
)
def test_generator_errors(kwargs, match):
    with pytest.raises(RecipeError, match=match):
        generate_demo(**kwargs)


def test_field_dimension_error():
    f = FourierField.make(np.random.default_rng(0), 100.0, dims=3)
    with pytest.raises(InputDataError, match="field has 3 dimensions; got 2 coordinate arrays"):
        f(np.zeros(3), np.zeros(3))


def test_fourier_field_is_about_standard_normal():
    # Shinozuka (1971) spectral representation: zero mean, unit variance over many modes
    rng = np.random.default_rng(3)
    vals = []
    for _ in range(40):
        f = FourierField.make(rng, 50.0, dims=2, modes=20)
        vals.append(f(np.array([0.0]), np.array([0.0]))[0])
    assert abs(np.mean(vals)) < 0.4
    assert 0.6 < np.std(vals) < 1.4


def _one_hole(az, dip, depths):
    collars = pd.DataFrame(
        {
            "hole_id": ["H1"],
            "easting_m": [100.0],
            "northing_m": [200.0],
            "elevation_m": [1000.0],
            "total_depth_m": [depths[-1]],
        }
    )
    surveys = pd.DataFrame(
        {"hole_id": ["H1"] * len(depths), "depth_m": depths, "azimuth_deg": az, "dip_deg": dip}
    )
    return collars, surveys


@settings(max_examples=40, deadline=None)
@given(st.floats(0.0, 359.9), st.floats(-89.9, -10.0), st.floats(1.0, 400.0))
def test_straight_hole_is_a_line(az, dip, depth):
    collars, surveys = _one_hole([az, az], [dip, dip], [0.0, 400.0])
    x, y, z = positions_at(collars, surveys, ["H1"], [depth])
    inc = np.radians(90.0 + dip)
    azr = np.radians(az)
    np.testing.assert_allclose(x[0], 100.0 + depth * np.sin(inc) * np.sin(azr), atol=1e-6)
    np.testing.assert_allclose(y[0], 200.0 + depth * np.sin(inc) * np.cos(azr), atol=1e-6)
    np.testing.assert_allclose(z[0], 1000.0 - depth * np.cos(inc), atol=1e-6)


def test_vertical_hole_keeps_easting_northing():
    collars, surveys = _one_hole([0.0, 0.0], [-90.0, -90.0], [0.0, 300.0])
    x, y, z = positions_at(collars, surveys, ["H1"] * 3, [0.0, 150.0, 350.0])
    np.testing.assert_allclose(x, 100.0)
    np.testing.assert_allclose(y, 200.0)
    np.testing.assert_allclose(z, [1000.0, 850.0, 650.0])


@settings(max_examples=30, deadline=None)
@given(
    st.floats(0.0, 359.0), st.floats(-80.0, -30.0), st.floats(-20.0, 20.0), st.floats(-15.0, 15.0)
)
def test_curved_hole_path_length_is_depth(az, dip, daz, ddip):
    # invariant of minimum curvature: the arc length between stations equals the depth change
    collars, surveys = _one_hole([az, (az + daz) % 360.0], [dip, dip + ddip], [0.0, 50.0])
    d = np.linspace(0.0, 50.0, 501)
    x, y, z = positions_at(collars, surveys, ["H1"] * len(d), d)
    length = np.sum(np.sqrt(np.diff(x) ** 2 + np.diff(y) ** 2 + np.diff(z) ** 2))
    assert length == pytest.approx(50.0, rel=1e-4)
    # the end point equals the closed-form minimum-curvature station step
    # (Sawaryn & Thorogood 2005, the formulas in the project's science notes)
    i1, i2 = np.radians(90.0 + dip), np.radians(90.0 + dip + ddip)
    a1, a2 = np.radians(az), np.radians(az + daz)
    cosb = np.cos(i2 - i1) - np.sin(i1) * np.sin(i2) * (1 - np.cos(a2 - a1))
    beta = np.arccos(np.clip(cosb, -1, 1))
    rf = 1.0 if beta < 1e-9 else 2.0 / beta * np.tan(beta / 2.0)
    de = 25.0 * (np.sin(i1) * np.sin(a1) + np.sin(i2) * np.sin(a2)) * rf
    dn = 25.0 * (np.sin(i1) * np.cos(a1) + np.sin(i2) * np.cos(a2)) * rf
    dv = 25.0 * (np.cos(i1) + np.cos(i2)) * rf
    np.testing.assert_allclose(
        [x[-1], y[-1], z[-1]], [100.0 + de, 200.0 + dn, 1000.0 - dv], atol=1e-6
    )


def test_model_is_a_telescoped_porphyry():
    model = build_deposit(7)
    # a vertical line through the core: potassic at depth, phyllic / lithocap above
    z = np.linspace(700.0, 1250.0, 56)
    g = sample_geology(model, np.full_like(z, 10_000.0), np.full_like(z, 20_000.0), z)
    deep = z < 950
    assert g.zones["potassic"][deep].mean() > 0.6
    # Cu falls away from the core: mean grade in rings around the axis at the core's level
    rng = np.random.default_rng(0)
    cu = []
    for r0 in (0.0, 250.0, 500.0, 750.0):
        r = rng.uniform(r0, r0 + 250.0, 400)
        ang = rng.uniform(0.0, 2 * np.pi, 400)
        pts = sample_geology(
            model,
            10_000.0 + r * np.sin(ang),
            20_000.0 + r * np.cos(ang),
            rng.uniform(900.0, 1100.0, 400),
        )
        cu.append(element_grades(pts.minerals_pct, pts.gypsum_frac)["cu_pct"].mean())
    assert cu == sorted(cu, reverse=True)


def test_positions_agree_with_the_project_desurvey(small):
    # the demo places its geology where geomet's own minimum-curvature desurvey puts the samples
    desurvey = pytest.importorskip("geomet.drillholes.desurvey")
    c, s, scan = small.clean["collars"], small.clean["surveys"], small.clean["scan"]
    mid = (scan["from_m"] + scan["to_m"]) / 2
    x, y, z = positions_at(c, s, scan["hole_id"], mid)
    ref = desurvey.positions_at(desurvey.desurvey_holes(c, s), scan["hole_id"], mid)
    np.testing.assert_allclose(np.c_[x, y, z], ref[["x_m", "y_m", "z_m"]].to_numpy(), atol=1e-6)


def test_positions_need_collars_and_surveys():
    collars, surveys = _one_hole([10.0, 10.0], [-60.0, -60.0], [0.0, 100.0])
    with pytest.raises(InputDataError, match=r"query hole\(s\) \['H9'\] have no collar"):
        positions_at(collars, surveys, ["H9"], [5.0])
    two = pd.concat([collars, collars.assign(hole_id="H2")], ignore_index=True)
    with pytest.raises(InputDataError, match=r"hole\(s\) \['H2'\] have no survey station"):
        positions_at(two, surveys, ["H1"], [5.0])


def test_positions_do_not_depend_on_survey_order():
    collars, surveys = _one_hole([10.0, 30.0, 50.0], [-60.0, -55.0, -50.0], [0.0, 50.0, 100.0])
    a = positions_at(collars, surveys, ["H1"] * 2, [25.0, 120.0])
    b = positions_at(collars, surveys.iloc[::-1], ["H1"] * 2, [25.0, 120.0])
    np.testing.assert_allclose(np.c_[a], np.c_[b])


@settings(max_examples=5, deadline=None)
@given(st.integers(0, 10_000))
def test_any_seed_gives_valid_interval_tables(seed):
    # invariants for every realisation: compositional rows, Cu mass balance, sorted intervals
    d = generate_demo(seed=seed, holes=3, tables=("scan", "assays"), plant=False)
    scan, assays = d.clean["scan"], d.clean["assays"]
    total = scan[list(SCANNED_MINERAL_COLUMNS)].sum(axis=1)
    assert total.between(96.0, 100.2).all()
    assert (assays["cu_asol_pct"] <= assays["cu_pct"]).all()
    assert (assays[["cu_pct", "fe_pct", "s_pct", "al_pct"]] > 0).all().all()
    for t in (scan, assays):
        assert (t["from_m"] < t["to_m"]).all()
        nxt = t.groupby("hole_id")["from_m"].shift(-1)
        assert (nxt.isna() | (nxt >= t["to_m"] - 1e-9)).all()


def test_lithology_logged_from_collar_to_end_of_hole(small):
    from geomet.demo import LITH_CODES

    lith = small.clean["lithology"]
    td = small.clean["collars"].set_index("hole_id")["total_depth_m"]
    assert set(lith["lith_code"]) <= set(LITH_CODES)
    for hole, t in lith.groupby("hole_id"):
        assert t["from_m"].iloc[0] == 0.0
        assert t["to_m"].iloc[-1] == pytest.approx(td[hole])
        np.testing.assert_allclose(t["from_m"].iloc[1:], t["to_m"].iloc[:-1])  # contiguous
        assert (t["lith_code"].iloc[1:].to_numpy() != t["lith_code"].iloc[:-1].to_numpy()).all()
    # logged runs: a few metres to tens of metres (contacts moved by up to 0.5 m each)
    assert ((lith["to_m"] - lith["from_m"]) >= 2.0).all()


def test_tiny_demo_still_plants_four_errors():
    data = generate_demo(seed=5, holes=2, scale=0.05)
    assert len(data.planted_errors) == 4
    assert len(data.files["collars"]) == 2


def test_scale_must_be_finite():
    with pytest.raises(RecipeError, match="scale must be positive; got scale=nan"):
        generate_demo(scale=float("nan"))


@settings(max_examples=80, deadline=None)
@given(
    st.lists(
        st.tuples(st.integers(1, 12), st.sampled_from(["AND", "PEP", "DYK"])),
        min_size=1,
        max_size=25,
    )
)
def test_absorbing_short_logged_runs_keeps_the_hole_covered(runs):
    from geomet.demo.intervals import _absorb_short_runs

    edges = np.cumsum([0] + [n for n, _ in runs])
    raw = [
        [float(a), float(b), c] for a, b, (_, c) in zip(edges[:-1], edges[1:], runs, strict=True)
    ]
    out = _absorb_short_runs(raw, 3.0)
    assert out[0][0] == 0.0
    assert out[-1][1] == edges[-1]  # total logged length conserved
    assert all(a[1] == b[0] for a, b in zip(out[:-1], out[1:], strict=True))  # contiguous
    assert all(a[2] != b[2] for a, b in zip(out[:-1], out[1:], strict=True))  # merged neighbours
    assert len(out) == 1 or all(r[1] - r[0] >= 3.0 for r in out)
