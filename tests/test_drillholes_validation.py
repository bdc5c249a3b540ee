"""Tests of geomet.drillholes.validation: one test per rule, with its message."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from geomet.drillholes.problems import ERROR, WARNING, Problem, problems_frame
from geomet.drillholes.validation import exclude_problem_rows, validate_tables
from geomet.io.readers import read_table


def collars(**overrides):
    frame = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-002"],
            "easting_m": [1000.0, 1100.0],
            "northing_m": [5000.0, 5000.0],
            "elevation_m": [3200.0, 3210.0],
            "total_depth_m": [50.0, 60.0],
        }
    )
    for key, value in overrides.items():
        frame[key] = value
    return frame


def surveys():
    return pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-001", "VL-002"],
            "depth_m": [0.0, 40.0, 0.0],
            "azimuth_deg": [90.0, 92.0, 0.0],
            "dip_deg": [-60.0, -61.0, -90.0],
        }
    )


def assays(rows=None):
    rows = rows or [("VL-001", 0.0, 2.0, 0.3), ("VL-001", 2.0, 4.0, 0.4)]
    return pd.DataFrame(rows, columns=["hole_id", "from_m", "to_m", "cu_pct"])


def base(**tables):
    out = {"collars": collars(), "surveys": surveys(), "assays": assays()}
    out.update(tables)
    return out


def only(problems, rule):
    found = [p for p in problems if p.rule == rule]
    assert found, f"no problem with rule {rule}: {[p.rule for p in problems]}"
    return found


def test_clean_tables_have_no_problems():
    assert validate_tables(base()) == []


def test_missing_column_suggests_a_similar_name():
    table = assays().rename(columns={"from_m": "from_mm"})
    (p,) = only(validate_tables(base(assays=table)), "missing_column")
    assert p.severity == ERROR
    assert p.column == "from_m"
    assert (
        "table assays has no column 'from_m', required for table 'assays'; did you mean "
        "'from_mm'?" in p.message
    )


def test_non_numeric_value():
    table = assays([("VL-001", 0.0, 2.0, "0.3"), ("VL-001", 2.0, 4.0, "high")])
    (p,) = only(validate_tables(base(assays=table)), "non_numeric")
    assert p.value == "high"
    assert p.row == 1
    assert p.hole_id == "VL-001"
    assert p.message.startswith("cu_pct must be a number; got 'high' at assays row 1 (hole VL-001)")


def test_from_not_less_than_to_names_both_values():
    table = assays([("VL-001", 0.0, 2.0, 0.3), ("VL-001", 4.0, 3.0, 0.4)])
    (p,) = only(validate_tables(base(assays=table)), "from_not_less_than_to")
    assert "from_m must be less than to_m; got from_m=4, to_m=3 at assays row 1" in p.message


def test_overlap_and_gap():
    table = assays(
        [("VL-001", 0.0, 2.0, 0.3), ("VL-001", 1.5, 3.0, 0.4), ("VL-001", 5.0, 6.0, 0.2)]
    )
    problems = validate_tables(base(assays=table))
    (overlap,) = only(problems, "overlap")
    assert overlap.severity == ERROR
    assert overlap.row == 1
    assert (
        "interval 1.5-3 m at assays row 1 (hole VL-001) overlaps the interval ending at 2 m"
        in overlap.message
    )
    (gap,) = only(problems, "gap")
    assert gap.severity == WARNING
    assert "gap from 3 to 5 m in hole VL-001" in gap.message


def test_small_depth_mismatch_is_rounding_not_overlap():
    table = assays([("VL-001", 0.0, 2.0, 0.3), ("VL-001", 1.995, 3.0, 0.4)])
    assert validate_tables(base(assays=table)) == []


def test_interval_beyond_total_depth():
    table = assays([("VL-002", 58.0, 61.0, 0.3)])
    (p,) = only(validate_tables(base(assays=table)), "beyond_total_depth")
    assert "interval 58-61 m goes beyond the total depth 60 m of hole VL-002" in p.message


def test_interval_without_collar_suggests_hole():
    table = assays([("VL-01", 0.0, 1.0, 0.3)])
    (p,) = only(validate_tables(base(assays=table)), "no_collar")
    assert "hole VL-01 at assays row 0 (hole VL-01) has no collar" in p.message
    assert "(did you mean 'VL-001'?)" in p.message


def test_duplicate_hole_in_collars():
    table = pd.concat([collars(), collars().iloc[[0]].assign(easting_m=999.0)], ignore_index=True)
    (p,) = only(validate_tables(base(collars=table)), "duplicate_hole")
    assert "hole VL-001 has more than one collar (collars row 2 (hole VL-001))" in p.message


def test_azimuth_and_dip_ranges():
    table = surveys()
    table.loc[1, "azimuth_deg"] = 360.0
    table.loc[2, "dip_deg"] = -95.0
    problems = validate_tables(base(surveys=table))
    (az,) = only(problems, "azimuth_range")
    assert "azimuth_deg must be in [0, 360); got 360 at surveys row 1" in az.message
    (dip,) = only(problems, "dip_range")
    assert "dip_deg must be in [-90, 90] (negative downward); got -95" in dip.message


def test_survey_depths_repeated_and_out_of_order():
    table = pd.DataFrame(
        {
            "hole_id": ["VL-001"] * 4,
            "depth_m": [0.0, 30.0, 20.0, 20.0],
            "azimuth_deg": [90.0, 91.0, 92.0, 93.0],
            "dip_deg": [-60.0, -60.0, -60.0, -61.0],
        }
    )
    problems = validate_tables(base(surveys=table))
    (rep,) = only(problems, "survey_depth_repeated")
    assert "survey depth 20 m is given twice for hole VL-001" in rep.message
    (order,) = only(problems, "survey_order")
    assert order.severity == WARNING
    assert "survey depths of hole VL-001 do not increase down the file: 20 m" in order.message


def test_survey_beyond_total_depth_and_hole_without_survey():
    table = surveys()
    table.loc[1, "depth_m"] = 55.0
    table = table.iloc[:2]
    problems = validate_tables(base(surveys=table))
    assert (
        "survey at 55 m is below the total depth 50 m of hole VL-001"
        in only(problems, "survey_beyond_total_depth")[0].message
    )
    assert (
        "hole VL-002 (collars row 1 (hole VL-002)) has no downhole survey; it is treated as "
        "vertical" in only(problems, "no_survey")[0].message
    )


def test_negative_abundance_and_percent_over_100():
    table = assays([("VL-001", 0.0, 2.0, -0.3), ("VL-001", 2.0, 4.0, 140.0)])
    problems = validate_tables(base(assays=table))
    assert (
        "cu_pct must not be negative; got -0.3 at assays row 0"
        in only(problems, "negative_value")[0].message
    )
    assert (
        "cu_pct is a percentage and cannot exceed 100; got 140"
        in only(problems, "percent_over_100")[0].message
    )


def test_scan_abundances_over_100_percent():
    scan = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-001"],
            "from_m": [0.0, 1.0],
            "to_m": [1.0, 2.0],
            "quartz_feldspar_pct": [70.0, 70.0],
            "smectite_pct": [30.5, 35.0],
        }
    )
    (p,) = only(validate_tables(base(scan=scan)), "abundance_sum")
    # 100.5 is within the 1 wt% tolerance; 105 is not
    assert p.row == 1
    assert (
        "mineral abundances sum to 105.0 wt% at scan row 1 (hole VL-001), over 100 wt%" in p.message
    )


def test_duplicate_row_reported_once():
    table = assays([("VL-001", 0.0, 2.0, 0.3), ("VL-001", 0.0, 2.0, 0.3)])
    problems = validate_tables(base(assays=table))
    assert [p.rule for p in problems] == ["duplicate_row"]
    assert "row at assays row 1 (hole VL-001) repeats row 0 exactly" in problems[0].message


def test_duplicate_sample_id_in_testwork():
    testwork = pd.DataFrame(
        {
            "sample_id": ["MT-1", "MT-1"],
            "hole_id": ["VL-001", "VL-001"],
            "from_m": [0.0, 10.0],
            "to_m": [5.0, 15.0],
            "bond_bwi_kwh_t": [14.0, 15.0],
        }
    )
    (p,) = only(validate_tables(base(testwork=testwork)), "duplicate_key")
    assert "sample_id MT-1 appears more than once in 'testwork'" in p.message


def test_missing_hole_id():
    table = assays([("VL-001", 0.0, 2.0, 0.3), (None, 2.0, 4.0, 0.4)])
    (p,) = only(validate_tables(base(assays=table)), "missing_value")
    assert "hole_id is empty at assays row 1; every row of 'assays' needs a hole_id" in p.message


def test_schedule_rules():
    blocks = pd.DataFrame(
        {"block_id": ["B1", "B2"], "x_m": [0.0, 10.0], "y_m": [0.0, 0.0], "z_m": [3000.0, 3000.0]}
    )
    schedule = pd.DataFrame({"block_id": ["B1", "B9"], "period": [0, 2]})
    problems = validate_tables({"blocks": blocks, "schedule": schedule})
    assert "period must be a whole number >= 1; got 0" in only(problems, "period_range")[0].message
    assert (
        "scheduled block B9 at schedule row 1 is not in the block model"
        in only(problems, "schedule_block_unknown")[0].message
    )


def test_messages_name_file_and_line_from_the_reader(tmp_path):
    path = tmp_path / "vellantra_assays.csv"
    path.write_text("hole_id,from_m,to_m,cu_pct\nVL-001,0,2,0.3\n\nVL-001,3,2,0.4\n")
    source = read_table(path, table="assays")
    problems = validate_tables(base(assays=source.table), sources={"assays": source})
    (p,) = only(problems, "from_not_less_than_to")
    assert p.file == "vellantra_assays.csv"
    assert p.line == 4
    assert p.hole_id == "VL-001"
    assert p.message == (
        "from_m must be less than to_m; got from_m=3, to_m=2 at vellantra_assays.csv line 4 "
        "(hole VL-001)"
    )


def test_file_level_problems_are_included(tmp_path):
    path = tmp_path / "scan.csv"
    path.write_text("")
    source = read_table(path, table="scan")
    problems = validate_tables(base(scan=source.table), sources={"scan": source})
    assert [p.rule for p in problems] == ["empty_file"]  # no missing-column noise after it


def test_problems_are_capped_with_a_summary():
    rows = [("VL-001", float(i), float(i) - 0.5, 0.3) for i in range(1, 11)]
    problems = validate_tables(base(assays=assays(rows)), max_problems=3)
    assert len(problems) == 4
    summary = problems[-1]
    assert summary.rule == "more_problems"
    assert summary.severity == ERROR
    assert summary.message.startswith(
        "7 more problems not listed (7 errors, 0 warnings), most often: from_not_less_than_to (7)"
    )


def test_errors_come_first():
    table = assays(
        [("VL-001", 0.0, 2.0, 0.3), ("VL-001", 5.0, 6.0, 0.2), ("VL-001", 7.0, 6.5, 0.2)]
    )
    problems = validate_tables(base(assays=table))
    assert [p.severity for p in problems] == [ERROR, WARNING]


def test_exclude_problem_rows_drops_only_error_rows():
    table = assays(
        [
            ("VL-001", 0.0, 2.0, 0.3),
            ("VL-001", 1.0, 3.0, 0.4),
            ("VL-001", 5.0, 6.0, 0.2),
            ("VL-009", 0.0, 1.0, 0.1),
        ]
    )
    tables = base(assays=table)
    problems = validate_tables(tables, max_problems=None)
    cleaned = exclude_problem_rows(tables, problems)
    # the overlapping row and the uncollared row go; the row after a gap (warning) stays
    assert cleaned["assays"].index.tolist() == [0, 2]
    assert cleaned["collars"] is tables["collars"]
    assert validate_tables({**tables, **cleaned}, max_problems=None)[0].rule == "gap"


def test_problems_frame_orders_errors_first():
    problems = [
        Problem(WARNING, "gap", "w", table="assays", line=2),
        Problem(ERROR, "overlap", "e", table="assays", line=9),
    ]
    frame = problems_frame(problems)
    assert frame["rule"].tolist() == ["overlap", "gap"]
    assert "row" in frame.columns


@pytest.mark.parametrize("table_name", ["lithology", "density", "site_domains", "other_log"])
def test_any_interval_table_is_checked(table_name):
    table = pd.DataFrame({"hole_id": ["VL-001"], "from_m": [3.0], "to_m": [1.0]})
    problems = validate_tables(base(**{table_name: table}))
    assert [p.rule for p in problems] == ["from_not_less_than_to"]
    assert problems[0].table == table_name


def test_collar_rules():
    table = collars()
    table.loc[0, "total_depth_m"] = 0.0
    table.loc[1, "easting_m"] = np.nan
    problems = validate_tables(base(collars=table))
    assert (
        "total_depth_m must be greater than 0; got 0 at collars row 0"
        in only(problems, "total_depth")[0].message
    )
    assert (
        "collar easting_m is empty at collars row 1 (hole VL-002); the hole cannot be located"
        in (only(problems, "missing_value")[0].message)
    )


def test_negative_depths():
    table = assays([("VL-001", -1.0, 2.0, 0.3)])
    survey = surveys()
    survey.loc[1, "depth_m"] = -5.0
    problems = validate_tables(base(assays=table, surveys=survey))
    messages = [p.message for p in only(problems, "negative_depth")]
    assert any("from_m must be >= 0; got -1 at assays row 0" in m for m in messages)
    assert any("survey depth_m must be >= 0; got -5 at surveys row 1" in m for m in messages)


def test_wrong_encoding_and_delimiter_reach_the_report(tmp_path):
    path = tmp_path / "lith.csv"
    path.write_bytes("hole_id;from_m;to_m;lith_code\nVL-001;0;2;Pórfido\n".encode("cp1252"))
    source = read_table(path, table="lithology")
    problems = validate_tables(base(lithology=source.table), sources={"lithology": source})
    assert sorted(p.rule for p in problems) == ["delimiter", "encoding"]
    assert all(p.severity == WARNING and p.file == "lith.csv" for p in problems)


intervals = st.lists(
    st.tuples(
        st.sampled_from(["VL-001", "VL-002", "VL-009"]), st.integers(-2, 40), st.integers(0, 12)
    ),
    min_size=1,
    max_size=25,
)


@settings(max_examples=30, deadline=None)
@given(intervals)
def test_excluding_error_rows_leaves_no_interval_errors(rows):
    table = pd.DataFrame(
        [(h, f * 0.5, (f + n) * 0.5, 0.3) for h, f, n in rows],
        columns=["hole_id", "from_m", "to_m", "cu_pct"],
    )
    tables = base(assays=table)
    cleaned = exclude_problem_rows(tables, validate_tables(tables, max_problems=None))
    again = validate_tables({**tables, **cleaned}, max_problems=None)
    assert [p for p in again if p.severity == ERROR] == []
    # only rows that errors pointed at were dropped
    assert set(cleaned["assays"].index) <= set(table.index)


def test_all_upward_dips_warn_about_the_sign_convention():
    table = surveys()
    table.loc[table.hole_id == "VL-001", "dip_deg"] = [60.0, 61.0]
    (p,) = only(validate_tables(base(surveys=table)), "dip_upward")
    assert p.severity == WARNING
    assert p.row == 0
    assert "every survey of hole VL-001 has a positive (upward) dip, e.g. 60 at surveys row 0" in (
        p.message
    )


def test_duplicate_block_and_plant_period():
    blocks = pd.DataFrame(
        {"block_id": ["B1", "B1"], "x_m": [0.0, 10.0], "y_m": [0.0, 0.0], "z_m": [3000.0, 3000.0]}
    )
    limits = pd.DataFrame({"period": [1, 1], "days": [365, 366]})
    problems = validate_tables({"blocks": blocks, "plant_limits": limits})
    messages = [p.message for p in only(problems, "duplicate_key")]
    assert "block_id B1 appears more than once in 'blocks' (blocks row 1)" in messages[0]
    assert "period 1 appears more than once in 'plant_limits'" in messages[1]


def test_testwork_samples_are_sparse_so_gaps_are_not_reported():
    # Testwork samples are taken here and there along a hole (common practice), unlike assays.
    import pandas as pd

    from geomet.drillholes.validation import validate_tables

    collars = pd.DataFrame({"hole_id": ["H1"], "easting_m": [0.0], "northing_m": [0.0],
                            "elevation_m": [100.0], "total_depth_m": [200.0]})
    spaced = pd.DataFrame({"hole_id": ["H1", "H1"], "from_m": [10.0, 80.0], "to_m": [30.0, 100.0]})
    gaps = {t: [p for p in validate_tables({"collars": collars, t: spaced}) if p.rule == "gap"]
            for t in ("testwork", "assays")}
    assert gaps["testwork"] == []
    assert len(gaps["assays"]) == 1
    assert "gap from 30 to 80 m in hole H1" in gaps["assays"][0].message
