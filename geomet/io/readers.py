"""Read input tables from CSV, XLSX or Parquet into canonical geomet tables.

The reader is the one place where source column names become canonical names (a column map) and
source units become canonical units (a units map): the canonical unit is read from the canonical
name's suffix (``au_gpt`` is g/t, ``cu_pct`` is %). It also turns censored laboratory values
(``<0.01``, ``-0.01``, ``>10``, ``BDL``...) into numbers by a stated rule
(:class:`geomet.drillholes.censored.DetectionRule`) and keeps, for every row, the line of the source
file it came from, so that a validation problem can name file and line.

Problems with the file itself (empty file, unexpected encoding or delimiter, cells that are not
numbers, ragged rows, a file too large to be real) are returned in :attr:`ReadResult.problems`,
not raised, so that a user sees all of them at once. A missing file or an unknown format raises
:class:`geomet.errors.InputDataError`.

Security: ``.xlsx`` files are opened with openpyxl in read-only mode. With ``defusedxml`` installed
(a geomet dependency) openpyxl streams worksheets and shared strings through defusedxml's
``iterparse``, which refuses entity expansion ("billion laughs") and external entities; the
other workbook parts go through defusedxml too, or through lxml with entity resolution switched
off when lxml is installed (openpyxl 3.1 behaviour). Before opening, the reader also refuses files
larger than :data:`MAX_FILE_BYTES`, workbooks whose uncompressed size exceeds
:data:`MAX_XLSX_UNCOMPRESSED_BYTES` or whose compression ratio exceeds
:data:`MAX_XLSX_COMPRESSION_RATIO` (a "zip bomb"), and stops at :data:`MAX_ROWS` rows.
"""

from __future__ import annotations

import csv
import difflib
import io
import re
import zipfile
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import pandas as pd

from geomet import glossary
from geomet.drillholes.censored import DetectionRule, parse_censored
from geomet.drillholes.problems import ERROR, WARNING, Problem
from geomet.errors import InputDataError

MAX_FILE_BYTES = 2 * 1024**3  # 2 GiB: larger than any real drill-hole table
MAX_XLSX_UNCOMPRESSED_BYTES = 4 * 1024**3
MAX_XLSX_COMPRESSION_RATIO = 200.0  # real workbooks compress ~5-20x (common practice threshold)
XLSX_RATIO_CHECK_BYTES = 50_000_000  # the ratio test applies to workbooks expanding beyond this
MAX_ROWS = 20_000_000
MAX_CELL_PROBLEMS_PER_COLUMN = 1000  # then one summary problem for the rest of that column
DELIMITERS = (",", ";", "\t", "|")
ENCODINGS = ("utf-8", "cp1252", "latin-1")

# Geometry and plan tables get no censoring; text columns are never parsed as numbers.
GEOMETRY_TABLES = glossary.NON_INTERVAL_TABLES
TEXT_COLUMNS = glossary.TEXT_COLUMNS
KEY_NUMERIC_COLUMNS = frozenset({"from_m", "to_m", "depth_m"})
# Numeric columns without a unit suffix.
UNITLESS_NUMERIC = frozenset({"smc_axb", "period", "days", "domain_id"})
INTEGER_COLUMNS = frozenset({"period"})

# Canonical units and the factor that converts one unit of each to the base of its dimension.
# Lengths in metres; densities in t/m3.
# Mass fractions in ppb (integers where exact, so that ratios like ppm -> % are exact floats).
_MASS_FRACTION = {
    "%": 1e7,
    "pct": 1e7,
    "percent": 1e7,
    "wt%": 1e7,
    "wt_pct": 1e7,
    "ppm": 1e3,
    "g/t": 1e3,
    "gpt": 1e3,
    "g_t": 1e3,
    "mg/kg": 1e3,
    "ppb": 1.0,
    "mg/t": 1.0,
    "ug/kg": 1.0,
    "kg/t": 1e6,
    "kg_t": 1e6,
    # troy ounce (31.1034768 g) per short ton (907.18474 kg): 34.2857 g/t (NIST SP 811 factors)
    "oz/t": 31.1034768 / 907.18474 * 1e6,
    "opt": 31.1034768 / 907.18474 * 1e6,
    "frac": 1e9,
    "fraction": 1e9,
}
_LENGTH = {"m": 1.0, "ft": 0.3048, "feet": 0.3048, "cm": 0.01, "mm": 0.001}  # 0.3048 m/ft exact
_DENSITY = {"t/m3": 1.0, "t_m3": 1.0, "g/cm3": 1.0, "g/cc": 1.0, "kg/m3": 1e-3}
_DIMENSIONS = (_MASS_FRACTION, _LENGTH, _DENSITY)
_CANONICAL_UNIT = {
    "%": "%",
    "ppm": "ppm",
    "ppb": "ppb",
    "g/t": "g/t",
    "kg/t": "kg/t",
    "fraction": "frac",
    "m": "m",
    "t/m³": "t/m3",
}

