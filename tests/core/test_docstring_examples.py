"""Every example in a core docstring runs and gives what it shows."""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import reviewapp.core as core

MODULES = sorted(
    m.name
    for m in pkgutil.walk_packages(core.__path__, "reviewapp.core.")
    if not m.name.endswith("__main__")
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0, f"{result.failed} docstring example(s) failed in {name}"
