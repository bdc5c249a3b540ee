"""Reading a TOML recipe into typed, validated options.

A recipe is data, never code: it is parsed with :mod:`tomllib` and every value is checked against
a declared pydantic model (the ``[run]``, ``[inputs.<table>]`` and ``[detection]`` sections of
:mod:`geomet.recipe.sections`, and each step's registered options model). Every problem in a recipe
is collected and reported together in one :class:`geomet.errors.RecipeError`, each naming the key
path, the value found, what was expected and, for a misspelt key, the nearest valid key.
"""

from __future__ import annotations

import difflib
import tomllib
import types
import typing
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from pydantic import BaseModel, ValidationError

from geomet.errors import RecipeError
from geomet.glossary import INPUT_TABLES
from geomet.recipe.sections import DetectionSection, InputSection, RunSection

TOP_LEVEL_SECTIONS = ("run", "inputs", "detection")
MAX_LISTED_PROBLEMS = 50


@dataclass(frozen=True)
class RecipeProblem:
    """One thing wrong with a recipe: where (key path) and what."""

    key: str
    message: str

    def __str__(self) -> str:
        return f"{self.key}: {self.message}" if self.key else self.message


@dataclass
class Recipe:
    """A validated recipe: typed sections, every registered step's options, and its source."""

    run: RunSection
    inputs: dict[str, InputSection]
    detection: DetectionSection
    options: dict[str, BaseModel]
    text: str = ""
    path: Path | None = None
    base_dir: Path = field(default_factory=Path.cwd)
    sections: tuple[str, ...] = ()  # the top-level sections the recipe gives, in its order

    @property
    def output_dir(self) -> Path:
        """The output folder, resolved against the recipe's folder."""
        return (self.base_dir / self.run.output).resolve()

    def input_path(self, table: str) -> Path:
        """The file of input ``table``, resolved against the recipe's folder."""
        return (self.base_dir / self.inputs[table].path).resolve()

    def resolved_options(self, steps: list[str] | None = None) -> dict[str, dict]:
        """Every option value in effect (defaults filled in), as plain JSON-able dicts."""
        names = self.run.steps if steps is None else steps
        out: dict[str, dict] = {
            "run": self.run.model_dump(mode="json"),
            "detection": self.detection.model_dump(mode="json"),
            "inputs": {name: sec.model_dump(mode="json") for name, sec in self.inputs.items()},
        }
        for name in names:
            if name in self.options:
                out[name] = self.options[name].model_dump(mode="json")
        return out


def raise_recipe_problems(problems: list[RecipeProblem], source: str) -> None:
    """Raise one :class:`RecipeError` listing every problem (up to a limit), if there are any."""
    if not problems:
        return
    shown = problems[:MAX_LISTED_PROBLEMS]
    count = len(problems)
    lines = [f"{source} has {count} problem{'s' if count != 1 else ''}:"]
    lines += [f"  - {p}" for p in shown]
    if count > len(shown):
        lines.append(f"  ... and {count - len(shown)} more")
    message = "\n".join(lines)
    error = RecipeError(message)
    error.problems = list(problems)
    raise error


def suggest(word: str, choices) -> str:
    """``"; did you mean 'x'?"`` for the closest of ``choices``, or ``""`` when none is close."""
    match = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f"; did you mean '{match[0]}'?" if match else ""


def _registry(registry: Mapping | None) -> Mapping:
    if registry is not None:
        return registry
    from geomet.run.registry import load_steps

    return load_steps()


def known_tables(registry: Mapping) -> set[str]:
    """Table names ``[inputs.<table>]`` may give: the input tables and any table a step needs."""
    names = set(INPUT_TABLES)
    produced = {t for s in registry.values() for t in s.produces}
    for step in registry.values():
        names.update(t for t in (*step.needs, *step.optional_needs) if t not in produced)
    return names


