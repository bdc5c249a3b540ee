"""The results workbook: sheets, headers, units row, values, formats, plots and text safety.

The workbook is read back with openpyxl and pandas (``read_excel``) as independent readers.
"""

from __future__ import annotations

import datetime as dt
import math

import matplotlib
import numpy as np
import openpyxl
import pandas as pd
import pytest

from geomet.glossary import describe, unit_of
from geomet.io.workbook import (
    ABOUT_SHEET,
    CAUTIONS,
    EXCEL_MAX_ROWS,
    GUIDE_SHEET,
    PLOTS_SHEET,
    RECIPE_SHEET,
    column_description,
    column_unit,
    number_format,
    sheet_title,
    unique_sheet_titles,
    write_workbook,
)
from geomet.run.pipeline import RunResult, StepRecord
from geomet.run.registry import Plot

matplotlib.use("Agg")


def composites(n=12) -> pd.DataFrame:
    rng = np.random.default_rng(3)
    frame = pd.DataFrame(
        {
            "hole_id": [f"VL-{i // 4:03d}" for i in range(n)],
            "from_m": np.arange(n) % 4 * 2.0,
            "to_m": np.arange(n) % 4 * 2.0 + 2.0,
            "cu_pct": rng.uniform(0.1, 0.9, n).round(4),
            "au_gpt": rng.uniform(0.05, 0.6, n),
            "clay_severity_idx": rng.uniform(0, 12, n),
            "tonnes_t": rng.integers(1000, 90000, n),
            "cu_recovery_frac_p10": rng.uniform(0.6, 0.8, n),
            "cu_pct_censored": rng.random(n) < 0.2,
            "lith_code": rng.choice(["PQP", "AND", "BXH"], n),
        }
    )
    frame.loc[3, "au_gpt"] = np.nan
    return frame


def result_with(tables: dict, produced: dict | None = None, plots=(), **kw) -> RunResult:
    produced = produced or {name: f"The {name} table." for name in tables}
    steps = [
        StepRecord(
            "composite",
            "Composite intervals downhole.",
            0.25,
            list(produced),
            [],
            ["composite: 12 composites"],
        )
    ]
    provenance = {
        "geomet_version": "0.1.0",
        "started_utc": "2026-01-05T10:00:00Z",
        "finished_utc": "2026-01-05T10:00:03Z",
        "seed": 7,
        "steps": ["composite"],
        "parameters": {
            "run": {"title": "Vellantra pit shell 4"},
            "composite": {"length_m": 2.0, "method": "fixed_length"},
        },
        "packages": {"pandas": pd.__version__},
        "python": "3.11.0",
        "inputs": [{"table": "assays", "file": "assays.csv", "sha256": "ab" * 32, "rows": 12}],
        "recipe": {
            "file": "vellantra.toml",
            "sha256": "cd" * 32,
            "text": '[run]\nsteps = ["composite"]\n',
        },
    }
    return RunResult(
        tables=dict(tables),
        produced=produced,
        plots=list(plots),
        steps=steps,
        notes=["composite: 12 composites"],
        provenance=provenance,
        **kw,
    )


@pytest.fixture
def book(tmp_path):
    frame = composites()
    result = result_with({"composites": frame, "domain_summary": frame.head(3)})
    path = write_workbook(tmp_path / "r.xlsx", result)
    return path, frame


def test_sheets_in_order(book):
    path, _ = book
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == [ABOUT_SHEET, "Composites", "Domain summary", GUIDE_SHEET, RECIPE_SHEET]


def test_headers_units_and_values_equal_the_table(book):
    path, frame = book
    ws = openpyxl.load_workbook(path)["Composites"]
    rows = list(ws.iter_rows(values_only=True))
    assert rows[0][0] == "Composites"
    assert rows[1][0].startswith("The composites table. 12 rows.")
    assert list(rows[2]) == list(frame.columns)
    units = [column_unit(c) or "-" for c in frame.columns]
    assert list(rows[3]) == units
    assert units[:5] == ["-", "m", "m", "%", "g/t"]
    assert units[6] == unit_of("tonnes_t") == "t"
    assert units[7] == "fraction"  # quantile column keeps the unit of cu_recovery_frac
    body = rows[4:]
    assert len(body) == len(frame)
    for i, row in enumerate(body):
        for value, col in zip(row, frame.columns, strict=True):
            expected = frame[col].iloc[i]
            if isinstance(expected, float) and math.isnan(expected):
                assert value is None
            elif isinstance(expected, (float, np.floating)):
                assert value == pytest.approx(float(expected), rel=1e-15)
            else:
                assert value == expected
    # pandas' own reader gives back the same numbers.
    read = pd.read_excel(path, sheet_name="Composites", header=2, skiprows=[3])
    np.testing.assert_allclose(read["cu_pct"], frame["cu_pct"])
    assert read["au_gpt"].isna().sum() == 1


