"""Validation of drill-hole input tables: every problem, where it is, and what to do about it.

:func:`validate_tables` checks the tables of a run against the data contract and against
drill-hole common sense (intervals inside the hole, no overlaps, surveys in order, abundances
that add up) and returns :class:`~geomet.drillholes.problems.Problem` records, each naming file,
line, hole, column, value and rule in one sentence. :func:`exclude_problem_rows` drops the rows
that errors point at, for a run told to carry on without them.

Pure functions over DataFrames; the reader metadata (file names, line numbers) is passed in as
plain objects with ``file``, ``line_numbers`` and ``problems`` attributes (a
``geomet.io.readers.ReadResult`` fits) and never read from disk here.
"""

from __future__ import annotations

import difflib
from collections import Counter
from collections.abc import Mapping
from pathlib import Path

import numpy as np
import pandas as pd

from geomet import glossary
from geomet.drillholes.problems import ERROR, WARNING, Problem

REQUIRED_COLUMNS: dict[str, tuple[str, ...]] = {
    "collars": glossary.COLLAR_COLUMNS,
    "surveys": glossary.SURVEY_COLUMNS,
    "testwork": ("sample_id", "hole_id", "from_m", "to_m"),
    "blocks": ("block_id", "x_m", "y_m", "z_m"),
    "schedule": ("block_id", "period"),
    "plant_limits": ("period",),
}
NON_INTERVAL_TABLES = glossary.NON_INTERVAL_TABLES
TEXT_COLUMNS = glossary.TEXT_COLUMNS
# Units of columns that cannot be negative (concentrations, densities, energies).
NON_NEGATIVE_UNITS = frozenset({"%", "ppm", "ppb", "g/t", "kg/t", "t/m³", "kWh/t", "t", "t/h"})
FILE_LEVEL_FATAL = frozenset({"empty_file", "file_too_large", "bad_workbook", "bad_parquet"})

DEPTH_TOLERANCE_M = 0.01  # 1 cm: rounding of logged depths (common practice)
SCAN_SUM_TOLERANCE_PCT = 1.0  # scanner totals round to ~0.1 wt% per mineral (common practice)


def required_columns(table: str) -> tuple[str, ...]:
    """Columns ``table`` must have (hole_id, from_m, to_m for an interval table)."""
    return REQUIRED_COLUMNS.get(table, glossary.INTERVAL_KEYS)


# Interval tables sampled here and there rather than end to end: no gap warnings.
SPARSE_INTERVAL_TABLES = frozenset({"testwork"})


class _Where:
    """Turns a table's index labels into 'file line N (hole H)' phrases."""

    def __init__(self, table: str, frame: pd.DataFrame, source):
        self.table = table
        self.file = Path(str(getattr(source, "file", "") or "")).name if source is not None else ""
        self.lines = None
        if source is not None and getattr(source, "line_numbers", None) is not None:
            self.lines = np.asarray(source.line_numbers)
        self.frame = frame
        self.holes = frame["hole_id"] if "hole_id" in frame.columns else None

    @property
    def name(self) -> str:
        return self.file or f"table {self.table}"

    def line(self, label) -> int | None:
        if self.lines is None:
            return None
        try:
            i = int(label)
        except (TypeError, ValueError):
            return None
        return int(self.lines[i]) if 0 <= i < len(self.lines) else None

    def hole(self, label) -> str | None:
        if self.holes is None:
            return None
        value = self.holes.get(label)
        return None if value is None or pd.isna(value) else str(value)

    def at(self, label) -> str:
        line = self.line(label)
        hole = self.hole(label)
        place = (
            f"{self.file} line {line}"
            if line is not None and self.file
            else (f"{self.table} row {label}")
        )
        return place + (f" (hole {hole})" if hole else "")

    def problem(self, severity, rule, label, column, value, text) -> Problem:
        return Problem(
            severity=severity,
            rule=rule,
            message=text,
            table=self.table,
            file=self.file,
            line=self.line(label),
            hole_id=self.hole(label),
            column=column,
            value=None if value is None else _fmt(value),
            row=_label(label),
        )


