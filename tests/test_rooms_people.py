"""Rooms for people: long events hold their rooms in every slot they take, and attendees with an
Own room sit alone in a room of that type for their whole sitting.

Every check is made two ways: by the independent validator (``validate(..., own_rooms=...)``)
and by this file's own count of the seats in each room in each slot, from its own reading of
an hourly grid (a 120-minute event takes its hour and the next; ``p`` % extra time on ``D``
minutes is a sitting of ``ceil(D * (100 + p) / 100)`` minutes, taking every hour it overlaps).
Where a best timetable is asserted, it is this file's brute force over every timetable and every
way of seating it (one room per event, no splitting) that says what is best.

Invented people and rooms of the Brackenmoor School of Cartography, a fictional school.
"""

from __future__ import annotations

import datetime as dt
import itertools
import json
import math
from collections import defaultdict

import pytest

from timetabler.model import Attendee, Event, Problem, Room, Slot, Weights
from timetabler.scheduling import SolveOptions, solve, validate
from timetabler.scheduling.rooms import seat_events

MONDAY = dt.date(2027, 3, 1)
ZERO = {name: 0 for name in Weights().__dict__}
OPT = SolveOptions(time_limit=8, workers=1, seed=2)


def hours(*starts: int) -> list[Slot]:
    return [Slot(f"Mon {h}:00", date=MONDAY, start=dt.time(h), length_minutes=60) for h in starts]


def group(code: str, n: int, prefix: str) -> list[tuple[str, str]]:
    return [(f"{prefix}{i:02d}", code) for i in range(n)]


# --- this file's own reading of the hourly grid ------------------------------------------------


def own_hours(problem: Problem, slots: list[Slot], code: str, start: int, attendee: str | None = None):
    """The slots (1-based) ``code`` started in ``start`` takes, for ``attendee`` with their extra time;
    None when that runs past the day's last hour."""
    minutes = problem.events[code].duration_minutes or 60
    person = problem.people.get(attendee) if attendee else None
    if person is not None and person.extra_time_percent:
        minutes = math.ceil(minutes * (100 + person.extra_time_percent) / 100)
    taken = list(range(start, start + math.ceil(minutes / 60)))
    if taken[-1] > len(slots):
        return None
    return taken


def seats_per_room_slot(problem, slots, assignment, rooms, own_rooms):
    """(room, slot) -> [(what, seats)] counted here: an event's seats in every hour it takes, an attendee
    apart one seat in every hour of their sitting."""
    used = defaultdict(list)
    for code, parts in rooms.items():
        for name, seats in parts:
            for t in own_hours(problem, slots, code, assignment[code]):
                used[(name, t)].append((code, seats))
    for (attendee, code), name in own_rooms.items():
        for t in own_hours(problem, slots, code, assignment[code], attendee):
            used[(name, t)].append((f"{attendee} apart", 1))
    return used


def assert_seated_by_hand(problem, slots, assignment, rooms, own_rooms):
    """Capacities, sharing, own rooms alone and of their type, each event seated in full less those apart."""
    by_name = {r.name: r for r in problem.rooms}
    used = seats_per_room_slot(problem, slots, assignment, rooms, own_rooms)
    for (name, t), holders in used.items():
        room = by_name[name]
        assert sum(n for _, n in holders) <= room.capacity, (name, t, holders)
        apart = [w for w, _ in holders if w.endswith(" apart")]
        if apart:
            assert len(holders) == 1, (name, t, holders)  # alone: nothing else in that room that hour
        if not room.shared:
            assert len({w for w, _ in holders}) <= 1, (name, t, holders)
    sizes = problem.event_sizes()
    for code in problem.events:
        away = sum(1 for (a, c) in own_rooms if c == code)
        assert sum(n for _, n in rooms.get(code, [])) == sizes[code] - away, code
    for (attendee, code), name in own_rooms.items():
        assert by_name[name].room_type.casefold() == problem.people[attendee].own_room_type.casefold()
    wanted = {(a, c) for a, c in problem.enrolments if problem.people.get(a) and problem.people[a].own_room_type}
    assert set(own_rooms) == wanted


