"""Running steps and recipes: order the steps, feed them tables, collect what they produce.

Two entry points, for notebook users and for the ``geomet`` command alike:

- :func:`run_steps` takes tables and returns tables; it touches no files.
- :func:`run_recipe` reads a recipe's input files, runs its steps and writes the output folder
  (workbook, table copies, plots, models, run log, recipe copy, provenance). The folder is
  assembled in a temporary sibling and moved into place only when everything succeeded, so a failed
  run leaves any earlier output exactly as it was; input files are only ever read.
"""

from __future__ import annotations

import contextlib
import dataclasses
import heapq
import logging
import platform
import re
import sys
import time
import warnings
from collections.abc import Iterable, Iterator, Mapping
from dataclasses import dataclass, field
from datetime import UTC, datetime
from importlib import metadata
from pathlib import Path
from types import MappingProxyType
from typing import Any

import pandas as pd
from pydantic import BaseModel

import geomet
from geomet.errors import GeometError, RecipeError, StepInputMissing
from geomet.recipe.loader import Recipe, load_recipe, suggest, validate_step_options
from geomet.run.registry import Plot, Step, StepContext, load_steps

LOGGER_NAME = "geomet.run"
PACKAGE_LOGGER = "geomet"  # the run log and the command's messages take every geomet.* logger
PACKAGES = (
    "numpy",
    "pandas",
    "scipy",
    "scikit-learn",
    "pyomo",
    "highspy",
    "networkx",
    "openpyxl",
    "pyarrow",
    "pydantic",
    "matplotlib",
)


@dataclass
class StepRecord:
    """What one step did: its time, the tables it returned and the notes it left."""

    name: str
    summary: str
    seconds: float
    produced: list[str]
    replaced: list[str]
    notes: list[str]


@dataclass(repr=False)
class RunResult:
    """Everything a run produced.

    Attributes
    ----------
    tables
        Every table at the end of the run: the inputs (as replaced by steps) and the products.
    produced
        Declared products of the steps that ran, in run order: table name -> description. These
        are the workbook sheets and the table copies.
    plots, notes, extras
        Collected from the steps (:class:`geomet.run.registry.StepContext`).
    steps
        One :class:`StepRecord` per step, in run order.
    warnings
        Warnings raised while the steps ran (also in the run log).
    provenance
        Versions, seed, resolved options, and (for a recipe) the recipe text and input hashes.
    out_dir
        The output folder, when the run wrote one.
    """

    tables: dict[str, pd.DataFrame]
    produced: dict[str, str] = field(default_factory=dict)
    plots: list[Plot] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    extras: dict[str, Any] = field(default_factory=dict)
    steps: list[StepRecord] = field(default_factory=list)
    warnings: list[str] = field(default_factory=list)
    provenance: dict[str, Any] = field(default_factory=dict)
    out_dir: Path | None = None

    @property
    def outputs(self) -> dict[str, pd.DataFrame]:
        """The produced tables (those that become sheets), in run order."""
        return {name: self.tables[name] for name in self.produced if name in self.tables}

    def __getitem__(self, name: str) -> pd.DataFrame:
        return self.tables[name]

    def __repr__(self) -> str:
        shown = [f"{name} ({len(frame):,} rows)" for name, frame in self.outputs.items()]
        where = f", out_dir={str(self.out_dir)!r}" if self.out_dir else ""
        return (
            f"RunResult(steps=[{', '.join(r.name for r in self.steps)}], "
            f"outputs=[{', '.join(shown)}], plots={len(self.plots)}, "
            f"warnings={len(self.warnings)}{where})"
        )