REQUIRED_COLUMNS: dict[str, tuple[str, ...]] = {
    "collars": glossary.COLLAR_COLUMNS,
    "surveys": glossary.SURVEY_COLUMNS,
    "testwork": ("sample_id", "hole_id", "from_m", "to_m"),
    "blocks": ("block_id", "x_m", "y_m", "z_m"),
    "schedule": ("block_id", "period"),
    "plant_limits": ("period",),
}
INTERVAL_REQUIRED = glossary.INTERVAL_KEYS

# Header spellings seen in drill-hole exports (normalised by :func:`normalise_name`) and their
# canonical names, applied after the column map (common practice in the trade).
HEADER_ALIASES: dict[str, str] = {
    "hole": "hole_id",
    "holeid": "hole_id",
    "hole_no": "hole_id",
    "hole_number": "hole_id",
    "hole_name": "hole_id",
    "drillhole": "hole_id",
    "drill_hole": "hole_id",
    "dh_id": "hole_id",
    "from": "from_m",
    "depth_from": "from_m",
    "from_depth": "from_m",
    "top": "from_m",
    "to": "to_m",
    "depth_to": "to_m",
    "to_depth": "to_m",
    "bottom": "to_m",
    "depth": "depth_m",
    "at": "depth_m",
    "md": "depth_m",
    "azimuth": "azimuth_deg",
    "azi": "azimuth_deg",
    "az": "azimuth_deg",
    "dip": "dip_deg",
    "inclination_dip": "dip_deg",
    "east": "easting_m",
    "easting": "easting_m",
    "north": "northing_m",
    "northing": "northing_m",
    "elevation": "elevation_m",
    "rl": "elevation_m",
    "elev": "elevation_m",
    "total_depth": "total_depth_m",
    "max_depth": "total_depth_m",
    "eoh": "total_depth_m",
    "td": "total_depth_m",
    "lith": "lith_code",
    "lithology": "lith_code",
    "rock_code": "lith_code",
    "density": "density_t_m3",
    "sg": "density_t_m3",
    "bulk_density": "density_t_m3",
    "sample": "sample_id",
    "sample_no": "sample_id",
}


def required_columns(table: str) -> tuple[str, ...]:
    """Columns a table must have: its own list, or hole_id/from_m/to_m for an interval table."""
    return REQUIRED_COLUMNS.get(table, INTERVAL_REQUIRED)


@dataclass
class ReadResult:
    """A table read from a file, with what the reader learnt about the file.

    Attributes
    ----------
    table : pandas.DataFrame
        The table with canonical column names and units, RangeIndex 0..n-1.
    name : str
        Canonical table name (``"assays"``, ``"collars"``...).
    file : str
        The file read (as given).
    line_numbers : numpy.ndarray of int
        1-based line (CSV) or sheet row (XLSX) of each row of ``table``; the header is line 1.
        For Parquet, row i of the file is "line" i + 2, keeping the same convention.
    renamed : dict of str to str
        Source column -> canonical column, for every column whose name changed.
    units_converted : dict of str to tuple
        Canonical column -> (source unit, canonical unit, factor) for every converted column.
    censored_counts : dict of str to int
        Canonical column -> number of censored values (below detection or over range).
    encoding, delimiter : str or None
        Detected text encoding and field delimiter (None for XLSX and Parquet).
    problems : list of Problem
        File-level findings (empty file, encoding, delimiter, non-numeric cells, ragged rows).
    sheet : str or None
        The XLSX sheet read.
    """

    table: pd.DataFrame
    name: str
    file: str
    line_numbers: np.ndarray
    renamed: dict[str, str] = field(default_factory=dict)
    units_converted: dict[str, tuple[str, str, float]] = field(default_factory=dict)
    censored_counts: dict[str, int] = field(default_factory=dict)
    encoding: str | None = None
    delimiter: str | None = None
    problems: list[Problem] = field(default_factory=list)
    sheet: str | None = None

    @property
    def file_name(self) -> str:
        """The file's base name, as problems quote it."""
        return Path(self.file).name

    def line_of(self, index) -> int | None:
        """Source line of the row with index label ``index`` (None when unknown)."""
        try:
            i = int(index)
        except (TypeError, ValueError):
            return None
        if 0 <= i < len(self.line_numbers):
            return int(self.line_numbers[i])
        return None