def seatable_by_brute_force(problem, slots, assignment) -> bool:
    """Is there any seating of ``assignment`` (each event whole in one room, each attendee apart in one room of
    their type), by trying them all?"""
    sizes = problem.event_sizes()
    away = {r.name: {i for i, s in enumerate(slots, start=1) if s.label in r.unavailable_slots} for r in problem.rooms}
    apart = [(a, c) for a, c in problem.enrolments if problem.people.get(a) and problem.people[a].own_room_type]
    need = {c: sizes[c] - sum(1 for _, cc in apart if cc == c) for c in problem.events}
    seated = [c for c in sorted(problem.events) if need[c] > 0]
    names = [r.name for r in problem.rooms]
    for choice in itertools.product(names, repeat=len(seated) + len(apart)):
        rooms = {c: [(n, need[c])] for c, n in zip(seated, choice)}
        own = dict(zip(apart, choice[len(seated):]))
        by_name = {r.name: r for r in problem.rooms}
        if any((by_name[n].room_type or "") != (problem.events[c].room_type or by_name[n].room_type or "")
               for c, [(n, _)] in rooms.items()):
            continue
        if any((by_name[n].room_type or "").casefold() != problem.people[a].own_room_type.casefold()
               for (a, _), n in own.items()):
            continue
        used = seats_per_room_slot(problem, slots, assignment, rooms, own)
        if any(t in away[n] for (n, t) in used):
            continue
        ok = True
        for (n, t), holders in used.items():
            room = by_name[n]
            who = {w for w, _ in holders}
            if sum(s for _, s in holders) > room.capacity or (len(who) > 1 and not room.shared) \
                    or (any(w.endswith(" apart") for w in who) and len(holders) > 1):
                ok = False
                break
        if ok:
            return True
    return False


# --- long events ------------------------------------------------------------------------------


def mapping_problem(hall_free_at_ten: bool = True) -> Problem:
    events = {"SURVEY": Event("SURVEY", "Field survey methods", duration_minutes=120),
              "LEGEND": Event("LEGEND", "Map legends", duration_minutes=60)}
    rooms = [Room("Compass Hall", 10, unavailable_slots=() if hall_free_at_ten else ("Mon 10:00",)),
             Room("Plotting Room", 6)]
    return Problem(group("SURVEY", 6, "sv") + group("LEGEND", 6, "lg"), events=events, rooms=rooms)


def test_a_two_hour_event_holds_the_same_room_in_both_hours():
    slots = hours(9, 10, 11)
    p = mapping_problem()
    at = {"SURVEY": 1, "LEGEND": 2}
    seating = seat_events(p, slots, at, p.event_sizes())
    assert not seating.failed_groups and not seating.failed_slots
    # best fit puts SURVEY (6) in the Plotting Room (6) for both hours; LEGEND at 10:00 cannot join it there
    assert seating.rooms["SURVEY"] == [("Plotting Room", 6)]
    assert seating.rooms["LEGEND"] == [("Compass Hall", 6)]
    used = seats_per_room_slot(p, slots, at, seating.rooms, {})
    assert used[("Plotting Room", 2)] == [("SURVEY", 6)]  # held in its second hour too
    assert_seated_by_hand(p, slots, at, seating.rooms, {})
    v = validate(p, slots, at, seating.rooms)
    assert v.ok, v.violations
    # the validator does count the second hour: LEGEND in the Plotting Room at 10:00 would be 12 in 6 seats
    wrong = validate(p, slots, at, {"SURVEY": [("Plotting Room", 6)], "LEGEND": [("Plotting Room", 6)]})
    assert any("Plotting Room holds 12 attendees in slot 2" in t for t in wrong.violations), wrong.violations


