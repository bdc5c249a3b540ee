"""Documentation of every recipe option, read from the same pydantic models that validate them."""

from __future__ import annotations

import enum
import json
import math
import re
import textwrap
import types
import typing
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any, Literal

import annotated_types
from pydantic import BaseModel
from pydantic_core import PydanticUndefined

from geomet.errors import RecipeError
from geomet.recipe.loader import _registry, known_tables, suggest
from geomet.recipe.sections import DetectionSection, InputSection, RunSection


@dataclass(frozen=True)
class OptionDoc:
    """One recipe option: key path, type, default, allowed values, limits and meaning."""

    key: str
    type: str
    default: str
    allowed: tuple[str, ...]
    limits: str
    description: str
    literal: str | None = None  # the default as a TOML value (None: required, or no default)


@dataclass(frozen=True)
class SectionDoc:
    """A recipe section and its options."""

    name: str
    header: str
    summary: str
    options: tuple[OptionDoc, ...]


def section_docs(
    section: str | None = None, *, registry: Mapping | None = None
) -> list[SectionDoc]:
    """Documentation of every recipe section, or of one (``"run"``, ``"inputs"``, a step name...).

    A key path inside a section (``"blend.mill"``) narrows the options listed to that path.

    Raises
    ------
    RecipeError
        For an unknown section name (with the nearest valid one).
    """
    steps = _registry(registry)
    tables = ", ".join(sorted(known_tables(steps)))
    docs = [
        SectionDoc(
            "run",
            "[run]",
            "What to run and where the results go.",
            tuple(model_options(RunSection, "run")),
        ),
        SectionDoc(
            "inputs",
            "[inputs.<table>]",
            f"One section per input file; <table> is one of: {tables}.",
            tuple(model_options(InputSection, "inputs.<table>")),
        ),
        SectionDoc(
            "detection",
            "[detection]",
            "How results reported below (or above) a detection limit become numbers.",
            tuple(model_options(DetectionSection, "detection")),
        ),
    ]
    for name, step in _run_order(steps).items():
        needs = ", ".join(step.needs) or "none"
        produces = ", ".join(step.produces) or "none"
        summary = f"{step.summary} Needs: {needs}. Produces: {produces}.".strip()
        docs.append(
            SectionDoc(name, f"[{name}]", summary, tuple(model_options(step.options, name)))
        )
    if section is None:
        return docs
    head = section.split(".")[0]
    for doc in docs:
        if doc.name == head:
            if section == head:
                return [doc]
            chosen = tuple(
                o
                for o in doc.options
                if o.key == section or o.key.startswith((section + ".", section + "["))
            )
            if not chosen:
                message = (
                    f"section [{head}] has no option {section!r}"
                    f"{suggest(section, [o.key for o in doc.options])}"
                )
                raise RecipeError(message)
            return [SectionDoc(doc.name, doc.header, doc.summary, chosen)]
    message = (
        f"unknown recipe section {section!r}{suggest(head, [d.name for d in docs])}; "
        f"sections: {', '.join(d.name for d in docs)}"
    )
    raise RecipeError(message)


def _run_order(steps: Mapping) -> dict:
    """Steps in the order a run of all of them would take (registry order if that fails)."""
    from geomet.run.pipeline import order_steps

    try:
        return {s.name: s for s in order_steps(list(steps), steps)}
    except RecipeError:
        return dict(steps)


def explain(section: str | None = None, *, registry: Mapping | None = None, width: int = 96) -> str:
    """Plain-text listing of recipe options (what ``geomet recipe --explain`` prints)."""
    out: list[str] = []
    for doc in section_docs(section, registry=registry):
        out.append(doc.header)
        out += textwrap.wrap(doc.summary, width, initial_indent="  ", subsequent_indent="  ")
        if not doc.options:
            out.append("  (no options)")
        for opt in doc.options:
            out.append("")
            out.append(f"  {opt.key}")
            facts = [f"type: {opt.type}", f"default: {opt.default}"]
            if opt.allowed:
                facts.append("allowed: " + ", ".join(opt.allowed))
            if opt.limits:
                facts.append(f"limits: {opt.limits}")
            out += textwrap.wrap(
                "; ".join(facts), width, initial_indent="      ", subsequent_indent="      "
            )
            out += textwrap.wrap(
                opt.description or "(no description)",
                width,
                initial_indent="      ",
                subsequent_indent="      ",
            )
        out.append("")
    return "\n".join(out).rstrip() + "\n"


