"""The runnable examples in the counting engine's docstrings stay true."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = [
    "timetabler.counting.polynomial",
    "timetabler.counting.frontier",
    "timetabler.counting.falling_frontier",
    "timetabler.counting.deletion_contraction",
    "timetabler.counting.reductions",
    "timetabler.counting.timetables",
    "timetabler.counting.problem_counts",
]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    module = importlib.import_module(name)
    failures, tried = doctest.testmod(module, optionflags=doctest.NORMALIZE_WHITESPACE)
    assert tried > 0, f"{name} has no examples"
    assert failures == 0
