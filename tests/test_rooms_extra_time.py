"""Extra time that runs into the next slot keeps the candidate's seat in the room then.

The Saltmarsh School of Navigation (invented): one hall, an hourly grid. A candidate with
50 % extra time on a 60-minute paper at 9:00 writes until 10:30, so at 10:00 the hall has
one seat fewer for the next paper. The tests count seats per (room, slot) with their own
code from the rows written here, and ask the independent validator.
"""

from __future__ import annotations

import datetime as dt

from timetabler.model import Attendee, Event, Problem, Room, Slot
from timetabler.scheduling import validate
from timetabler.scheduling.solve import SolveOptions, solve

DAY = dt.date(2027, 5, 10)
SLOTS = [Slot(f"Mon {h}:00", date=DAY, start=dt.time(h), length_minutes=60) for h in (9, 10, 11)]


def problem(hall_seats: int, shared: bool = True) -> Problem:
    # NAV1: kit (50 % extra time) and lin; NAV2: three others, no one in common with NAV1
    enrolments = [("kit", "NAV1"), ("lin", "NAV1"), ("mo", "NAV2"), ("ned", "NAV2"), ("oda", "NAV2")]
    return Problem(enrolments, events={"NAV1": Event("NAV1", duration_minutes=60), "NAV2": Event("NAV2", duration_minutes=60)},
                   rooms=[Room("Chart Hall", capacity=hall_seats, shared=shared)],
                   people={"kit": Attendee("kit", extra_time_percent=50)})


def seats_by_hand(p: Problem, assignment, rooms) -> dict[tuple[str, int], int]:
    """Seats per (room, slot): each event's seats in its start slot, plus one per extra-time candidate whose
    sitting (60 minutes x 1.5 = 90) runs into the next hour of the grid."""
    out: dict[tuple[str, int], int] = {}
    for code, parts in rooms.items():
        for name, n in parts:
            out[(name, assignment[code])] = out.get((name, assignment[code]), 0) + n
            late = sum(1 for a, c in p.enrolments if c == code and a in p.people and p.people[a].extra_time_percent)
            if late and assignment[code] < len(SLOTS):
                out[(name, assignment[code] + 1)] = out.get((name, assignment[code] + 1), 0) + late
    return out


def test_a_full_hall_in_the_next_hour_is_refused_by_the_validator():
    p = problem(hall_seats=3)
    seating = {"NAV1": [("Chart Hall", 2)], "NAV2": [("Chart Hall", 3)]}
    v = validate(p, SLOTS, {"NAV1": 1, "NAV2": 2}, seating)
    assert not v.ok
    assert any("Chart Hall holds 4 attendees in" in x and "kit" in x for x in v.violations), v.violations
    assert seats_by_hand(p, {"NAV1": 1, "NAV2": 2}, seating)[("Chart Hall", 2)] == 4
    assert validate(p, SLOTS, {"NAV1": 1, "NAV2": 3}, seating).ok  # an hour later, the hall is free again


def test_solve_leaves_room_for_the_candidate_still_writing():
    for shared in (True, False):
        p = problem(hall_seats=3, shared=shared)
        run = solve(p, SLOTS, SolveOptions(time_limit=5, workers=1))
        assert run.status in ("optimal", "feasible"), run.reasons
        assert validate(p, SLOTS, run.assignment, run.rooms, own_rooms=run.own_rooms).ok
        assert all(n <= 3 for n in seats_by_hand(p, run.assignment, run.rooms).values())
        # NAV2 cannot follow NAV1 in the next hour (kit's seat), nor share it
        assert run.assignment["NAV2"] != run.assignment["NAV1"] + 1


def test_with_two_slots_and_no_room_to_spare_nothing_is_returned_as_valid():
    # NAV1 at 9:00 keeps a seat at 10:00, NAV2 needs all three then; NAV1 at 10:00 runs past the day's end
    p = problem(hall_seats=3)
    two = SLOTS[:2]
    run = solve(p, two, SolveOptions(time_limit=5, workers=1))
    if run.status in ("optimal", "feasible"):
        assert validate(p, two, run.assignment, run.rooms, own_rooms=run.own_rooms).ok
    else:
        assert run.status in ("infeasible", "unknown")
    # by hand: the only orders are NAV1 9:00 / NAV2 10:00 (4 seats at 10:00) or NAV2 9:00 / NAV1 10:00 (kit's
    # 90 minutes from 10:00 pass the day's last slot): no timetable exists
    assert run.status != "optimal" and run.status != "feasible"