# --- ordering ------------------------------------------------------------------------------------
def order_steps(asked: Iterable[str], registry: Mapping[str, Step] | None = None) -> list[Step]:
    """Order the ``asked`` steps so that each runs after the steps whose tables it uses.

    A step B follows a step A when B needs (or optionally needs) a table A produces. Among steps
    free to run, the lower ``Step.order`` goes first, then the one listed first in ``asked``.

    Raises
    ------
    RecipeError
        For an unknown step name (with the nearest registered one), or steps that need each other.
    """
    registry = load_steps() if registry is None else registry
    asked = list(dict.fromkeys(asked))
    unknown = [name for name in asked if name not in registry]
    if unknown:
        parts = [f"{name!r}{suggest(name, registry)}" for name in unknown]
        message = f"unknown step {', '.join(parts)}; registered steps: {', '.join(registry)}"
        raise RecipeError(message)
    producer = {table: name for name in asked for table in registry[name].produces}
    after: dict[str, set[str]] = {name: set() for name in asked}
    for name in asked:
        step = registry[name]
        for table in (*step.needs, *step.optional_needs):
            source = producer.get(table)
            if source is not None and source != name:
                after[name].add(source)
    position = {name: i for i, name in enumerate(asked)}
    blocked = {name: set(deps) for name, deps in after.items()}
    ready = [(registry[n].order, position[n], n) for n, deps in blocked.items() if not deps]
    heapq.heapify(ready)
    ordered: list[Step] = []
    while ready:
        _, _, name = heapq.heappop(ready)
        ordered.append(registry[name])
        for other, deps in blocked.items():
            if name in deps:
                deps.discard(name)
                if not deps:
                    heapq.heappush(ready, (registry[other].order, position[other], other))
    if len(ordered) < len(asked):
        stuck = sorted(set(asked) - {s.name for s in ordered})
        message = (
            f"steps {', '.join(stuck)} need each other's tables, so no order runs them; "
            "check their needs and produces (`geomet steps`)"
        )
        raise RecipeError(message)
    return ordered


def check_step_inputs(
    ordered: list[Step], available: Iterable[str], registry: Mapping[str, Step] | None = None
) -> None:
    """Raise :class:`StepInputMissing` if a step needs a table that nothing before it provides.

    The message lists every missing table with what would provide it: an input section, or the
    step that produces it.
    """
    registry = load_steps() if registry is None else registry
    have = set(available)
    asked = {s.name for s in ordered}
    problems = []
    for step in ordered:
        for table in step.needs:
            if table not in have:
                problems.append(
                    f"step {step.name!r} needs table {table!r}; "
                    f"{_provider_hint(table, registry, asked)}"
                )
        have.update(step.produces)
    if problems:
        message = "missing input tables:\n  - " + "\n  - ".join(problems)
        raise StepInputMissing(message)


def _provider_hint(table: str, registry: Mapping[str, Step], asked: set[str]) -> str:
    makers = [name for name, step in registry.items() if table in step.produces]
    if makers:
        listed = [m for m in makers if m in asked]
        if listed:
            return f"step {listed[0]!r} produces it but runs later (check the steps' needs)"
        return f"it is produced by step {makers[0]!r}: add {makers[0]!r} to run.steps"
    return f"no step produces it: give it as an input ([inputs.{table}] with path = ...)"


# --- running -------------------------------------------------------------------------------------
def run_steps(
    tables: Mapping[str, pd.DataFrame],
    steps: list[str],
    options: Mapping[str, Any] | None = None,
    seed: int = 0,
    *,
    plot_dir: str | Path | None = None,
    show_progress: bool = False,
    sources: Mapping[str, Any] | None = None,
    registry: Mapping[str, Step] | None = None,
) -> RunResult:
    """Run ``steps`` on ``tables`` in memory: tables in, tables out, no files (unless ``plot_dir``).

    Parameters
    ----------
    tables
        Input tables by canonical name (``collars``, ``assays``...; see ``docs/contracts.md``).
    steps
        Step names; they run in dependency order whatever the order given.
    options
        Options by step name, each a dict of option values (as in a recipe section) or the step's
        options model; steps not given use their defaults.
    seed
        Seed passed to every step.
    plot_dir
        Folder for the steps' PNG plots (default: plots are not saved).
    show_progress
        Show progress bars for long steps on stderr.
    sources
        Reader metadata by table (:class:`geomet.io.readers.ReadResult`), for file/line details.

    Returns
    -------
    RunResult

    Raises
    ------
    RecipeError
        Unknown steps or invalid options (all listed).
    StepInputMissing
        A step needs a table that neither ``tables`` nor an earlier step provides.

    Examples
    --------
    >>> from geomet.run.pipeline import run_steps
    >>> result = run_steps({}, [])
    >>> result.outputs
    {}
    """
    registry = load_steps() if registry is None else registry
    ordered = order_steps(steps, registry)
    typed = validate_step_options(options, [s.name for s in ordered], registry=registry)
    check_step_inputs(ordered, tables, registry)
    started = _now()
    result = _execute(
        dict(tables),
        ordered,
        typed,
        seed,
        plot_dir=plot_dir,
        show_progress=show_progress,
        sources=sources,
    )
    result.provenance = provenance(
        seed=seed,
        steps=[s.name for s in ordered],
        parameters={n: o.model_dump(mode="json") for n, o in typed.items()},
        started=started,
    )
    return result


