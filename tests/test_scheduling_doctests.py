"""The runnable examples in the scheduler's docstrings stay true."""

from __future__ import annotations

import doctest
import importlib

import pytest

MODULES = ["dsatur", "cliques", "validator", "solve", "arrangement", "tabucol", "transversals", "kempe_search"]


@pytest.mark.parametrize("name", MODULES)
def test_docstring_examples(name):
    # DSATUR sits below scheduling and counting (both use it)
    module = importlib.import_module("timetabler.dsatur" if name == "dsatur" else f"timetabler.scheduling.{name}")
    result = doctest.testmod(module, optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0, f"{name} has no examples"
    assert result.failed == 0