def _label(label):
    try:
        return int(label)
    except (TypeError, ValueError):
        return None


def _fmt(value) -> str:
    if isinstance(value, float | np.floating):
        return f"{float(value):g}"
    return str(value)


def validate_tables(
    tables: Mapping[str, pd.DataFrame],
    *,
    sources: Mapping | None = None,
    max_problems: int | None = 200,
    depth_tolerance_m: float = DEPTH_TOLERANCE_M,
    scan_sum_tolerance_pct: float = SCAN_SUM_TOLERANCE_PCT,
) -> list[Problem]:
    """Check input tables against the data contract and drill-hole rules.

    Parameters
    ----------
    tables : mapping of str to pandas.DataFrame
        Canonical table name -> table (``collars``, ``surveys``, ``assays``, ``scan``...).
    sources : mapping of str to ReadResult, optional
        Reader metadata by table name: its ``file``, ``line_numbers`` (1-based line of each row,
        indexed by row label) and file-level ``problems`` are used and included.
    max_problems : int or None
        Keep at most this many problems (errors first), plus one summary problem counting the
        rest; None keeps all.
    depth_tolerance_m : float
        Depth differences below this [m] are rounding, not overlaps, gaps or overruns.
    scan_sum_tolerance_pct : float
        Mineral abundances of a scan row may exceed 100 wt% by this much [wt%].

    Returns
    -------
    list of Problem
        Errors first, then warnings, in table and line order.

    Notes
    -----
    Rules (ids in ``Problem.rule``): missing_column, non_numeric, missing_value,
    from_not_less_than_to,
    negative_depth, overlap, gap (warning), beyond_total_depth, no_collar, duplicate_hole,
    duplicate_key, duplicate_row, azimuth_range, dip_range, survey_depth_repeated,
    survey_order (warning), survey_beyond_total_depth (warning), no_survey (warning),
    dip_upward (warning),
    negative_value,
    percent_over_100, abundance_sum, total_depth, schedule_block_unknown (warning),
    period_range; plus the reader's file-level rules (empty_file, encoding, delimiter, ragged_row,
    ...).
    """
    sources = dict(sources or {})
    problems: list[Problem] = []
    for src in sources.values():
        problems.extend(getattr(src, "problems", []) or [])
    collars = tables.get("collars")
    collar_ids, total_depth = None, None
    if collars is not None and "hole_id" in collars.columns:
        collar_ids = set(collars["hole_id"].dropna().astype(str))
        if "total_depth_m" in collars.columns:
            td = pd.to_numeric(collars["total_depth_m"], errors="coerce")
            total_depth = td.groupby(collars["hole_id"].astype(str)).max()
    for name, frame in tables.items():
        if frame is None:
            continue
        src = sources.get(name)
        fatal = any(
            p.rule in FILE_LEVEL_FATAL and p.severity == ERROR
            for p in getattr(src, "problems", []) or []
        )
        if fatal and frame.shape[1] == 0:
            continue
        where = _Where(name, frame, src)
        problems.extend(
            _check_table(
                name,
                frame,
                where,
                collar_ids,
                total_depth,
                tables,
                depth_tolerance_m,
                scan_sum_tolerance_pct,
            )
        )
    return cap_problems(sort_problems(problems), max_problems)


def sort_problems(problems: list[Problem]) -> list[Problem]:
    """Errors first, then by table, line and rule (a stable, readable order)."""
    return sorted(
        problems,
        key=lambda p: (
            p.severity != ERROR,
            p.table,
            p.line if p.line is not None else 1 << 62,
            p.row if p.row is not None else -1,
            p.rule,
        ),
    )