def test_layout_freeze_filter_formats_comments(book):
    path, frame = book
    ws = openpyxl.load_workbook(path)["Composites"]
    assert ws.freeze_panes == "B5"  # below the units row, hole id kept in view
    assert ws.auto_filter.ref == f"A4:J{4 + len(frame)}"
    assert ws["D5"].number_format == "0.000"  # cu_pct
    assert ws["E5"].number_format == "0.000"  # au_gpt (g/t)
    assert ws["G5"].number_format == "#,##0"  # tonnes
    assert ws["B5"].number_format == "0.00"  # from_m, metres
    assert ws["C3"].comment.text == describe("to_m")
    assert "percentile" in ws["H3"].comment.text
    ranges = {str(r.sqref) for r in ws.conditional_formatting}
    assert f"F5:F{4 + len(frame)}" in ranges  # clay_severity_idx is a risk column
    assert ws.column_dimensions["A"].width >= len("hole_id")


def test_about_sheet_explains_the_run(book):
    path, _ = book
    ws = openpyxl.load_workbook(path)[ABOUT_SHEET]
    text = "\n".join(str(v) for row in ws.iter_rows(values_only=True) for v in row if v)
    assert ws["A1"].value == "Vellantra pit shell 4"
    for part in (
        "What this run did",
        "composite",
        "Composite intervals downhole.",
        "composite: 12 composites",
        "Cautions",
        *CAUTIONS,
        "Provenance",
        "ab" * 32,
        "cd" * 32,
        "composite.length_m",
        "Seed",
    ):
        assert part in text
    assert "qualified person" in text
    assert "metallurgical testwork" in text
    assert "site engineering" in text
    links = [c.hyperlink.location for row in ws.iter_rows() for c in row if c.hyperlink]
    assert "'Composites'!A1" in links


def test_guide_and_recipe_sheets(book):
    path, frame = book
    wb = openpyxl.load_workbook(path)
    guide = list(wb[GUIDE_SHEET].iter_rows(min_row=4, values_only=True))
    assert ("Composites", "cu_pct", "%", describe("cu_pct")) in guide
    assert len(guide) == 2 * len(frame.columns)
    recipe = [r[0] for r in wb[RECIPE_SHEET].iter_rows(min_row=3, values_only=True)]
    assert recipe == ["[run]", 'steps = ["composite"]']


def test_number_formats_by_unit():
    # Percent values are percent (0.45 means 0.45 %): never Excel's "%" format, which x100.
    assert number_format("s_pct", np.dtype(float)) == "0.00"
    assert number_format("mill_energy_kwh_t", np.dtype(float)) == "0.00"
    assert number_format("throughput_tph", np.dtype(float)) == "#,##0"
    assert number_format("cu_recovery_frac", np.dtype(float)) == "0.000"
    assert number_format("period", np.dtype(int)) == "0"
    assert number_format("lith_code", np.dtype(object)) is None
    assert number_format("flag", np.dtype(bool)) is None


def test_sheet_names_plain_short_unique():
    assert sheet_title("domain_summary") == "Domain summary"
    names = unique_sheet_titles(
        [
            "a_very_long_table_name_for_blend_scenarios_by_period",
            "a_very_long_table_name_for_blend_scenarios_by_phase",
            "plots",
            "about_this_run",
            "odd[name]?",
        ]
    )
    values = list(names.values())
    assert all(len(v) <= 31 for v in values)
    assert len({v.lower() for v in values}) == len(values)
    assert values[0] == "A very long table name for blen"
    assert values[1] == "A very long table name for (2)"
    assert names["plots"] == "Plots (2)"  # the plots sheet keeps its own name
    assert names["about_this_run"] == "About this run (2)"
    assert names["odd[name]?"] == "Odd name"


