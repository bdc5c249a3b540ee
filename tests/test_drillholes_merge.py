"""Tests of geomet.drillholes.merge (overlap-length weighted merging of interval tables)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.drillholes.merge import interval_union, merge_intervals, overlap_pairs
from geomet.errors import InputDataError


def brute_force_mean(target, source, column):
    """Independent reference: a plain double loop over intervals (no numpy tricks)."""
    out = []
    for _, t in target.iterrows():
        num = den = 0.0
        for _, s in source.iterrows():
            if s.hole_id != t.hole_id or pd.isna(s[column]):
                continue
            ov = min(t.to_m, s.to_m) - max(t.from_m, s.from_m)
            if ov > 0:
                num += ov * s[column]
                den += ov
        out.append(num / den if den > 0 else np.nan)
    return np.array(out)


def test_union_breaks_and_longest_overlap():
    assays = pd.DataFrame(
        {"hole_id": ["VL-001"] * 2, "from_m": [0.0, 2.0], "to_m": [2.0, 4.0], "cu_pct": [0.2, 0.6]}
    )
    lith = pd.DataFrame(
        {
            "hole_id": ["VL-001"] * 2,
            "from_m": [0.0, 1.0],
            "to_m": [1.0, 4.0],
            "lith_code": ["AND", "QFP"],
        }
    )
    out = merge_intervals({"assays": assays, "lithology": lith})
    assert out[["from_m", "to_m"]].to_numpy().tolist() == [[0, 1], [1, 2], [2, 4]]
    assert out["cu_pct"].tolist() == [0.2, 0.2, 0.6]
    assert out["lith_code"].tolist() == ["AND", "QFP", "QFP"]
    assert out["length_m"].tolist() == [1.0, 1.0, 2.0]
    assert {"assays_coverage_frac", "lithology_coverage_frac", "coverage_frac"} <= set(out)


def test_merge_onto_given_breaks_weights_by_overlap():
    assays = pd.DataFrame(
        {
            "hole_id": ["VL-001"] * 3,
            "from_m": [0.0, 1.0, 3.0],
            "to_m": [1.0, 3.0, 4.0],
            "cu_pct": [1.0, 0.5, np.nan],
        }
    )
    breaks = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-001"],
            "from_m": [0.5, 2.0],
            "to_m": [2.0, 4.0],
            "sample_id": ["MT-1", "MT-2"],
        }
    )
    out = merge_intervals([assays], breaks=breaks)
    # MT-1: 0.5 m at 1.0 and 1.0 m at 0.5 -> (0.5 + 0.5) / 1.5
    assert out["cu_pct"].tolist() == pytest.approx([1.0 / 1.5, 0.5])
    assert out["sample_id"].tolist() == ["MT-1", "MT-2"]  # other break columns kept, order kept
    assert out["coverage_frac"].tolist() == pytest.approx([1.0, 1.0])
    assert out["length_m"].tolist() == [1.5, 2.0]


def test_same_column_in_two_tables_first_table_wins():
    a = pd.DataFrame({"hole_id": ["H"], "from_m": [0.0], "to_m": [1.0], "density_t_m3": [np.nan]})
    b = pd.DataFrame({"hole_id": ["H"], "from_m": [0.0], "to_m": [1.0], "density_t_m3": [2.7]})
    c = pd.DataFrame({"hole_id": ["H"], "from_m": [0.0], "to_m": [1.0], "density_t_m3": [2.5]})
    assert merge_intervals([a, b, c])["density_t_m3"].tolist() == [2.7]


def test_censored_helpers_not_merged():
    a = pd.DataFrame(
        {
            "hole_id": ["H"],
            "from_m": [0.0],
            "to_m": [1.0],
            "cu_pct": [0.005],
            "cu_pct_censored": [True],
            "cu_pct_detection_limit": [0.01],
        }
    )
    out = merge_intervals([a])
    assert "cu_pct_censored" not in out
    assert "cu_pct_detection_limit" not in out


def test_gaps_dropped_with_union_breaks():
    a = pd.DataFrame(
        {"hole_id": ["H", "H"], "from_m": [0.0, 5.0], "to_m": [1.0, 6.0], "cu_pct": [0.1, 0.2]}
    )
    out = merge_intervals([a])
    assert out[["from_m", "to_m"]].to_numpy().tolist() == [[0, 1], [5, 6]]
    assert len(merge_intervals([a], drop_empty=False)) == 3


def test_errors():
    with pytest.raises(InputDataError, match=r"interval table 'lith' lacks column\(s\) to_m"):
        merge_intervals({"lith": pd.DataFrame({"hole_id": ["H"], "from_m": [0.0]})})
    with pytest.raises(InputDataError, match=r"breaks must be 'union' or a DataFrame"):
        merge_intervals(
            [pd.DataFrame({"hole_id": ["H"], "from_m": [0.0], "to_m": [1.0]})],
            breaks="intersection",
        )
    with pytest.raises(InputDataError, match=r"needs at least one interval table"):
        merge_intervals([])


def test_interval_union():
    code = np.array([0, 0, 0, 1])
    f = np.array([0.0, 1.0, 5.0, 0.0])
    t = np.array([2.0, 3.0, 6.0, 1.0])
    uc, uf, ut = interval_union(code, f, t)
    assert uc.tolist() == [0, 0, 1]
    assert uf.tolist() == [0, 5, 0]
    assert ut.tolist() == [3, 6, 1]


def random_table(draw, holes, n_max, column):
    rows = []
    for hole in holes:
        cuts = sorted(draw(st.lists(st.integers(0, 40), min_size=2, max_size=n_max, unique=True)))
        for a, b in zip(cuts[:-1], cuts[1:], strict=False):
            if draw(st.booleans()) or len(rows) == 0:
                value = draw(st.one_of(st.floats(0.0, 10.0), st.just(np.nan)))
                rows.append((hole, a * 0.5, b * 0.5, value))
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", column])


@st.composite
def two_tables(draw):
    holes = draw(
        st.lists(
            st.sampled_from(["VL-001", "VL-002", "VL-003"]), min_size=1, max_size=3, unique=True
        )
    )
    return random_table(draw, holes, 8, "cu_pct"), random_table(draw, holes, 8, "s_pct")


@settings(max_examples=60, deadline=None)
@given(two_tables())
def test_matches_brute_force_and_conserves_length_weighted_content(tables):
    a, b = tables
    out = merge_intervals({"assays": a, "scan": b})
    np.testing.assert_allclose(out["cu_pct"], brute_force_mean(out, a, "cu_pct"), atol=1e-12)
    np.testing.assert_allclose(out["s_pct"], brute_force_mean(out, b, "s_pct"), atol=1e-12)
    # content (grade x length over sampled length) is conserved on union breaks
    ok = a["cu_pct"].notna()
    before = float((a.loc[ok, "cu_pct"] * (a.loc[ok, "to_m"] - a.loc[ok, "from_m"])).sum())
    after = float(np.nansum(out["cu_pct"] * out["length_m"] * out["assays_coverage_frac"]))
    assert after == pytest.approx(before, rel=1e-12, abs=1e-12)
    assert out["coverage_frac"].between(0, 1).all()


@settings(max_examples=40, deadline=None)
@given(two_tables())
def test_overlap_pairs_sum_to_overlap_of_each_target(tables):
    a, b = tables
    holes = pd.Index(sorted(set(a.hole_id) | set(b.hole_id)))
    a = a.sort_values(["hole_id", "from_m"])
    b = b.sort_values(["hole_id", "from_m"])
    ti, si, ov = overlap_pairs(
        holes.get_indexer(a.hole_id),
        a.from_m.to_numpy(),
        a.to_m.to_numpy(),
        holes.get_indexer(b.hole_id),
        b.from_m.to_numpy(),
        b.to_m.to_numpy(),
        100.0,
    )
    assert np.all(ov > 0)
    assert np.all(a.hole_id.to_numpy()[ti] == b.hole_id.to_numpy()[si])
    expected = 0.0
    for _, x in a.iterrows():
        for _, y in b.iterrows():
            if x.hole_id == y.hole_id:
                expected += max(0.0, min(x.to_m, y.to_m) - max(x.from_m, y.from_m))
    assert ov.sum() == pytest.approx(expected)


def test_censored_fraction_on_request():
    a = pd.DataFrame(
        {
            "hole_id": ["H", "H"],
            "from_m": [0.0, 1.0],
            "to_m": [1.0, 4.0],
            "cu_pct": [0.005, 0.3],
            "cu_pct_censored": [True, False],
        }
    )
    breaks = pd.DataFrame({"hole_id": ["H"], "from_m": [0.0], "to_m": [2.0]})
    out = merge_intervals([a], breaks=breaks, censored_frac=True)
    assert out["cu_pct_censored_frac"].tolist() == [0.5]  # 1 m of the 2 m was censored
    assert "cu_pct_censored" not in out