def unit_factor(source_unit: str, canonical_unit: str) -> float:
    """Factor that converts a value in ``source_unit`` into ``canonical_unit``.

    Parameters
    ----------
    source_unit, canonical_unit : str
        Unit labels such as ``"ppm"``, ``"ppb"``, ``"%"``, ``"g/t"``, ``"oz/t"``, ``"ft"``, ``"m"``.

    Returns
    -------
    float
        Multiply source values by this to get canonical values.

    Notes
    -----
    Mass fractions: 1 % = 10 000 ppm, 1 ppm = 1 g/t = 1000 ppb; 1 troy oz per short ton
    = 34.2857 g/t (31.1034768 g / 0.90718474 t). Length: 1 ft = 0.3048 m.

    Examples
    --------
    >>> unit_factor("ppb", "g/t")
    0.001
    >>> unit_factor("ppm", "%")
    0.0001
    """
    src = _norm_unit(source_unit)
    dst = _norm_unit(canonical_unit)
    for table in _DIMENSIONS:
        if src in table and dst in table:
            return table[src] / table[dst]
    known = sorted({u for t in _DIMENSIONS for u in t})
    message = (
        f"cannot convert unit {source_unit!r} to {canonical_unit!r}; known units: "
        f"{', '.join(known)}"
    )
    raise InputDataError(message)


def _norm_unit(unit: str) -> str:
    u = str(unit).strip().lower().replace(" ", "").replace("³", "3")
    return {"t/m^3": "t/m3", "g/cm^3": "g/cm3", "percent": "%", "wt.%": "%"}.get(u, u)


def canonical_unit(column: str) -> str:
    """Canonical unit label of a column (from its suffix), in :func:`unit_factor` spelling."""
    label = glossary.unit_of(column)
    return _CANONICAL_UNIT.get(label, label)


def read_table(
    path,
    *,
    table: str,
    column_map: dict[str, str] | None = None,
    units: dict[str, str] | None = None,
    detection: DetectionRule | None = None,
    sheet: str | int | None = None,
    max_bytes: int | None = None,
    max_rows: int | None = None,
) -> ReadResult:
    """Read one input table (CSV, XLSX or Parquet) into canonical columns and units.

    Parameters
    ----------
    path : str or pathlib.Path
        The file; the format comes from the extension (``.csv``/``.txt``/``.tsv``, ``.xlsx``/
        ``.xlsm``, ``.parquet``/``.pq``).
    table : str
        Canonical table name (``collars``, ``surveys``, ``assays``, ``scan``, ``lithology``,
        ``density``, ``testwork``, ``blocks``, ``schedule``, ``plant_limits``, ``site_domains``, or
        any other interval table).
    column_map : dict of str to str, optional
        Source column -> canonical column. Columns not in the map whose name, lower-cased with
        spaces and punctuation as ``_``, equals a canonical name are renamed too.
    units : dict of str to str, optional
        Column (canonical or source name) -> source unit (``"ppm"``, ``"ppb"``, ``"%"``,
        ``"g/t"``, ``"oz/t"``, ``"ft"``...). Values convert into the unit of the canonical
        name's suffix.
    detection : DetectionRule, optional
        Rule for censored and coded lab values (default: half the detection limit).
    sheet : str or int, optional
        XLSX sheet name or 0-based position (default: the first sheet).
    max_bytes, max_rows : int, optional
        Override :data:`MAX_FILE_BYTES` and :data:`MAX_ROWS`.

    Returns
    -------
    ReadResult
        The canonical table and what was learnt about the file (see :class:`ReadResult`).

    Raises
    ------
    InputDataError
        When the file does not exist or its format is unknown.
    """
    path = Path(path)
    if not path.is_file():
        message = f"input file for table '{table}' not found: {path}"
        raise InputDataError(message)
    suffix = path.suffix.lower()
    detection = detection or DetectionRule()
    max_bytes = MAX_FILE_BYTES if max_bytes is None else int(max_bytes)
    max_rows = MAX_ROWS if max_rows is None else int(max_rows)
    fname = path.name
    size = path.stat().st_size
    if size > max_bytes:
        message = (
            f"{fname} is {size / 1e6:.0f} MB, over the {max_bytes / 1e6:.0f} MB limit for one "
            f"input file; split it or raise the limit"
        )
        problem = Problem(ERROR, "file_too_large", message, table=table, file=fname)
        return _empty(table, path, [problem])
    if suffix in (".csv", ".txt", ".tsv"):
        raw, lines, problems, encoding, delimiter = _read_csv_raw(path, table, max_rows, column_map)
        sheet_name = None
    elif suffix in (".xlsx", ".xlsm"):
        raw, lines, problems, sheet_name = _read_xlsx_raw(path, table, sheet, max_rows)
        encoding = delimiter = None
    elif suffix in (".parquet", ".pq"):
        raw, lines, problems = _read_parquet_raw(path, table, max_rows)
        encoding = delimiter = sheet_name = None
    else:
        message = (
            f"cannot read {fname} for table '{table}': unknown format {suffix!r}; "
            f"use .csv, .xlsx or .parquet"
        )
        raise InputDataError(message)
    if raw is None:
        result = _empty(table, path, problems)
        result.encoding, result.delimiter, result.sheet = encoding, delimiter, sheet_name
        return result
    result = _canonicalise(raw, lines, table, fname, column_map, units, detection, problems)
    result.file = str(path)
    result.encoding, result.delimiter, result.sheet = encoding, delimiter, sheet_name
    return result


