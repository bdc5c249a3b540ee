"""Numeric column access with a clear error for text left in numeric columns."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from geomet.errors import InputDataError

MAX_SHOWN = 5


def numeric_columns(df: pd.DataFrame, columns: Sequence[str]) -> np.ndarray:
    """Columns of ``df`` as a float array (rows x columns).

    Raises
    ------
    geomet.errors.InputDataError
        When a column holds values that are not numbers (e.g. ``"<0.01"`` left unread), naming
        the column, the first offending rows and values.
    """
    try:
        return df[list(columns)].to_numpy(dtype=float)
    except (TypeError, ValueError):
        pass
    problems = []
    for col in columns:
        converted = pd.to_numeric(df[col], errors="coerce")
        bad = converted.isna() & df[col].notna()
        if bad.any():
            mask = bad.to_numpy()
            rows = df.index[mask][:MAX_SHOWN]
            values = df[col].to_numpy()[mask][:MAX_SHOWN]
            shown = ", ".join(f"row {r}: {v!r}" for r, v in zip(rows, values, strict=True))
            problems.append(f"column {col!r} has {int(bad.sum())} non-numeric value(s) ({shown})")
    msg = (
        "; ".join(problems)
        + "; read tables with geomet.io.readers.read_table, which substitutes censored values"
    )
    raise InputDataError(msg)