def cap_problems(problems: list[Problem], max_problems: int | None) -> list[Problem]:
    """Keep the first ``max_problems`` and add one problem that counts and names the rest."""
    if max_problems is None or len(problems) <= max_problems:
        return list(problems)
    kept, rest = list(problems[:max_problems]), problems[max_problems:]
    n_err = sum(p.severity == ERROR for p in rest)
    rules = Counter(p.rule for p in rest).most_common(5)
    listed = ", ".join(f"{rule} ({n})" for rule, n in rules)
    message = (
        f"{len(rest)} more problems not listed ({n_err} errors, {len(rest) - n_err} warnings), "
        f"most often: {listed}; fix the listed ones first or raise max_problems"
    )
    kept.append(
        Problem(ERROR if n_err else WARNING, "more_problems", message, value=str(len(rest)))
    )
    return kept


def _check_table(name, frame, where, collar_ids, total_depth, tables, tol, scan_tol):
    out: list[Problem] = []
    required = required_columns(name)
    missing = [c for c in required if c not in frame.columns]
    for col in missing:
        close = difflib.get_close_matches(col, [str(c) for c in frame.columns], n=1, cutoff=0.5)
        hint = f"; did you mean '{close[0]}'? map it with a column map" if close else ""
        text = (
            f"{where.name} has no column '{col}', required for table '{name}'{hint} "
            f"(columns: {', '.join(map(str, frame.columns)) or 'none'})"
        )
        out.append(
            Problem(ERROR, "missing_column", text, table=name, file=where.file, line=1, column=col)
        )
    numeric = {}
    for col in frame.columns:
        col = str(col)
        if _is_numeric_name(col):
            values, bad_problems = _numeric(frame[col], col, where)
            out.extend(bad_problems)
            numeric[col] = values
    out.extend(_missing_keys(name, frame, where, numeric))
    out.extend(_duplicate_rows(frame, where))
    if name == "collars":
        out.extend(_check_collars(frame, where, numeric, tables))
    elif name == "surveys":
        out.extend(_check_surveys(frame, where, numeric, collar_ids, total_depth, tol))
    elif name == "blocks":
        out.extend(_duplicate_key(frame, where, "block_id"))
    elif name == "schedule":
        out.extend(_check_schedule(frame, where, numeric, tables))
    elif name == "plant_limits":
        out.extend(_duplicate_key(frame, where, "period"))
    elif all(c in frame.columns for c in glossary.INTERVAL_KEYS):
        out.extend(_check_intervals(frame, where, numeric, collar_ids, total_depth, tol))
        if name == "testwork":
            out.extend(_duplicate_key(frame, where, "sample_id"))
    if name not in NON_INTERVAL_TABLES or name == "blocks":
        out.extend(_check_values(frame, where, numeric))
    if name == "scan":
        out.extend(_check_scan_sum(frame, where, numeric, scan_tol))
    return out


def _is_numeric_name(col: str) -> bool:
    if col in TEXT_COLUMNS or col.endswith(("_censored", "_id", "_over_range")):
        return False
    return col in {"smc_axb", "period", "days"} or glossary.unit_of(col) != ""


def _numeric(series: pd.Series, col: str, where: _Where):
    if pd.api.types.is_bool_dtype(series.dtype):
        return series.astype(float), []
    if pd.api.types.is_numeric_dtype(series.dtype):
        return series.astype(float), []
    values = pd.to_numeric(series, errors="coerce")
    bad = values.isna() & series.notna() & (series.astype(str).str.strip() != "")
    out = []
    for label in series.index[bad.to_numpy()]:
        value = series[label]
        text = (
            f"{col} must be a number; got {str(value)!r} at {where.at(label)}; correct the value "
            f"or declare the lab code in the detection rule"
        )
        out.append(where.problem(ERROR, "non_numeric", label, col, value, text))
    return values.astype(float), out