def _empty(table, path, problems) -> ReadResult:
    return ReadResult(
        table=pd.DataFrame(),
        name=table,
        file=str(path),
        line_numbers=np.zeros(0, dtype=np.int64),
        problems=list(problems),
    )


# --- CSV ---------------------------------------------------------------------------------------
def _decode(data: bytes, fname: str, table: str) -> tuple[str, str, list[Problem]]:
    problems = []
    if data.startswith(b"\xef\xbb\xbf"):
        try:
            return data[3:].decode("utf-8"), "utf-8-sig", problems
        except UnicodeDecodeError:
            pass
    try:
        return data.decode("utf-8"), "utf-8", problems
    except UnicodeDecodeError as exc:
        bad_line = data[: exc.start].count(b"\n") + 1
        first_error = exc
    for encoding in ENCODINGS[1:]:
        try:
            text = data.decode(encoding)
        except UnicodeDecodeError:
            continue
        message = (
            f"{fname} is not valid UTF-8 (first bad byte 0x{data[first_error.start]:02x} at "
            f"line {bad_line}); read it as {encoding}: check accented names and symbols, and "
            f"save the file as UTF-8"
        )
        problems.append(
            Problem(
                WARNING, "encoding", message, table=table, file=fname, line=bad_line, value=encoding
            )
        )
        return text, encoding, problems
    raise AssertionError("latin-1 decodes any byte string")  # pragma: no cover


def sniff_delimiter(sample_lines: list[str]) -> str:
    """Pick the field delimiter among ``, ; TAB |`` from the first lines of a text table.

    The delimiter chosen gives the same number (> 1) of fields on the most lines, with ties going
    to more fields; a single-column file gives ``","``.

    Examples
    --------
    >>> sniff_delimiter(["hole_id;from_m;to_m", "V-001;0,0;1,5"])
    ';'
    """
    best, best_score = ",", (0, 0)
    lines = [ln for ln in sample_lines if ln.strip()]
    for delim in DELIMITERS:
        counts = [len(row) for row in csv.reader(lines, delimiter=delim)]
        if not counts:
            continue
        values, freq = np.unique(counts, return_counts=True)
        top = int(np.argmax(freq))
        fields = int(values[top])
        if fields < 2:
            continue
        score = (int(freq[top]), fields)
        if score > best_score:
            best, best_score = delim, score
    return best


def _read_csv_raw(path: Path, table: str, max_rows: int, column_map=None):
    fname = path.name
    data = path.read_bytes()
    if not data.strip():
        message = f"{fname} is empty: expected a header line and rows for table '{table}'"
        problem = Problem(ERROR, "empty_file", message, table=table, file=fname)
        return None, None, [problem], None, None
    text, encoding, problems = _decode(data, fname, table)
    # leading blank lines: skip them, count them for line numbers
    stripped = text.lstrip("\r\n")
    offset = text[: len(text) - len(stripped)].count("\n")
    text = stripped
    sample = text[:65536].splitlines()[:50]
    delimiter = sniff_delimiter(sample)
    if delimiter != ",":
        shown = {"\t": "TAB", ";": "';'", "|": "'|'"}[delimiter]
        message = (
            f"{fname} separates fields with {shown}, not commas; read it with {shown} as the "
            f"delimiter" + (" and ',' as the decimal mark" if delimiter == ";" else "")
        )
        problems.append(
            Problem(
                WARNING,
                "delimiter",
                message,
                table=table,
                file=fname,
                line=offset + 1,
                value=delimiter,
            )
        )
    n_physical = text.count("\n") + (0 if text.endswith("\n") else 1)
    # identifiers and codes are read as text (keeps "007"); numeric columns are parsed by the
    # C parser, and a column with any text ("<0.01", "BDL") stays text for censoring
    header = next(csv.reader([text.split("\n", 1)[0]], delimiter=delimiter), [])
    names = target_names(header, table, column_map)
    text_cols = [src for src in header if _is_text_name(names.get(src.strip(), src))]
    raw = None
    try:
        raw = pd.read_csv(
            io.StringIO(text),
            sep=delimiter,
            dtype=dict.fromkeys(text_cols, str),
            keep_default_na=False,
            na_values=[""],
            skip_blank_lines=False,
            engine="c",
            nrows=max_rows + 1,
        )
    except (pd.errors.ParserError, ValueError):
        raw = None
    if raw is not None and len(raw) == n_physical - 1:
        lines = np.arange(len(raw), dtype=np.int64) + offset + 2
    else:
        raw, lines, ragged = _read_csv_slow(text, delimiter, fname, table, offset, max_rows)
        problems.extend(ragged)
    if raw.shape[1] == 0:
        message = f"{fname} has no header line: expected column names for table '{table}'"
        problems.append(Problem(ERROR, "empty_file", message, table=table, file=fname))
        return None, None, problems, encoding, delimiter
    raw, lines = _drop_blank(raw, lines)
    if len(raw) > max_rows:
        raw, lines = raw.iloc[:max_rows], lines[:max_rows]
        problems.append(_too_many_rows(fname, table, max_rows))
    if len(raw) == 0:
        message = f"{fname} has a header but no rows for table '{table}'"
        problems.append(Problem(WARNING, "empty_file", message, table=table, file=fname))
    return raw, lines, problems, encoding, delimiter