def test_a_one_hour_event_cannot_take_the_seats_a_long_event_holds():
    slots = hours(9, 10, 11)
    p = mapping_problem(hall_free_at_ten=False)  # at 10:00 only the Plotting Room, which SURVEY holds
    at = {"SURVEY": 1, "LEGEND": 2}
    seating = seat_events(p, slots, at, p.event_sizes())
    assert not seatable_by_brute_force(p, slots, at)
    assert seating.failed_groups == [[("LEGEND", 2), ("SURVEY", 1)]]  # the exact starts, forbidden together
    assert sorted(seating.failed_slots) == [1, 2]
    assert seating.failed_slots[2] == ["LEGEND", "SURVEY"] and not seating.unsettled_slots
    # in the third hour it is seatable, and the brute force agrees
    at = {"SURVEY": 1, "LEGEND": 3}
    assert seatable_by_brute_force(p, slots, at)
    seating = seat_events(p, slots, at, p.event_sizes())
    assert not seating.failed_groups
    assert_seated_by_hand(p, slots, at, seating.rooms, {})
    assert validate(p, slots, at, seating.rooms).ok


def test_solve_moves_events_when_only_the_cut_shows_the_rooms_do_not_fit():
    # SURVEY (6) prefers 9:00 and LEGEND (10) 10:00; the Plotting Room is closed at 9:00, so SURVEY started at
    # 9:00 holds Compass Hall until 11:00 and LEGEND needs the whole hall. The slot model's per-hour totals
    # allow it (16 seats at 10:00); only seating the two hours together shows it cannot be done.
    slots = hours(9, 10, 11)
    events = {"SURVEY": Event("SURVEY", duration_minutes=120, preferred_slots=("Mon 9:00",)),
              "LEGEND": Event("LEGEND", duration_minutes=60, preferred_slots=("Mon 10:00",))}
    rooms = [Room("Compass Hall", 10), Room("Plotting Room", 6, unavailable_slots=("Mon 9:00",))]
    p = Problem(group("SURVEY", 6, "sv") + group("LEGEND", 10, "lg"), events=events, rooms=rooms,
                weights=Weights(**{**ZERO, "preferred_slot": 1}))
    assert not seatable_by_brute_force(p, slots, {"SURVEY": 1, "LEGEND": 2})
    # the brute force: the least preferred-slot misses over every seatable timetable
    best = None
    for s1, s2 in itertools.product(range(1, 4), repeat=2):
        at = {"SURVEY": s1, "LEGEND": s2}
        if own_hours(p, slots, "SURVEY", s1) is None or not seatable_by_brute_force(p, slots, at):
            continue
        misses = (s1 != 1) + (s2 != 2)
        best = misses if best is None else min(best, misses)
    assert best == 1
    run = solve(p, slots, OPT)
    assert run.status == "optimal", run.reasons
    assert run.penalty == best
    v = validate(p, slots, run.assignment, run.rooms, own_rooms=run.own_rooms)
    assert v.ok, v.violations
    assert v.penalty == run.penalty
    assert_seated_by_hand(p, slots, run.assignment, run.rooms, run.own_rooms)


# --- own rooms --------------------------------------------------------------------------------


def atlas_problem(extra: int = 0, quiet_rooms: int = 1, second_apart: bool = False) -> Problem:
    people = {"Ines Marrow": Attendee("Ines Marrow", extra_time_percent=extra, own_room_type="Quiet")}
    if second_apart:
        people["Olek Brand"] = Attendee("Olek Brand", own_room_type="quiet")
    rooms = [Room("Compass Hall", 20), Room("Snug", 1, room_type="Quiet")]
    if quiet_rooms > 1:
        rooms.append(Room("Reading Nook", 2, room_type="Quiet"))
    enrolments = group("ATLAS", 4, "at") + [("Ines Marrow", "ATLAS")] + group("INKS", 3, "ik")
    if second_apart:
        enrolments.append(("Olek Brand", "INKS"))
    events = {"ATLAS": Event("ATLAS", "Atlas design", duration_minutes=60),
              "INKS": Event("INKS", "Inks and papers", duration_minutes=60)}
    return Problem(enrolments, events=events, rooms=rooms, people=people)


