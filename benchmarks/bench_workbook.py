"""Benchmark: writing a large results table to the workbook.

Compares :func:`geomet.io.workbook.write_workbook` (openpyxl for layout and styles, data rows
streamed as SpreadsheetML) with the straightforward way measured in the same run: openpyxl's
write-only mode with one styled cell per value (number format by column).

    python benchmarks/bench_workbook.py            # 50 000 rows x 60 columns
    python benchmarks/bench_workbook.py --quick    # 5 000 rows x 30 columns
"""

from __future__ import annotations

import argparse
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd
from openpyxl import Workbook
from openpyxl.cell.cell import WriteOnlyCell

from geomet.io.workbook import number_format, write_workbook
from geomet.run.pipeline import RunResult


def synthetic_table(rows: int, columns: int, seed: int = 0) -> pd.DataFrame:
    """Block-model-like table: an id, a text domain, and ``columns`` grade/abundance columns."""
    rng = np.random.default_rng(seed)
    data = {
        "block_id": np.arange(rows),
        "domain": rng.choice(["Potassic core", "Phyllic shell", "Argillic cap"], rows),
    }
    for i in range(columns):
        values = rng.gamma(2.0, 0.4, rows)
        values[rng.random(rows) < 0.02] = np.nan
        data[f"m{i:02d}_pct"] = values
    return pd.DataFrame(data)


def baseline(frame: pd.DataFrame, path: Path) -> None:
    """openpyxl write-only, one styled cell per value: the straightforward way."""
    wb = Workbook(write_only=True)
    ws = wb.create_sheet("table")
    ws.append(list(frame.columns))
    formats = [number_format(str(c), frame[c].dtype) for c in frame.columns]
    columns = [frame[c].astype(object).where(frame[c].notna(), None).tolist() for c in frame]
    for values in zip(*columns, strict=True):
        row = []
        for value, fmt in zip(values, formats, strict=True):
            cell = WriteOnlyCell(ws, value=value)
            if fmt:
                cell.number_format = fmt
            row.append(cell)
        ws.append(row)
    wb.save(path)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true", help="small table, a few seconds")
    args = parser.parse_args()
    rows, columns = (5_000, 30) if args.quick else (50_000, 60)
    frame = synthetic_table(rows, columns)
    cells = frame.size
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        # Warm up both writers on a tiny table (first-call imports are not what is measured).
        tiny = synthetic_table(10, 3)
        baseline(tiny, folder / "warm_baseline.xlsx")
        write_workbook(folder / "warm.xlsx", RunResult(tables={"t": tiny}, produced={"t": ""}))
        started = time.perf_counter()
        baseline(frame, folder / "baseline.xlsx")
        base_s = time.perf_counter() - started
        result = RunResult(tables={"blocks": frame}, produced={"blocks": "Synthetic blocks."})
        started = time.perf_counter()
        write_workbook(folder / "geomet.xlsx", result)
        ours_s = time.perf_counter() - started
        base_mb = (folder / "baseline.xlsx").stat().st_size / 1e6
        ours_mb = (folder / "geomet.xlsx").stat().st_size / 1e6
    print(f"table: {rows:,} rows x {len(frame.columns)} columns = {cells:,} cells")
    print(
        f"openpyxl write-only, styled cells: {base_s:7.2f} s  ({cells / base_s:,.0f} cells/s, "
        f"{base_mb:.1f} MB)"
    )
    print(
        f"geomet write_workbook:             {ours_s:7.2f} s  ({cells / ours_s:,.0f} cells/s, "
        f"{ours_mb:.1f} MB; includes the About, guide sheets and styles)"
    )
    print(f"speed-up: {base_s / ours_s:.1f}x")


if __name__ == "__main__":
    main()