def _missing_keys(name, frame, where, numeric):
    out = []
    keys = [
        c
        for c in ("hole_id", "from_m", "to_m", "depth_m", "block_id", "sample_id")
        if c in frame.columns and (c in required_columns(name) or c == "hole_id")
    ]
    if name in ("blocks", "schedule", "plant_limits"):
        keys = [c for c in keys if c != "hole_id"]
    for col in keys:
        values = numeric.get(col, frame[col])
        miss = values.isna()
        if col not in numeric:
            miss = miss | (frame[col].astype(str).str.strip() == "")
        for label in frame.index[miss.to_numpy()]:
            text = f"{col} is empty at {where.at(label)}; every row of '{name}' needs a {col}"
            out.append(where.problem(ERROR, "missing_value", label, col, "", text))
    return out


def _value_columns(frame) -> list:
    return [
        c
        for c in frame.columns
        if not str(c).endswith(("_censored", "_detection_limit", "_over_range"))
    ]


def _exact_duplicates(frame, keep="first") -> pd.Series:
    """Rows that repeat an earlier row exactly (all value columns), by 64-bit row hashes."""
    cols = _value_columns(frame)
    if frame.empty or not cols:
        return pd.Series(False, index=frame.index)
    hashed = pd.util.hash_pandas_object(frame[cols], index=False)
    candidates = hashed.duplicated(keep=False)
    out = pd.Series(False, index=frame.index)
    if candidates.any():  # confirm on the few candidate rows (hash collisions are possible)
        sub = frame.loc[candidates.to_numpy(), cols]
        out.loc[sub.index] = sub.duplicated(keep=keep).to_numpy()
    return out


def _duplicate_rows(frame, where):
    value_cols = _value_columns(frame)
    if frame.empty or not value_cols:
        return []
    dup = _exact_duplicates(frame)
    out = []
    if dup.any():
        involved = frame.loc[_exact_duplicates(frame, keep=False).to_numpy(), value_cols]
        hashed = pd.util.hash_pandas_object(involved, index=False)
        first: dict[int, object] = {}
        for label, key in hashed.items():
            first.setdefault(int(key), label)
        for label in frame.index[dup.to_numpy()]:
            original = first[int(hashed[label])]
            first_line = where.line(original)
            first_at = f"line {first_line}" if first_line is not None else f"row {original}"
            text = f"row at {where.at(label)} repeats {first_at} exactly; delete the duplicate row"
            out.append(where.problem(ERROR, "duplicate_row", label, None, None, text))
    return out


def _duplicate_key(frame, where, key):
    if key not in frame.columns:
        return []
    dup = frame[key].notna() & frame.duplicated(subset=[key], keep="first")
    dup &= ~_exact_duplicates(frame)  # exact repeats are reported once, as duplicate_row
    out = []
    for label in frame.index[dup.to_numpy()]:
        value = frame.loc[label, key]
        text = (
            f"{key} {value!s} appears more than once in '{where.table}' ({where.at(label)}); "
            f"each {key} must be unique"
        )
        out.append(where.problem(ERROR, "duplicate_key", label, key, value, text))
    return out


def _check_collars(frame, where, numeric, tables):
    out = []
    if "hole_id" in frame.columns:
        dup = frame["hole_id"].notna() & frame.duplicated(subset=["hole_id"], keep="first")
        dup &= ~_exact_duplicates(frame)
        for label in frame.index[dup.to_numpy()]:
            hole = frame.loc[label, "hole_id"]
            text = (
                f"hole {hole} has more than one collar ({where.at(label)}); keep one collar row "
                f"per hole"
            )
            out.append(where.problem(ERROR, "duplicate_hole", label, "hole_id", hole, text))
    for col in ("easting_m", "northing_m", "elevation_m", "total_depth_m"):
        if col in numeric:
            for label in frame.index[numeric[col].isna().to_numpy()]:
                text = f"collar {col} is empty at {where.at(label)}; the hole cannot be located"
                out.append(where.problem(ERROR, "missing_value", label, col, "", text))
    if "total_depth_m" in numeric:
        td = numeric["total_depth_m"]
        for label in frame.index[(td <= 0).to_numpy()]:
            text = f"total_depth_m must be greater than 0; got {td[label]:g} at {where.at(label)}"
            out.append(where.problem(ERROR, "total_depth", label, "total_depth_m", td[label], text))
    surveys = tables.get("surveys")
    if surveys is not None and "hole_id" in surveys.columns and "hole_id" in frame.columns:
        surveyed = set(surveys["hole_id"].dropna().astype(str))
        holes = frame["hole_id"].dropna().astype(str)
        for label, hole in holes[~holes.duplicated()].items():
            if hole not in surveyed:
                text = (
                    f"hole {hole} ({where.at(label)}) has no downhole survey; it is treated as "
                    f"vertical"
                )
                out.append(where.problem(WARNING, "no_survey", label, "hole_id", hole, text))
    return out