def test_an_attendee_with_an_own_room_sits_alone_and_the_event_seats_one_fewer():
    slots = hours(9, 10, 11)
    p = atlas_problem(quiet_rooms=2)
    at = {"ATLAS": 1, "INKS": 1}
    seating = seat_events(p, slots, at, p.event_sizes())
    assert not seating.failed_groups
    assert seating.own_rooms == {("Ines Marrow", "ATLAS"): "Snug"}  # the smallest room of her type
    assert seating.rooms["ATLAS"] == [("Compass Hall", 4)]  # 5 enrolled, one sits apart
    assert_seated_by_hand(p, slots, at, seating.rooms, seating.own_rooms)
    v = validate(p, slots, at, seating.rooms, own_rooms=seating.own_rooms)
    assert v.ok, v.violations
    # the validator holds the same contract: without her own room, or seating her twice, it objects
    assert not validate(p, slots, at, seating.rooms, own_rooms={}).ok
    assert not validate(p, slots, at, {**seating.rooms, "ATLAS": [("Compass Hall", 5)]},
                        own_rooms=seating.own_rooms).ok


def test_with_extra_time_the_own_room_is_held_into_the_next_hour():
    slots = hours(9, 10, 11)
    p = atlas_problem(extra=50, quiet_rooms=2, second_apart=True)  # 60 min + 50 % = 90 min: 9:00-10:30
    assert own_hours(p, slots, "ATLAS", 1, "Ines Marrow") == [1, 2]
    at = {"ATLAS": 1, "INKS": 2}
    seating = seat_events(p, slots, at, p.event_sizes())
    assert not seating.failed_groups
    ines = seating.own_rooms[("Ines Marrow", "ATLAS")]
    olek = seating.own_rooms[("Olek Brand", "INKS")]
    assert ines != olek  # her room is still hers at 10:00, so Olek sits in the other quiet room
    used = seats_per_room_slot(p, slots, at, seating.rooms, seating.own_rooms)
    assert used[(ines, 2)] == [("Ines Marrow apart", 1)]  # nothing else sits there in the next hour
    assert_seated_by_hand(p, slots, at, seating.rooms, seating.own_rooms)
    v = validate(p, slots, at, seating.rooms, own_rooms=seating.own_rooms)
    assert v.ok, v.violations
    # with one quiet room the two sittings cannot both have it: the group of both hours fails, exactly
    tight = atlas_problem(extra=50, quiet_rooms=1, second_apart=True)
    failed = seat_events(tight, slots, at, tight.event_sizes())
    assert not seatable_by_brute_force(tight, slots, at)
    assert failed.failed_groups == [[("ATLAS", 1), ("INKS", 2)]] and not failed.own_rooms.get(("Olek Brand", "INKS"))
    # a solve moves INKS out of her extra half hour instead, and says so to nobody's harm
    run = solve(tight, slots, OPT)
    assert run.status in ("optimal", "feasible"), run.reasons
    assert set(own_hours(tight, slots, "ATLAS", run.assignment["ATLAS"], "Ines Marrow")).isdisjoint(
        own_hours(tight, slots, "INKS", run.assignment["INKS"]))
    v = validate(tight, slots, run.assignment, run.rooms, own_rooms=run.own_rooms)
    assert v.ok, v.violations
    assert_seated_by_hand(tight, slots, run.assignment, run.rooms, run.own_rooms)


def test_too_few_own_rooms_for_one_hour_is_not_accepted():
    p = atlas_problem(quiet_rooms=1, second_apart=True)  # two people apart, one quiet room
    one = hours(9)
    run = solve(p, one, OPT)
    assert run.status in ("infeasible", "unknown"), (run.assignment, run.own_rooms)
    assert not run.assignment
    assert not seatable_by_brute_force(p, one, {"ATLAS": 1, "INKS": 1})
    two = hours(9, 10)
    run = solve(p, two, OPT)
    assert run.status in ("optimal", "feasible"), run.reasons
    assert run.assignment["ATLAS"] != run.assignment["INKS"]
    v = validate(p, two, run.assignment, run.rooms, own_rooms=run.own_rooms)
    assert v.ok, v.violations
    assert_seated_by_hand(p, two, run.assignment, run.rooms, run.own_rooms)


