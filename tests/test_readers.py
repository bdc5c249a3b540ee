"""Tests of geomet.io.readers: formats, encodings, delimiters, column maps, units, censoring."""

from __future__ import annotations

import zipfile

import numpy as np
import openpyxl
import pandas as pd
import pytest

from geomet.drillholes.censored import DetectionRule
from geomet.errors import InputDataError
from geomet.io import readers
from geomet.io.readers import normalise_name, read_table, sniff_delimiter, unit_factor

ASSAY_CSV = (
    "HoleID,From,To,Cu (ppm),Au ppb\n"
    "VL-001,0,1.5,2500,<5\n"
    "VL-001,1.5,3,-10,120\n"
    "VL-002,0,2,BDL,IS\n"
)
COLUMN_MAP = {"Cu (ppm)": "cu_pct", "Au ppb": "au_gpt"}
UNITS = {"cu_pct": "ppm", "au_gpt": "ppb"}


def write(tmp_path, name, text, encoding="utf-8"):
    path = tmp_path / name
    path.write_bytes(text.encode(encoding) if isinstance(text, str) else text)
    return path


def rules_of(result):
    return [p.rule for p in result.problems]


# --- unit factors: definitions of the units (SI brochure / NIST SP 811) -----------------------
@pytest.mark.parametrize(
    ("src", "dst", "factor"),
    [
        ("ppm", "%", 1e-4),  # 1 % = 10 000 ppm (definition)
        ("ppb", "g/t", 1e-3),  # 1 g/t = 1 ppm = 1000 ppb (definition)
        ("%", "ppm", 1e4),
        ("g/t", "ppm", 1.0),
        # NIST SP 811: troy ounce 31.1034768 g, short ton 907.18474 kg
        ("oz/t", "g/t", 34.285714285714285),
        ("ft", "m", 0.3048),  # international foot, exact
        ("g/cm3", "t/m3", 1.0),
    ],
)
def test_unit_factor_definitions(src, dst, factor):
    assert unit_factor(src, dst) == pytest.approx(factor, rel=1e-12)


def test_unit_factor_refuses_mixed_dimensions():
    with pytest.raises(InputDataError, match=r"cannot convert unit 'ppm' to 'm'; known units"):
        unit_factor("ppm", "m")


def test_normalise_name_and_sniffer():
    assert normalise_name("Cu %") == "cu_pct"
    assert sniff_delimiter(["a|b|c", "1|2|3"]) == "|"
    assert sniff_delimiter(["a\tb", "1\t2"]) == "\t"
    assert sniff_delimiter(["only"]) == ","


# --- CSV ----------------------------------------------------------------------------------------
def test_csv_column_map_units_and_censoring(tmp_path):
    path = write(tmp_path, "assays.csv", ASSAY_CSV)
    result = read_table(path, table="assays", column_map=COLUMN_MAP, units=UNITS)
    t = result.table
    assert list(t.columns[:5]) == ["hole_id", "from_m", "to_m", "cu_pct", "au_gpt"]
    assert result.renamed == {
        "HoleID": "hole_id",
        "From": "from_m",
        "To": "to_m",
        "Cu (ppm)": "cu_pct",
        "Au ppb": "au_gpt",
    }
    # 2500 ppm = 0.25 % ; -10 ppm = below 10 ppm -> half 5 ppm = 0.0005 %
    assert t["cu_pct"].tolist()[:2] == pytest.approx([0.25, 0.0005])
    # BDL with no stated limit takes the smallest limit seen in the column (10 ppm)
    assert t["cu_pct"].iloc[2] == pytest.approx(0.0005)
    assert t["cu_pct_censored"].tolist() == [False, True, True]
    assert t["cu_pct_detection_limit"].tolist()[1:] == pytest.approx([0.001, 0.001])
    # <5 ppb -> 2.5 ppb = 0.0025 g/t; 120 ppb = 0.12 g/t; IS = insufficient sample -> missing
    assert t["au_gpt"].iloc[0] == pytest.approx(0.0025)
    assert t["au_gpt"].iloc[1] == pytest.approx(0.12)
    assert np.isnan(t["au_gpt"].iloc[2])
    assert result.censored_counts == {"cu_pct": 2, "au_gpt": 1}
    assert result.units_converted["cu_pct"] == ("ppm", "%", pytest.approx(1e-4))
    assert result.line_numbers.tolist() == [2, 3, 4]
    assert result.encoding == "utf-8"
    assert result.delimiter == ","
    assert result.problems == []
    assert result.table["hole_id"].tolist() == ["VL-001", "VL-001", "VL-002"]


