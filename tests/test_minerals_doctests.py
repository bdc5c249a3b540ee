"""Run the docstring examples of the minerals package (they are part of its documentation)."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = [
    "geomet.minerals.formula",
    "geomet.minerals.clay",
    "geomet.minerals.groups",
    "geomet.minerals.nnls",
    "geomet.minerals.speciation",
    "geomet.minerals.reconcile",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    result = doctest.testmod(importlib.import_module(name), optionflags=doctest.ELLIPSIS)
    assert result.failed == 0
