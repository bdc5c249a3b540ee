"""Censored laboratory values: below detection, over range, and lab text codes.

Assay files report a value below the lower detection limit as ``<0.01`` or as a negative number
(``-0.01`` meaning "below 0.01"), a value above the upper limit of the method as ``>10``, and
samples that could not be analysed as text codes (``BDL``, ``IS`` insufficient sample, ``NS`` not
sampled, ``LNR`` listed not received...). :func:`parse_censored` turns one column of such text into
numbers by a stated substitution rule (:class:`DetectionRule`) and keeps, beside the number, a flag
and the detection limit, so that a later method that handles censored data properly can use them.

Missing stays missing (NaN), never zero.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Literal

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

BELOW_DETECTION = "below_detection"
MISSING = "missing"
CODE_MEANINGS = (BELOW_DETECTION, MISSING)

RULES = ("half_limit", "limit", "fraction", "zero", "missing")

# Text codes seen in assay certificates and logging sheets, upper-cased, with their meaning.
# geomet's own table (common practice in the trade; extend or override it per laboratory with
# ``DetectionRule(text_codes=...)``).
DEFAULT_TEXT_CODES: dict[str, str] = {
    "BDL": BELOW_DETECTION,  # below detection limit
    "BD": BELOW_DETECTION,
    "ND": BELOW_DETECTION,  # not detected
    "<DL": BELOW_DETECTION,
    "<LOD": BELOW_DETECTION,
    "LOD": BELOW_DETECTION,
    "TR": BELOW_DETECTION,  # trace
    "TRACE": BELOW_DETECTION,
    "IS": MISSING,  # insufficient sample
    "NS": MISSING,  # not sampled
    "LNR": MISSING,  # listed, not received
    "NR": MISSING,  # not received
    "NA": MISSING,  # not analysed / not available
    "N/A": MISSING,
    "NAN": MISSING,
    "NULL": MISSING,
    "-": MISSING,
    "--": MISSING,
    "X": MISSING,  # sample lost
    "": MISSING,
}

# Numeric placeholders that mean "no value" in many legacy databases (common practice).
DEFAULT_MISSING_VALUES: tuple[float, ...] = (-99.0, -999.0, -9999.0, -99999.0)

_NUMBER = r"[+-]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][+-]?\d+)?"
_PATTERN = re.compile(rf"^\s*(?P<op><=|>=|<|>)?\s*(?P<num>{_NUMBER})\s*$")


@dataclass(frozen=True)
class DetectionRule:
    """How censored and coded laboratory values become numbers.

    Parameters
    ----------
    rule : {"half_limit", "limit", "fraction", "zero", "missing"}
        Substitute for a value below detection: half the detection limit (default, common
        practice), the limit itself, ``fraction`` × limit, zero, or NaN.
    fraction : float
        The fraction of the limit used by ``rule="fraction"`` [-], in (0, 1].
    text_codes : dict of str to {"below_detection", "missing"}
        Lab text codes (compared upper-cased, spaces stripped) and their meaning. Replaces the
        default table :data:`DEFAULT_TEXT_CODES` when given; use
        ``{**DEFAULT_TEXT_CODES, "XYZ": "missing"}`` to extend it.
    default_limits : dict of str to float
        Detection limit by canonical column name [unit of the column], used for a text code that
        means "below detection" and carries no number. Without it the smallest limit reported
        elsewhere in the same column is used.
    missing_values : tuple of float
        Numbers that mean "no value" (e.g. -99, -999), read as NaN rather than as a negative
        below-detection value.
    negative_is_below_detection : bool
        Read a negative number as "below the detection limit |x|" (default True).

    Notes
    -----
    Substitution biases means, variances and correlations, most where a large share of values is
    censored (Helsel 2012; Reimann et al. 2008, §2.2). The flag and detection-limit columns kept by
    :func:`parse_censored` allow a better method later (e.g. Kaplan–Meier or regression on order
    statistics).

    References
    ----------
    Reimann, C., Filzmoser, P., Garrett, R. G., Dutter, R. (2008). *Statistical Data Analysis
    Explained: Applied Environmental Statistics with R*. Wiley. §2.2. DOI:10.1002/9780470987605
    (DOI from memory)
    Helsel, D. R. (2012). *Statistics for Censored Environmental Data Using Minitab and R*
    (2nd ed. of *Nondetects and Data Analysis*, 2005). Wiley. DOI:10.1002/9781118162729 (DOI from
    memory)
    """

    rule: Literal["half_limit", "limit", "fraction", "zero", "missing"] = "half_limit"
    fraction: float = 0.5
    text_codes: dict[str, str] = field(default_factory=lambda: dict(DEFAULT_TEXT_CODES))
    default_limits: dict[str, float] = field(default_factory=dict)
    missing_values: tuple[float, ...] = DEFAULT_MISSING_VALUES
    negative_is_below_detection: bool = True

    def __post_init__(self):
        if self.rule not in RULES:
            message = f"detection rule must be one of {', '.join(RULES)}; got {self.rule!r}"
            raise InputDataError(message)
        if not (0.0 < float(self.fraction) <= 1.0):
            message = f"detection fraction must be in (0, 1]; got {self.fraction!r}"
            raise InputDataError(message)
        bad = {k: v for k, v in self.text_codes.items() if v not in CODE_MEANINGS}
        if bad:
            code, meaning = next(iter(bad.items()))
            message = (
                f"text code {code!r} has meaning {meaning!r}; a code must mean "
                f"'{BELOW_DETECTION}' or '{MISSING}'"
            )
            raise InputDataError(message)
        for column, limit in self.default_limits.items():
            if not (np.isfinite(limit) and limit > 0):
                message = f"default detection limit for {column} must be > 0; got {limit!r}"
                raise InputDataError(message)

    def substitute(self, limit):
        """Return the number that replaces a value below ``limit`` under this rule.

        Parameters
        ----------
        limit : float or numpy.ndarray
            Detection limit [unit of the column].

        Returns
        -------
        float or numpy.ndarray
            The substituted value (NaN for ``rule="missing"``).

        Examples
        --------
        >>> DetectionRule().substitute(0.01)
        0.005
        >>> DetectionRule(rule="fraction", fraction=0.25).substitute(0.2)
        0.05
        """
        limit = np.asarray(limit, dtype=float)
        if self.rule == "half_limit":
            out = 0.5 * limit
        elif self.rule == "limit":
            out = limit.copy()
        elif self.rule == "fraction":
            out = float(self.fraction) * limit
        elif self.rule == "zero":
            out = np.where(np.isnan(limit), np.nan, 0.0)
        else:
            out = np.full_like(limit, np.nan)
        return out.item() if out.ndim == 0 else out


@dataclass
class CensoredColumn:
    """What :func:`parse_censored` found in one column (all arrays aligned with the input)."""

    values: pd.Series  # substituted numbers (float)
    censored: pd.Series  # True where the value was below detection or over range
    detection_limit: pd.Series  # the limit that applies where censored, NaN elsewhere
    over_range: pd.Series  # True where the value was reported as above the upper limit (">10")
    non_numeric: pd.Series  # True where the text was neither a number nor a known code
    counts: dict[str, int]  # below_detection, over_range, text_missing, missing_value, non_numeric

    @property
    def any_censored(self) -> bool:
        """True when at least one value was censored (the flag columns are then worth adding)."""
        return bool(self.censored.any())


def parse_censored(
    values, *, column: str = "", rule: DetectionRule | None = None
) -> CensoredColumn:
    """Turn a column of lab results (numbers or text) into numbers by a detection rule.

    Parameters
    ----------
    values : pandas.Series or array-like
        Raw cells: numbers, or text such as ``"0.35"``, ``"<0.01"``, ``"-0.01"``, ``">10"``,
        ``"BDL"``, ``"IS"``. A decimal comma (``"0,35"``) is read as a decimal point.
    column : str
        Canonical column name, used to look up ``rule.default_limits``.
    rule : DetectionRule, optional
        Substitution rule; default half the detection limit.

    Returns
    -------
    CensoredColumn
        Substituted values and, aligned with them, the censored flag, detection limit,
        over-range flag and a non-numeric flag (those cells become NaN).

    Notes
    -----
    For a value below detection limit :math:`L` the substitute is :math:`fL` with
    :math:`f = 1/2` (``half_limit``), 1 (``limit``), the given fraction, or 0; ``missing``
    gives NaN.
    Over-range values (``>U``) keep :math:`U` and are flagged: the true value is at least U.

    References
    ----------
    Reimann, C., Filzmoser, P., Garrett, R. G., Dutter, R. (2008). *Statistical Data Analysis
    Explained*. Wiley, §2.2.

    Examples
    --------
    >>> out = parse_censored(["0.5", "<0.01", "-0.02", ">10", "IS"], column="cu_pct")
    >>> out.values.tolist()[:4], bool(np.isnan(out.values.iloc[4]))
    ([0.5, 0.005, 0.01, 10.0], True)
    >>> out.censored.tolist()
    [False, True, True, True, False]
    """
    rule = rule or DetectionRule()
    series = values if isinstance(values, pd.Series) else pd.Series(values)
    index = series.index
    n = len(series)
    out = np.full(n, np.nan)
    censored = np.zeros(n, dtype=bool)
    limit = np.full(n, np.nan)
    over = np.zeros(n, dtype=bool)
    non_numeric = np.zeros(n, dtype=bool)
    text_missing = np.zeros(n, dtype=bool)
    coded_below = np.zeros(n, dtype=bool)

    if pd.api.types.is_numeric_dtype(series.dtype) and not pd.api.types.is_bool_dtype(series.dtype):
        numbers = series.to_numpy(dtype=float, na_value=np.nan).copy()
        is_num = ~np.isnan(numbers)
    else:
        obj = series.astype(object)
        numbers = pd.to_numeric(obj, errors="coerce").to_numpy(dtype=float, na_value=np.nan).copy()
        # cells that are real numbers already (xlsx) or plain numeric text
        is_num = ~np.isnan(numbers)
        rest = ~is_num & obj.notna().to_numpy()
        if rest.any():
            text = obj[rest].astype(str).str.strip()
            match = text.str.extract(_PATTERN)
            has_num = match["num"].notna().to_numpy()
            num = pd.to_numeric(match["num"].str.replace(",", ".", regex=False), errors="coerce")
            op = match["op"].fillna("").to_numpy()
            rest_idx = np.flatnonzero(rest)
            # "<x" and "<=x": below detection x
            below = has_num & np.isin(op, ("<", "<="))
            above = has_num & np.isin(op, (">", ">="))
            plain = has_num & (op == "")
            num_arr = num.to_numpy(dtype=float, na_value=np.nan)
            numbers[rest_idx[plain]] = num_arr[plain]
            is_num[rest_idx[plain]] = True
            idx_b = rest_idx[below]
            censored[idx_b] = True
            limit[idx_b] = np.abs(num_arr[below])
            idx_a = rest_idx[above]
            over[idx_a] = True
            censored[idx_a] = True
            limit[idx_a] = num_arr[above]
            out[idx_a] = num_arr[above]
            # text codes
            codes = {k.strip().upper(): v for k, v in rule.text_codes.items()}
            upper = text[~has_num].str.upper().str.replace(" ", "", regex=False)
            meaning = upper.map(codes)
            idx_t = rest_idx[~has_num]
            m = meaning.to_numpy(dtype=object)
            text_missing[idx_t[m == MISSING]] = True
            coded_below[idx_t[m == BELOW_DETECTION]] = True
            non_numeric[idx_t[pd.isna(m)]] = True

    # plain numbers: missing placeholders, negatives = below detection |x|
    missing_value = is_num & np.isin(numbers, np.asarray(rule.missing_values, dtype=float))
    negative = is_num & ~missing_value & (numbers < 0) & rule.negative_is_below_detection
    plain_ok = is_num & ~missing_value & ~negative
    out[plain_ok] = numbers[plain_ok]
    censored[negative] = True
    limit[negative] = -numbers[negative]

    if coded_below.any():
        lim = rule.default_limits.get(column)
        if lim is None:
            seen = limit[censored & ~over]
            lim = float(np.nanmin(seen)) if seen.size and np.isfinite(seen).any() else np.nan
        censored[coded_below] = True
        limit[coded_below] = lim

    below_mask = censored & ~over
    out[below_mask] = rule.substitute(limit[below_mask])
    counts = {
        "below_detection": int(below_mask.sum()),
        "over_range": int(over.sum()),
        "text_missing": int(text_missing.sum()),
        "missing_value": int(missing_value.sum()),
        "non_numeric": int(non_numeric.sum()),
    }
    return CensoredColumn(
        values=pd.Series(out, index=index, name=series.name),
        censored=pd.Series(censored, index=index, name=f"{column}_censored"),
        detection_limit=pd.Series(limit, index=index, name=f"{column}_detection_limit"),
        over_range=pd.Series(over, index=index, name=f"{column}_over_range"),
        non_numeric=pd.Series(non_numeric, index=index),
        counts=counts,
    )


def censored_columns(columns) -> list[str]:
    """Names of the censored-value helper columns in ``columns``.

    These end in ``_censored``, ``_detection_limit`` or ``_over_range``.
    """
    suffixes = ("_censored", "_detection_limit", "_over_range")
    return [c for c in columns if str(c).endswith(suffixes)]