def test_own_rooms_the_slot_totals_miss_are_found_by_seating():
    # Two people apart and a quiet study group, all preferring 9:00. The quiet rooms seat 4 and the totals
    # (2 seats for the group plus the smallest quiet room for each person apart) fit in one hour, but
    # the two people take both quiet rooms and leave the group none: only seating finds that.
    slots = hours(9, 10)
    people = {"Ines Marrow": Attendee("Ines Marrow", own_room_type="quiet"),
              "Olek Brand": Attendee("Olek Brand", own_room_type="quiet")}
    rooms = [Room("Snug", 1, room_type="quiet"), Room("Reading Nook", 3, room_type="quiet"), Room("Compass Hall", 30)]
    events = {c: Event(c, room_type="quiet" if c == "STUDY" else None, preferred_slots=("Mon 9:00",))
              for c in ("ATLAS", "INKS", "STUDY")}
    enrolments = [("Ines Marrow", "ATLAS"), ("Olek Brand", "INKS")] + group("STUDY", 2, "st") \
        + group("ATLAS", 3, "at")
    p = Problem(enrolments, events=events, rooms=rooms, people=people,
                weights=Weights(**{**ZERO, "preferred_slot": 1}))
    assert not seatable_by_brute_force(p, slots, {"ATLAS": 1, "INKS": 1, "STUDY": 1})
    best = min((sum(s != 1 for s in combo) for combo in itertools.product((1, 2), repeat=3)
                if seatable_by_brute_force(p, slots, dict(zip(("ATLAS", "INKS", "STUDY"), combo)))))
    run = solve(p, slots, OPT)
    assert run.status == "optimal", run.reasons
    assert run.penalty == best == 1
    v = validate(p, slots, run.assignment, run.rooms, own_rooms=run.own_rooms)
    assert v.ok and v.penalty == run.penalty, v.violations
    assert_seated_by_hand(p, slots, run.assignment, run.rooms, run.own_rooms)


def test_solve_end_to_end_with_long_events_extra_time_and_own_rooms():
    # a day of six hours at the school: a 2-hour survey, an atlas sitting with two people apart (one with 25 %
    # extra time, one who cannot come at 9:00), and three one-hour classes sharing students
    slots = hours(9, 10, 11, 12, 13, 14)
    people = {"Ines Marrow": Attendee("Ines Marrow", extra_time_percent=25, own_room_type="Quiet"),
              "Olek Brand": Attendee("Olek Brand", own_room_type="Quiet", unavailable=("Mon 9:00",))}
    events = {"SURVEY": Event("SURVEY", duration_minutes=120), "ATLAS": Event("ATLAS", duration_minutes=60),
              "INKS": Event("INKS", duration_minutes=60), "GLOBES": Event("GLOBES", duration_minutes=60),
              "SCALES": Event("SCALES", duration_minutes=60)}
    enrolments = (group("SURVEY", 7, "sv") + group("ATLAS", 5, "at") + group("INKS", 4, "ik")
                  + group("GLOBES", 6, "gl") + group("SCALES", 3, "sc")
                  + [("Ines Marrow", "ATLAS"), ("Ines Marrow", "SURVEY"), ("Olek Brand", "INKS"),
                     ("Olek Brand", "ATLAS"), ("sv00", "GLOBES"), ("at01", "SCALES")])
    rooms = [Room("Compass Hall", 9), Room("Plotting Room", 7, shared=False), Room("Snug", 1, room_type="Quiet"),
             Room("Reading Nook", 1, room_type="Quiet", unavailable_slots=("Mon 12:00",))]
    p = Problem(enrolments, events=events, rooms=rooms, people=people)
    run = solve(p, slots, OPT)
    assert run.status in ("optimal", "feasible"), run.reasons
    v = validate(p, slots, run.assignment, run.rooms, own_rooms=run.own_rooms)
    assert v.ok, v.violations
    assert v.penalty == run.penalty
    assert_seated_by_hand(p, slots, run.assignment, run.rooms, run.own_rooms)
    doc = json.loads(json.dumps(run.to_json()))
    assert doc["own_rooms"] == sorted(doc["own_rooms"], key=lambda d: (d["attendee"], d["event"]))
    assert {(d["attendee"], d["event"]): d["room"] for d in doc["own_rooms"]} == run.own_rooms
    assert len(doc["own_rooms"]) == 4
    # the validator takes the JSON's list form too
    assert validate(p, slots, run.assignment, run.rooms, own_rooms=doc["own_rooms"]).ok