def model_options(model_cls: type[BaseModel], prefix: str) -> list[OptionDoc]:
    """Every option of ``model_cls`` (nested models flattened into dotted key paths)."""
    out: list[OptionDoc] = []
    for name, info in model_cls.model_fields.items():
        key = f"{prefix}.{name}" if prefix else name
        annotation = info.annotation
        nested = _model_class(annotation)
        if nested is not None:
            out.extend(model_options(nested, key))
            continue
        literal = _default_literal(info)
        if literal is None:
            required = info.default is PydanticUndefined and info.default_factory is None
            default = "required" if required else "none (omit the key)"
        else:
            default = literal
        out.append(
            OptionDoc(
                key=key,
                type=type_name(annotation),
                default=default,
                allowed=allowed_values(annotation),
                limits=_limits(info.metadata, annotation),
                description=" ".join((info.description or "").split()),
                literal=literal,
            )
        )
        contained = _contained_model(annotation)
        if contained is not None:
            kind, inner = contained
            out.extend(model_options(inner, f"{key}[]" if kind == "list" else f"{key}.<name>"))
    return out


def _model_class(annotation) -> type[BaseModel] | None:
    if isinstance(annotation, type) and issubclass(annotation, BaseModel):
        return annotation
    return None


def _contained_model(annotation) -> tuple[str, type[BaseModel]] | None:
    """``("list", M)`` for ``list[M]``, ``("dict", M)`` for ``dict[str, M]`` (also if optional)."""
    origin = typing.get_origin(annotation)
    args = typing.get_args(annotation)
    if origin in (typing.Union, types.UnionType, typing.Annotated):
        for arg in args:
            found = _contained_model(arg)
            if found is not None:
                return found
        return None
    if origin in (list, tuple) and args and _model_class(args[0]) is not None:
        return "list", args[0]
    if origin in (dict, Mapping) and len(args) == 2 and _model_class(args[1]) is not None:
        return "dict", args[1]
    return None


def _default_literal(info) -> str | None:
    """The field's default written as TOML, or None when it is required or defaults to None."""
    if info.default is PydanticUndefined and info.default_factory is None:
        return None
    value = info.default_factory() if info.default_factory is not None else info.default
    if value is None or _holds_none(value):
        return None
    return toml_value(value)


def _holds_none(value: Any) -> bool:
    if isinstance(value, BaseModel):
        value = value.model_dump(mode="json")
    if isinstance(value, dict):
        return any(v is None or _holds_none(v) for v in value.values())
    if isinstance(value, (list, tuple)):
        return any(v is None or _holds_none(v) for v in value)
    return False


def toml_value(value: Any) -> str:
    """A value as it would be written in a recipe (``"text"``, ``true``, ``[1, 2]``...)."""
    if value is None:
        return "none (omit the key)"
    if isinstance(value, BaseModel):
        value = value.model_dump(mode="json")
    if isinstance(value, enum.Enum):
        value = value.value
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        if not value:
            return "{}"
        return (
            "{ " + ", ".join(f"{_toml_key(k)} = {toml_value(v)}" for k, v in value.items()) + " }"
        )
    if isinstance(value, (int, float)):
        return (
            repr(value) if isinstance(value, int) or math.isfinite(value) else _toml_special(value)
        )
    return json.dumps(str(value), ensure_ascii=False)


def _toml_special(value: float) -> str:
    if math.isnan(value):
        return "nan"
    return "inf" if value > 0 else "-inf"


_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")  # TOML 1.0 bare keys: ASCII letters, digits, _ and -


def _toml_key(key: Any) -> str:
    key = str(key)
    return key if _BARE_KEY.match(key) else json.dumps(key, ensure_ascii=False)


