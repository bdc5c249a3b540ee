"""Which table columns feed the forecast models, and how missing optional ones are filled.

Copper sulfides and pyrite come preferably from the normative minerals (``norm_<mineral>_pct``,
balanced on the assays), else from the scanned abundance (``<mineral>_pct``). Acid-consuming
gangue minerals come preferably from the scan, else from the normative minerals. Missing clay
or group columns are an error (the mineralogy step makes them); missing ``cu_asol_pct`` counts
as no oxide copper, and ``oxide_ratio_frac`` is computed when absent.
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np
import pandas as pd

from geomet.errors import InputDataError
from geomet.forecast.acid import GANGUE_ACID_MINERALS
from geomet.forecast.flotation import COPPER_MINERAL_FORMULAS
from geomet.forecast.hardness import DEFAULT_HARDNESS_COEFFICIENTS

COPPER_MINERALS = tuple(COPPER_MINERAL_FORMULAS)

#: Columns every forecast needs (group and index columns of docs/contracts.md).
REQUIRED_COLUMNS = (
    "cu_pct",
    "au_gpt",
    "clay_swelling_pct",
    "clay_kaolin_pct",
    "white_mica_illite_pct",
    "clay_severity_idx",
    "clay_total_pct",
)

HARDNESS_FEATURES = tuple(
    sorted({c for coefs in DEFAULT_HARDNESS_COEFFICIENTS.values() for c in coefs} - {"intercept"})
)


def _pick(table, names):
    for name in names:
        if name in table:
            return np.asarray(table[name], dtype=float)
    return None


def resolve_inputs(table: pd.DataFrame | Mapping, *, where: str = "table") -> dict[str, np.ndarray]:
    """Collect the model inputs of every row as float arrays under canonical names.

    Parameters
    ----------
    table : DataFrame or mapping of column -> array
        Composites, blocks or testwork samples with the mineralogy columns.
    where : str, keyword-only
        Table name for error messages.

    Returns
    -------
    dict
        Canonical name -> float ndarray: the :data:`REQUIRED_COLUMNS`, ``cu_asol_pct``,
        ``oxide_ratio_frac``, hardness features, ``<copper mineral>_pct``, ``pyrite_pct`` and
        the gangue acid minerals ``<mineral>_pct`` (zeros where no source column exists).
    """
    columns = table.columns if isinstance(table, pd.DataFrame) else list(table)
    missing = [c for c in (*REQUIRED_COLUMNS, *HARDNESS_FEATURES) if c not in columns]
    if missing:
        msg = (
            f"{where}: forecasts need columns {missing}, which are missing "
            "(the mineralogy step adds the group and index columns of docs/contracts.md)"
        )
        raise InputDataError(msg)
    out = {c: np.asarray(table[c], dtype=float) for c in (*REQUIRED_COLUMNS, *HARDNESS_FEATURES)}
    n = len(out["cu_pct"])
    asol = _pick(table, ["cu_asol_pct"])
    out["cu_asol_pct"] = np.zeros(n) if asol is None else asol
    ratio = _pick(table, ["oxide_ratio_frac"])
    if ratio is None:
        with np.errstate(invalid="ignore", divide="ignore"):
            ratio = np.where(out["cu_pct"] > 0, out["cu_asol_pct"] / out["cu_pct"], np.nan)
    out["oxide_ratio_frac"] = ratio
    for mineral in (*COPPER_MINERALS, "pyrite"):
        v = _pick(table, [f"norm_{mineral}_pct", f"{mineral}_pct"])
        out[f"{mineral}_pct"] = np.zeros(n) if v is None else v
    for mineral in GANGUE_ACID_MINERALS:
        v = _pick(table, [f"{mineral}_pct", f"norm_{mineral}_pct"])
        out[f"{mineral}_pct"] = np.zeros(n) if v is None else v
    return out


def copper_minerals(inputs: Mapping) -> dict[str, np.ndarray]:
    """The copper sulfide abundances of resolved inputs, by mineral name [wt%]."""
    return {m: np.asarray(inputs[f"{m}_pct"], dtype=float) for m in COPPER_MINERALS}


def acid_minerals(inputs: Mapping) -> dict[str, np.ndarray]:
    """The gangue acid-consumer abundances of resolved inputs, by mineral name [wt%]."""
    return {m: np.asarray(inputs[f"{m}_pct"], dtype=float) for m in GANGUE_ACID_MINERALS}
