"""Write the Vellantra demo data set to a folder (CSV and JSON, atomically, deterministically).

Every file is written to a temporary file in the target folder and moved into place with
``os.replace``, so a reader never sees a half-written file. The same seed gives the same
bytes: fixed float formatting, ``\\n`` line endings, sorted JSON keys.
"""

from __future__ import annotations

import json
import math
import os
import tempfile
from pathlib import Path

import numpy as np
import pandas as pd

from geomet.demo import generate_demo

# Decimals written per column (others: as generated; integers stay integers).
_DECIMALS_BY_SUFFIX = (
    ("_nm", 1),
    ("_deg", 1),
    ("_t_m3", 3),
    ("_kwh_t", 2),
    ("_frac", 3),
    ("_kw", 0),
)
_DECIMALS = {
    "from_m": 2,
    "to_m": 2,
    "depth_m": 1,
    "easting_m": 2,
    "northing_m": 2,
    "elevation_m": 2,
    "total_depth_m": 1,
    "x_m": 1,
    "y_m": 1,
    "z_m": 1,
    "dx_m": 2,
    "dy_m": 2,
    "dz_m": 2,
    "tonnes_t": 0,
    "cu_pct": 3,
    "au_gpt": 3,
    "cu_asol_pct": 3,
    "mo_ppm": 1,
    "ag_gpt": 2,
    "as_ppm": 1,
    "zn_ppm": 1,
    "pb_ppm": 1,
    "density_t_m3": 3,
    "smc_axb": 1,
    "smc_mia_kwh_t": 1,
    "bond_bwi_kwh_t": 2,
    "feed_cu_pct": 3,
    "conc_cu_pct": 2,
    "tail_cu_pct": 3,
    "feed_au_gpt": 3,
    "conc_au_gpt": 2,
    "tail_au_gpt": 3,
    "rougher_cu_recovery_pct": 2,
    "rougher_au_recovery_pct": 2,
    "leach_acid_kg_t": 1,
    "mill_max_t": 0,
    "leach_max_t": 0,
    "acid_supply_t": 0,
    "mill_power_kw": 0,
}


def _decimals(col: str) -> int:
    if col in _DECIMALS:
        return _DECIMALS[col]
    for suffix, dec in _DECIMALS_BY_SUFFIX:
        if col.endswith(suffix):
            return dec
    return 2


def _format_number(v: float, dec: int) -> str:
    """Shortest fixed-decimal text: 12.50 -> '12.5', 3.00 -> '3', NaN -> ''."""
    if v is None or (isinstance(v, float) and math.isnan(v)):
        return ""
    text = f"{v:.{dec}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    if text in ("-0", ""):
        text = "0"
    return text


def csv_text(df: pd.DataFrame, decimals: int | None = None) -> str:
    """A table as deterministic CSV text (comma, ``\\n``, fixed decimals per column).

    ``decimals`` overrides the per-column decimals for every float column.
    """
    cols = []
    for col in df.columns:
        s = df[col]
        if pd.api.types.is_bool_dtype(s):
            cols.append(np.where(s.to_numpy(), "true", "false"))
        elif pd.api.types.is_integer_dtype(s):
            cols.append(np.array([str(int(v)) for v in s.to_numpy()], dtype=object))
        elif pd.api.types.is_float_dtype(s):
            dec = _decimals(str(col)) if decimals is None else decimals
            vals = np.round(s.to_numpy(dtype=float), dec)
            cols.append(np.array([_format_number(v, dec) for v in vals], dtype=object))
        else:
            cols.append(
                np.array(
                    [
                        ""
                        if v is None or v is pd.NA or (isinstance(v, float) and math.isnan(v))
                        else _quote(str(v))
                        for v in s.to_numpy()
                    ],
                    dtype=object,
                )
            )
    lines = [",".join(_quote(str(c)) for c in df.columns)]
    if len(df):
        mat = np.stack(cols, axis=1)
        lines.extend(",".join(row) for row in mat)
    return "\n".join(lines) + "\n"


def _quote(text: str) -> str:
    if any(ch in text for ch in ',"\n'):
        return '"' + text.replace('"', '""') + '"'
    return text


def write_text_atomic(path: Path, text: str) -> None:
    """Write text to ``path`` via a temporary file in the same folder and ``os.replace``."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
        os.chmod(tmp, 0o644)
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


def _json_text(obj) -> str:
    return json.dumps(obj, indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def write_demo(
    out_dir, *, seed: int = 7, holes: int | None = None, scale: float = 1.0
) -> dict[str, Path]:
    """Generate the Vellantra demo and write every file into ``out_dir``.

    Parameters
    ----------
    out_dir : str or Path
        Target folder (created if missing). Existing demo files are replaced.
    seed : int
        Seed of the generator; the same seed writes the same bytes.
    holes : int, optional
        Number of drill holes (default: 44 times ``scale``).
    scale : float
        Size factor of :func:`geomet.demo.generate_demo`.

    Returns
    -------
    dict of str to Path
        File key (``collars``, ..., ``testwork_truth``, ``parameters``, ``planted_errors``)
        to the path written.
    """
    out = Path(out_dir)
    data = generate_demo(seed=seed, holes=holes, scale=scale)
    written: dict[str, Path] = {}
    for name, table in data.files.items():
        path = out / f"{name}.csv"
        write_text_atomic(path, csv_text(table))
        written[name] = path
    truth_dir = out / "truth"
    if data.testwork_truth is not None:
        path = truth_dir / "testwork_truth.csv"
        write_text_atomic(path, csv_text(data.testwork_truth, decimals=4))
        written["testwork_truth"] = path
    path = truth_dir / "parameters.json"
    write_text_atomic(path, _json_text(data.parameters))
    written["parameters"] = path
    path = truth_dir / "planted_errors.json"
    write_text_atomic(path, _json_text({"planted_errors": data.planted_errors}))
    written["planted_errors"] = path
    return written
