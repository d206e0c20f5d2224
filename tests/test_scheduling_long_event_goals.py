"""The goals of timetables with long events: the penalty the solver reports is the validator's.

A 2-hour meeting in an hourly grid ends an hour after it starts, so a meeting right after it
is back-to-back (from its last hour), not "two in a day" as its start alone would say. Random
small problems of the fictional Quillon Vale Choir (invented), every weight of the order goals
on; the test checks the solver's reported penalty against the independent validator and, on
the smallest, the optimum against its own brute force over every timetable.
"""

from __future__ import annotations

import datetime as dt
import itertools
import random

import pytest

from timetabler.model import Event, Problem, Slot, Weights
from timetabler.scheduling import validate
from timetabler.scheduling.solve import SolveOptions, solve

MONDAY = dt.date(2027, 9, 6)


def grid(days: int, hours: int) -> list[Slot]:
    return [Slot(f"D{d + 1} {9 + h}:00", date=MONDAY + dt.timedelta(days=d), start=dt.time(9 + h),
                 length_minutes=60) for d in range(days) for h in range(hours)]


def random_problem(seed: int, weights: Weights) -> Problem:
    rng = random.Random(seed)
    codes = [f"S{i}" for i in range(rng.randint(3, 5))]
    events = {c: Event(c, duration_minutes=rng.choice([60, 120, 120])) for c in codes}
    singers = [f"v{i}" for i in range(6)]
    enrolments = sorted({(v, c) for v in singers for c in rng.sample(codes, 2)})
    return Problem(enrolments, events=events, weights=weights)


def test_a_meeting_right_after_a_long_one_is_back_to_back():
    # L takes 9:00 and 10:00, S 11:00: one attendee, back-to-back from L's last hour (10:00) to 11:00
    p = Problem([("ana", "L"), ("ana", "S")], events={"L": Event("L", duration_minutes=120), "S": Event("S")},
                weights=Weights(back_to_back=10, overnight=0, same_day=2, proximity=0, preferred_slot=0,
                                penalised_slot=0, room_split=0, moved=0, preferred_room=0, penalised_room=0))
    slots = grid(1, 3)
    run = solve(p, slots, SolveOptions(time_limit=5, workers=1))
    assert run.status == "optimal"
    # the only timetables: L 9-11 then S 11:00, or S 9:00 then L 10-12; back-to-back either way
    assert run.assignment in ({"L": 1, "S": 3}, {"L": 2, "S": 1})
    assert run.penalty == validate(p, slots, run.assignment).penalty == 10


@pytest.mark.parametrize("seed", range(8))
def test_the_reported_penalty_is_the_validators_and_optimal_is_optimal(seed):
    weights = Weights(back_to_back=10, overnight=3, same_day=2, proximity=1, preferred_slot=0, penalised_slot=0,
                      room_split=0, moved=0, preferred_room=0, penalised_room=0)
    p = random_problem(seed, weights)
    slots = grid(2, 4)
    run = solve(p, slots, SolveOptions(time_limit=8, workers=1))
    codes = sorted(p.events)
    best = None
    for combo in itertools.product(range(1, len(slots) + 1), repeat=len(codes)):
        v = validate(p, slots, dict(zip(codes, combo)))
        if v.ok:
            best = v.penalty if best is None else min(best, v.penalty)
    if best is None:
        assert run.status == "infeasible"
        return
    assert run.status in ("optimal", "feasible")
    checked = validate(p, slots, run.assignment)
    assert checked.ok, checked.violations
    assert run.penalty == checked.penalty, (run.penalty_breakdown, checked.soft)
    if run.status == "optimal":
        assert run.penalty == best