def load_recipe(path: str | Path, *, registry: Mapping | None = None) -> Recipe:
    """Read and validate the recipe file ``path``.

    Parameters
    ----------
    path
        TOML recipe file. Relative paths inside it are resolved against its folder.
    registry
        Steps to validate against (default: every registered step, see
        :func:`geomet.run.registry.load_steps`).

    Returns
    -------
    Recipe
        Typed sections and the options of every registered step.

    Raises
    ------
    RecipeError
        Listing every problem found: unknown or misspelt keys and steps, wrong types or values,
        missing input files, TOML syntax errors.
    """
    path = Path(path)
    if not path.is_file():
        message = f"recipe file not found: {path}"
        raise RecipeError(message)
    try:
        text = path.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        message = f"recipe {path.name} is not UTF-8 text ({exc.reason} at byte {exc.start})"
        raise RecipeError(message) from exc
    return parse_recipe(
        text,
        base_dir=path.resolve().parent,
        source=path.name,
        registry=registry,
        path=path.resolve(),
    )


def parse_recipe(
    text: str,
    *,
    base_dir: str | Path = ".",
    source: str = "recipe",
    registry: Mapping | None = None,
    path: Path | None = None,
) -> Recipe:
    """Validate recipe ``text`` (TOML); see :func:`load_recipe`. ``source`` names it in messages."""
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        message = f"{source} is not valid TOML: {exc}"
        raise RecipeError(message) from exc
    steps = _registry(registry)
    base_dir = Path(base_dir)
    problems: list[RecipeProblem] = []

    sections = [*TOP_LEVEL_SECTIONS, *steps]
    for key, value in data.items():
        if key in sections and not isinstance(value, dict):
            problems.append(RecipeProblem(key, f"expected a section [{key}]; got {value!r}"))
        elif key not in sections:
            hint = suggest(key, sections)
            if not hint and key in RunSection.model_fields:
                hint = f"; did you mean to put it under [run] (run.{key})?"
            problems.append(
                RecipeProblem(
                    key,
                    f"unknown section or key (sections are run, inputs, detection and the step "
                    f"names listed by `geomet steps`){hint}",
                )
            )

    if "run" in data:
        run = _validate(RunSection, _table(data, "run"), "run", problems)
    else:
        run = None
        problems.append(
            RecipeProblem("run", "missing section [run] (it gives at least steps = [...])")
        )
    detection = _validate(DetectionSection, _table(data, "detection"), "detection", problems)

    asked = _asked_steps(data, run)
    for name in asked:
        if name not in steps:
            problems.append(
                RecipeProblem(
                    "run.steps", f"unknown step {name!r}{suggest(name, steps)} (see `geomet steps`)"
                )
            )

    if run is not None and run.sheets:
        produced = [t for name in asked if name in steps for t in steps[name].produces]
        for table in run.sheets:
            if table not in produced:
                problems.append(
                    RecipeProblem(
                        "run.sheets",
                        f"table {table!r} is not produced by the steps in run.steps"
                        f"{suggest(table, produced)} (they produce: {', '.join(produced)})",
                    )
                )

    inputs = _validate_inputs(data.get("inputs", {}), base_dir, steps, problems)

    options: dict[str, BaseModel] = {}
    for name, step in steps.items():
        section = data.get(name, {})
        if not isinstance(section, dict):
            continue
        if name in data or name in asked:
            model = _validate(step.options, section, name, problems)
        else:
            model = _defaults_or_none(step.options)
        if model is not None:
            options[name] = model

    raise_recipe_problems(problems, source)
    return Recipe(
        sections=tuple(data),
        run=run,
        inputs=inputs,
        detection=detection,
        options=options,
        text=text,
        path=path,
        base_dir=base_dir,
    )