def _execute(
    tables: dict[str, pd.DataFrame],
    ordered: list[Step],
    options: Mapping[str, BaseModel],
    seed: int,
    *,
    plot_dir=None,
    show_progress=False,
    sources=None,
) -> RunResult:
    log = logging.getLogger(LOGGER_NAME)
    extras: dict[str, Any] = {"sources": dict(sources or {})}
    ctx = StepContext(
        tables=MappingProxyType(dict(tables)),
        seed=seed,
        plot_dir=Path(plot_dir) if plot_dir is not None else None,
        log=log,
        show_progress=show_progress,
        extras=extras,
    )
    result = RunResult(tables=tables, plots=ctx.plots, notes=ctx.notes, extras=extras)
    with contextlib.ExitStack() as stack:
        bar = _step_bar(stack, len(ordered)) if show_progress else None
        for number, step in enumerate(ordered, 1):
            if bar is not None:
                bar.set_postfix_str(step.name)
            log.info("step %d/%d %s: started", number, len(ordered), step.name)
            _run_step(step, options[step.name], ctx, tables, result)
            if bar is not None:
                bar.update(1)
    return result


def _run_step(
    step: Step,
    options: BaseModel,
    ctx: StepContext,
    tables: dict[str, pd.DataFrame],
    result: RunResult,
) -> None:
    """Run one step on the current ``tables``; take its tables, notes and warnings."""
    log = ctx.log
    missing = [t for t in step.needs if t not in tables]
    if missing:
        message = (
            f"step {step.name!r} needs table {missing[0]!r}, which an earlier step "
            f"declared but did not return"
        )
        raise StepInputMissing(message)
    ctx.tables = MappingProxyType(dict(tables))
    first_note = len(ctx.notes)
    started = time.perf_counter()
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("default")
        try:
            returned = step.func(ctx, options)
        except GeometError:
            raise
        except Exception as exc:
            exc.add_note(f"(raised in run step {step.name!r})")
            raise
    seconds = time.perf_counter() - started
    for item in caught:
        text = f"step {step.name}: {item.category.__name__}: {item.message}"
        result.warnings.append(text)
        log.warning(text)
    produced, replaced = _take_tables(step, returned, tables, log)
    for name in produced:
        result.produced[name] = step.produces[name]
    notes = list(ctx.notes[first_note:])
    result.steps.append(StepRecord(step.name, step.summary, seconds, produced, replaced, notes))
    shapes = ", ".join(f"{n} ({len(tables[n])} rows)" for n in [*produced, *replaced])
    log.info(
        "step %s: finished in %.2f s%s",
        step.name,
        seconds,
        f"; tables: {shapes}" if shapes else "",
    )


def _step_bar(stack: contextlib.ExitStack, total: int):
    """A progress bar over the steps on stderr; log lines are printed above it meanwhile."""
    from tqdm.auto import tqdm
    from tqdm.contrib.logging import logging_redirect_tqdm

    stack.enter_context(logging_redirect_tqdm(loggers=[logging.getLogger(PACKAGE_LOGGER)]))
    return stack.enter_context(
        tqdm(total=total, desc="geomet run", unit="step", leave=False, file=sys.stderr)
    )


def _take_tables(
    step: Step, returned: Any, tables: dict[str, pd.DataFrame], log: logging.Logger
) -> tuple[list[str], list[str]]:
    if returned is None:
        returned = {}
    if not isinstance(returned, Mapping) or not all(
        isinstance(v, pd.DataFrame) for v in returned.values()
    ):
        message = (
            f"step {step.name!r} returned {type(returned).__name__}; a step must return a "
            "dict of table name -> pandas DataFrame"
        )
        raise GeometError(message)
    produced, replaced = [], []
    for name, frame in returned.items():
        if name in step.produces:
            produced.append(name)
        elif name in tables:
            replaced.append(name)
        else:
            log.warning(
                "step %s returned table %r, which it does not declare; it is kept for "
                "later steps but not written",
                step.name,
                name,
            )
        tables[name] = frame
    for name in step.produces:
        if name not in returned:
            log.warning("step %s did not return its table %r", step.name, name)
    return [n for n in step.produces if n in produced], replaced


