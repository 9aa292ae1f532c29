"""Run the worked examples in the measurement modules' docstrings (formulas, helpers)."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = [
    "qtc",
    "intervals",
    "axes",
    "amplitudes",
    "limits",
    "limit_text",
    "findings",
    "output",
    "limb_consistency",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(f"reviewapp.core.measure.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0 and result.failed == 0
