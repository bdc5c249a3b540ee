"""The results workbook (openpyxl): one sheet that explains the run, then one sheet per table.

Layout
------
- **About this run**: what each step did, the run's notes and warnings, the cautions that go with
  every forecast, the list of sheets (with links) and the provenance (versions, seed, input files
  with SHA-256, parameters).
- **One sheet per produced table**: a title row, a description row, the column headers (canonical
  names, with the column's meaning as a cell comment), a units row under the headers, then the
  data. Panes are frozen below the units row, the filter buttons sit on the units row (so that
  sorting never moves the header or units rows), numbers are formatted by unit and risk columns
  carry a colour scale.
- **Plots**: every PNG the steps made, with its caption and the sheet it belongs to.
- **Column guide**: every column of every table with its unit and meaning.
- **Recipe**: the recipe text, line by line.

Sheets print one page wide with the header and units rows repeated on every page.

Speed: openpyxl (write-only mode) lays out every sheet, its styles, comments, filters and
images; the data rows of the table sheets are then streamed into the saved file as SpreadsheetML,
5 000 rows at a time, with each column's style taken from a probe row openpyxl wrote. That is
about ten times faster than one styled openpyxl cell per value (``benchmarks/bench_workbook.py``)
and keeps memory flat, so tables of tens of thousands of rows write in seconds.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import json
import math
import re
import zipfile
from collections.abc import Iterable, Mapping
from pathlib import Path
from types import SimpleNamespace
from typing import Any
from xml.etree import ElementTree
from xml.sax.saxutils import escape as xml_escape

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
from openpyxl import Workbook
from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE, WriteOnlyCell
from openpyxl.comments import Comment
from openpyxl.drawing.image import Image
from openpyxl.formatting.rule import ColorScaleRule
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import column_index_from_string, get_column_letter
from openpyxl.worksheet.hyperlink import Hyperlink

from geomet.glossary import describe, is_risk_column, unit_of
from geomet.io.writers import _atomic_path

ABOUT_SHEET = "About this run"
PLOTS_SHEET = "Plots"
GUIDE_SHEET = "Column guide"
RECIPE_SHEET = "Recipe"
RESERVED_SHEETS = (ABOUT_SHEET, PLOTS_SHEET, GUIDE_SHEET, RECIPE_SHEET, "History")
MAX_SHEET_NAME = 31
EXCEL_MAX_ROWS = 1_048_576
HEADER_ROWS = 4  # title, description, headers, units
MAX_PLOT_WIDTH_PX = 900

CAUTIONS = (
    "The process forecasts in this workbook (throughput, energy, recovery, concentrate grade, acid "
    "consumption) are planning aids from models calibrated on the testwork supplied. They must be "
    "confirmed by metallurgical testwork before they are relied on.",
    "Mine plans, blend schedules and sample selections built on these forecasts, and any result "
    "used in public reporting of Mineral Resources or Ore Reserves, must be reviewed and signed "
    "off by a qualified person under the applicable public reporting code and local "
    "regulations.",
    "Acid handling and supply, and the plant limits used in any blend plan, need review by site "
    "engineering before they are used to run the plant.",
    "Block values are estimates: their estimation error is not carried into the plans or flags.",
)

# Number formats by unit label (glossary.UNIT_SUFFIXES). Percent columns hold percent values
# (0.45 means 0.45 %), so they get a plain decimal format, never Excel's "%" (which x100).
UNIT_FORMATS = {
    "%": "0.00",
    "g/t": "0.000",
    "ppm": "0.0",
    "ppb": "0",
    "m": "0.00",
    "t": "#,##0",
    "kt": "#,##0.0",
    "kWh/t": "0.00",
    "kWh/m³": "0.00",
    "kWh": "#,##0",
    "t/h": "#,##0",
    "fraction": "0.000",
    "kg/t": "0.00",
    "g": "0.0",
    "kg": "#,##0.0",
    "oz": "#,##0",
    "t/m³": "0.00",
    "nm": "0.0",
    "°": "0.0",
    "index": "0.00",
    "kW": "#,##0",
    "mm": "0.0",
    "µm": "0",
    "min": "0.0",
    "h": "0.0",
    "USD": "#,##0",
    "USD/t": "0.00",
    "USD/oz": "#,##0",
    "USD/g": "0.00",
    "USD/lb": "0.00",
}
FINE_GRADE_FORMAT = "0.000"  # copper grades are read to three decimals (common practice)
DATE_FORMAT = "yyyy-mm-dd"
DATETIME_FORMAT = "yyyy-mm-dd hh:mm"

# Colours chosen for this workbook: slate ink, pale stone headers, a sand-to-rust risk scale.
INK = "27374D"
HEADER_FILL = PatternFill("solid", fgColor="E3E0D6")
UNITS_FILL = PatternFill("solid", fgColor="F4F2EC")
SECTION_FILL = PatternFill("solid", fgColor="D5DEE6")
CAUTION_FILL = PatternFill("solid", fgColor="FBEFD5")
RISK_COLOURS = ("F6F3E9", "E8B96A", "B4462F")

TITLE_FONT = Font(bold=True, size=15, color=INK)
SUBTITLE_FONT = Font(italic=True, size=10, color="555555")
HEADER_FONT = Font(bold=True, color=INK)
UNITS_FONT = Font(italic=True, size=9, color="555555")
SECTION_FONT = Font(bold=True, size=12, color=INK)
LINK_FONT = Font(color="1F5C99", underline="single")
WRAP = Alignment(wrap_text=True, vertical="top")

_STATISTIC = re.compile(r"_(mean|median|sd|std|min|max|avg|p\d{1,2})$")
_KEY_COLUMNS = ("hole_id", "block_id", "sample_id", "domain")


# --- names and units -----------------------------------------------------------------------------
def sheet_title(table: str) -> str:
    """A sheet name in plain words from a table name: ``domain_summary`` -> ``Domain summary``."""
    words = re.sub(r"[\[\]:*?/\\']", " ", table.replace("_", " ")).split()
    text = " ".join(words) or "Table"
    text = text[0].upper() + text[1:]
    return text[:MAX_SHEET_NAME].rstrip()


def unique_sheet_titles(tables: Iterable[str]) -> dict[str, str]:
    """Sheet names for ``tables``: plain words, at most 31 characters, unique (case-blind)."""
    taken = {name.lower() for name in RESERVED_SHEETS}
    out = {}
    for table in tables:
        base = sheet_title(table)
        name, n = base, 1
        while name.lower() in taken:
            n += 1
            tail = f" ({n})"
            name = base[: MAX_SHEET_NAME - len(tail)].rstrip() + tail
        taken.add(name.lower())
        out[table] = name
    return out


def _split_statistic(name: str) -> tuple[str, str]:
    """``("cu_pct", "mean")`` for ``cu_pct_mean``; ``(name, "")`` when no statistic suffix applies.

    A suffix counts only when what is left carries a unit, so ``flotation_time_min`` stays minutes.
    """
    match = _STATISTIC.search(name)
    if match and unit_of(name[: match.start()]):
        return name[: match.start()], match.group(1)
    return name, ""


def column_unit(name: str) -> str:
    """Unit of a column, also for statistics (``_mean``, ``_p10``) and detection-limit helpers."""
    if name.endswith("_censored"):
        return ""
    base = name.removesuffix("_detection_limit")
    base, _ = _split_statistic(base)
    return unit_of(base)


_STATISTIC_WORDS = {
    "mean": "Mean",
    "median": "Median",
    "sd": "Standard deviation",
    "std": "Standard deviation",
    "min": "Minimum",
    "max": "Maximum",
    "avg": "Average",
}


def column_description(name: str) -> str:
    """Meaning of a column, from the glossary, with statistic and helper columns explained."""
    if name.endswith("_censored"):
        return f"True where {name.removesuffix('_censored')} was reported below or above detection."
    if name.endswith("_detection_limit"):
        return f"Detection limit reported for {name.removesuffix('_detection_limit')}."
    base, statistic = _split_statistic(name)
    if not statistic:
        return describe(name)
    known = describe(base).rstrip(".")
    text = f"{known[:1].lower()}{known[1:]} ({base})" if known else base
    if statistic.startswith("p"):
        return f"{statistic[1:]}th percentile of {text}"
    return f"{_STATISTIC_WORDS[statistic]} of {text}"


def number_format(name: str, dtype) -> str | None:
    """Excel number format for a column (None: leave General)."""
    if pd.api.types.is_bool_dtype(dtype):
        return None
    if pd.api.types.is_datetime64_any_dtype(dtype):
        return DATE_FORMAT
    if not pd.api.types.is_numeric_dtype(dtype):
        return None
    unit = column_unit(name)
    if pd.api.types.is_integer_dtype(dtype):
        return "#,##0" if unit in ("t", "kt", "kWh", "kW", "t/h", "USD") else "0"
    if unit == "%" and name.startswith("cu_"):
        return FINE_GRADE_FORMAT
    return UNIT_FORMATS.get(unit)


# --- cell values ---------------------------------------------------------------------------------
EXCEL_MAX_CELL_CHARS = 32_767  # Excel specifications and limits: characters in one cell


def _clean_text(value: str) -> str:
    """Text a worksheet cell can hold: no XML-illegal control characters, at most 32 767 chars."""
    return ILLEGAL_CHARACTERS_RE.sub("", value)[:EXCEL_MAX_CELL_CHARS]


def python_values(series: pd.Series) -> list:
    """Column values as plain Python objects openpyxl writes (NaN and NA become empty cells)."""
    dtype = series.dtype
    if pd.api.types.is_bool_dtype(dtype) and not isinstance(dtype, pd.CategoricalDtype):
        return [None if pd.isna(v) else bool(v) for v in series.astype(object)]
    if pd.api.types.is_float_dtype(dtype):
        arr = series.to_numpy(dtype=float, na_value=np.nan)
        return [None if math.isnan(v) or math.isinf(v) else v for v in arr.tolist()]
    if pd.api.types.is_integer_dtype(dtype):
        if series.isna().any():
            return [None if pd.isna(v) else int(v) for v in series.astype(object)]
        return series.to_numpy().tolist()
    if pd.api.types.is_datetime64_any_dtype(dtype):
        values = series.dt.tz_convert("UTC").dt.tz_localize(None) if series.dt.tz else series
        return [None if pd.isna(v) else v.to_pydatetime() for v in values]
    return [_object_value(v) for v in series.astype(object).tolist()]


def _object_value(value: Any) -> Any:
    if value is None or value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, float):
        return None if math.isnan(value) or math.isinf(value) else value
    if isinstance(value, (bool, int, np.bool_)):
        return bool(value) if isinstance(value, (bool, np.bool_)) else int(value)
    if isinstance(value, np.generic):
        return _object_value(value.item())
    if isinstance(value, pd.Timestamp):
        return (
            value.tz_convert("UTC").tz_localize(None).to_pydatetime()
            if value.tz
            else value.to_pydatetime()
        )
    if isinstance(value, (dt.datetime, dt.date)):
        return value
    return _clean_text(str(value))


def _text_cell(ws, value: str) -> WriteOnlyCell:
    """A cell that always holds text (a leading '=' stays text, never becomes a formula)."""
    cell = WriteOnlyCell(ws, value=value)
    cell.data_type = "s"
    return cell


def _styled(
    ws,
    value,
    *,
    font=None,
    fill=None,
    alignment=None,
    number_format=None,
    hyperlink=None,
    comment=None,
) -> WriteOnlyCell:
    if isinstance(value, str):
        cell = _text_cell(ws, _clean_text(value))
    else:
        cell = WriteOnlyCell(ws, value=value)
    if font is not None:
        cell.font = font
    if fill is not None:
        cell.fill = fill
    if alignment is not None:
        cell.alignment = alignment
    if number_format is not None:
        cell.number_format = number_format
    if hyperlink is not None:
        cell.hyperlink = hyperlink
        cell.font = LINK_FONT
    if comment:
        cell.comment = Comment(comment, "geomet", width=260, height=90)
    return cell


# --- the workbook --------------------------------------------------------------------------------
def write_workbook(
    path: str | Path, result, *, title: str | None = None, sheets: Iterable[str] | None = None
) -> Path:
    """Write the results workbook of a run.

    Parameters
    ----------
    path
        ``.xlsx`` file to write (atomically: a temporary file, then renamed).
    result
        A :class:`geomet.run.pipeline.RunResult` (or any object with ``tables``, ``produced``,
        ``plots``, ``notes``, ``steps``, ``warnings`` and ``provenance``).
    title
        Workbook title (default: the recipe's ``run.title`` from the provenance).
    sheets
        Produced tables to show as sheets (default: all of them, in run order).

    Returns
    -------
    Path
        ``path``.
    """
    path = Path(path)
    provenance = dict(getattr(result, "provenance", {}) or {})
    params = provenance.get("parameters", {})
    title = title or params.get("run", {}).get("title") or "geomet run"
    produced: Mapping[str, str] = result.produced
    chosen = set(produced if sheets is None else sheets)
    tables = {
        name: result.tables[name] for name in produced if name in result.tables and name in chosen
    }
    names = unique_sheet_titles(tables)
    plots = list(getattr(result, "plots", []))
    plots = [p for p in plots if Path(p.path).is_file()]
    plotted = {p.table for p in plots if p.table}

    wb = Workbook(write_only=True)
    wb.properties.title = title
    wb.properties.creator = "geomet"
    _about_sheet(wb, result, title, tables, names, produced, bool(plots), provenance)
    pending: dict[str, pd.DataFrame] = {}
    for table, frame in tables.items():
        rest = _table_sheet(
            wb, names[table], table, frame, produced[table], plots=table in plotted, title=title
        )
        if rest is not None:
            pending[names[table]] = rest
    if plots:
        _plots_sheet(wb, plots, names)
    _guide_sheet(wb, tables, names)
    recipe_text = provenance.get("recipe", {}).get("text")
    if recipe_text:
        _recipe_sheet(wb, recipe_text, provenance.get("recipe", {}).get("file", ""))
    with _atomic_path(path) as tmp:
        if pending:
            raw = tmp.with_name(tmp.name + ".openpyxl")
            try:
                wb.save(raw)
                _stream_rows(raw, tmp, pending)
            finally:
                raw.unlink(missing_ok=True)
        else:
            wb.save(tmp)
    return path


def write_tables_workbook(
    path: str | Path,
    tables: Mapping[str, pd.DataFrame],
    descriptions: Mapping[str, str] | None = None,
    *,
    title: str = "geomet tables",
) -> Path:
    """Write ``tables`` as a workbook in the same layout as a run's, without a run.

    For notebook users: each table gets its sheet (title, description, headers, units row,
    formats), with the About sheet (cautions included) and the column guide.

    Examples
    --------
    >>> import pandas as pd, tempfile, pathlib
    >>> folder = pathlib.Path(tempfile.mkdtemp())
    >>> frame = pd.DataFrame({"hole_id": ["VL-001"], "cu_pct": [0.42]})
    >>> write_tables_workbook(folder / "t.xlsx", {"composites": frame}).name
    't.xlsx'
    """
    descriptions = dict(descriptions or {})
    result = SimpleNamespace(
        tables=dict(tables),
        produced={name: descriptions.get(name, "") for name in tables},
        plots=[],
        notes=[],
        steps=[],
        warnings=[],
        provenance={},
    )
    return write_workbook(path, result, title=title)


def _link(sheet: str) -> Hyperlink:
    """An internal link to cell A1 of ``sheet``."""
    return Hyperlink(ref="A1", location="'{}'!A1".format(sheet.replace("'", "''")))


def _print_setup(ws, title: str, *, title_rows: str | None = None, landscape: bool = True) -> None:
    """Printing: one page wide, header rows repeated, run title and page numbers on every page."""
    ws.page_setup.orientation = "landscape" if landscape else "portrait"
    ws.page_setup.fitToWidth = 1
    ws.page_setup.fitToHeight = 0  # as many pages down as needed
    ws.sheet_properties.pageSetUpPr.fitToPage = True
    if title_rows:
        ws.print_title_rows = title_rows
    ws.oddHeader.left.text = title.replace("&", "&&")
    ws.oddHeader.right.text = "&A"  # the sheet name
    ws.oddFooter.center.text = "Page &P of &N"


def _about_sheet(wb, result, title, tables, names, produced, has_plots, provenance) -> None:
    ws = wb.create_sheet(ABOUT_SHEET)
    _print_setup(ws, title, landscape=False)
    for letter, width in zip("ABCD", (30, 70, 40, 12), strict=True):
        ws.column_dimensions[letter].width = width
    ws.sheet_view.showGridLines = False

    def row(*cells):
        ws.append(list(cells))

    def section(text):
        row()
        row(
            *[
                _styled(ws, text if i == 0 else None, font=SECTION_FONT, fill=SECTION_FILL)
                for i in range(4)
            ]
        )

    when = provenance.get("finished_utc") or provenance.get("started_utc", "")
    row(_styled(ws, title, font=TITLE_FONT))
    row(
        _styled(
            ws,
            f"Results of a geomet {provenance.get('geomet_version', '')} run"
            f"{', ' + when if when else ''}. Read this sheet first.",
            font=SUBTITLE_FONT,
        )
    )

    section("What this run did")
    row(
        *[
            _styled(ws, h, font=HEADER_FONT, fill=HEADER_FILL)
            for h in ("Step", "What it does", "Tables produced", "Time (s)")
        ]
    )
    for rec in getattr(result, "steps", []):
        row(
            _styled(ws, rec.name, font=HEADER_FONT),
            _styled(ws, rec.summary, alignment=WRAP),
            _styled(
                ws,
                ", ".join(rec.produced + [f"{t} (updated)" for t in rec.replaced]),
                alignment=WRAP,
            ),
            _styled(ws, round(rec.seconds, 2), number_format="0.00"),
        )
    notes = list(getattr(result, "notes", []))
    if notes:
        section("Notes from the steps")
        for note in notes:
            row(None, _styled(ws, note, alignment=WRAP))
    run_warnings = list(getattr(result, "warnings", []))
    if run_warnings:
        section("Warnings")
        for text in run_warnings[:200]:
            row(None, _styled(ws, text, alignment=WRAP))
        if len(run_warnings) > 200:
            row(None, f"... and {len(run_warnings) - 200} more (see run.log)")

    section("Cautions")
    for text in CAUTIONS:
        row(
            _styled(ws, "Caution", font=HEADER_FONT, fill=CAUTION_FILL),
            _styled(ws, text, fill=CAUTION_FILL, alignment=WRAP),
        )

    section("Sheets in this workbook")
    row(
        *[_styled(ws, h, font=HEADER_FONT, fill=HEADER_FILL) for h in ("Sheet", "Contents", "Rows")]
    )
    for table, frame in tables.items():
        row(
            _styled(ws, names[table], hyperlink=_link(names[table])),
            _styled(ws, produced[table], alignment=WRAP),
            _styled(ws, len(frame), number_format="#,##0"),
        )
    if has_plots:
        row(_styled(ws, PLOTS_SHEET, hyperlink=_link(PLOTS_SHEET)), "Charts made by the steps.")
    row(
        _styled(ws, GUIDE_SHEET, hyperlink=_link(GUIDE_SHEET)),
        "Every column of every sheet: unit and meaning.",
    )
    if provenance.get("recipe", {}).get("text"):
        row(
            _styled(ws, RECIPE_SHEET, hyperlink=_link(RECIPE_SHEET)),
            "The recipe this run followed.",
        )

    section("Provenance")
    recipe = provenance.get("recipe", {})
    facts = [
        ("geomet version", provenance.get("geomet_version", "")),
        ("Started (UTC)", provenance.get("started_utc", "")),
        ("Finished (UTC)", provenance.get("finished_utc", "")),
        ("Seed", provenance.get("seed", "")),
        ("Steps", ", ".join(provenance.get("steps", []))),
        ("Recipe file", recipe.get("file", "")),
        ("Recipe SHA-256", recipe.get("sha256", "")),
        ("Python", provenance.get("python", "")),
        ("Platform", provenance.get("platform", "")),
    ]
    facts += [(f"Package {k}", v) for k, v in sorted(provenance.get("packages", {}).items())]
    for key, value in facts:
        if value not in ("", None):
            row(_styled(ws, key, font=HEADER_FONT), _styled(ws, str(value), alignment=WRAP))
    inputs = provenance.get("inputs", [])
    if inputs:
        section("Input files")
        row(
            *[
                _styled(ws, h, font=HEADER_FONT, fill=HEADER_FILL)
                for h in ("Table", "File", "SHA-256", "Rows")
            ]
        )
        for rec in inputs:
            row(
                rec.get("table", ""),
                _styled(ws, rec.get("file", "")),
                _styled(ws, rec.get("sha256", "")),
                rec.get("rows"),
            )
    params = provenance.get("parameters", {})
    if params:
        section("Parameters (every option in effect, defaults included)")
        for key, value in _flatten(params):
            row(_styled(ws, key), _styled(ws, value, alignment=WRAP))


def _flatten(tree: Mapping, prefix: str = "") -> list[tuple[str, str]]:
    """Nested option values as ``(dotted.key, text)`` rows."""
    out = []
    for key, value in tree.items():
        path = f"{prefix}.{key}" if prefix else str(key)
        if isinstance(value, Mapping) and value:
            out += _flatten(value, path)
        else:
            out.append(
                (
                    path,
                    value
                    if isinstance(value, str)
                    else json.dumps(value, ensure_ascii=False, default=str),
                )
            )
    return out


def _column_widths(frame: pd.DataFrame, sample_rows: int = 300) -> list[float]:
    head = frame.head(sample_rows)
    widths = []
    for j, col in enumerate(frame.columns):
        longest = max(len(str(col)), len(column_unit(str(col))) + 2)
        series = head.iloc[:, j]
        if pd.api.types.is_float_dtype(series.dtype):
            longest = max(longest, 9)
        else:
            present = series.dropna()
            if len(present):
                longest = max(longest, int(present.astype(str).str.len().max()))
        widths.append(float(min(max(longest + 2, 7), 45)))
    return widths


def _table_sheet(
    wb,
    sheet: str,
    table: str,
    frame: pd.DataFrame,
    description: str,
    *,
    plots: bool,
    title: str = "geomet run",
) -> pd.DataFrame | None:
    """Write a table's title, description, header and units rows; return the rows to stream."""
    ws = wb.create_sheet(sheet)
    _print_setup(ws, title, title_rows=f"{HEADER_ROWS - 1}:{HEADER_ROWS}")
    columns = [str(c) for c in frame.columns]
    n_cols = max(len(columns), 1)
    limit = EXCEL_MAX_ROWS - HEADER_ROWS
    truncated = len(frame) > limit
    body = frame.iloc[:limit] if truncated else frame
    last_row = HEADER_ROWS + len(body)
    last_col = get_column_letter(n_cols)

    for i, width in enumerate(_column_widths(frame), 1):
        ws.column_dimensions[get_column_letter(i)].width = width
    freeze_col = "B" if columns and columns[0] in _KEY_COLUMNS else "A"
    ws.freeze_panes = f"{freeze_col}{HEADER_ROWS + 1}"
    if columns:
        ws.auto_filter.ref = f"A{HEADER_ROWS}:{last_col}{max(last_row, HEADER_ROWS)}"
    for i, col in enumerate(columns, 1):
        if (
            is_risk_column(col)
            and pd.api.types.is_numeric_dtype(frame.dtypes.iloc[i - 1])
            and not pd.api.types.is_bool_dtype(frame.dtypes.iloc[i - 1])
            and len(body)
        ):
            letter = get_column_letter(i)
            ws.conditional_formatting.add(
                f"{letter}{HEADER_ROWS + 1}:{letter}{last_row}",
                ColorScaleRule(
                    start_type="percentile",
                    start_value=5,
                    start_color=RISK_COLOURS[0],
                    mid_type="percentile",
                    mid_value=50,
                    mid_color=RISK_COLOURS[1],
                    end_type="percentile",
                    end_value=95,
                    end_color=RISK_COLOURS[2],
                ),
            )

    extra = [f"{len(frame):,} rows."]
    if truncated:
        extra.append(
            f"Only the first {limit:,} rows fit on a sheet; the full table is in "
            f"tables/{table}.csv."
        )
    if any(is_risk_column(c) for c in columns):
        extra.append("Colour scale on risk columns: darker = more process risk.")
    if plots:
        extra.append(f"Charts: sheet '{PLOTS_SHEET}'.")
    ws.append([_styled(ws, sheet, font=TITLE_FONT)])
    ws.append(
        [
            _styled(
                ws,
                " ".join([description.rstrip(".") + "." if description else "", *extra]).strip(),
                font=SUBTITLE_FONT,
            )
        ]
    )
    ws.append(
        [
            _styled(
                ws, col, font=HEADER_FONT, fill=HEADER_FILL, comment=column_description(col) or None
            )
            for col in columns
        ]
    )
    ws.append(
        [_styled(ws, column_unit(col) or "-", font=UNITS_FONT, fill=UNITS_FILL) for col in columns]
    )

    # openpyxl writes one empty styled cell per column in the first data row: that gives every
    # column its style id. _stream_rows then writes all the data rows in its place.
    formats = []
    for j, col in enumerate(frame.columns):
        series = body.iloc[:, j]
        fmt = number_format(str(col), series.dtype)
        if (
            pd.api.types.is_datetime64_any_dtype(series.dtype)
            and len(series)
            and (series.dropna().dt.normalize() != series.dropna()).any()
        ):
            fmt = DATETIME_FORMAT
        formats.append(fmt)
    if not len(body) or not columns:
        return None
    probe = []
    for fmt in formats:
        cell = WriteOnlyCell(ws)
        cell.number_format = fmt or "General"
        cell.alignment = Alignment(vertical="bottom")  # a style on every cell: an id per column
        probe.append(cell)
    ws.append(probe)
    return body


# --- fast rows -----------------------------------------------------------------------------
# openpyxl spends ~10 us per styled cell; a table of 50 000 rows x 100 columns would take a minute.
# Data rows are therefore written as SpreadsheetML directly (ECMA-376 Part 1, 18.3.1:
# <row r=".."><c r="B6" s="3"><v>0.5</v></c>...</row>), with each column's style id read from the
# probe row that openpyxl wrote. Text is written as inline strings (t="inlineStr"), which are
# never formulas.
_CELL_START = re.compile(r"<c\b([^>]*?)/?>")
_ATTR = re.compile(r'(\w+)="([^"]*)"')
_EXCEL_EPOCH = np.datetime64("1899-12-30T00:00:00", "ns")
_ROWS_PER_CHUNK = 5000
_XML_EXTRA = {"\r": "&#13;"}  # a literal CR would be read back as LF (XML 1.0, section 2.11)


def _column_style_ids(sheet_xml: str, row: int, n_cols: int) -> list[str]:
    """The ``s="<id>"`` attribute of each column's cell in ``row`` of a worksheet's XML."""
    match = re.search(rf'<row r="{row}"[^>]*>(.*?)</row>', sheet_xml, re.S)
    styles = [""] * n_cols
    if match is None:
        return styles
    for start in _CELL_START.finditer(match.group(1)):
        attrs = dict(_ATTR.findall(start.group(1)))
        ref = re.match(r"([A-Z]+)", attrs.get("r", ""))
        if ref and "s" in attrs:
            idx = column_index_from_string(ref.group(1)) - 1
            if 0 <= idx < n_cols:
                styles[idx] = f' s="{attrs["s"]}"'
    return styles


def _column_cells(series: pd.Series, letter: str, style: str, rows: list[str]) -> list[str]:
    """SpreadsheetML ``<c>`` elements of one column ('' for empty cells)."""
    dtype = series.dtype
    head = f'<c r="{letter}'
    if pd.api.types.is_bool_dtype(dtype) and not isinstance(dtype, pd.CategoricalDtype):
        values = python_values(series)
        return [
            "" if v is None else f'{head}{r}"{style} t="b"><v>{int(v)}</v></c>'
            for v, r in zip(values, rows, strict=True)
        ]
    if pd.api.types.is_datetime64_any_dtype(dtype):
        values = series.dt.tz_convert("UTC").dt.tz_localize(None) if series.dt.tz else series
        stamps = values.to_numpy(dtype="datetime64[ns]")
        days = ((stamps - _EXCEL_EPOCH) / np.timedelta64(1, "D")).tolist()
        return [
            "" if math.isnan(d) else f'{head}{r}"{style}><v>{d!r}</v></c>'
            for d, r in zip(days, rows, strict=True)
        ]
    if pd.api.types.is_numeric_dtype(dtype) and not isinstance(dtype, pd.CategoricalDtype):
        values = python_values(series)
        return [
            "" if v is None else f'{head}{r}"{style}><v>{v!r}</v></c>'
            for v, r in zip(values, rows, strict=True)
        ]
    out = []
    for v, r in zip(python_values(series), rows, strict=True):
        if v is None:
            out.append("")
        elif isinstance(v, bool):
            out.append(f'{head}{r}"{style} t="b"><v>{int(v)}</v></c>')
        elif isinstance(v, (int, float)):
            out.append(f'{head}{r}"{style}><v>{v!r}</v></c>')
        elif isinstance(v, (dt.datetime, dt.date)):
            out.append(f'{head}{r}"{style} t="inlineStr"><is><t>{v.isoformat()}</t></is></c>')
        else:
            space = ' xml:space="preserve"' if v != v.strip() else ""
            text = xml_escape(v, _XML_EXTRA)
            out.append(f'{head}{r}"{style} t="inlineStr"><is><t{space}>{text}</t></is></c>')
    return out


def _number_cells(series: pd.Series, letter: str, style: str, rows: pa.Array) -> pa.Array:
    """``<c>`` elements of a float or integer column, built with Arrow's string kernels.

    Arrow writes a float as its shortest round-trip decimal (``0.1``, ``1e+20``), a valid
    ``xsd:double`` as SpreadsheetML requires; NaN and infinities become empty cells.
    """
    if pd.api.types.is_float_dtype(series.dtype):
        arr = series.to_numpy(dtype=float, na_value=np.nan)
        values = pa.array(arr, mask=~np.isfinite(arr))
    else:
        values = pa.array(series.to_numpy(dtype=object, na_value=None), type=pa.int64())
    text = pc.cast(values, pa.string())
    cells = pc.binary_join_element_wise(
        f'<c r="{letter}', rows, f'"{style}><v>', text, "</v></c>", ""
    )
    return pc.fill_null(cells, "")


def _row_chunks(body: pd.DataFrame, first_row: int, styles: list[str]):
    letters = [get_column_letter(i) for i in range(1, len(body.columns) + 1)]
    for start in range(0, len(body), _ROWS_PER_CHUNK):
        part = body.iloc[start : start + _ROWS_PER_CHUNK]
        numbers = np.arange(first_row + start, first_row + start + len(part))
        rows = pc.cast(pa.array(numbers), pa.string())
        row_list = None
        columns = []
        for j, letter in enumerate(letters):
            series = part.iloc[:, j]
            dtype = series.dtype
            if (
                pd.api.types.is_float_dtype(dtype) or pd.api.types.is_integer_dtype(dtype)
            ) and not pd.api.types.is_bool_dtype(dtype):
                columns.append(_number_cells(series, letter, styles[j], rows))
            else:
                row_list = row_list or rows.to_pylist()
                columns.append(
                    pa.array(_column_cells(series, letter, styles[j], row_list), type=pa.string())
                )
        joined = (
            pc.binary_join_element_wise(*columns, "") if columns else pa.array([""] * len(part))
        )
        lines = pc.binary_join_element_wise('<row r="', rows, '">', joined, "</row>", "")
        yield "".join(lines.to_pylist())


def _sheet_members(archive: zipfile.ZipFile) -> dict[str, str]:
    """Sheet name -> archive member of its worksheet XML (from workbook.xml and its rels)."""
    ns = {
        "m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main",
        "r": "http://schemas.openxmlformats.org/officeDocument/2006/relationships",
        "p": "http://schemas.openxmlformats.org/package/2006/relationships",
    }
    book = ElementTree.fromstring(archive.read("xl/workbook.xml"))
    rels = ElementTree.fromstring(archive.read("xl/_rels/workbook.xml.rels"))
    targets = {rel.get("Id"): rel.get("Target") for rel in rels.findall("p:Relationship", ns)}
    out = {}
    for sheet in book.findall("m:sheets/m:sheet", ns):
        target = targets[sheet.get(f"{{{ns['r']}}}id")]
        out[sheet.get("name")] = target.lstrip("/") if target.startswith("/") else f"xl/{target}"
    return out


def _stream_rows(saved: Path, final: Path, pending: Mapping[str, pd.DataFrame]) -> None:
    """Copy workbook ``saved`` to ``final``, appending the ``pending`` rows to their sheets."""
    # Level 1 deflate: a third of the time of the default level for a few per cent more bytes.
    with (
        zipfile.ZipFile(saved) as src,
        zipfile.ZipFile(final, "w", zipfile.ZIP_DEFLATED, compresslevel=1) as dst,
    ):
        members = _sheet_members(src)
        patch = {members[sheet]: body for sheet, body in pending.items()}
        for item in src.infolist():
            data = src.read(item.filename)
            body = patch.get(item.filename)
            if body is None:
                dst.writestr(item, data)
                continue
            xml = data.decode("utf-8")
            styles = _column_style_ids(xml, HEADER_ROWS + 1, len(body.columns))
            xml = re.sub(
                rf'<row r="{HEADER_ROWS + 1}"[^>]*>.*?</row>', "", xml, count=1, flags=re.S
            )
            head, tail = xml.split("</sheetData>", 1)
            info = zipfile.ZipInfo(item.filename, date_time=item.date_time)
            info.compress_type = zipfile.ZIP_DEFLATED
            # The level is read from the ZipInfo when a member is opened for writing
            # (``_compresslevel`` before Python 3.13, ``compress_level`` from 3.13).
            for attr in ("compress_level", "_compresslevel"):
                with contextlib.suppress(AttributeError):
                    setattr(info, attr, 1)
            with dst.open(info, "w") as out:
                out.write(head.encode("utf-8"))
                for chunk in _row_chunks(body, HEADER_ROWS + 1, styles):
                    out.write(chunk.encode("utf-8"))
                out.write(("</sheetData>" + tail).encode("utf-8"))


def _plots_sheet(wb, plots, names: Mapping[str, str]) -> None:
    ws = wb.create_sheet(PLOTS_SHEET)
    ws.column_dimensions["A"].width = 100
    ws.sheet_view.showGridLines = False
    ws.append([_styled(ws, "Charts", font=TITLE_FONT)])
    ws.append(
        [
            _styled(
                ws,
                "Charts made by the run's steps; the PNG files are in plots/.",
                font=SUBTITLE_FONT,
            )
        ]
    )
    row = 3
    for plot in plots:
        ws.append([])
        row += 1
        ws.append([_styled(ws, plot.caption or plot.name, font=SECTION_FONT)])
        row += 1
        sheet = names.get(plot.table) if plot.table else None
        if sheet:
            ws.append([_styled(ws, f"Data: sheet '{sheet}'", hyperlink=_link(sheet))])
        else:
            ws.append([_styled(ws, f"File: plots/{Path(plot.path).name}", font=SUBTITLE_FONT)])
        row += 1
        image = Image(str(plot.path))
        if image.width > MAX_PLOT_WIDTH_PX:
            scale = MAX_PLOT_WIDTH_PX / image.width
            image.width, image.height = MAX_PLOT_WIDTH_PX, image.height * scale
        image.anchor = f"A{row + 1}"
        ws.add_image(image)
        rows_used = math.ceil(image.height / 20) + 1
        for _ in range(rows_used):
            ws.append([])
        row += rows_used


def _guide_sheet(wb, tables: Mapping[str, pd.DataFrame], names: Mapping[str, str]) -> None:
    ws = wb.create_sheet(GUIDE_SHEET)
    for letter, width in zip("ABCD", (24, 30, 12, 80), strict=True):
        ws.column_dimensions[letter].width = width
    ws.freeze_panes = "A4"
    ws.append([_styled(ws, "Column guide", font=TITLE_FONT)])
    ws.append(
        [
            _styled(
                ws,
                "Units and meaning of every column. Column names carry their unit as a "
                "suffix (_pct %, _gpt g/t, _ppm, _m, _t, _kwh_t, _frac 0-1, _idx index).",
                font=SUBTITLE_FONT,
            )
        ]
    )
    ws.append(
        [
            _styled(ws, h, font=HEADER_FONT, fill=HEADER_FILL)
            for h in ("Sheet", "Column", "Unit", "Meaning")
        ]
    )
    ws.auto_filter.ref = "A3:D3"
    count = 0
    for table, frame in tables.items():
        for col in frame.columns:
            ws.append(
                [
                    names[table],
                    _styled(ws, str(col)),
                    column_unit(str(col)),
                    _styled(ws, column_description(str(col))),
                ]
            )
            count += 1
    ws.auto_filter.ref = f"A3:D{3 + count}"


def _recipe_sheet(wb, text: str, file_name: str) -> None:
    ws = wb.create_sheet(RECIPE_SHEET)
    ws.column_dimensions["A"].width = 110
    ws.append([_styled(ws, f"Recipe {file_name}".strip(), font=TITLE_FONT)])
    ws.append(
        [_styled(ws, "The recipe this run followed, exactly as written.", font=SUBTITLE_FONT)]
    )
    mono = Font(name="Consolas", size=10)
    for line in text.splitlines():
        ws.append([_styled(ws, line, font=mono) if line else None])
