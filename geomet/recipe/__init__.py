"""Recipes: TOML files of typed, validated run options (a recipe never executes code)."""

from geomet.recipe.explain import OptionDoc, SectionDoc, explain, section_docs, template
from geomet.recipe.loader import (
    Recipe,
    RecipeProblem,
    load_recipe,
    parse_recipe,
    validate_step_options,
)
from geomet.recipe.sections import DetectionSection, InputSection, RunSection

__all__ = [
    "DetectionSection",
    "InputSection",
    "OptionDoc",
    "Recipe",
    "RecipeProblem",
    "RunSection",
    "SectionDoc",
    "explain",
    "load_recipe",
    "parse_recipe",
    "section_docs",
    "template",
    "validate_step_options",
]
