"""The runnable examples in the store's docstrings stay true."""

from __future__ import annotations

import doctest
import importlib

import pytest


@pytest.mark.parametrize("name", ["records", "changes"])
def test_docstring_examples(name):
    module = importlib.import_module(f"timetabler.store.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0, f"{name} has no examples"
    assert result.failed == 0