# --- recipes -------------------------------------------------------------------------------------
def detection_rule(recipe: Recipe):
    """The recipe's ``[detection]`` as a :class:`geomet.drillholes.censored.DetectionRule`."""
    from geomet.drillholes.censored import DetectionRule

    values = recipe.detection.model_dump(exclude_none=True)
    if dataclasses.is_dataclass(DetectionRule):
        accepted = {f.name for f in dataclasses.fields(DetectionRule)}
        values = {k: v for k, v in values.items() if k in accepted}
    return DetectionRule(**values)


def read_inputs(recipe: Recipe) -> tuple[dict[str, pd.DataFrame], dict[str, Any], list[dict]]:
    """Read every ``[inputs.<table>]`` file of ``recipe``.

    Returns
    -------
    tables, sources, records
        Tables by canonical name; the readers' :class:`ReadResult` by table; and one provenance
        record per file (table, file name, SHA-256, rows, columns).
    """
    from geomet.io.readers import read_table
    from geomet.io.writers import file_sha256

    rule = detection_rule(recipe)
    tables: dict[str, pd.DataFrame] = {}
    sources: dict[str, Any] = {}
    records: list[dict] = []
    log = logging.getLogger(LOGGER_NAME)
    for name, section in recipe.inputs.items():
        path = recipe.input_path(name)
        digest = file_sha256(path)
        read = read_table(
            path,
            table=name,
            column_map=section.columns or None,
            units=section.units or None,
            detection=rule,
            sheet=section.sheet,
        )
        tables[name] = read.table
        sources[name] = read
        records.append(
            {
                "table": name,
                "file": section.path,
                "sha256": digest,
                "rows": len(read.table),
                "columns": len(read.table.columns),
            }
        )
        log.info("input %s: %s, %d rows, sha256 %s", name, section.path, len(read.table), digest)
    return tables, sources, records


def run_loaded_recipe(
    recipe: Recipe,
    *,
    steps: list[str] | None = None,
    overrides: Mapping[str, Mapping[str, Any]] | None = None,
    show_progress: bool = False,
    plot_dir: str | Path | None = None,
) -> RunResult:
    """Read ``recipe``'s inputs and run its steps (or ``steps``) in memory; writes no output folder.

    ``overrides`` replaces single option values, e.g. ``{"check": {"on_error": "warn"}}``.
    """
    registry = load_steps()
    names = list(recipe.run.steps if steps is None else steps)
    ordered = order_steps(names, registry)
    unused = [n for n in recipe.sections if n in registry and n not in names]
    if unused:
        logging.getLogger(LOGGER_NAME).info(
            "options given for steps not run this time: %s", ", ".join(unused)
        )
    options = _options_with(recipe, [s.name for s in ordered], overrides, registry)
    check_step_inputs(ordered, recipe.inputs, registry)
    started = _now()
    tables, sources, records = read_inputs(recipe)
    result = _execute(
        tables,
        ordered,
        options,
        recipe.run.seed,
        plot_dir=plot_dir,
        show_progress=show_progress,
        sources=sources,
    )
    result.provenance = provenance(
        seed=recipe.run.seed,
        steps=[s.name for s in ordered],
        parameters=_parameters(recipe, options),
        started=started,
        recipe=recipe,
        inputs=records,
    )
    return result


def _options_with(recipe: Recipe, names: list[str], overrides, registry) -> dict[str, BaseModel]:
    given: dict[str, Any] = {}
    overrides = overrides or {}
    for name in names:
        current = recipe.options.get(name)
        if name not in overrides and current is not None:
            given[name] = current  # validated already: used as it is
            continue
        values = current.model_dump() if current is not None else {}
        values.update(overrides.get(name, {}))
        given[name] = values
    return validate_step_options(given, names, registry=registry)


def _parameters(recipe: Recipe, options: Mapping[str, BaseModel]) -> dict[str, Any]:
    params = recipe.resolved_options(steps=[])
    params.update({name: model.model_dump(mode="json") for name, model in options.items()})
    return params