def template(*, registry: Mapping | None = None, width: int = 96) -> str:
    """A complete starter recipe: every section and option with its default, as TOML comments.

    ``[run]`` is filled in (all registered steps, in run order); every other option is a comment
    ``# key = default`` that can be un-commented as it is. Options without a default are listed
    as ``#- key`` lines.
    """
    steps = _run_order(_registry(registry))
    docs = section_docs(registry=steps)
    out = [
        "# geomet recipe. Remove the leading '# ' of an option to set it; every option is shown",
        "# with its default. Paths are relative to this file. `geomet recipe --explain SECTION`",
        "# describes each option; `geomet steps` lists the steps.",
        "",
        "[run]",
    ]
    run_values = RunSection(steps=list(steps) or ["check"]).model_dump()
    for key, value in run_values.items():
        out.append(f"{key} = {toml_value(value)}")
    from geomet.glossary import INPUT_TABLES

    out.append("")
    for table, meaning in INPUT_TABLES.items():
        out.append(f"# {meaning}")
        out.append(f"# [inputs.{table}]")
        out.append(f'# path = "{table}.csv"')
        out.append("")
    for doc in docs:
        if doc.name in ("run", "inputs"):
            continue
        out += textwrap.wrap(doc.summary, width, initial_indent="# ", subsequent_indent="# ")
        out.append(f"[{doc.name}]")
        for opt in doc.options:
            key = opt.key.removeprefix(doc.name + ".")
            if "<name>" in key or "[]" in key:
                continue
            out += textwrap.wrap(
                opt.description or "(no description)",
                width - 3,
                initial_indent="#   ",
                subsequent_indent="#   ",
            )
            if opt.literal is not None:
                out.append(f"# {key} = {opt.literal}")
            else:
                out.append(f"#- {key} ({opt.type}; {opt.default})")
        out.append("")
    return "\n".join(out).rstrip() + "\n"


def allowed_values(annotation) -> tuple[str, ...]:
    """The allowed values of a Literal or Enum type (also inside Optional/list), else ``()``."""
    origin = typing.get_origin(annotation)
    if origin is Literal:
        return tuple(toml_value(a) for a in typing.get_args(annotation))
    if isinstance(annotation, type) and issubclass(annotation, enum.Enum):
        return tuple(toml_value(m.value) for m in annotation)
    if origin in (dict, Mapping):
        return (
            allowed_values(typing.get_args(annotation)[-1]) if typing.get_args(annotation) else ()
        )
    if origin in (typing.Union, types.UnionType, list, tuple, set, frozenset, typing.Annotated):
        out: list[str] = []
        for arg in typing.get_args(annotation):
            out += [v for v in allowed_values(arg) if v not in out]
        return tuple(out)
    return ()


_SIMPLE = {
    bool: "true/false",
    int: "integer",
    float: "number",
    str: "text",
    type(None): "none",
    Any: "any value",
}


def type_name(annotation) -> str:
    """Plain-words type of a recipe value (``number``, ``list of text``, ``table text -> text``)."""
    if annotation in _SIMPLE:
        return _SIMPLE[annotation]
    origin = typing.get_origin(annotation)
    args = typing.get_args(annotation)
    if origin is typing.Annotated:
        return type_name(args[0])
    if origin is Literal:
        kinds = {type(a) for a in args}
        return " or ".join(sorted(_SIMPLE.get(k, k.__name__) for k in kinds))
    if origin in (typing.Union, types.UnionType):
        parts = [type_name(a) for a in args if a is not type(None)]
        text = " or ".join(dict.fromkeys(parts))
        return f"{text} (optional)" if type(None) in args else text
    if origin in (list, tuple, set, frozenset):
        inner = [a for a in args if a is not Ellipsis]
        return f"list of {type_name(inner[0])}" if inner else "list"
    if origin in (dict, Mapping):
        return f"table {type_name(args[0])} -> {type_name(args[1])}" if args else "table"
    if isinstance(annotation, type):
        if issubclass(annotation, enum.Enum):
            return "text"
        if issubclass(annotation, BaseModel):
            return "section"
        return annotation.__name__
    return str(annotation)


def _limits(metadata, annotation=None) -> str:
    parts = []
    for item in metadata:
        for attr, sign in (("ge", ">="), ("gt", ">"), ("le", "<="), ("lt", "<")):
            value = getattr(item, attr, None)
            if value is not None and isinstance(
                item,
                (annotated_types.Ge, annotated_types.Gt, annotated_types.Le, annotated_types.Lt),
            ):
                parts.append(f"{sign} {value}")
        unit = "character(s)" if annotation is str else "item(s)"
        if isinstance(item, annotated_types.MinLen):
            parts.append(f"at least {item.min_length} {unit}")
        if isinstance(item, annotated_types.MaxLen):
            parts.append(f"at most {item.max_length} {unit}")
    return ", ".join(parts)
