"""The runnable examples in the model's and the application layer's docstrings stay true."""

from __future__ import annotations

import doctest
import importlib

import pytest


@pytest.mark.parametrize("name", ["timetabler.model", "timetabler.plan", "timetabler.errors"])
def test_docstring_examples(name):
    result = doctest.testmod(importlib.import_module(name), optionflags=doctest.ELLIPSIS)
    assert result.attempted > 0, f"{name} has no examples"
    assert result.failed == 0


def test_a_status_given_as_its_word_is_held_as_the_enum_and_a_wrong_word_is_refused():
    from timetabler.model import SolveStatus, generic_slots
    from timetabler.scheduling import SolveRun

    run = SolveRun(slots=2, slot_list=generic_slots(2), status="feasible", assignment={"A": 1})
    assert run.status is SolveStatus.FEASIBLE and run.found
    run.status = "infeasible"
    assert run.status is SolveStatus.INFEASIBLE and not run.found
    with pytest.raises(ValueError):
        run.status = "optimal-ish"
    assert run.timetable.assignment == {"A": 1} and run.timetable.slot_count == 2