def test_detection_rule_and_default_limits_reach_the_reader(tmp_path):
    path = write(tmp_path, "assays.csv", ASSAY_CSV)
    rule = DetectionRule(rule="limit", default_limits={"cu_pct": 50.0})
    result = read_table(path, table="assays", column_map=COLUMN_MAP, detection=rule)
    # no units map: values stay as written; BDL takes the stated 50 (limit rule)
    assert result.table["cu_pct"].tolist() == pytest.approx([2500.0, 10.0, 50.0])


def test_semicolon_delimiter_and_decimal_comma(tmp_path):
    text = "hole_id;from_m;to_m;cu_pct\nVL-001;0;1,5;0,35\nVL-001;1,5;3;0,40\n"
    result = read_table(write(tmp_path, "a.csv", text), table="assays")
    assert result.delimiter == ";"
    assert result.table["to_m"].tolist() == [1.5, 3.0]
    assert result.table["cu_pct"].tolist() == [0.35, 0.40]
    (problem,) = result.problems
    assert problem.rule == "delimiter"
    assert problem.severity == "warning"
    assert "a.csv separates fields with ';', not commas" in problem.message


def test_tab_delimiter(tmp_path):
    text = "hole_id\tfrom_m\tto_m\nVL-001\t0\t1\n"
    result = read_table(write(tmp_path, "a.tsv", text), table="lithology")
    assert result.delimiter == "\t"
    assert "separates fields with TAB" in result.problems[0].message


def test_cp1252_file_is_read_and_reported(tmp_path):
    text = "hole_id,from_m,to_m,lith_code\nVL-001,0,1,Pórfido\n"
    result = read_table(write(tmp_path, "lith.csv", text, encoding="cp1252"), table="lithology")
    assert result.encoding == "cp1252"
    assert result.table["lith_code"].iloc[0] == "Pórfido"
    (problem,) = result.problems
    assert problem.rule == "encoding"
    assert "lith.csv is not valid UTF-8 (first bad byte 0xf3 at line 2); read it as cp1252" in (
        problem.message
    )


def test_utf8_bom(tmp_path):
    text = "\ufeffhole_id,from_m,to_m\nVL-001,0,1\n"
    result = read_table(write(tmp_path, "a.csv", text), table="lithology")
    assert result.encoding == "utf-8-sig"
    assert "hole_id" in result.table.columns


def test_empty_file_is_a_problem_not_a_crash(tmp_path):
    result = read_table(write(tmp_path, "empty.csv", ""), table="assays")
    assert result.table.empty
    assert len(result.line_numbers) == 0
    (problem,) = result.problems
    assert problem.rule == "empty_file"
    assert problem.file == "empty.csv"
    assert "empty.csv is empty: expected a header line" in problem.message


def test_header_only_file(tmp_path):
    result = read_table(write(tmp_path, "a.csv", "hole_id,from_m,to_m\n"), table="assays")
    assert len(result.table) == 0
    assert "has a header but no rows" in result.problems[0].message


def test_blank_lines_keep_true_line_numbers(tmp_path):
    text = "\nhole_id,from_m,to_m\nVL-001,0,1\n\nVL-001,1,2\n"
    result = read_table(write(tmp_path, "a.csv", text), table="assays")
    assert result.line_numbers.tolist() == [3, 5]


def test_quoted_line_break_keeps_line_numbers(tmp_path):
    text = 'hole_id,from_m,to_m,comment\nVL-001,0,1,"two\nlines"\nVL-001,1,2,ok\n'
    result = read_table(write(tmp_path, "a.csv", text), table="lithology")
    assert result.line_numbers.tolist() == [2, 4]
    assert result.table["comment"].iloc[0] == "two\nlines"


