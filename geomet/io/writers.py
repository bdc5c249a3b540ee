"""Writing tables and files safely: every file is written to a temporary name and moved into place.

A reader of the output (a person with the workbook open, a script polling the folder) never sees a
half-written file: each file is written next to its final name and renamed with :func:`os.replace`,
which is atomic on one file system. A whole output folder is staged the same way
(:func:`staged_directory`).
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import math
import os
import shutil
import tempfile
import uuid
from collections.abc import Iterable, Iterator, Mapping
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from geomet.errors import GeometError, RecipeError

TABLE_FORMATS = ("csv", "parquet", "both")
OUTPUT_MARKER = "provenance.json"  # present in every output folder geomet writes


def file_sha256(path: str | Path, chunk_bytes: int = 1 << 20) -> str:
    """SHA-256 of a file's bytes, as hex."""
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        while chunk := handle.read(chunk_bytes):
            digest.update(chunk)
    return digest.hexdigest()


@contextlib.contextmanager
def _atomic_path(path: Path) -> Iterator[Path]:
    """Yield a temporary path beside ``path``; move it onto ``path`` if the block succeeds."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    handle, tmp_name = tempfile.mkstemp(dir=path.parent, prefix=f".{path.name}.", suffix=".part")
    os.close(handle)
    tmp = Path(tmp_name)
    try:
        yield tmp
        os.replace(tmp, path)
    finally:
        if tmp.exists():
            tmp.unlink()


def atomic_write_bytes(path: str | Path, data: bytes) -> Path:
    """Write ``data`` to ``path`` atomically."""
    path = Path(path)
    with _atomic_path(path) as tmp:
        tmp.write_bytes(data)
    return path


def atomic_write_text(path: str | Path, text: str) -> Path:
    """Write UTF-8 ``text`` (with ``\\n`` line ends) to ``path`` atomically."""
    return atomic_write_bytes(path, text.encode("utf-8"))


def _plain(value: Any) -> Any:
    """A value JSON can hold: numpy scalars to Python, NaN/inf to null, paths and dates to text."""
    if isinstance(value, Mapping):
        return {str(k): _plain(v) for k, v in value.items()}
    if isinstance(value, (list, tuple, set, frozenset)):
        return [_plain(v) for v in value]
    if isinstance(value, np.ndarray):
        return [_plain(v) for v in value.tolist()]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, (str, int, bool)) or value is None:
        return value
    if isinstance(value, (Path, pd.Timestamp)) or hasattr(value, "isoformat"):
        return str(value) if isinstance(value, Path) else value.isoformat()
    return str(value)


def json_text(obj: Any) -> str:
    """Deterministic JSON text (sorted keys, two-space indent, NaN written as null)."""
    return json.dumps(_plain(obj), indent=2, sort_keys=True, ensure_ascii=False) + "\n"


def write_json(obj: Any, path: str | Path) -> Path:
    """Write ``obj`` as deterministic JSON to ``path`` atomically."""
    return atomic_write_text(path, json_text(obj))


def csv_bytes(frame: pd.DataFrame) -> bytes:
    """A table as CSV bytes: no index, ``\\n`` line ends, full float precision."""
    return frame.to_csv(index=False, lineterminator="\n").encode("utf-8")


def _parquet_ready(frame: pd.DataFrame) -> pd.DataFrame:
    """Object columns holding mixed types become text (Parquet needs one type per column)."""
    out = frame.copy()
    for col in out.columns:
        if out[col].dtype == object:
            kinds = {type(v) for v in out[col].dropna()}
            if len(kinds) > 1:
                out[col] = out[col].map(
                    lambda v: (
                        None
                        if v is None or v is pd.NA or (isinstance(v, float) and math.isnan(v))
                        else str(v)
                    )
                )
    return out


def write_table(frame: pd.DataFrame, path: str | Path) -> Path:
    """Write ``frame`` to ``path`` (``.csv`` or ``.parquet``) atomically.

    Raises
    ------
    GeometError
        When the file name ends in anything else.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        return atomic_write_bytes(path, csv_bytes(frame))
    if suffix == ".parquet":
        with _atomic_path(path) as tmp:
            _parquet_ready(frame).to_parquet(tmp, index=False, engine="pyarrow")
        return path
    message = f"cannot write a table to {path.name!r}: the file name must end in .csv or .parquet"
    raise GeometError(message)


def write_tables(
    tables: Mapping[str, pd.DataFrame], folder: str | Path, table_format: str = "csv"
) -> list[Path]:
    """Write every table as ``<folder>/<name>.csv`` and/or ``.parquet`` (``table_format``)."""
    if table_format not in TABLE_FORMATS:
        message = f"table_format must be one of {', '.join(TABLE_FORMATS)}; got {table_format!r}"
        raise GeometError(message)
    suffixes = {"csv": [".csv"], "parquet": [".parquet"], "both": [".csv", ".parquet"]}
    folder = Path(folder)
    written = []
    for name, frame in tables.items():
        for suffix in suffixes[table_format]:
            written.append(write_table(frame, folder / f"{name}{suffix}"))
    return written


def check_output_folder(final: str | Path, protected: Iterable[str | Path] = ()) -> Path:
    """Check that ``final`` may be (re)placed by a run's output.

    An existing folder is replaced only when it is empty or was written by geomet (it holds
    ``provenance.json``), and never when it contains one of the ``protected`` files (the inputs).

    Raises
    ------
    RecipeError
        Naming the folder and why it cannot be used.
    """
    final = Path(final).resolve()
    if final.exists() and not final.is_dir():
        message = f"output {final} exists and is a file, not a folder; choose another run.output"
        raise RecipeError(message)
    for item in protected:
        item = Path(item).resolve()
        if final == item or final in item.parents:
            message = (
                f"output folder {final} contains {item.name}, which the run reads; a run "
                f"replaces its whole output folder, so choose a run.output (or --out) that holds "
                f"no input file and not the recipe"
            )
            raise RecipeError(message)
    if final.is_dir() and any(final.iterdir()) and not (final / OUTPUT_MARKER).is_file():
        message = (
            f"output folder {final} already exists and was not written by geomet (no "
            f"{OUTPUT_MARKER}); choose another run.output or empty that folder"
        )
        raise RecipeError(message)
    return final


@contextlib.contextmanager
def staged_directory(final: str | Path) -> Iterator[Path]:
    """Yield an empty folder beside ``final``; move it onto ``final`` if the block succeeds.

    An existing ``final`` is set aside first and deleted only once the new folder is in place; if
    block raises, the temporary folder is deleted and ``final`` is left exactly as it was.
    """
    final = Path(final).resolve()
    final.parent.mkdir(parents=True, exist_ok=True)
    staged = Path(tempfile.mkdtemp(dir=final.parent, prefix=f".{final.name}.partial-"))
    try:
        yield staged
        replace_directory(staged, final)
    finally:
        if staged.exists():
            shutil.rmtree(staged, ignore_errors=True)


def replace_directory(staged: str | Path, final: str | Path) -> None:
    """Move folder ``staged`` onto ``final``, replacing an existing ``final`` only at the end."""
    staged, final = Path(staged), Path(final)
    if not final.exists():
        os.replace(staged, final)
        return
    backup = final.with_name(f".{final.name}.old-{uuid.uuid4().hex[:8]}")
    os.replace(final, backup)
    try:
        os.replace(staged, final)
    except BaseException:
        os.replace(backup, final)
        raise
    shutil.rmtree(backup, ignore_errors=True)
