"""Writing the demo: deterministic CSV text, atomic files, nothing written on bad options."""

from __future__ import annotations

import csv
import io
import json

import numpy as np
import pandas as pd
import pytest

from geomet.errors import RecipeError
from geomet.io.demo_files import csv_text, write_demo, write_text_atomic


def test_csv_text_fixed_decimals_and_blanks():
    df = pd.DataFrame(
        {
            "hole_id": ["A,1", 'B"2'],
            "from_m": [1.0, 2.456],
            "cu_pct": [0.12345, -0.0],
            "chlorite_feoh_nm": [2250.04, np.nan],
            "period": [1, 2],
            "flag": [True, False],
        }
    )
    text = csv_text(df)
    assert text.endswith("\n")
    assert "\r" not in text
    rows = list(csv.reader(io.StringIO(text)))
    assert rows[0] == ["hole_id", "from_m", "cu_pct", "chlorite_feoh_nm", "period", "flag"]
    # RFC 4180 quoting read back by the standard library's csv module
    assert rows[1] == ["A,1", "1", "0.123", "2250", "1", "true"]
    assert rows[2] == ['B"2', "2.46", "0", "", "2", "false"]


def test_csv_text_decimals_override():
    text = csv_text(pd.DataFrame({"x_pct": [1.23456]}), decimals=4)
    assert text == "x_pct\n1.2346\n"


def test_write_text_atomic_replaces_and_leaves_no_temp(tmp_path):
    path = tmp_path / "sub" / "a.csv"
    write_text_atomic(path, "one\n")
    write_text_atomic(path, "two\n")
    assert path.read_text() == "two\n"
    assert [p.name for p in path.parent.iterdir()] == ["a.csv"]
    assert oct(path.stat().st_mode & 0o777) == "0o644"


def test_write_demo_small_set(tmp_path):
    written = write_demo(tmp_path, seed=3, holes=4, scale=0.1)
    assert set(written) == {
        "collars",
        "surveys",
        "scan",
        "assays",
        "lithology",
        "density",
        "testwork",
        "blocks",
        "schedule",
        "plant_limits",
        "testwork_truth",
        "parameters",
        "planted_errors",
    }
    errors = json.loads(written["planted_errors"].read_text())["planted_errors"]
    assert len(errors) == 4
    params = json.loads(written["parameters"].read_text())
    assert params["seed"] == 3
    assert params["holes"] == 4
    header = written["assays"].read_text().splitlines()[0]
    assert header.startswith("HoleID,From,To,Cu_%,Au_ppb")


def test_write_demo_bad_option_writes_nothing(tmp_path):
    with pytest.raises(RecipeError, match="scale must be positive; got scale=-1"):
        write_demo(tmp_path / "out", scale=-1)
    assert not (tmp_path / "out").exists()
