"""Small invented Vellantra drill-hole files for the recipe, run, workbook and CLI tests.

Three vertical holes, assays written with laboratory headers and units (Au in ppb) as they arrive
from a lab, so that a recipe's column map and unit conversion are exercised.
"""

from __future__ import annotations

from pathlib import Path

import pandas as pd

HOLES = ("VL-001", "VL-002", "VL-003")


def collars() -> pd.DataFrame:
    return pd.DataFrame(
        {
            "hole_id": list(HOLES),
            "easting_m": [1000.0, 1050.0, 1100.0],
            "northing_m": [5000.0, 5000.0, 5050.0],
            "elevation_m": [820.0, 815.0, 830.0],
            "total_depth_m": [20.0, 20.0, 16.0],
        }
    )


def surveys() -> pd.DataFrame:
    rows = []
    for hole in HOLES:
        rows += [(hole, 0.0, 0.0, -90.0), (hole, 15.0, 0.0, -90.0)]
    return pd.DataFrame(rows, columns=["hole_id", "depth_m", "azimuth_deg", "dip_deg"])


def lab_assays() -> pd.DataFrame:
    """Assays with lab headers: HoleID, From, To, Cu_% and Au_ppb (2 m samples)."""
    rows = []
    for h, hole in enumerate(HOLES):
        depth = 16 if hole == "VL-003" else 20
        for i, top in enumerate(range(0, depth, 2)):
            cu = round(0.20 + 0.05 * h + 0.01 * i, 3)
            au = 150 + 10 * i + 40 * h  # ppb
            rows.append((hole, float(top), float(top + 2), cu, au))
    return pd.DataFrame(rows, columns=["HoleID", "From", "To", "Cu_%", "Au_ppb"])


ASSAY_COLUMN_MAP = {
    "HoleID": "hole_id",
    "From": "from_m",
    "To": "to_m",
    "Cu_%": "cu_pct",
    "Au_ppb": "au_gpt",
}


def write_inputs(folder: Path) -> dict[str, Path]:
    """Write collars.csv, surveys.csv and assays.csv into ``folder``."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = {}
    for name, frame in (("collars", collars()), ("surveys", surveys()), ("assays", lab_assays())):
        path = folder / f"{name}.csv"
        frame.to_csv(path, index=False)
        paths[name] = path
    return paths


RECIPE = """\
[run]
title = "Vellantra test run"
output = "out"
seed = 11
steps = [{steps}]
table_format = "{table_format}"
workbook = "vellantra_test.xlsx"

[inputs.collars]
path = "data/collars.csv"

[inputs.surveys]
path = "data/surveys.csv"

[inputs.assays]
path = "data/assays.csv"
columns = {{ HoleID = "hole_id", From = "from_m", To = "to_m", "Cu_%" = "cu_pct", \
Au_ppb = "au_gpt" }}
units = {{ au_gpt = "ppb" }}

[check]
on_error = "stop"

[composite]
length_m = 4.0
{extra}"""


def write_recipe(
    folder: Path, *, steps=("check", "composite"), table_format="csv", extra: str = ""
) -> Path:
    """Write the inputs under ``folder/data`` and a recipe ``folder/test.toml``."""
    write_inputs(folder / "data")
    text = RECIPE.format(
        steps=", ".join(f'"{s}"' for s in steps), table_format=table_format, extra=extra
    )
    path = folder / "test.toml"
    path.write_text(text, encoding="utf-8")
    return path
