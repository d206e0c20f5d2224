"""The examples in the intake docstrings run and give what they show."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["reading", "normalising", "vocabulary", "people", "validation"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(f"timetabler.intake.{name}")
    result = doctest.testmod(module)
    assert result.attempted > 0, f"{name} has no examples"
    assert result.failed == 0
