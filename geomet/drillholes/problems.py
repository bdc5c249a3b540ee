"""A problem found in input data, in the one shape every check reports."""

from __future__ import annotations

from dataclasses import asdict, dataclass

import pandas as pd

ERROR = "error"
WARNING = "warning"


@dataclass(frozen=True)
class Problem:
    """One finding: what rule was broken, where (file, line, hole, column) and by what value."""

    severity: str  # "error" or "warning"
    rule: str  # short rule id, e.g. "from_not_less_than_to"
    message: str  # the full sentence a user acts on
    table: str = ""  # canonical table name, e.g. "assays"
    file: str = ""
    line: int | None = None  # 1-based line in the source file (header is line 1)
    hole_id: str | None = None
    column: str | None = None
    value: str | None = None
    row: int | None = None  # index label of the offending row in the table (used to exclude it)


def problems_frame(problems: list[Problem]) -> pd.DataFrame:
    """Problems as a table, errors first, in a stable order."""
    cols = list(Problem.__dataclass_fields__)
    if not problems:
        return pd.DataFrame(columns=cols)
    frame = pd.DataFrame([asdict(p) for p in problems], columns=cols)
    frame["_sev"] = (frame["severity"] != ERROR).astype(int)
    frame["_last"] = (frame["rule"] == "more_problems").astype(int)  # the cap's summary row
    frame = frame.sort_values(["_last", "_sev", "table", "line"], kind="stable", na_position="last")
    return frame.drop(columns=["_sev", "_last"]).reset_index(drop=True)