def test_ragged_row_reported_with_line(tmp_path):
    text = "hole_id,from_m,to_m,cu_pct\nVL-001,0,1,0.3\nVL-001,1,2,0.4,9\nVL-001,2,3,0.5\n"
    result = read_table(write(tmp_path, "a.csv", text), table="assays")
    assert result.line_numbers.tolist() == [2, 4]
    (problem,) = result.problems
    assert problem.rule == "ragged_row"
    assert problem.line == 3
    assert "a.csv line 3 has 5 fields, the header has 4" in problem.message


def test_non_numeric_cell_is_reported(tmp_path):
    text = "hole_id,from_m,to_m,cu_pct\nVL-001,0,1,0.3\nVL-001,1,2,n.a.\n"
    result = read_table(write(tmp_path, "a.csv", text), table="assays")
    (problem,) = result.problems
    assert problem.rule == "non_numeric"
    assert problem.line == 3
    assert problem.hole_id == "VL-001"
    assert problem.message.startswith("cu_pct must be a number; got 'n.a.' at a.csv line 3")
    assert np.isnan(result.table["cu_pct"].iloc[1])


def test_geometry_tables_are_not_censored(tmp_path):
    text = "hole_id,depth_m,azimuth_deg,dip_deg\nVL-001,0,45,-60\n"
    result = read_table(write(tmp_path, "s.csv", text), table="surveys")
    assert result.table["dip_deg"].iloc[0] == -60.0
    assert "dip_deg_censored" not in result.table.columns


def test_depths_in_feet_are_converted(tmp_path):
    text = "hole_id,from,to\nVL-001,0,10\n"
    result = read_table(
        write(tmp_path, "a.csv", text), table="lithology", units={"from_m": "ft", "to_m": "ft"}
    )
    assert result.table["to_m"].iloc[0] == pytest.approx(3.048)  # 10 ft x 0.3048 m/ft


def test_unused_maps_and_duplicate_columns_warn(tmp_path):
    text = "hole_id,from_m,to_m,cu_pct,cu_pct\nVL-001,0,1,0.3,0.4\n"
    result = read_table(
        write(tmp_path, "a.csv", text),
        table="assays",
        column_map={"Copper": "cu_pct"},
        units={"zn_ppm": "ppb"},
    )
    assert sorted(rules_of(result)) == ["column_map_unused", "duplicate_column", "units_map_unused"]
    messages = " ".join(p.message for p in result.problems)
    assert "a.csv has column 'cu_pct' more than once; only the first is used" in messages
    assert "column map names 'Copper' but a.csv has no such column" in messages
    assert result.table["cu_pct"].iloc[0] == 0.3


def test_period_is_integer(tmp_path):
    text = "block_id,period,phase\nB1,1,P1\nB2,2,P2\n"
    result = read_table(write(tmp_path, "s.csv", text), table="schedule")
    assert str(result.table["period"].dtype) == "Int64"


def test_missing_file_and_unknown_format_raise(tmp_path):
    with pytest.raises(InputDataError, match=r"input file for table 'assays' not found"):
        read_table(tmp_path / "nope.csv", table="assays")
    path = write(tmp_path, "a.json", "{}")
    with pytest.raises(InputDataError, match=r"unknown format '.json'; use .csv, .xlsx"):
        read_table(path, table="assays")


def test_file_size_limit(tmp_path):
    path = write(tmp_path, "a.csv", ASSAY_CSV)
    result = read_table(path, table="assays", max_bytes=10)
    assert rules_of(result) == ["file_too_large"]
    assert "over the 0 MB limit for one input file" in result.problems[0].message


def test_row_limit(tmp_path):
    path = write(tmp_path, "a.csv", ASSAY_CSV)
    result = read_table(path, table="assays", max_rows=2)
    assert len(result.table) == 2
    assert "more than 2 rows; only the first 2 were read" in result.problems[-1].message