def test_text_is_never_a_formula_and_control_characters_go(tmp_path):
    frame = pd.DataFrame(
        {
            "hole_id": [
                '=HYPERLINK("http://x","y")',
                "VL-\x07001",
                "=1+1",
                "<b>A&B</b>",
                "  padded ",
            ],
            "cu_pct": [0.1, 0.2, 0.3, 0.4, 0.5],
        }
    )
    path = write_workbook(tmp_path / "t.xlsx", result_with({"composites": frame}))
    ws = openpyxl.load_workbook(path)["Composites"]
    assert ws["A5"].data_type == "s"
    assert ws["A5"].value == '=HYPERLINK("http://x","y")'
    assert ws["A6"].value == "VL-001"
    assert ws["A7"].data_type == "s"
    assert ws["A7"].value == "=1+1"
    assert ws["A8"].value == "<b>A&B</b>"
    assert ws["A9"].value == "  padded "
    assert [ws[f"B{r}"].value for r in range(5, 10)] == [0.1, 0.2, 0.3, 0.4, 0.5]
    assert len({ws[f"B{r}"].number_format for r in range(5, 10)}) == 1


def test_dtypes_dates_bools_nullable_ints_categories(tmp_path):
    frame = pd.DataFrame(
        {
            "sample_id": pd.Categorical(["S1", "S2", "S3"]),
            "test_date": pd.to_datetime(["2024-03-01", "2024-04-15", None]),
            "period": pd.array([1, None, 3], dtype="Int64"),
            "flagged": [True, False, True],
            "cu_pct": [np.inf, 0.2, 0.3],
        }
    )
    path = write_workbook(tmp_path / "d.xlsx", result_with({"testwork_selection": frame}))
    ws = openpyxl.load_workbook(path)["Testwork selection"]
    rows = list(ws.iter_rows(min_row=5, values_only=True))
    assert rows[0] == ("S1", dt.datetime(2024, 3, 1), 1, True, None)
    assert rows[1][2] is None
    assert rows[2][1] is None
    assert ws["B5"].number_format == "yyyy-mm-dd"


def test_plots_are_embedded_with_caption(tmp_path):
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(4, 3))
    ax.plot([1, 2, 3])
    png = tmp_path / "cu.png"
    fig.savefig(png, dpi=80)
    plt.close(fig)
    result = result_with(
        {"composites": composites()}, plots=[Plot("cu", png, "Copper by depth", table="composites")]
    )
    path = write_workbook(tmp_path / "p.xlsx", result)
    wb = openpyxl.load_workbook(path)
    assert PLOTS_SHEET in wb.sheetnames
    ws = wb[PLOTS_SHEET]
    assert len(ws._images) == 1
    values = [v for row in ws.iter_rows(values_only=True) for v in row if v]
    assert "Copper by depth" in values
    assert "Data: sheet 'Composites'" in values
    assert "Charts: sheet 'Plots'." in wb["Composites"]["A2"].value


def test_large_table_streams(tmp_path):
    n = 20_000
    rng = np.random.default_rng(1)
    frame = pd.DataFrame(
        {"block_id": np.arange(n), **{f"m{i}_pct": rng.random(n) for i in range(4)}}
    )
    frame["domain"] = np.where(frame["m0_pct"] > 0.5, "Argillic cap", "Potassic core")
    path = write_workbook(tmp_path / "big.xlsx", result_with({"blocks_domained": frame}))
    wb = openpyxl.load_workbook(path, read_only=True)
    ws = wb["Blocks domained"]
    last = next(ws.iter_rows(min_row=4 + n, max_row=4 + n, values_only=True))
    assert last == tuple(frame.iloc[-1])
    wb.close()


def test_rows_beyond_excel_limit_are_cut_with_a_note(tmp_path, monkeypatch):
    import geomet.io.workbook as workbook

    monkeypatch.setattr(workbook, "EXCEL_MAX_ROWS", 10)
    frame = composites(20)
    path = write_workbook(tmp_path / "cut.xlsx", result_with({"composites": frame}))
    ws = openpyxl.load_workbook(path)["Composites"]
    assert ws.max_row == 10
    assert (
        "Only the first 6 rows fit on a sheet; the full table is in tables/composites.csv."
        in ws["A2"].value
    )
    assert EXCEL_MAX_ROWS == 1_048_576  # Excel specifications and limits (Microsoft)


@pytest.mark.filterwarnings("ignore::pytest.PytestUnraisableExceptionWarning")
def test_write_is_atomic(tmp_path, monkeypatch):
    path = tmp_path / "r.xlsx"
    path.write_bytes(b"previous workbook")

    def fail(self, filename):
        raise OSError("disk full")

    monkeypatch.setattr(openpyxl.Workbook, "save", fail)
    with pytest.raises(OSError, match="disk full"):
        write_workbook(path, result_with({"composites": composites()}))
    import gc

    gc.collect()  # openpyxl's unfinished sheet streams complain when collected: here, not later
    assert path.read_bytes() == b"previous workbook"
    assert [p.name for p in tmp_path.iterdir()] == ["r.xlsx"]


