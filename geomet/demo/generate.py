"""Build the whole Vellantra demo data set for a seed: every table, the truth and the errors."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from geomet.demo.deposit import DepositModel, build_deposit
from geomet.demo.drilling import make_collars_surveys
from geomet.demo.intervals import (
    ASSAY_PRECISION_FRAC,
    DENSITY_REL_SD,
    SCAN_NOISE,
    first_core_depths,
    format_lab_assays,
    make_assays,
    make_density,
    make_lithology,
    make_scan,
)
from geomet.demo.mine import ESTIMATION_NOISE, make_blocks, make_plant_limits, make_schedule
from geomet.demo.planted import plant_errors
from geomet.demo.testwork import TRUTH_PARAMETERS, make_testwork
from geomet.errors import RecipeError

DEFAULT_HOLES = 44
DEFAULT_TESTWORK_SAMPLES = 80

# Random streams (numpy.random.default_rng([seed, stream])), one per purpose so that
# changing one table's generation leaves the others' random numbers alone.
_STREAMS = {
    "geology": 1,
    "drilling": 2,
    "scan": 3,
    "assays": 4,
    "lab": 5,
    "density": 6,
    "testwork": 7,
    "blocks": 8,
    "planted": 9,
    "core": 10,
    "lithology": 11,
}

ALL_TABLES = (
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
)


@dataclass
class DemoData:
    """The demo data set.

    Attributes
    ----------
    files : dict of DataFrame
        Tables as delivered (written to ``demo_data/``): canonical headers except
        ``assays``, which has the lab's headers, units and below-detection codes; the planted
        errors are in these.
    clean : dict of DataFrame
        The same tables before the planted errors, with ``assays`` in canonical numeric form
        (``glossary.ASSAY_COLUMNS``, canonical units, before censoring).
    testwork_truth : DataFrame
        Noise-free testwork responses per sample_id (for tests only).
    parameters : dict
        Hidden truth parameters and noise levels (for tests only).
    planted_errors : list of dict
        The planted errors: table, file, hole_id, line, column, rule, description.
    model : DepositModel
        The 3-D model behind the tables (for :func:`geomet.demo.sample_geology`).
    """

    seed: int
    files: dict[str, pd.DataFrame] = field(default_factory=dict)
    clean: dict[str, pd.DataFrame] = field(default_factory=dict)
    testwork_truth: pd.DataFrame | None = None
    parameters: dict = field(default_factory=dict)
    planted_errors: list[dict] = field(default_factory=list)
    model: DepositModel | None = None


def _rng(seed: int, stream: str) -> np.random.Generator:
    return np.random.default_rng([int(seed), _STREAMS[stream]])


def generate_demo(
    seed: int = 7,
    holes: int | None = None,
    scale: float = 1.0,
    *,
    tables: Iterable[str] | None = None,
    plant: bool = True,
) -> DemoData:
    """Generate the invented Vellantra porphyry Cu-Au demo data set.

    Parameters
    ----------
    seed : int
        Seed of every random step; the same seed gives the same tables.
    holes : int, optional
        Number of drill holes (default ``round(44 * scale)``, at least 4).
    scale : float
        Size factor: multiplies the default hole count, the number of testwork samples and
        the number of blocks (block width shrinks by ``1/sqrt(scale)``). ``scale=1`` is the
        bundled demo. A hole gives about 320 scan rows of 1 m, so ``holes=3000`` makes about
        a million scan intervals (pass ``tables=("scan",)`` to make only what is needed).
    tables : iterable of str, optional
        Only these tables (and what they need); default all of :data:`ALL_TABLES`. Planted
        errors are only added when every table they touch is made.
    plant : bool
        Plant the four documented errors into ``files`` (default True).

    Returns
    -------
    DemoData

    Raises
    ------
    geomet.errors.RecipeError
        For a non-positive ``scale``, ``holes`` below 1 or an unknown table name.
    """
    if not (np.isfinite(scale) and scale > 0):
        msg = f"scale must be positive; got scale={scale}"
        raise RecipeError(msg)
    if holes is not None and holes < 1:
        msg = f"holes must be at least 1; got holes={holes}"
        raise RecipeError(msg)
    want = set(ALL_TABLES if tables is None else tables)
    unknown = want - set(ALL_TABLES)
    if unknown:
        msg = f"unknown demo table(s) {sorted(unknown)}; known: {', '.join(ALL_TABLES)}"
        raise RecipeError(msg)
    n_holes = int(holes) if holes is not None else max(4, round(DEFAULT_HOLES * scale))
    model = build_deposit(seed)
    data = DemoData(seed=int(seed), model=model, parameters=_parameters(seed, n_holes, scale))
    clean = data.clean
    collars, surveys = make_collars_surveys(model, n_holes, _rng(seed, "drilling"))
    clean["collars"], clean["surveys"] = collars, surveys
    core = first_core_depths(collars, _rng(seed, "core"))
    if want & {"scan", "testwork"}:
        clean["scan"] = make_scan(model, collars, surveys, core, _rng(seed, "scan"))
    if want & {"assays", "testwork"}:
        clean["assays"] = make_assays(model, collars, surveys, core, _rng(seed, "assays"))
    if "lithology" in want:
        clean["lithology"] = make_lithology(model, collars, surveys, _rng(seed, "lithology"))
    if "density" in want:
        clean["density"] = make_density(model, collars, surveys, core, _rng(seed, "density"))
    if "testwork" in want:
        n_tw = max(5, round(DEFAULT_TESTWORK_SAMPLES * scale))
        clean["testwork"], data.testwork_truth = make_testwork(
            clean["scan"], clean["assays"], n_tw, _rng(seed, "testwork")
        )
    if want & {"blocks", "schedule", "plant_limits"}:
        blocks = make_blocks(model, _rng(seed, "blocks"), dx_m=50.0 / np.sqrt(scale))
        schedule = make_schedule(blocks)
        clean["blocks"], clean["schedule"] = blocks, schedule
        clean["plant_limits"] = make_plant_limits(blocks, schedule)
    files = {k: v for k, v in clean.items() if k in want or k in ("collars", "surveys")}
    if plant and {"assays", "scan", "lithology"} <= want:
        files, data.planted_errors = plant_errors(files, _rng(seed, "planted"))
    if "assays" in files:
        files["assays"] = format_lab_assays(files["assays"], _rng(seed, "lab"))
    data.files = {k: files[k] for k in ALL_TABLES if k in files}
    if "testwork" not in want:
        clean.pop("testwork", None)
    return data


def _parameters(seed: int, n_holes: int, scale: float) -> dict:
    return {
        "about": (
            "Hidden truth of the invented Vellantra demo (Orrin Vale Resources). "
            "For tests only: a real project has no such file."
        ),
        "seed": int(seed),
        "holes": int(n_holes),
        "scale": float(scale),
        "testwork": TRUTH_PARAMETERS,
        "noise": {
            "scan": SCAN_NOISE,
            "density_rel_sd": DENSITY_REL_SD,
            "assay_precision_rel_sd": ASSAY_PRECISION_FRAC,
            "block_estimation": ESTIMATION_NOISE,
        },
    }