def _too_many_rows(fname, table, max_rows):
    message = f"{fname} has more than {max_rows} rows; only the first {max_rows} were read"
    return Problem(ERROR, "too_many_rows", message, table=table, file=fname)


def _read_csv_slow(text, delimiter, fname, table, offset, max_rows):
    """Line-exact CSV reading (quoted line breaks, ragged rows) with the csv module."""
    reader = csv.reader(io.StringIO(text), delimiter=delimiter)
    problems = []
    header = None
    rows, lines = [], []
    prev_end = 0
    for record in reader:
        start = prev_end + 1
        prev_end = reader.line_num
        if header is None:
            header = [h.strip() for h in record]
            continue
        if not any(cell.strip() for cell in record):
            continue
        if len(record) != len(header):
            message = (
                f"{fname} line {start + offset} has {len(record)} fields, the header has "
                f"{len(header)}: check for a stray '{delimiter}' or a missing value; row skipped"
            )
            problems.append(
                Problem(
                    ERROR,
                    "ragged_row",
                    message,
                    table=table,
                    file=fname,
                    line=start + offset,
                    value=str(len(record)),
                )
            )
            continue
        rows.append(record)
        lines.append(start + offset)
        if len(rows) > max_rows:
            break
    header = header or []
    frame = pd.DataFrame(rows, columns=_dedupe(header), dtype=object) if header else pd.DataFrame()
    return frame, np.asarray(lines, dtype=np.int64), problems


def _dedupe(names):
    seen: dict[str, int] = {}
    out = []
    for name in names:
        if name in seen:
            seen[name] += 1
            out.append(f"{name}.{seen[name]}")
        else:
            seen[name] = 0
            out.append(name)
    return out


def _drop_blank(raw: pd.DataFrame, lines: np.ndarray):
    if raw.empty:
        return raw.reset_index(drop=True), lines
    blank = np.ones(len(raw), dtype=bool)
    for col in raw.columns:
        values = raw[col]
        empty = values.isna().to_numpy().copy()
        if not pd.api.types.is_numeric_dtype(values.dtype):
            present = ~empty
            if present.any():
                stripped = values[present].astype(str).str.strip().to_numpy()
                empty[np.flatnonzero(present)] = stripped == ""
        blank &= empty
        if not blank.any():
            break
    if blank.any():
        raw = raw.loc[~blank]
        lines = lines[~blank]
    return raw.reset_index(drop=True), lines


# --- XLSX --------------------------------------------------------------------------------------
def _read_xlsx_raw(path: Path, table: str, sheet, max_rows: int):
    import openpyxl  # openpyxl uses defusedxml (installed) for its XML parsing

    fname = path.name
    problems: list[Problem] = []
    try:
        with zipfile.ZipFile(path) as archive:
            infos = archive.infolist()
    except zipfile.BadZipFile:
        message = f"{fname} is not an .xlsx workbook (not a zip container); save it as .xlsx or CSV"
        return None, None, [Problem(ERROR, "bad_workbook", message, table=table, file=fname)], None
    total = sum(i.file_size for i in infos)
    packed = sum(i.compress_size for i in infos) or 1
    if total > MAX_XLSX_UNCOMPRESSED_BYTES or (
        total > XLSX_RATIO_CHECK_BYTES and total / packed > MAX_XLSX_COMPRESSION_RATIO
    ):
        message = (
            f"{fname} expands to {total / 1e6:.0f} MB ({total / packed:.0f}x its size); refused "
            f"as a likely zip bomb (limits {MAX_XLSX_UNCOMPRESSED_BYTES / 1e6:.0f} MB, "
            f"{MAX_XLSX_COMPRESSION_RATIO:.0f}x)"
        )
        problem = Problem(ERROR, "file_too_large", message, table=table, file=fname)
        return None, None, [problem], None
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True)
    except Exception as exc:  # openpyxl raises many types for a broken workbook
        root = exc
        while root.__cause__ or root.__context__:
            root = root.__cause__ or root.__context__
        cause = f" (cause: {type(root).__name__})" if root is not exc else ""
        first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        message = f"{fname} could not be opened as a workbook: {first}{cause}"
        return None, None, [Problem(ERROR, "bad_workbook", message, table=table, file=fname)], None
    try:
        names = book.sheetnames
        if sheet is None:
            sheet_name = names[0]
        elif isinstance(sheet, int):
            if not 0 <= sheet < len(names):
                message = f"{fname} has {len(names)} sheets; sheet {sheet} does not exist"
                raise InputDataError(message)
            sheet_name = names[sheet]
        else:
            if sheet not in names:
                close = difflib.get_close_matches(str(sheet), names, n=1)
                hint = f" (did you mean '{close[0]}'?)" if close else ""
                message = f"{fname} has no sheet '{sheet}'{hint}; sheets: {', '.join(names)}"
                raise InputDataError(message)
            sheet_name = sheet
        try:
            header, rows, lines = _sheet_rows(book[sheet_name], max_rows)
        except Exception as exc:  # defusedxml refusals, broken XML: report, do not crash
            message = (
                f"{fname} sheet '{sheet_name}' could not be read ({type(exc).__name__}: {exc}); "
                f"re-save it from the spreadsheet program or export it as CSV"
            )
            problem = Problem(ERROR, "bad_workbook", message, table=table, file=fname)
            return None, None, [problem], sheet_name
    finally:
        book.close()
    if header is None:
        message = f"{fname} sheet '{sheet_name}' is empty: expected a header row for '{table}'"
        problems.append(Problem(ERROR, "empty_file", message, table=table, file=fname))
        return None, None, problems, sheet_name
    raw = pd.DataFrame(rows, columns=_dedupe(header), dtype=object)
    lines = np.asarray(lines, dtype=np.int64)
    if len(raw) > max_rows:
        raw, lines = raw.iloc[:max_rows], lines[:max_rows]
        problems.append(_too_many_rows(fname, table, max_rows))
    if len(raw) == 0:
        message = f"{fname} sheet '{sheet_name}' has a header but no rows for table '{table}'"
        problems.append(Problem(WARNING, "empty_file", message, table=table, file=fname))
    return raw, lines, problems, sheet_name