def _no_collar(frame, where, collar_ids, table_desc):
    out = []
    if collar_ids is None or "hole_id" not in frame.columns:
        return out
    holes = frame["hole_id"].astype(str)
    orphan = frame["hole_id"].notna() & ~holes.isin(collar_ids)
    for label in frame.index[orphan.to_numpy()]:
        hole = holes[label]
        text = (
            f"hole {hole} at {where.at(label)} has no collar; add it to the collars table or "
            f"correct the hole id"
        )
        close = difflib.get_close_matches(hole, sorted(collar_ids), n=1, cutoff=0.8)
        if close:
            text += f" (did you mean '{close[0]}'?)"
        out.append(where.problem(ERROR, "no_collar", label, "hole_id", hole, text))
    return out


def _check_surveys(frame, where, numeric, collar_ids, total_depth, tol):
    out = []
    if "azimuth_deg" in numeric:
        az = numeric["azimuth_deg"]
        for label in frame.index[((az < 0) | (az >= 360)).to_numpy()]:
            text = f"azimuth_deg must be in [0, 360); got {az[label]:g} at {where.at(label)}"
            out.append(where.problem(ERROR, "azimuth_range", label, "azimuth_deg", az[label], text))
    if "dip_deg" in numeric:
        dip = numeric["dip_deg"]
        for label in frame.index[((dip < -90) | (dip > 90)).to_numpy()]:
            text = (
                f"dip_deg must be in [-90, 90] (negative downward); got {dip[label]:g} at "
                f"{where.at(label)}"
            )
            out.append(where.problem(ERROR, "dip_range", label, "dip_deg", dip[label], text))
    out.extend(_no_collar(frame, where, collar_ids, "survey"))
    if "dip_deg" in numeric and "hole_id" in frame.columns:
        # every station of a hole pointing upward usually means a positive-down dip convention
        dip = numeric["dip_deg"]
        upward = (dip > 0).groupby(frame["hole_id"].astype(str)).transform("all")
        first = upward & ~frame["hole_id"].astype(str).duplicated()
        for label in frame.index[first.to_numpy()]:
            hole = frame.loc[label, "hole_id"]
            text = (
                f"every survey of hole {hole} has a positive (upward) dip, e.g. {dip[label]:g} "
                f"at {where.at(label)}; geomet reads negative dips as downward: negate the dips "
                f"if the file records downward dips as positive"
            )
            out.append(where.problem(WARNING, "dip_upward", label, "dip_deg", dip[label], text))
    if "depth_m" not in numeric or "hole_id" not in frame.columns:
        return out
    depth = numeric["depth_m"]
    for label in frame.index[(depth < 0).to_numpy()]:
        text = f"survey depth_m must be >= 0; got {depth[label]:g} at {where.at(label)}"
        out.append(where.problem(ERROR, "negative_depth", label, "depth_m", depth[label], text))
    hole = frame["hole_id"].astype(str)
    work = pd.DataFrame({"hole": hole, "depth": depth}).dropna()
    prev = work.groupby("hole", sort=False)["depth"].cummax().groupby(work["hole"]).shift()
    repeated = (
        work.duplicated(subset=["hole", "depth"], keep="first")
        & ~_exact_duplicates(frame).loc[work.index]
    )
    for label in work.index[repeated.to_numpy()]:
        text = (
            f"survey depth {depth[label]:g} m is given twice for hole {hole[label]} "
            f"({where.at(label)}); keep one survey per depth"
        )
        out.append(
            where.problem(ERROR, "survey_depth_repeated", label, "depth_m", depth[label], text)
        )
    backwards = (work["depth"] < prev) & ~repeated
    for label in work.index[backwards.to_numpy()]:
        text = (
            f"survey depths of hole {hole[label]} do not increase down the file: "
            f"{depth[label]:g} m at {where.at(label)} follows {prev[label]:g} m; surveys are "
            f"sorted by depth before use"
        )
        out.append(where.problem(WARNING, "survey_order", label, "depth_m", depth[label], text))
    if total_depth is not None:
        td = hole.map(total_depth).astype(float)
        over = depth > td + tol
        for label in frame.index[over.to_numpy()]:
            text = (
                f"survey at {depth[label]:g} m is below the total depth {td[label]:g} m of hole "
                f"{hole[label]} ({where.at(label)}); check the collar total_depth_m"
            )
            out.append(
                where.problem(
                    WARNING, "survey_beyond_total_depth", label, "depth_m", depth[label], text
                )
            )
    return out