# --- XLSX ---------------------------------------------------------------------------------------
def make_xlsx(path, rows, sheet="Assays"):
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = sheet
    for row in rows:
        ws.append(row)
    book.save(path)
    return path


def test_xlsx_reads_sheet_with_row_numbers(tmp_path):
    rows = [
        [],
        ["Hole ID", "from_m", "to_m", "cu_pct"],
        [1001, 0, 1, 0.3],
        [],
        [1001, 1, 2, "<0.01"],
    ]
    path = make_xlsx(tmp_path / "a.xlsx", rows)
    result = read_table(path, table="assays", sheet="Assays")
    assert result.line_numbers.tolist() == [3, 5]  # sheet rows; header on row 2
    assert result.table["hole_id"].tolist() == ["1001", "1001"]
    assert result.table["cu_pct"].tolist() == pytest.approx([0.3, 0.005])
    assert result.sheet == "Assays"
    assert result.encoding is None


def test_xlsx_unknown_sheet(tmp_path):
    path = make_xlsx(tmp_path / "a.xlsx", [["hole_id"], ["V"]])
    with pytest.raises(InputDataError, match=r"no sheet 'Assay' \(did you mean 'Assays'\?\)"):
        read_table(path, table="assays", sheet="Assay")


def test_xlsx_empty_sheet(tmp_path):
    path = make_xlsx(tmp_path / "a.xlsx", [])
    result = read_table(path, table="assays")
    assert rules_of(result) == ["empty_file"]


def test_not_a_workbook(tmp_path):
    path = write(tmp_path, "a.xlsx", "hole_id,from_m\n")
    result = read_table(path, table="assays")
    assert rules_of(result) == ["bad_workbook"]
    assert "a.xlsx is not an .xlsx workbook" in result.problems[0].message