def _sheet_rows(ws, max_rows: int):
    """Header, rows and sheet row numbers of a read-only worksheet (blank rows skipped)."""
    header = None
    rows, lines = [], []
    for row_number, values in enumerate(ws.iter_rows(min_row=1, values_only=True), start=1):
        if not any(v is not None and str(v).strip() != "" for v in values):
            continue
        if header is None:
            header = ["" if v is None else str(v).strip() for v in values]
            width = len(header)
            while width and header[width - 1] == "":
                width -= 1
            header = header[:width]
            continue
        values = list(values[: len(header)]) + [None] * max(0, len(header) - len(values))
        rows.append(values)
        lines.append(row_number)
        if len(rows) > max_rows:
            break
    return header, rows, lines


# --- Parquet -----------------------------------------------------------------------------------
def _read_parquet_raw(path: Path, table: str, max_rows: int):
    import pyarrow.parquet as pq

    fname = path.name
    try:
        pfile = pq.ParquetFile(path)
    except Exception as exc:  # pyarrow raises ArrowInvalid / OSError for a broken file
        message = f"{fname} could not be read as Parquet: {exc}"
        return None, None, [Problem(ERROR, "bad_parquet", message, table=table, file=fname)]
    problems = []
    n = pfile.metadata.num_rows
    raw = pfile.read().to_pandas()
    if n > max_rows:
        raw = raw.iloc[:max_rows]
        problems.append(_too_many_rows(fname, table, max_rows))
    raw.columns = _dedupe([str(c).strip() for c in raw.columns])
    lines = np.arange(len(raw), dtype=np.int64) + 2
    if len(raw) == 0:
        message = f"{fname} has columns but no rows for table '{table}'"
        problems.append(Problem(WARNING, "empty_file", message, table=table, file=fname))
    return raw.reset_index(drop=True), lines, problems


# --- canonical names, numbers, censoring, units ------------------------------------------------
def _known_columns(table: str) -> set[str]:
    known = set(glossary.COLUMNS) | set(glossary.ASSAY_COLUMNS)
    known |= set(glossary.SCANNED_MINERAL_COLUMNS) | set(glossary.SCAN_FEATURE_COLUMNS)
    known |= set(required_columns(table)) | set(glossary.INTERVAL_KEYS)
    known |= set(glossary.COLLAR_COLUMNS) | set(glossary.SURVEY_COLUMNS) | TEXT_COLUMNS
    known |= UNITLESS_NUMERIC
    return known


def normalise_name(name: str) -> str:
    """Lower-case a column name and turn spaces and punctuation into single ``_``.

    Examples
    --------
    >>> normalise_name(" Hole ID "), normalise_name("Cu-Pct")
    ('hole_id', 'cu_pct')
    """
    text = str(name).strip().lower().replace("%", "pct")
    return re.sub(r"[^0-9a-z]+", "_", text).strip("_")


def is_numeric_column(name: str) -> bool:
    """True for a canonical column that holds numbers (a unit suffix, or a known unit-less one)."""
    if name in TEXT_COLUMNS or name.endswith("_censored") or name.endswith("_id"):
        return False
    return name in UNITLESS_NUMERIC or glossary.unit_of(name) != ""


