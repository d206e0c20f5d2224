"""Timetables honour the people: required attendees' unavailable slots and quorums are hard, optional
attendees' unavailable slots are the ``optional_missed`` goal.

The truth is this file's own brute force: every assignment of the events to the slots is tried.
"""

import datetime as dt
import itertools
import random

import pytest

from timetabler.model import Attendee, Event, Problem, Slot, Weights
from timetabler.scheduling.solve import SolveOptions, solve

DAY = dt.date(2027, 3, 1)


def week(k):
    return [Slot(f"Mon {8 + h}:00", date=DAY, start=dt.time(8 + h), length_minutes=60) for h in range(k)]


def random_problem(seed):
    rng = random.Random(seed)
    events = [f"C{i}" for i in range(rng.randint(3, 5))]
    people = [f"m{i}" for i in range(rng.randint(3, 6))]
    enrolments = sorted({(p, e) for p in people for e in events if rng.random() < 0.45})
    optional = {pair for pair in enrolments if rng.random() < 0.3}
    k = rng.randint(2, 4)
    attendees = {p: Attendee(p, unavailable=tuple(str(s) for s in range(1, k + 1) if rng.random() < 0.25))
                 for p in people}
    quorum = {e: rng.choice([None, None, 1, 2]) for e in events}
    ev = {e: Event(e, quorum=quorum[e]) for e in events}
    weights = Weights(**{name: 0 for name in Weights().__dict__})
    weights.optional_missed = 1
    return Problem(enrolments, events=ev, people=attendees, optional=optional, weights=weights), week(k)


def _missing(problem, at, away, by_event):
    """(attendee, event) pairs whose attendee cannot come in timetable ``at``: unavailable then, or, when
    optional there, (one-slot events) booked in another of their events in the same slot."""
    out = set()
    for c, people in by_event.items():
        for p in people:
            elsewhere = (p, c) in problem.optional and any(at[o] == at[c] for o in by_event
                                                           if o != c and p in by_event[o])
            if at[c] in away[p] or elsewhere:
                out.add((p, c))
    return out


def brute_best(problem, slots):
    """The least number of (optional attendee, event) pairs unable to come over all timetables that keep
    every hard rule, or None when none does. The validator's definitions, written afresh: a required
    attendee is never unavailable nor booked twice; an optional one cannot come when unavailable or
    booked in another of their events at that time; a quorum counts the attendees who can come."""
    codes = sorted(problem.events)
    k = len(slots)
    away = {p: {int(s) for s in a.unavailable} for p, a in problem.people.items()}
    by_event = problem.attendees_by_event()
    best = None
    for combo in itertools.product(range(1, k + 1), repeat=len(codes)):
        at = dict(zip(codes, combo))
        ok = True
        for person in problem.people:
            mine = [c for c in codes if person in by_event[c] and (person, c) not in problem.optional]
            if len({at[c] for c in mine}) < len(mine) or any(at[c] in away[person] for c in mine):
                ok = False
                break
        if not ok:
            continue
        missing = _missing(problem, at, away, by_event)
        for c in codes:
            q = problem.events[c].quorum
            if q and sum(1 for p in by_event[c] if (p, c) not in missing) < q:
                ok = False
        if not ok:
            continue
        missed = len(missing & problem.optional)
        best = missed if best is None else min(best, missed)
    return best


@pytest.mark.parametrize("seed", range(12))
def test_feasibility_and_optional_misses_match_brute_force(seed):
    problem, slots = random_problem(seed)
    truth = brute_best(problem, slots)
    run = solve(problem, slots, SolveOptions(time_limit=10))
    if truth is None:
        assert run.status == "infeasible"
        return
    assert run.status == "optimal"
    away = {p: {int(s) for s in a.unavailable} for p, a in problem.people.items()}
    for person, code in problem.required_enrolments():
        assert run.assignment[code] not in away[person], (person, code)
    # the tool minimises the optional attendances missed, as the brute force does
    missed = len(_missing(problem, run.assignment, away, problem.attendees_by_event()) & problem.optional)
    assert missed == truth
    assert run.penalty_breakdown.get("optional_missed", 0) == truth


def test_the_reason_names_the_person_who_cannot_come():
    slots = week(2)
    problem = Problem([("ada", "BOARD"), ("ben", "BOARD")], events={"BOARD": Event("BOARD")},
                      people={"ben": Attendee("ben", unavailable=("1", "2"))})
    run = solve(problem, slots, SolveOptions(time_limit=10))
    assert run.status == "infeasible"
    text = " ".join([run.reason or ""] + [str(r) for r in run.reasons])
    assert "ben" in text and "BOARD" in text


def brute_long(problem, slots, span_of):
    """Every assignment of starts whose taken slots never overlap for a shared attendee (this file's own
    reading of spans: ``span_of[c][s]`` the slots, None when the event cannot start there)."""
    codes = sorted(problem.events)
    by_event = problem.attendees_by_event()
    found = []
    for combo in itertools.product(range(1, len(slots) + 1), repeat=len(codes)):
        at = dict(zip(codes, combo))
        if any(span_of[c][at[c]] is None for c in codes):
            continue
        ok = all(not (set(span_of[a][at[a]]) & set(span_of[b][at[b]]))
                 for a, b in itertools.combinations(codes, 2) if set(by_event[a]) & set(by_event[b]))
        if ok:
            found.append(at)
    return found


@pytest.mark.parametrize("seed", range(8))
def test_two_hour_meetings_hold_two_touching_slots(seed):
    rng = random.Random(100 + seed)
    # Monday 9-12 (three touching hours), a gap, 14-15; Tuesday 9-10
    slots = [Slot(f"Mon {h}", date=DAY, start=dt.time(h), length_minutes=60) for h in (9, 10, 11, 14)]
    slots += [Slot(f"Tue {h}", date=DAY + dt.timedelta(days=1), start=dt.time(h), length_minutes=60) for h in (9, 10)]
    codes = [f"M{i}" for i in range(4)]
    events = {c: Event(c, duration_minutes=rng.choice([60, 120])) for c in codes}
    enrolments = sorted({(p, c) for p in "abcde" for c in codes if rng.random() < 0.4})
    problem = Problem(enrolments, events=events)
    # by hand: a 2-hour meeting may start Mon 9, Mon 10 (touching next hour) and Tue 9
    two = {1: (1, 2), 2: (2, 3), 3: None, 4: None, 5: (5, 6), 6: None}
    span_of = {c: (two if events[c].duration_minutes == 120 else {s: (s,) for s in range(1, 7)}) for c in codes}
    truth = brute_long(problem, slots, span_of)
    run = solve(problem, slots, SolveOptions(time_limit=10))
    if not truth:
        assert run.status == "infeasible"
        return
    assert run.status in ("optimal", "feasible")
    assert run.assignment in truth