def test_zip_bomb_is_refused(tmp_path, monkeypatch):
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(path, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/worksheets/sheet1.xml", b"\0" * 2_000_000)
    monkeypatch.setattr(readers, "XLSX_RATIO_CHECK_BYTES", 1_000_000)
    result = read_table(path, table="assays")
    assert rules_of(result) == ["file_too_large"]
    assert "refused as a likely zip bomb" in result.problems[0].message


# --- Parquet ------------------------------------------------------------------------------------
def test_parquet_round_trip(tmp_path):
    frame = pd.DataFrame(
        {
            "hole_id": ["VL-001", "VL-002"],
            "from_m": [0.0, 0.0],
            "to_m": [1.0, 2.0],
            "au_gpt": ["0.5", "<0.02"],
        }
    )
    path = tmp_path / "a.parquet"
    frame.to_parquet(path)
    result = read_table(path, table="assays")
    assert result.line_numbers.tolist() == [2, 3]
    assert result.table["au_gpt"].tolist() == pytest.approx([0.5, 0.01])
    assert result.table["au_gpt_censored"].tolist() == [False, True]


def test_broken_parquet(tmp_path):
    result = read_table(write(tmp_path, "a.parquet", "not parquet"), table="assays")
    assert rules_of(result) == ["bad_parquet"]


def test_identifiers_keep_leading_zeros_and_cells_are_stripped(tmp_path):
    text = "Hole ID , From ,to_m, cu_pct\n 007 , 0 , 1.5, 0.3 \n007,1.5,3,NA\n"
    result = read_table(write(tmp_path, "a.csv", text), table="assays")
    t = result.table
    assert t["hole_id"].tolist() == ["007", "007"]
    assert t["from_m"].tolist() == [0.0, 1.5]
    assert t["cu_pct"].iloc[0] == 0.3
    assert np.isnan(t["cu_pct"].iloc[1])  # "NA" is a code for missing, not zero
    assert result.renamed == {"Hole ID": "hole_id", "From": "from_m"}


def test_units_map_accepts_source_names(tmp_path):
    path = write(tmp_path, "a.csv", ASSAY_CSV)
    result = read_table(path, table="assays", column_map=COLUMN_MAP, units={"Au ppb": "ppb"})
    assert result.table["au_gpt"].iloc[1] == pytest.approx(0.12)  # 120 ppb = 0.12 g/t


def test_result_helpers(tmp_path):
    result = read_table(write(tmp_path, "vl_assays.csv", ASSAY_CSV), table="assays")
    assert result.file_name == "vl_assays.csv"
    assert result.name == "assays"
    assert result.line_of(2) == 4
    assert result.line_of(99) is None
    assert result.line_of("x") is None


def test_many_non_numeric_cells_are_summarised(tmp_path, monkeypatch):
    monkeypatch.setattr(readers, "MAX_CELL_PROBLEMS_PER_COLUMN", 2)
    rows = "".join(f"VL-001,{i},{i + 1},oops\n" for i in range(5))
    result = read_table(
        write(tmp_path, "a.csv", "hole_id,from_m,to_m,cu_pct\n" + rows), table="assays"
    )
    assert [p.line for p in result.problems] == [2, 3, 4]
    summary = result.problems[-1]
    assert summary.row is None
    assert summary.message.startswith(
        "cu_pct has 3 more values that are not numbers in a.csv (from line 4), e.g. 'oops'"
    )


def test_unknown_unit_names_file_and_column(tmp_path):
    path = write(tmp_path, "a.csv", ASSAY_CSV)
    with pytest.raises(
        InputDataError,
        match=r"units map for column au_gpt of a.csv: cannot "
        r"convert unit 'furlong' to 'g/t'",
    ):
        read_table(path, table="assays", column_map=COLUMN_MAP, units={"au_gpt": "furlong"})


def test_xlsx_sheet_index_out_of_range(tmp_path):
    path = make_xlsx(tmp_path / "a.xlsx", [["hole_id"], ["V"]])
    with pytest.raises(InputDataError, match=r"a.xlsx has 1 sheets; sheet 3 does not exist"):
        read_table(path, table="assays", sheet=3)


def test_below_detection_code_without_limit_warns(tmp_path):
    text = "hole_id,from_m,to_m,zn_ppm\nVL-001,0,1,BDL\nVL-001,1,2,40\n"
    result = read_table(write(tmp_path, "a.csv", text), table="assays")
    (problem,) = result.problems
    assert problem.rule == "unknown_detection_limit"
    assert "a.csv column zn_ppm: a text code means 'below detection' but no detection limit" in (
        problem.message
    )


def test_two_columns_mapped_to_one_name(tmp_path):
    text = "hole_id,from_m,to_m,Cu,Copper\nVL-001,0,1,0.3,0.4\n"
    result = read_table(
        write(tmp_path, "a.csv", text),
        table="assays",
        column_map={"Cu": "cu_pct", "Copper": "cu_pct"},
    )
    (problem,) = result.problems
    assert problem.message == (
        "a.csv columns 'Cu' and 'Copper' both map to 'cu_pct'; only 'Cu' is used"
    )
    assert result.table["cu_pct"].tolist() == [0.3]


def test_xml_entity_expansion_is_refused(tmp_path):
    # "billion laughs": nested entities in the sheet XML; defusedxml refuses any entity
    # declaration (defusedxml documentation), so the reader reports the file instead of expanding it
    good = make_xlsx(tmp_path / "good.xlsx", [["hole_id", "from_m", "to_m"], ["V", 0, 1]])
    bomb = (
        '<?xml version="1.0"?><!DOCTYPE lolz [<!ENTITY lol "lol">'
        '<!ENTITY lol2 "&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;&lol;">]>'
        '<worksheet xmlns="http://schemas.openxmlformats.org/spreadsheetml/2006/main">'
        '<sheetData><row r="1"><c r="A1" t="inlineStr"><is><t>&lol2;</t></is></c></row>'
        "</sheetData></worksheet>"
    )
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(good) as src, zipfile.ZipFile(path, "w") as dst:
        for info in src.infolist():
            data = src.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                data = bomb.encode()
            dst.writestr(info, data)
    result = read_table(path, table="assays")
    assert [p.rule for p in result.problems] == ["bad_workbook"]
    message = result.problems[0].message
    assert message.startswith("bomb.xlsx could not be opened as a workbook")
    assert message.endswith("(cause: EntitiesForbidden)")