# --- the command ------------------------------------------------------------------------------


@pytest.fixture()
def school_book(tmp_path):
    from intake_builders import write_xlsx

    sheets = {
        "Enrolments": [["Student", "Class"]] + [[f"BSC-{i:03d}", "SURVEY"] for i in range(6)]
        + [[f"BSC-{i:03d}", "ATLAS"] for i in range(6, 10)] + [["Ines Marrow", "ATLAS"], ["Ines Marrow", "INKS"],
                                                               ["BSC-001", "INKS"], ["BSC-011", "INKS"]],
        "Events": [["Class", "Title", "Duration (minutes)"], ["SURVEY", "Field survey methods", 120],
                   ["ATLAS", "Atlas design", 60], ["INKS", "Inks and papers", 60]],
        "Slots": [["Slot", "Date", "Start", "Length (minutes)"]]
        + [[f"Mon {h}:00", MONDAY, dt.time(h), 60] for h in (9, 10, 11, 12, 13)],
        "Rooms": [["Room", "Capacity", "Room type"], ["Compass Hall", 8, "Classroom"], ["Snug", 1, "Quiet"]],
        "Attendees": [["Attendee", "Unavailable slots", "Extra time", "Own room"], ["Ines Marrow", None, 50, "Quiet"]],
    }
    return write_xlsx(tmp_path / "school.xlsx", sheets)


def test_the_command_seats_the_attendee_apart_and_the_workbook_says_where(run_command, school_book, tmp_path):
    from openpyxl import load_workbook

    from export_cases import rows_of

    out = tmp_path / "timetable.xlsx"
    result = run_command("solve", school_book, "--slots", "5", "--time-limit", "8", "--json", "--out", out)
    assert result.status == 0, result.stderr
    [doc] = result.json()["runs"]
    assert doc["status"] in ("optimal", "feasible"), doc
    assert doc["validation"]["ok"], doc["validation"]
    mine = {(d["attendee"], d["event"]): d["room"] for d in doc["own_rooms"]}
    assert mine == {("Ines Marrow", "ATLAS"): "Snug", ("Ines Marrow", "INKS"): "Snug"}
    # her 90-minute sittings hold the Snug into the next hour, so ATLAS and INKS cannot be in touching hours
    assert abs(doc["assignment"]["ATLAS"] - doc["assignment"]["INKS"]) >= 2
    _, rows = rows_of(load_workbook(out)["People"])
    ines = next(r for r in rows if r["Attendee"] == "Ines Marrow")
    assert "Snug for ATLAS" in ines["Own room"] and "Snug for INKS" in ines["Own room"]


# --- random small problems, against the brute force ---------------------------------------------


def random_school(seed: int) -> tuple[Problem, list[Slot]]:
    import random

    rng = random.Random(seed)
    slots = hours(*range(9, 9 + rng.randint(2, 4)))
    codes = [f"C{i}" for i in range(rng.randint(2, 3))]
    names = [f"st{i}" for i in range(rng.randint(3, 5))]
    enrolments = sorted({(a, c) for a in names for c in codes if rng.random() < 0.45} | {(names[i % len(names)], c)
                                                                                       for i, c in enumerate(codes)})
    events = {c: Event(c, duration_minutes=rng.choice([60, 60, 120])) for c in codes}
    people = {}
    for a in rng.sample(names, rng.randint(1, 2)):
        people[a] = Attendee(a, extra_time_percent=rng.choice([0, 0, 50]), own_room_type="quiet")
    rooms = [Room("Compass Hall", rng.randint(2, 6), shared=rng.random() < 0.7), Room("Snug", 1, room_type="quiet")]
    if rng.random() < 0.6:
        closed = (slots[rng.randrange(len(slots))].label,) if rng.random() < 0.5 else ()
        rooms.append(Room("Reading Nook", 2, room_type="quiet", unavailable_slots=closed))
    return Problem(enrolments, events=events, rooms=rooms, people=people), slots