def _plain_numeric(series: pd.Series) -> tuple[np.ndarray, np.ndarray]:
    """Numbers from cells, decimal comma allowed; returns (values, non_numeric mask)."""
    if pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(series.dtype):
        return series.to_numpy(dtype=float, na_value=np.nan), np.zeros(len(series), dtype=bool)
    obj = series.astype(object)
    present = obj.notna().to_numpy() & (obj.astype(str).str.strip() != "").to_numpy()
    values = pd.to_numeric(obj, errors="coerce").to_numpy(dtype=float, na_value=np.nan).copy()
    retry = present & np.isnan(values)
    if retry.any():
        text = obj[retry].astype(str).str.strip().str.replace(",", ".", regex=False)
        values[retry] = pd.to_numeric(text, errors="coerce").to_numpy(dtype=float, na_value=np.nan)
    return values, present & np.isnan(values)


def target_names(columns, table: str, column_map: dict[str, str] | None = None) -> dict[str, str]:
    """Canonical name of each source column: the column map, else a known or alias name.

    Examples
    --------
    >>> target_names(["HoleID", "From", "Cu ppm"], "assays", {"Cu ppm": "cu_pct"})
    {'HoleID': 'hole_id', 'From': 'from_m', 'Cu ppm': 'cu_pct'}
    """
    column_map = dict(column_map or {})
    known = _known_columns(table)
    lower_map = {str(k).strip().lower(): v for k, v in column_map.items()}
    target: dict[str, str] = {}
    for src in (str(c).strip() for c in columns):
        if src in column_map:
            dst = column_map[src]
        elif src.lower() in lower_map:
            dst = lower_map[src.lower()]
        elif src in known:
            dst = src
        else:
            norm = normalise_name(src)
            if norm in known:
                dst = norm
            elif norm in HEADER_ALIASES and HEADER_ALIASES[norm] in known:
                dst = HEADER_ALIASES[norm]
            else:
                dst = src
        target[src] = dst
    return target


def _is_text_name(name: str) -> bool:
    return name in TEXT_COLUMNS or name.endswith("_id")


def _canonicalise(raw, lines, table, fname, column_map, units, detection, problems) -> ReadResult:
    problems = list(problems)
    column_map = dict(column_map or {})
    units = dict(units or {})
    raw = raw.copy()
    raw.columns = [str(c).strip() for c in raw.columns]
    renamed: dict[str, str] = {}
    target = target_names(raw.columns, table, column_map)
    for key in column_map:
        if str(key).strip() not in target and str(key).strip().lower() not in {
            s.lower() for s in target
        }:
            close = difflib.get_close_matches(str(key), list(raw.columns), n=1)
            hint = f" (did you mean '{close[0]}'?)" if close else ""
            message = (
                f"column map names '{key}' but {fname} has no such column{hint}; "
                f"columns: {', '.join(raw.columns)}"
            )
            problems.append(
                Problem(
                    WARNING, "column_map_unused", message, table=table, file=fname, column=str(key)
                )
            )
    keep, used = [], {}
    for src, dst in target.items():
        if re.fullmatch(r".+\.\d+", src) and src.rsplit(".", 1)[0] in target:
            message = (
                f"{fname} has column '{src.rsplit('.', 1)[0]}' more than once; only the first "
                f"is used"
            )
            problems.append(
                Problem(
                    ERROR,
                    "duplicate_column",
                    message,
                    table=table,
                    file=fname,
                    line=1,
                    column=src.rsplit(".", 1)[0],
                )
            )
            continue
        if dst in used:
            message = (
                f"{fname} columns '{used[dst]}' and '{src}' both map to '{dst}'; only "
                f"'{used[dst]}' is used"
            )
            problems.append(
                Problem(
                    ERROR, "duplicate_column", message, table=table, file=fname, line=1, column=dst
                )
            )
            continue
        used[dst] = src
        keep.append(src)
        if dst != src:
            renamed[src] = dst
    frame = raw[keep].rename(columns=renamed)
    frame.index = pd.RangeIndex(len(frame))

    hole = frame["hole_id"] if "hole_id" in frame.columns else None
    out: dict[str, pd.Series] = {}
    extra: dict[str, pd.Series] = {}
    censored_counts: dict[str, int] = {}
    units_converted: dict[str, tuple[str, str, float]] = {}
    censor = table not in GEOMETRY_TABLES
    for col in frame.columns:
        series = frame[col]
        if col in TEXT_COLUMNS or col.endswith("_id") or not _looks_numeric(col, series):
            out[col] = _text(series, col)
            continue
        if censor and col not in KEY_NUMERIC_COLUMNS:
            parsed = parse_censored(series, column=col, rule=detection)
            values = parsed.values.to_numpy(dtype=float)
            bad = parsed.non_numeric.to_numpy()
            n_cens = int(parsed.censored.sum())
            if n_cens:
                censored_counts[col] = n_cens
                extra[f"{col}_censored"] = parsed.censored
                extra[f"{col}_detection_limit"] = parsed.detection_limit
                if parsed.over_range.any():
                    extra[f"{col}_over_range"] = parsed.over_range
                if np.isnan(parsed.detection_limit.to_numpy()[parsed.censored.to_numpy()]).any():
                    message = (
                        f"{fname} column {col}: a text code means 'below detection' but no "
                        f"detection limit is known; give DetectionRule(default_limits="
                        f"{{'{col}': ...}}); those values are left missing"
                    )
                    problems.append(
                        Problem(
                            WARNING,
                            "unknown_detection_limit",
                            message,
                            table=table,
                            file=fname,
                            column=col,
                        )
                    )
        else:
            values, bad = _plain_numeric(series)
        if bad.any():
            problems.extend(_non_numeric_problems(series, bad, col, fname, table, lines, hole))
        src_unit = units.get(col, units.get(used.get(col, col)))
        if src_unit is not None:
            dst_unit = canonical_unit(col)
            try:
                factor = unit_factor(src_unit, dst_unit)
            except InputDataError as exc:
                message = f"units map for column {col} of {fname}: {exc}"
                raise InputDataError(message) from exc
            if factor != 1.0:
                values = values * factor
                if f"{col}_detection_limit" in extra:
                    extra[f"{col}_detection_limit"] = extra[f"{col}_detection_limit"] * factor
            units_converted[col] = (str(src_unit), dst_unit, factor)
        if col in INTEGER_COLUMNS:
            out[col] = pd.Series(values, index=frame.index).round().astype("Int64")
        else:
            out[col] = pd.Series(values, index=frame.index, dtype=float)
    unknown_units = [
        k
        for k in units
        if k not in units_converted and k not in used.values() and k not in frame.columns
    ]
    for key in unknown_units:
        message = f"units map names '{key}' but {fname} has no such column"
        problems.append(
            Problem(WARNING, "units_map_unused", message, table=table, file=fname, column=key)
        )
    result_frame = pd.DataFrame({**out, **extra}, index=frame.index)
    return ReadResult(
        table=result_frame,
        name=table,
        file=fname,
        line_numbers=np.asarray(lines, dtype=np.int64),
        renamed=renamed,
        units_converted=units_converted,
        censored_counts=censored_counts,
        problems=problems,
    )


