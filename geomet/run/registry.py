"""The one place where run steps are declared.

A step is a function ``func(ctx, options) -> dict[str, DataFrame]`` registered with
:func:`register_step`. It declares the tables it needs and produces, so that a run can order
steps, skip what is not asked for and say clearly which input a step is missing, and an options
model (pydantic, ``extra="forbid"``) whose fields (default, type, description) are the recipe
options of the recipe section named after the step.

Step modules live in :mod:`geomet.run.steps`; every module there is imported by
:func:`load_steps`, so adding a step never edits a shared file.
"""

from __future__ import annotations

import importlib
import logging
import pkgutil
from collections.abc import Callable, Iterable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pandas as pd
from pydantic import BaseModel, ConfigDict


class StepOptions(BaseModel):
    """Base of every step's options: unknown keys are errors, values are validated on assignment."""

    model_config = ConfigDict(extra="forbid", validate_assignment=True)


@dataclass(frozen=True)
class Step:
    """A registered run step."""

    name: str
    func: Callable[..., dict[str, pd.DataFrame]]
    options: type[StepOptions]
    needs: tuple[str, ...]
    produces: Mapping[str, str]  # table name -> one-line description (the workbook shows it)
    optional_needs: tuple[str, ...] = ()
    summary: str = ""
    order: int = 100  # tie-break when the dependency order leaves a choice (lower first)


STEPS: dict[str, Step] = {}


def register_step(
    name: str,
    *,
    options: type[StepOptions],
    needs: Iterable[str],
    produces: Mapping[str, str],
    optional_needs: Iterable[str] = (),
    summary: str = "",
    order: int = 100,
):
    """Register ``func`` as the run step ``name`` (use as a decorator)."""

    def decorate(func):
        STEPS[name] = Step(
            name=name,
            func=func,
            options=options,
            needs=tuple(needs),
            produces=dict(produces),
            optional_needs=tuple(optional_needs),
            summary=summary or _first_line(func.__doc__),
            order=order,
        )
        return func

    return decorate


def _first_line(text: str | None) -> str:
    lines = (text or "").strip().splitlines()
    return lines[0] if lines else ""


def load_steps() -> dict[str, Step]:
    """Import every module of :mod:`geomet.run.steps` and return the registry."""
    from geomet.run import steps as steps_pkg

    for info in pkgutil.iter_modules(steps_pkg.__path__):
        importlib.import_module(f"{steps_pkg.__name__}.{info.name}")
    return STEPS


@dataclass
class Plot:
    """A PNG written by a step, to be embedded in the workbook next to ``table``."""

    name: str
    path: Path
    caption: str
    table: str | None = None


@dataclass
class StepContext:
    """What a step sees of the run: tables so far, the seed, where plots go, progress and log."""

    tables: Mapping[str, pd.DataFrame]
    seed: int = 0
    plot_dir: Path | None = None
    log: logging.Logger = field(default_factory=lambda: logging.getLogger("geomet.run"))
    show_progress: bool = False
    plots: list[Plot] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)
    extras: dict[str, Any] = field(default_factory=dict)  # non-table results (fitted models, ...)

    def progress(self, iterable: Iterable, description: str, total: int | None = None):
        """Wrap ``iterable`` in a progress bar (on stderr) when the run shows progress."""
        if not self.show_progress:
            return iterable
        from tqdm.auto import tqdm

        return tqdm(iterable, desc=description, total=total, leave=False)

    def add_plot(self, name: str, figure, caption: str, table: str | None = None) -> Path | None:
        """Save a matplotlib figure as ``<plot_dir>/<name>.png`` and record it for the workbook."""
        import matplotlib.pyplot as plt

        if self.plot_dir is None:
            plt.close(figure)
            return None
        self.plot_dir.mkdir(parents=True, exist_ok=True)
        path = self.plot_dir / f"{name}.png"
        figure.savefig(path, dpi=110, bbox_inches="tight", metadata={"Software": None})
        plt.close(figure)
        self.plots.append(Plot(name, path, caption, table))
        return path

    def note(self, text: str) -> None:
        """Add a line to the run summary (first workbook sheet and the run log)."""
        self.notes.append(text)
        self.log.info(text)
