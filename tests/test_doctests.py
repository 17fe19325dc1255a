"""Run the docstring examples of the installed package (they state published answers)."""

from __future__ import annotations

import doctest
import importlib
import pkgutil

import pytest

import mergecheck

MODULES = sorted(
    name for _, name, _ in pkgutil.walk_packages(mergecheck.__path__, "mergecheck.") if not name.endswith("__main__")
)


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name: str) -> None:
    module = importlib.import_module(name)
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS | doctest.NORMALIZE_WHITESPACE)
    assert result.failed == 0