def validate_step_options(
    options: Mapping[str, Any] | None, steps: list[str], *, registry: Mapping | None = None
) -> dict[str, BaseModel]:
    """Typed options for ``steps`` from plain dicts (or ready options models), for the Python API.

    Raises
    ------
    RecipeError
        For unknown steps (with a suggestion) and every invalid option value.
    """
    registry = _registry(registry)
    options = dict(options or {})
    problems: list[RecipeProblem] = []
    for name in [*steps, *options]:
        if name not in registry:
            problems.append(
                RecipeProblem(
                    name, f"unknown step {name!r}{suggest(name, registry)} (see `geomet steps`)"
                )
            )
    out: dict[str, BaseModel] = {}
    for name in steps:
        if name not in registry:
            continue
        model_cls = registry[name].options
        given = options.get(name, {})
        if isinstance(given, model_cls):
            out[name] = given
            continue
        if isinstance(given, BaseModel):
            given = given.model_dump()
        if not isinstance(given, Mapping):
            problems.append(
                RecipeProblem(
                    name, f"expected a dict of options or a {model_cls.__name__}; got {given!r}"
                )
            )
            continue
        model = _validate(model_cls, dict(given), name, problems)
        if model is not None:
            out[name] = model
    raise_recipe_problems(problems, "the step options")
    return out


# --- helpers -----------------------------------------------------------------------------------
def _table(data: dict, key: str) -> dict:
    value = data.get(key, {})
    return value if isinstance(value, dict) else {}


def _asked_steps(data: dict, run: RunSection | None) -> list[str]:
    if run is not None:
        return list(run.steps)
    raw = _table(data, "run").get("steps", [])
    return [s for s in raw if isinstance(s, str)] if isinstance(raw, list) else []


def _defaults_or_none(model_cls: type[BaseModel]) -> BaseModel | None:
    try:
        return model_cls()
    except ValidationError:
        return None


def _validate(
    model_cls: type[BaseModel], values: dict, prefix: str, problems: list[RecipeProblem]
) -> BaseModel | None:
    try:
        return model_cls.model_validate(values)
    except ValidationError as exc:
        problems.extend(pydantic_problems(exc, prefix, model_cls))
        return None


def pydantic_problems(
    exc: ValidationError, prefix: str, model_cls: type[BaseModel]
) -> list[RecipeProblem]:
    """Turn a pydantic ``ValidationError`` into recipe problems with key paths and suggestions."""
    out = []
    for err in exc.errors(include_url=False):
        loc = [str(part) for part in err["loc"]]
        key = ".".join([prefix, *loc]) if prefix else ".".join(loc)
        kind = err["type"]
        if kind == "extra_forbidden":
            valid = _fields_at(model_cls, loc[:-1])
            hint = suggest(loc[-1], valid)
            listing = f" (valid keys: {', '.join(valid)})" if valid and not hint else ""
            message = f"unknown key{hint}{listing}"
        elif kind == "missing":
            message = "required, but not given"
        elif not loc:
            message = _lower_first(err["msg"])
        else:
            message = f"got {_show(err.get('input'))}; {_lower_first(err['msg'])}"
        out.append(RecipeProblem(key, message))
    return out


def _show(value: Any) -> str:
    text = repr(value)
    return text if len(text) <= 80 else text[:77] + "..."


def _lower_first(text: str) -> str:
    text = text.removeprefix("Value error, ")
    return text[:1].lower() + text[1:]


def _unwrap(annotation):
    """The model class (if any) that values under a field of type ``annotation`` are checked by."""
    origin = typing.get_origin(annotation)
    if origin is typing.Annotated:
        return _unwrap(typing.get_args(annotation)[0])
    if origin in (typing.Union, types.UnionType):
        for arg in typing.get_args(annotation):
            found = _unwrap(arg)
            if found is not None:
                return found
        return None
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    return None


def _fields_at(model_cls: type[BaseModel], loc: list[str]) -> list[str]:
    """Field names of the (nested) model reached by following ``loc`` from ``model_cls``."""
    current: Any = model_cls
    pending_container = None
    for part in loc:
        if pending_container is not None:  # a dict key or list index: step into the value type
            current, pending_container = pending_container, None
            continue
        if not (isinstance(current, type) and issubclass(current, BaseModel)):
            return []
        info = current.model_fields.get(part)
        if info is None:
            return []
        annotation = info.annotation
        nested = _unwrap(annotation)
        if nested is not None:
            current = nested
            continue
        origin = typing.get_origin(annotation)
        if origin in (dict, list, tuple, Mapping):
            args = typing.get_args(annotation)
            value_type = _unwrap(args[-1]) if args else None
            if value_type is None:
                return []
            pending_container = value_type
            current = None
            continue
        return []
    if isinstance(current, type) and issubclass(current, BaseModel):
        return list(current.model_fields)
    return []


