"""Exception types raised by geomet.

Each refines a built-in so that callers can catch either the precise geomet
error or the general one (``except ValueError``).
"""

from __future__ import annotations


class GeometError(Exception):
    """Base class of every geomet error."""


class InputDataError(GeometError, ValueError):
    """A table or file does not meet its data contract (columns, values, encoding)."""


class RecipeError(GeometError, ValueError):
    """A recipe option is unknown, mistyped or out of range, or names a missing file."""


class StepInputMissing(GeometError, LookupError):
    """A run step needs a table that no input or earlier step provides."""


class ModelInfeasible(GeometError, RuntimeError):
    """An optimisation model has no feasible solution; carries the diagnosis."""

    def __init__(self, message: str, diagnosis=None):
        super().__init__(message)
        self.diagnosis = diagnosis


class SolverError(GeometError, RuntimeError):
    """The solver stopped without a usable answer for a reason other than infeasibility."""