def _check_intervals(frame, where, numeric, collar_ids, total_depth, tol):
    out = []
    f, t = numeric.get("from_m"), numeric.get("to_m")
    if f is None or t is None:
        return out
    hole = frame["hole_id"].astype(str)
    bad_order = f >= t
    for label in frame.index[bad_order.to_numpy()]:
        text = (
            f"from_m must be less than to_m; got from_m={f[label]:g}, to_m={t[label]:g} at "
            f"{where.at(label)}"
        )
        out.append(where.problem(ERROR, "from_not_less_than_to", label, "from_m", f[label], text))
    negative = f < 0
    for label in frame.index[negative.to_numpy()]:
        text = f"from_m must be >= 0; got {f[label]:g} at {where.at(label)}"
        out.append(where.problem(ERROR, "negative_depth", label, "from_m", f[label], text))
    out.extend(_no_collar(frame, where, collar_ids, "interval"))
    if total_depth is not None:
        td = hole.map(total_depth).astype(float)
        over = t > td + tol
        for label in frame.index[over.to_numpy()]:
            text = (
                f"interval {f[label]:g}-{t[label]:g} m goes beyond the total depth "
                f"{td[label]:g} m of hole {hole[label]} at {where.at(label)}; correct the "
                f"interval or the collar total_depth_m"
            )
            out.append(where.problem(ERROR, "beyond_total_depth", label, "to_m", t[label], text))
    # overlaps and gaps: sort by hole and from, compare with the deepest bottom so far
    ok = f.notna() & t.notna() & ~bad_order & frame["hole_id"].notna()
    exact_dup = _exact_duplicates(frame)
    work = pd.DataFrame({"hole": hole[ok], "f": f[ok], "t": t[ok]})
    work = work.loc[~exact_dup[ok]]
    work = work.sort_values(["hole", "f", "t"], kind="stable")
    prev_to = work.groupby("hole", sort=False)["t"].cummax().groupby(work["hole"]).shift()
    prev_label = pd.Series(work.index, index=work.index).groupby(work["hole"]).shift()
    overlap = work["f"] < prev_to - tol
    gap = work["f"] > prev_to + tol
    for label in work.index[overlap.to_numpy()]:
        other = int(prev_label[label])
        other_line = where.line(other)
        other_at = f"line {other_line}" if other_line is not None else f"row {other}"
        text = (
            f"interval {f[label]:g}-{t[label]:g} m at {where.at(label)} overlaps the interval "
            f"ending at {prev_to[label]:g} m ({other_at}); intervals of a hole must not overlap"
        )
        out.append(where.problem(ERROR, "overlap", label, "from_m", f[label], text))
    if where.table in SPARSE_INTERVAL_TABLES:
        gap = gap & False  # samples taken here and there: gaps between them are expected
    for label in work.index[gap.to_numpy()]:
        text = (
            f"gap from {prev_to[label]:g} to {f[label]:g} m in hole {hole[label]} before "
            f"{where.at(label)}; unsampled core is treated as missing"
        )
        out.append(where.problem(WARNING, "gap", label, "from_m", f[label], text))
    return out