def run_recipe(
    path: str | Path, *, out: str | Path | None = None, show_progress: bool | None = None
) -> RunResult:
    """Run the recipe file ``path`` and write its output folder.

    Parameters
    ----------
    path
        TOML recipe (see ``geomet recipe --explain``).
    out
        Output folder (default: the recipe's ``run.output``, relative to the recipe).
    show_progress
        Progress bars on stderr for long steps (default: when stderr is a terminal).

    Returns
    -------
    RunResult
        With ``out_dir`` set to the folder written: the workbook, ``tables/`` (CSV and/or
        Parquet copies of every produced table), ``plots/``, ``models/``, ``run.log``, a copy of
        the recipe and ``provenance.json``.

    Raises
    ------
    RecipeError, StepInputMissing, InputDataError
        Before anything is written, or (for data errors found by a step) with the output folder
        left as it was.
    """
    from geomet.io.writers import check_output_folder, staged_directory

    recipe = load_recipe(path)
    registry = load_steps()
    ordered = order_steps(recipe.run.steps, registry)
    check_step_inputs(ordered, recipe.inputs, registry)
    out_dir = Path(out).resolve() if out is not None else recipe.output_dir
    inputs = [recipe.input_path(name) for name in recipe.inputs]
    check_output_folder(out_dir, [*inputs, recipe.path])
    if show_progress is None:
        show_progress = _stderr_is_terminal()

    with staged_directory(out_dir) as stage, _run_log(stage / "run.log") as log:
        log.info(
            "%s: recipe %s, geomet %s, %d steps: %s",
            recipe.run.title,
            recipe.path.name if recipe.path else "",
            geomet.__version__,
            len(ordered),
            ", ".join(s.name for s in ordered),
        )
        result = run_loaded_recipe(recipe, show_progress=show_progress, plot_dir=stage / "plots")
        recipe_name = recipe.path.name if recipe.path else "recipe.toml"
        _write_outputs(
            result,
            stage,
            out_dir,
            table_format=recipe.run.table_format,
            workbook=recipe.run.workbook,
            sheets=recipe.run.sheets or None,
            recipe_file=(recipe_name, recipe.text),
        )
    result.out_dir = out_dir
    return result


def save_result(
    result: RunResult,
    out: str | Path,
    *,
    table_format: str = "csv",
    workbook: str = "geomet_results.xlsx",
    sheets: Iterable[str] | None = None,
) -> Path:
    """Write the output folder of a :func:`run_steps` result (as :func:`run_recipe` would).

    The folder gets the workbook, ``tables/``, ``plots/`` (copies of the PNGs the steps saved),
    ``models/`` and ``provenance.json``; it is staged beside ``out`` and moved into place at the
    end, and an existing folder is replaced only if geomet wrote it.

    Returns
    -------
    Path
        The folder written (also set as ``result.out_dir``).
    """
    from geomet.io.writers import check_output_folder, staged_directory

    out_dir = Path(out).resolve()
    check_output_folder(out_dir)
    with staged_directory(out_dir) as stage, _run_log(stage / "run.log") as log:
        log.info("saving a run of steps %s", ", ".join(r.name for r in result.steps))
        (stage / "plots").mkdir()
        for plot in list(result.plots):
            if Path(plot.path).is_file():
                target = stage / "plots" / Path(plot.path).name
                target.write_bytes(Path(plot.path).read_bytes())
                result.plots[result.plots.index(plot)] = dataclasses.replace(plot, path=target)
        _write_outputs(
            result, stage, out_dir, table_format=table_format, workbook=workbook, sheets=sheets
        )
    result.out_dir = out_dir
    return out_dir