def _validate_inputs(
    raw: Any, base_dir: Path, steps: Mapping, problems: list[RecipeProblem]
) -> dict[str, InputSection]:
    inputs: dict[str, InputSection] = {}
    if not isinstance(raw, dict):
        problems.append(RecipeProblem("inputs", f"expected sections [inputs.<table>]; got {raw!r}"))
        return inputs
    tables = known_tables(steps)
    for name, section in raw.items():
        key = f"inputs.{name}"
        if name not in tables:
            hint = suggest(name, tables)
            listing = "" if hint else f" (known tables: {', '.join(sorted(tables))})"
            problems.append(RecipeProblem(key, f"unknown input table{hint}{listing}"))
            continue
        if not isinstance(section, dict):
            problems.append(
                RecipeProblem(key, f"expected a section [{key}] with path = ...; got {section!r}")
            )
            continue
        model = _validate(InputSection, section, key, problems)
        given = section.get("path")
        if isinstance(given, str):
            file = (base_dir / given).resolve()
            if not file.is_file():
                problems.append(RecipeProblem(f"{key}.path", _missing_file_message(given, file)))
                continue
        if model is not None:
            problems.extend(_unit_problems(key, model.units))
            problems.extend(_column_map_problems(key, model.columns))
            inputs[name] = model
    return inputs


def _canonical_columns() -> set[str]:
    from geomet import glossary

    return {
        *glossary.COLUMNS,
        *glossary.ASSAY_COLUMNS,
        *glossary.SCANNED_MINERAL_COLUMNS,
        *glossary.SCAN_FEATURE_COLUMNS,
        *glossary.COLLAR_COLUMNS,
        *glossary.SURVEY_COLUMNS,
    }


def _column_map_problems(key: str, columns: dict[str, str]) -> list[RecipeProblem]:
    """Column-map targets that look like misspelt canonical names (no unit suffix, one close)."""
    from geomet.glossary import unit_of

    known = _canonical_columns()
    out = []
    for source, target in columns.items():
        if target in known or unit_of(target):
            continue
        match = difflib.get_close_matches(target, sorted(known), n=1, cutoff=0.8)
        if match:
            message = (
                f"maps {source!r} to {target!r}, which is not a canonical column; did you mean "
                f"{match[0]!r}?"
            )
            out.append(RecipeProblem(f"{key}.columns", message))
    return out


def _unit_problems(key: str, units: dict[str, str]) -> list[RecipeProblem]:
    """Source units the reader cannot convert into the canonical column's unit."""
    from geomet.errors import InputDataError
    from geomet.io.readers import canonical_unit, unit_factor

    out = []
    for column, unit in units.items():
        target = canonical_unit(column)
        if not target:
            message = (
                f"column {column!r} has no unit suffix (e.g. _pct, _gpt, _ppm, _m), so there is "
                f"no canonical unit to convert {unit!r} into"
            )
            out.append(RecipeProblem(f"{key}.units.{column}", message))
            continue
        try:
            unit_factor(unit, target)
        except InputDataError as exc:
            out.append(RecipeProblem(f"{key}.units.{column}", f"got {unit!r}; {exc}"))
    return out


def _missing_file_message(given: str, resolved: Path) -> str:
    message = f"file not found: {given!r} (looked for {resolved})"
    folder = resolved.parent
    if folder.is_dir():
        names = sorted(p.name for p in folder.iterdir() if p.is_file())
        close = difflib.get_close_matches(resolved.name, names, n=3, cutoff=0.6)
        if close:
            message += f"; files there with similar names: {', '.join(close)}"
    elif resolved.parent != resolved:
        message += f"; the folder {folder} does not exist"
    return message