def _looks_numeric(col: str, series: pd.Series) -> bool:
    if is_numeric_column(col):
        return True
    if pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(series.dtype):
        return True
    # an unknown column is numeric when every non-empty cell is a number
    _, bad = _plain_numeric(series)
    obj = series.astype(object)
    present = obj.notna() & (obj.astype(str).str.strip() != "")
    return bool(present.any()) and not bad.any()


def _text(series: pd.Series, col: str) -> pd.Series:
    if col == "test_date" and not pd.api.types.is_string_dtype(series.dtype):
        return series.astype(object)  # xlsx dates stay dates; the testwork code parses them
    if pd.api.types.is_string_dtype(series.dtype):
        text = series.astype("str").str.strip()
    else:
        obj = series.astype(object)
        text = obj.map(_cell_text, na_action="ignore").astype("str")
    return text.where(text.str.len() > 0)


def _cell_text(value) -> str:
    if isinstance(value, float) and value.is_integer():
        return str(int(value))  # an xlsx hole id 1001 arrives as 1001.0
    return str(value).strip()


def _non_numeric_problems(series, bad, col, fname, table, lines, hole):
    idx = np.flatnonzero(bad)
    out = []
    rest = idx[MAX_CELL_PROBLEMS_PER_COLUMN:]
    idx = idx[:MAX_CELL_PROBLEMS_PER_COLUMN]
    raw = series.astype(object).to_numpy()
    holes = hole.astype(object).to_numpy() if hole is not None else None
    for i in idx:
        value = str(raw[i])
        hid = None if holes is None or pd.isna(holes[i]) else str(holes[i])
        where = f" (hole {hid})" if hid else ""
        message = (
            f"{col} must be a number; got {value!r} at {fname} line {int(lines[i])}{where}; "
            f"correct the value or add the code to the detection rule's text codes"
        )
        out.append(
            Problem(
                ERROR,
                "non_numeric",
                message,
                table=table,
                file=fname,
                line=int(lines[i]),
                hole_id=hid,
                column=col,
                value=value,
                row=int(i),
            )
        )
    if len(rest):
        values = pd.Series(series.astype(object).to_numpy()[rest]).astype(str)
        common = ", ".join(repr(v) for v in values.value_counts().index[:5])
        message = (
            f"{col} has {len(rest)} more values that are not numbers in {fname} (from line "
            f"{int(lines[rest[0]])}), e.g. {common}; is this the right column, or a lab code "
            f"to declare?"
        )
        out.append(
            Problem(
                ERROR,
                "non_numeric",
                message,
                table=table,
                file=fname,
                line=int(lines[rest[0]]),
                column=col,
                value=str(len(rest)),
            )
        )
    return out
