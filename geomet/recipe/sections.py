"""Recipe sections that are not step options: ``[run]``, ``[inputs.<table>]``, ``[detection]``.

Each section is a pydantic model, so one declaration gives the validation, the defaults and the
text that ``geomet recipe --explain`` prints. Step sections (``[composite]``, ``[blend]``...) are
the options models that the steps register (:class:`geomet.run.registry.StepOptions`).
"""

from __future__ import annotations

import re
from typing import Literal

from pydantic import BaseModel, ConfigDict, Field, field_validator

TableFormat = Literal["csv", "parquet", "both"]
DetectionRuleName = Literal["half_limit", "limit", "fraction", "zero", "missing"]
TextCodeMeaning = Literal["below_detection", "missing"]

_PLAIN_FILE_NAME = re.compile(r"^[^/\\:*?\"<>|]+$")


class _Section(BaseModel):
    model_config = ConfigDict(extra="forbid", validate_assignment=True)


class RunSection(_Section):
    """The ``[run]`` section: what to run and where the results go."""

    title: str = Field(
        "geomet run",
        description="Title shown at the top of the workbook and in the run log.",
    )
    output: str = Field(
        "output",
        description=(
            "Output folder, relative to the recipe file. It is written in full to a temporary "
            "sibling folder and moved into place only when the run succeeds."
        ),
    )
    seed: int = Field(
        0,
        ge=0,
        description="Seed for every random step, so that a run can be repeated exactly.",
    )
    steps: list[str] = Field(
        ...,
        min_length=1,
        description=(
            "Steps to run (see `geomet steps`). They run in the order their tables require, "
            "whatever the order written here."
        ),
    )
    table_format: TableFormat = Field(
        "csv",
        description="File format of the copies of every produced table in <output>/tables/.",
    )
    workbook: str = Field(
        "geomet_results.xlsx",
        description="File name of the results workbook inside the output folder.",
    )
    sheets: list[str] = Field(
        default_factory=list,
        description=(
            "Tables to show as workbook sheets, in run order (default: every table the steps "
            "produce). Every produced table is still copied to <output>/tables/."
        ),
    )

    @field_validator("workbook")
    @classmethod
    def _workbook_is_a_plain_xlsx_name(cls, value: str) -> str:
        if not value.lower().endswith(".xlsx") or not _PLAIN_FILE_NAME.match(value):
            message = (
                "expected a plain file name ending in .xlsx, without folders "
                "(e.g. 'vellantra_results.xlsx')"
            )
            raise ValueError(message)
        return value

    @field_validator("steps")
    @classmethod
    def _steps_unique(cls, value: list[str]) -> list[str]:
        seen: set[str] = set()
        repeated = [name for name in value if name in seen or seen.add(name)]
        if repeated:
            message = f"each step may be listed once; repeated: {', '.join(repeated)}"
            raise ValueError(message)
        return value


class InputSection(_Section):
    """An ``[inputs.<table>]`` section: one input file and how to read it."""

    path: str = Field(
        ..., description="File to read (CSV, XLSX or Parquet), relative to the recipe."
    )
    sheet: str | None = Field(
        None,
        description="Worksheet to read when the file is an XLSX workbook (default: the first).",
    )
    columns: dict[str, str] = Field(
        default_factory=dict,
        description=(
            "Column map from the file's headers to canonical names, e.g. "
            '{ HoleID = "hole_id", "Cu_%" = "cu_pct" }. Unmapped headers are kept as they are.'
        ),
    )
    units: dict[str, str] = Field(
        default_factory=dict,
        description=(
            'Units of the file\'s values by canonical column, e.g. { au_gpt = "ppb" }; values are '
            "converted to the unit that the canonical name carries."
        ),
    )


class DetectionSection(_Section):
    """The ``[detection]`` section: how values below (or above) detection limits become numbers."""

    rule: DetectionRuleName = Field(
        "half_limit",
        description=(
            "Value substituted for a result below detection: half the limit (common practice), "
            "the limit itself, a fraction of it, zero, or missing (NaN)."
        ),
    )
    fraction: float = Field(
        0.5,
        gt=0.0,
        le=1.0,
        description='Fraction of the detection limit substituted when rule = "fraction".',
    )
    text_codes: dict[str, TextCodeMeaning] | None = Field(
        None,
        description=(
            'Laboratory text codes and their meaning, e.g. { BDL = "below_detection", '
            'IS = "missing" }. Omit to use the built-in code table.'
        ),
    )
    default_limits: dict[str, float] = Field(
        default_factory=dict,
        description=(
            "Detection limit by canonical column, used for a text code that says 'below detection' "
            "without giving the limit, e.g. { au_gpt = 0.005 }."
        ),
    )


SECTION_MODELS: dict[str, type[BaseModel]] = {
    "run": RunSection,
    "detection": DetectionSection,
}