def brute_timetables(problem: Problem, slots: list[Slot]) -> list[dict[str, int]]:
    """Every timetable meeting the people's rules (the validator, rooms left out) that some seating holds
    (this file's brute force)."""
    from dataclasses import replace

    codes = sorted(problem.events)
    no_rooms = replace(problem, rooms=[])
    found = []
    for combo in itertools.product(range(1, len(slots) + 1), repeat=len(codes)):
        at = dict(zip(codes, combo))
        if not validate(no_rooms, slots, at).ok:
            continue
        if any(own_hours(problem, slots, c, s) is None for c, s in at.items()):
            continue
        if seatable_by_brute_force(problem, slots, at):
            found.append(at)
    return found


@pytest.mark.parametrize("seed", [*range(12), 82, 133])  # 82 and 133 need a cut from seating
def test_random_problems_with_own_rooms_and_long_events_match_the_brute_force(seed):
    problem, slots = random_school(seed)
    truth = brute_timetables(problem, slots)
    run = solve(problem, slots, SolveOptions(time_limit=3, workers=1, seed=seed))
    if run.status in ("optimal", "feasible"):
        assert run.assignment in truth
        v = validate(problem, slots, run.assignment, run.rooms, own_rooms=run.own_rooms)
        assert v.ok, v.violations
        assert_seated_by_hand(problem, slots, run.assignment, run.rooms, run.own_rooms)
    else:
        assert not run.assignment
    if truth:
        assert run.status in ("optimal", "feasible"), (run.status, run.reasons, truth[:3])
    else:
        assert run.status == "infeasible", run.status


def test_an_attendee_apart_is_sent_to_their_own_room_in_their_calendar(tmp_path):
    from timetabler.export.icalendar_files import write_calendars

    slots = hours(9, 10, 11)
    p = atlas_problem(quiet_rooms=2, second_apart=True)
    run = solve(p, slots, OPT)
    assert run.status in ("optimal", "feasible"), run.reasons
    write_calendars(tmp_path / "cal", problem=p, run=run)

    def locations(name: str) -> list[str]:  # the raw LOCATION lines (RFC 5545 §3.8.7.1), read here as text
        text = (tmp_path / "cal" / "attendees" / f"{name.replace(' ', '_')}.ics").read_text()
        return [line.split(":", 1)[1] for line in text.replace("\r\n ", "").splitlines() if line.startswith("LOCATION")]

    assert locations("Ines Marrow") == [run.own_rooms[("Ines Marrow", "ATLAS")]]
    assert locations("Olek Brand") == [run.own_rooms[("Olek Brand", "INKS")]]
    assert locations("at00") == [", ".join(r for r, _ in run.rooms["ATLAS"])]  # the others: the event's rooms


def test_the_personal_timetables_give_an_attendee_apart_their_own_room(tmp_path):
    from openpyxl import load_workbook

    from export_cases import rows_of
    from timetabler.export.workbook import write_workbook

    slots = hours(9, 10, 11)
    p = atlas_problem(extra=50, quiet_rooms=2, second_apart=True)
    p.source = str(tmp_path / "school.xlsx")
    run = solve(p, slots, OPT)
    assert run.status in ("optimal", "feasible"), run.reasons
    book = load_workbook(write_workbook(tmp_path / "out.xlsx", problem=p, runs=[run]), read_only=True)
    sheet = next(name for name in book.sheetnames if name.startswith("Personal"))
    _, rows = rows_of(book[sheet])
    rooms = {(r["Attendee"], r["Event"]): r["Rooms"] for r in rows}
    assert rooms[("Ines Marrow", "ATLAS")] == run.own_rooms[("Ines Marrow", "ATLAS")]
    assert rooms[("Olek Brand", "INKS")] == run.own_rooms[("Olek Brand", "INKS")]
    assert rooms[("at00", "ATLAS")] == ", ".join(r for r, _ in run.rooms["ATLAS"])