def _write_outputs(
    result: RunResult,
    stage: Path,
    out_dir: Path,
    *,
    table_format: str,
    workbook: str,
    sheets: Iterable[str] | None,
    recipe_file: tuple[str, str] | None = None,
) -> None:
    """Write tables, models, recipe copy, provenance and workbook into the staged folder."""
    from geomet.io.workbook import write_workbook
    from geomet.io.writers import atomic_write_text, write_json, write_tables

    log = logging.getLogger(LOGGER_NAME)
    for folder in ("tables", "plots", "models"):
        (stage / folder).mkdir(exist_ok=True)
    started = time.perf_counter()
    write_tables(result.outputs, stage / "tables", table_format)
    log.info(
        "wrote %d tables (%s) in %.1f s",
        len(result.outputs),
        table_format,
        time.perf_counter() - started,
    )
    for name, payload in sorted(result.extras.get("json_files", {}).items()):
        write_json(payload, stage / "models" / f"{_file_stem(name)}.json")
    if recipe_file is not None:
        atomic_write_text(stage / recipe_file[0], recipe_file[1])
    result.provenance["finished_utc"] = _now()
    write_json(result.provenance, stage / "provenance.json")
    started = time.perf_counter()
    write_workbook(stage / workbook, result, sheets=sheets)
    log.info("wrote the workbook %s in %.1f s", workbook, time.perf_counter() - started)
    # Plot paths point into the staged folder; point them at the final one.
    result.plots[:] = [
        dataclasses.replace(p, path=out_dir / Path(p.path).relative_to(stage))
        if Path(p.path).is_relative_to(stage)
        else p
        for p in result.plots
    ]
    log.info(
        "run finished: %d tables, %d plots, %d warnings",
        len(result.produced),
        len(result.plots),
        len(result.warnings),
    )


_FILE_STEM = re.compile(r"^[A-Za-z0-9][A-Za-z0-9_.-]{0,100}$")


def _file_stem(name: str) -> str:
    """``name`` if it is a plain file name (letters, digits, ``_.-``), else a GeometError."""
    if not _FILE_STEM.match(str(name)) or ".." in str(name):
        message = (
            f"a step asked to save model {name!r}; model names must be plain file names "
            "(letters, digits, '_', '.', '-')"
        )
        raise GeometError(message)
    return str(name)


@contextlib.contextmanager
def _run_log(path: Path) -> Iterator[logging.Logger]:
    log = logging.getLogger(LOGGER_NAME)
    with log_to(logging.FileHandler(path, encoding="utf-8"), timestamps=True):
        try:
            yield log
        except BaseException as exc:
            first = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            log.error("run failed: %s", first)
            raise


@contextlib.contextmanager
def log_to(handler: logging.Handler, *, timestamps: bool = False, prefix: str = ""):
    """Send INFO and higher messages of every ``geomet.*`` logger to ``handler`` for a while."""
    if timestamps:
        formatter = logging.Formatter(
            "%(asctime)s %(levelname)-7s %(message)s", "%Y-%m-%dT%H:%M:%SZ"
        )
        formatter.converter = time.gmtime
    else:
        formatter = logging.Formatter(f"{prefix}%(message)s")
    handler.setFormatter(formatter)
    package = logging.getLogger(PACKAGE_LOGGER)
    old_level = package.level
    package.addHandler(handler)
    if package.getEffectiveLevel() > logging.INFO:
        package.setLevel(logging.INFO)
    try:
        yield handler
    finally:
        package.removeHandler(handler)
        handler.close()
        package.setLevel(old_level)


def _stderr_is_terminal() -> bool:
    try:
        return sys.stderr.isatty()
    except (AttributeError, ValueError):
        return False


def _now() -> str:
    return datetime.now(UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


def package_versions() -> dict[str, str]:
    """Installed versions of the packages geomet's results depend on."""
    out = {}
    for name in PACKAGES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    return out


def provenance(
    *,
    seed: int,
    steps: list[str],
    parameters: Mapping[str, Any],
    started: str,
    recipe: Recipe | None = None,
    inputs: list[dict] | None = None,
) -> dict[str, Any]:
    """The record of how a result was made (stored as ``provenance.json`` and in the workbook)."""
    record: dict[str, Any] = {
        "geomet_version": geomet.__version__,
        "started_utc": started,
        "seed": seed,
        "steps": list(steps),
        "parameters": dict(parameters),
        "python": platform.python_version(),
        "platform": platform.platform(terse=True),
        "packages": package_versions(),
        "inputs": list(inputs or []),
    }
    if recipe is not None:
        from geomet.io.writers import file_sha256

        record["recipe"] = {
            "file": recipe.path.name if recipe.path else "",
            "sha256": file_sha256(recipe.path) if recipe.path else "",
            "text": recipe.text,
        }
    return record