def test_units_and_meanings_of_statistic_and_helper_columns():
    # Units follow the glossary's suffix rule (docs/contracts.md) after a statistic suffix.
    assert column_unit("clay_swelling_pct_mean") == "%"
    assert column_unit("acid_kg_t_p90") == "kg/t"
    assert column_unit("cu_pct_detection_limit") == "%"
    assert column_unit("au_gpt_censored") == ""
    assert column_unit("flotation_time_min") == "min"  # minutes, not a minimum
    assert column_description("cu_pct_max") == "Maximum of total copper (cu_pct)"
    assert column_description("grind_index_frac_p10") == "10th percentile of grind_index_frac"
    known = describe("cu_pct").rstrip(".")
    assert (
        column_description("cu_pct_p90") == f"90th percentile of {known[0].lower()}{known[1:]} "
        "(cu_pct)"
    )
    assert column_description("au_gpt_censored").startswith("True where au_gpt was reported")
    assert column_description("hole_id") == describe("hole_id")


def test_duplicate_and_non_text_column_names(tmp_path):
    frame = pd.DataFrame([[1.5, 2.5, "a"], [3.5, 4.5, "b"]], columns=["cu_pct", "cu_pct", 7])
    path = write_workbook(tmp_path / "dup.xlsx", result_with({"composites": frame}))
    ws = openpyxl.load_workbook(path)["Composites"]
    assert [c.value for c in ws[3]] == ["cu_pct", "cu_pct", "7"]
    assert [c.value for c in ws[6]] == [3.5, 4.5, "b"]


def test_tables_workbook_without_a_run(tmp_path):
    from geomet.io.workbook import write_tables_workbook

    frame = composites(5)
    path = write_tables_workbook(
        tmp_path / "t.xlsx",
        {"domain_summary": frame},
        {"domain_summary": "Domains at a glance."},
        title="Vellantra",
    )
    wb = openpyxl.load_workbook(path)
    assert wb.sheetnames == [ABOUT_SHEET, "Domain summary", GUIDE_SHEET]
    assert wb[ABOUT_SHEET]["A1"].value == "Vellantra"
    assert wb["Domain summary"]["A2"].value.startswith("Domains at a glance. 5 rows.")
    assert wb["Domain summary"]["D9"].value == pytest.approx(frame["cu_pct"].iloc[4])


def test_sheet_xml_is_well_formed_and_ordered(tmp_path):
    """Every part parses as XML (lxml, strict) and rows/cells ascend as ECMA-376 18.3.1 requires."""
    import re
    import zipfile

    from lxml import etree
    from openpyxl.utils import column_index_from_string

    frame = composites(40)
    frame.loc[5, ["cu_pct", "au_gpt"]] = np.nan  # gaps inside a row
    path = write_workbook(tmp_path / "x.xlsx", result_with({"composites": frame}))
    main = "{http://schemas.openxmlformats.org/spreadsheetml/2006/main}"
    with zipfile.ZipFile(path) as archive:
        for name in archive.namelist():
            if name.endswith((".xml", ".rels")):
                root = etree.fromstring(archive.read(name))  # raises on malformed XML
                if not name.startswith("xl/worksheets/sheet"):
                    continue
                rows = [int(r.get("r")) for r in root.iter(f"{main}row")]
                assert rows == sorted(set(rows))
                for row in root.iter(f"{main}row"):
                    refs = [c.get("r") for c in row.iter(f"{main}c")]
                    cols = [column_index_from_string(re.match(r"[A-Z]+", r).group()) for r in refs]
                    assert cols == sorted(set(cols))
                    assert all(r.endswith(row.get("r")) for r in refs)


def test_sheets_print_on_pages_one_wide_with_headers_repeated(book):
    path, _ = book
    wb = openpyxl.load_workbook(path)
    ws = wb["Composites"]
    assert ws.print_title_rows == "$3:$4"  # header and units rows on every printed page
    assert ws.page_setup.orientation == "landscape"
    assert ws.sheet_properties.pageSetUpPr.fitToPage
    assert ws.page_setup.fitToWidth == 1
    assert ws.oddFooter.center.text == "Page &P of &N"
    assert ws.oddHeader.left.text == "Vellantra pit shell 4"
    assert wb[ABOUT_SHEET].page_setup.orientation == "portrait"