def _check_values(frame, where, numeric):
    out = []
    for col, values in numeric.items():
        if col in ("from_m", "to_m", "depth_m", "x_m", "y_m", "z_m", "period"):
            continue
        unit = glossary.unit_of(col)
        if unit in NON_NEGATIVE_UNITS:
            neg = values < 0
            for label in frame.index[neg.to_numpy()]:
                text = f"{col} must not be negative; got {values[label]:g} at {where.at(label)}"
                out.append(where.problem(ERROR, "negative_value", label, col, values[label], text))
        if unit == "%":
            over = values > 100
            for label in frame.index[over.to_numpy()]:
                text = (
                    f"{col} is a percentage and cannot exceed 100; got {values[label]:g} at "
                    f"{where.at(label)}; check the units map (ppm read as %?)"
                )
                out.append(
                    where.problem(ERROR, "percent_over_100", label, col, values[label], text)
                )
    return out


def _check_scan_sum(frame, where, numeric, tol):
    cols = [c for c in glossary.SCANNED_MINERAL_COLUMNS if c in numeric]
    if not cols:
        return []
    total = pd.concat([numeric[c] for c in cols], axis=1).sum(axis=1, min_count=1)
    over = total > 100.0 + tol
    out = []
    for label in frame.index[over.to_numpy()]:
        text = (
            f"mineral abundances sum to {total[label]:.1f} wt% at {where.at(label)}, over 100 wt% "
            f"(tolerance {tol:g}); check the scanner export"
        )
        out.append(where.problem(ERROR, "abundance_sum", label, None, total[label], text))
    return out


def _check_schedule(frame, where, numeric, tables):
    out = _duplicate_key(frame, where, "block_id")
    if "period" in numeric:
        period = numeric["period"]
        bad = (period < 1) | (period.notna() & (period != period.round()))
        for label in frame.index[bad.to_numpy()]:
            text = f"period must be a whole number >= 1; got {period[label]:g} at {where.at(label)}"
            out.append(where.problem(ERROR, "period_range", label, "period", period[label], text))
    blocks = tables.get("blocks")
    if blocks is not None and "block_id" in blocks.columns and "block_id" in frame.columns:
        known = set(blocks["block_id"].dropna().astype(str))
        ids = frame["block_id"].astype(str)
        unknown = frame["block_id"].notna() & ~ids.isin(known)
        for label in frame.index[unknown.to_numpy()]:
            text = (
                f"scheduled block {ids[label]} at {where.at(label)} is not in the block model; "
                f"it is ignored"
            )
            out.append(
                where.problem(
                    WARNING, "schedule_block_unknown", label, "block_id", ids[label], text
                )
            )
    return out


def exclude_problem_rows(
    tables: Mapping[str, pd.DataFrame], problems: list[Problem]
) -> dict[str, pd.DataFrame]:
    """Drop the rows that error problems point at.

    Parameters
    ----------
    tables : mapping of str to pandas.DataFrame
        The tables that were validated.
    problems : list of Problem
        Problems from :func:`validate_tables` (call it with ``max_problems=None`` so that no
        error is left out). Warnings and problems without a row are ignored.

    Returns
    -------
    dict of str to pandas.DataFrame
        Every table, without its error rows (index labels kept).
    """
    drop: dict[str, set] = {}
    for p in problems:
        if p.severity == ERROR and p.row is not None and p.table:
            drop.setdefault(p.table, set()).add(p.row)
    out = {}
    for name, frame in tables.items():
        labels = drop.get(name)
        if labels and frame is not None:
            mask = frame.index.isin(list(labels))
            out[name] = frame.loc[~mask]
        else:
            out[name] = frame
    return out
