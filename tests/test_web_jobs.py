"""Solve jobs of the web page: progress reports reduced to what the page shows; a failing
child process becomes a message, not a hang."""

from __future__ import annotations

from dataclasses import dataclass

from timetabler.model import Problem, generic_slots
from timetabler.web.jobs import SolveJob, progress_fields


@dataclass
class _Report:
    penalty: int
    bound: float
    phase: str = "goals"


def test_progress_fields_take_dicts_dataclasses_and_keywords():
    assert progress_fields(({"penalty": 40, "bound": 12.0, "phase": "goals", "slots": 5},), {}) == {
        "best": 40, "penalty": 40, "bound": 12.0, "phase": "goals"}
    assert progress_fields((_Report(7, 3.0),), {"gap": 0.5})["best"] == 7
    # While searching for a first clash-free timetable there are no goals yet: no penalty to show.
    assert "best" not in progress_fields(({"penalty": 0, "bound": 0.0, "phase": "clash-free"},), {})
    assert progress_fields((), {"flag": True, "message": "x"}) == {"message": "x"}


def test_a_failing_solve_becomes_a_message():
    problem = Problem([("HV-S0001", "A"), ("HV-S0001", "B")])
    job = SolveJob(problem, [(2, generic_slots(2))], options="not options", time_limit=5).start()
    assert job.wait(60)
    assert job.state == "failed"
    assert "Error" in job.error and "Traceback" not in job.error
    assert job.to_json()["state"] == "failed"
    assert not job.cancel()  # nothing left to stop


def test_a_small_solve_finishes_with_a_clash_free_timetable():
    problem = Problem([("HV-S0001", "A"), ("HV-S0001", "B"), ("HV-S0002", "B"), ("HV-S0002", "C")])
    job = SolveJob(problem, [(2, generic_slots(2)), (1, generic_slots(1))], time_limit=5).start()
    assert job.wait(60) and job.state == "finished", job.error
    two, one = job.runs[2], job.runs[1]
    # A path A-B-C needs 2 slots (bipartite) and cannot fit in 1: checked directly.
    assert two.assignment["A"] != two.assignment["B"] != two.assignment["C"]
    assert one.status == "infeasible" and not one.assignment
    assert two.validation is not None and two.validation.ok  # the validator ran in the child
