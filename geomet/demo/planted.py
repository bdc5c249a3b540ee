"""The few realistic data errors planted in the demo files, for validation to find.

Exactly four, each recorded with its table, hole, file line (1-based, header = line 1),
column and the validation rule that must report it. Nothing else in the demo is wrong.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

# Rule ids as reported by geomet.drillholes.validation.
RULE_OVERLAP = "overlap"
RULE_AZIMUTH = "azimuth_range"
RULE_DUPLICATE = "duplicate_row"
RULE_BEYOND_DEPTH = "beyond_total_depth"


def _pick_hole(collars: pd.DataFrame, rng: np.random.Generator, avoid: set[str]) -> str:
    """A random hole not used yet (any hole once every hole has been used)."""
    holes = [h for h in collars["hole_id"] if h not in avoid] or list(collars["hole_id"])
    return str(holes[int(rng.integers(0, len(holes)))])


def _contiguous_rows(a: pd.DataFrame, hole: str) -> np.ndarray:
    """Rows of ``hole`` whose from_m equals the previous row's to_m."""
    idx = np.flatnonzero(a["hole_id"].to_numpy() == hole)
    prev_to = a["to_m"].to_numpy()[idx[:-1]]
    this_from = a["from_m"].to_numpy()[idx[1:]]
    return idx[1:][np.isclose(prev_to, this_from)]


def plant_errors(
    tables: dict[str, pd.DataFrame], rng: np.random.Generator
) -> tuple[dict[str, pd.DataFrame], list[dict]]:
    """Return copies of the canonical tables with the four planted errors, and their list.

    Parameters
    ----------
    tables : dict of DataFrame
        Clean canonical ``collars``, ``surveys``, ``assays``, ``scan``, ``lithology`` in
        file order (the row order they will be written in).
    rng : numpy.random.Generator

    Returns
    -------
    tables : dict of DataFrame
        Copies of the modified tables (others passed through unchanged).
    errors : list of dict
        table, file, hole_id, line, column, rule, description.
    """
    out = dict(tables)
    errors: list[dict] = []
    used: set[str] = set()

    # 1. an assay interval overlapping the previous one (from_m typed 1 m too shallow)
    a = tables["assays"].copy()
    hole = _pick_hole(tables["collars"], rng, used)
    contiguous = _contiguous_rows(a, hole)
    if len(contiguous) == 0:  # a hole of one or two samples: take the first that has a pair
        hole = next(h for h in tables["collars"]["hole_id"] if len(_contiguous_rows(a, h)))
        contiguous = _contiguous_rows(a, hole)
    used.add(hole)
    r = int(contiguous[len(contiguous) // 2])
    a.loc[r, "from_m"] = round(float(a.loc[r, "from_m"]) - 1.0, 2)
    out["assays"] = a
    errors.append(
        {
            "table": "assays",
            "file": "assays.csv",
            "hole_id": hole,
            "line": r + 2,
            "column": "from_m",
            "rule": RULE_OVERLAP,
            "description": "from_m 1 m shallower than the previous sample's to_m",
        }
    )

    # 2. a downhole survey station with azimuth 365
    s = tables["surveys"].copy()
    hole = _pick_hole(tables["collars"], rng, used)
    used.add(hole)
    idx = np.flatnonzero(s["hole_id"].to_numpy() == hole)
    r = int(idx[min(2, len(idx) - 1)])
    s.loc[r, "azimuth_deg"] = 365.0
    out["surveys"] = s
    errors.append(
        {
            "table": "surveys",
            "file": "surveys.csv",
            "hole_id": hole,
            "line": r + 2,
            "column": "azimuth_deg",
            "rule": RULE_AZIMUTH,
            "description": "downhole station azimuth 365 (outside 0-360)",
        }
    )

    # 3. a scan row delivered twice
    sc = tables["scan"]
    hole = _pick_hole(tables["collars"], rng, used)
    used.add(hole)
    idx = np.flatnonzero(sc["hole_id"].to_numpy() == hole)
    r = int(idx[len(idx) // 3])
    sc = pd.concat([sc.iloc[: r + 1], sc.iloc[[r]], sc.iloc[r + 1 :]], ignore_index=True)
    out["scan"] = sc
    errors.append(
        {
            "table": "scan",
            "file": "scan.csv",
            "hole_id": hole,
            "line": r + 3,
            "column": "",
            "rule": RULE_DUPLICATE,
            "description": "scan row repeated (same hole, from_m, to_m and values)",
        }
    )

    # 4. a logged interval running past the end of the hole
    lt = tables["lithology"].copy()
    hole = _pick_hole(tables["collars"], rng, used)
    idx = np.flatnonzero(lt["hole_id"].to_numpy() == hole)
    r = int(idx[-1])
    td = float(tables["collars"].set_index("hole_id").loc[hole, "total_depth_m"])
    lt.loc[r, "to_m"] = round(td + 6.5, 2)
    out["lithology"] = lt
    errors.append(
        {
            "table": "lithology",
            "file": "lithology.csv",
            "hole_id": hole,
            "line": r + 2,
            "column": "to_m",
            "rule": RULE_BEYOND_DEPTH,
            "description": f"last interval logged to {td + 6.5:.2f} m; hole ends at {td:.2f} m",
        }
    )
    return out, errors
